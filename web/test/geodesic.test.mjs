// Unit tests of the page's geodesic drawing and typed positions: `npm test`.
import { test } from "node:test";
import assert from "node:assert/strict";
import { inverse, direct, geodesicLeg, geodesicPath, splitForMap, mercatorPx, distanceToSegment, legsOf, midpoint, NMI_M } from "../src/geodesic.js";
import { parseLatitude, parseLongitude, formatDDM } from "../src/latlon.js";

// Lines of Karney's GeodTest.dat WGS84 test set (GeographicLib, "Test data for geodesics",
// doi:10.5281/zenodo.32156), as reproduced in geodtest.c of GeographicLib's C library and PROJ;
// the same lines the Go side checks in geo/track_wgs84_test.go:
// lat1, lon1, azi1, lat2, lon2, azi2, s12 (m).
const GEODTEST = [
  [35.60777, -139.44815, 111.098748429560326, -11.17491, -69.95921, 129.289270889708762, 8935244.5604818305],
  [55.52454, 106.05087, 22.020059880982801, 77.03196, 197.18234, 109.112041110671519, 4105086.1713924406],
  [-21.97856, 142.59065, -32.44456876433189, 41.84138, 98.56635, -41.84359951440466, 8394328.894657671],
  [-66.99028, 112.2363, 173.73491240878403, -12.70631, 285.90344, 2.512956620913668, 11150344.2312080241],
  [-17.42761, 173.34268, -159.033557661192928, -15.84784, 5.93557, -20.787484651536988, 16076603.1631180673],
  [32.84994, 48.28919, 150.492927788121982, -56.28556, 202.29132, 48.113449399816759, 16727068.9438164461],
  [-87.85331, 85.66836, -65.120313040242748, 66.48646, 16.09921, -4.888658719272296, 17286615.3147144645],
  [-19.79938, -174.47484, 71.167275780171533, -11.99349, -154.35109, 65.589099775199228, 2319004.8601169389],
  [-25.72959, -144.90758, -153.647468693117198, -57.70581, -269.17879, -48.343983158876487, 9413446.7452453107],
];

const az360 = (a) => ((a % 360) + 360) % 360;
const angleDiff = (a, b) => Math.abs((((a - b) % 360) + 540) % 360 - 180);

test("geodesic lengths and azimuths against GeodTest.dat (Karney)", async (t) => {
  for (const [i, c] of GEODTEST.entries()) {
    await t.test(`GeodTest line ${i}`, () => {
      const r = inverse(c[0], c[1], c[3], c[4]);
      // GeodTest values are exact to ~1e-9 m; 1 µm and 1e-9° allow the 0..360 azimuth wrap.
      assert.ok(Math.abs(r.lengthM - c[6]) < 1e-6, `length ${r.lengthM} m, GeodTest ${c[6]} m`);
      assert.ok(angleDiff(r.azimuth1Deg, az360(c[2])) < 1e-9, `initial azimuth ${r.azimuth1Deg}, GeodTest ${c[2]}`);
      assert.ok(angleDiff(r.azimuth2Deg, az360(c[5])) < 1e-9, `final azimuth ${r.azimuth2Deg}, GeodTest ${c[5]}`);
      // The direct problem from the start with GeodTest's azimuth reaches GeodTest's end (1e-9°).
      const d = direct(c[0], c[1], c[2], c[6]);
      assert.ok(Math.abs(d.lat - c[3]) < 1e-9 && angleDiff(d.lon, c[4]) < 1e-9, `direct reached ${d.lat}, ${d.lon}`);
    });
  }
});

test("direct problem: GeodSolve1 of GeographicLib's test suite", () => {
  // From (40.63972222, −73.77888889) at azimuth 53.5° for 5850 km the geodesic reaches
  // (49.01467, 2.56106) (geodtest.c, GeodSolve1; tolerance 0.5e-5° as there).
  const d = direct(40.63972222, -73.77888889, 53.5, 5850e3);
  assert.ok(Math.abs(d.lat - 49.01467) < 0.5e-5 && Math.abs(d.lon - 2.56106) < 0.5e-5, `${d.lat}, ${d.lon}`);
});

test("leg table: km and international nautical miles", () => {
  const c = GEODTEST[7];
  const [leg] = legsOf([{ lat: c[0], lon: c[1] }, { lat: c[3], lon: c[4] }]);
  // 1 nmi = 1852 m exactly (International Hydrographic Conference 1929; SI Brochure, 9th ed., Table 8).
  assert.ok(Math.abs(leg.lengthKm - c[6] / 1000) < 1e-9, "GeodTest line 7 length");
  assert.ok(Math.abs(leg.lengthNmi - c[6] / 1852) < 1e-9, "GeodTest line 7 in nmi");
  assert.equal(NMI_M, 1852);
  assert.ok(angleDiff(leg.azimuthDeg, c[2]) < 1e-9, "GeodTest line 7 azimuth");
});

test("a densified leg lies on the geodesic and within the drawing tolerance", async (t) => {
  // A 2,900 km line at mid-latitudes (the length the issue names) and GeodTest line 0.
  const cases = [
    ["2,900 km north-east at 30°S", { lat: -30, lon: -40 }, direct(-30, -40, 60, 2900e3)],
    ["GeodTest line 0", { lat: GEODTEST[0][0], lon: GEODTEST[0][1] }, { lat: GEODTEST[0][3], lon: GEODTEST[0][4] }],
  ];
  for (const [name, a, b] of cases) {
    await t.test(name, () => {
      const zoom = 12;
      const tol = 0.1;
      const pts = geodesicLeg(a, b, { zoom, tolerancePx: tol });
      const total = inverse(a.lat, a.lon, b.lat, b.lon).lengthM;
      assert.deepEqual(pts[0], [a.lat, a.lon]);
      assert.ok(Math.abs(pts.at(-1)[0] - b.lat) < 1e-12 && angleDiff(pts.at(-1)[1], b.lon) < 1e-9);
      // Every drawn vertex is on the geodesic: its distances from both ends add up to the leg
      // (triangle equality holds only on the geodesic; 1 mm).
      for (const [lat, lon] of pts) {
        const s = inverse(a.lat, a.lon, lat, lon).lengthM + inverse(lat, lon, b.lat, b.lon).lengthM;
        assert.ok(Math.abs(s - total) < 1e-3, `vertex ${lat}, ${lon} is ${s - total} m off the geodesic`);
      }
      // Points of the geodesic every 5 km (as the service samples it) lie within the tolerance
      // of the drawn polyline on the Mercator plane at the deepest zoom.
      const px = pts.map(([lat, lon]) => mercatorPx(lat, lon, zoom));
      const az = inverse(a.lat, a.lon, b.lat, b.lon).azimuth1Deg;
      let worst = 0;
      let j = 0;
      for (let s = 0; s <= total; s += 5000) {
        const p = direct(a.lat, a.lon, az, s);
        const q = mercatorPx(p.lat, p.lon, zoom);
        let best = Infinity;
        for (let k = Math.max(0, j - 2); k < px.length - 1; k++) {
          const d = distanceToSegment(q, px[k], px[k + 1]);
          if (d < best) [best, j] = [d, k];
          if (d > best + 1e4) break;
        }
        worst = Math.max(worst, best);
      }
      assert.ok(worst <= tol, `worst ${worst} px at zoom ${zoom}`);
      // And the straight Mercator line through the ends alone would be far off (kilometres):
      const straight = Math.max(...px.map((p) => distanceToSegment(p, px[0], px.at(-1))));
      assert.ok(straight > 1000, `the straight leg is only ${straight} px off`);
      assert.ok(pts.length < 2000, `${pts.length} vertices`);
    });
  }
});

test("paths across the antimeridian are split where the map needs it", () => {
  // The equator is a geodesic for |Δλ| ≤ (1−f)·180° (Karney 2013, from memory): 170°E → 170°W
  // runs along it across 180°.
  const path = geodesicPath([{ lat: 0, lon: 170 }, { lat: 0, lon: -170 }]);
  assert.ok(path.every(([lat]) => Math.abs(lat) < 1e-9));
  assert.ok(path.at(-1)[1] > 180, "longitudes are continuous before splitting");
  const parts = splitForMap(path);
  assert.equal(parts.length, 2);
  assert.deepEqual(parts[0].at(-1).map((v) => +v.toFixed(9)), [0, 180]);
  assert.deepEqual(parts[1][0].map((v) => +v.toFixed(9)), [0, -180]);
  for (const part of parts) for (const [, lon] of part) assert.ok(lon >= -180 && lon <= 180);
  assert.equal(splitForMap(geodesicPath([{ lat: 10, lon: 0 }, { lat: 20, lon: 30 }])).length, 1);
  // A multi-leg path keeps every waypoint, in order.
  const wps = [{ lat: -10, lon: 175 }, { lat: -12, lon: -175 }, { lat: -5, lon: -170 }];
  const p = geodesicPath(wps);
  for (const w of wps) assert.ok(p.some(([lat, lon]) => Math.abs(lat - w.lat) < 1e-12 && angleDiff(lon, w.lon) < 1e-9));
  // The midpoint of a leg is at half its length from both ends (1 mm).
  const m = midpoint(wps[0], wps[1]);
  const l = inverse(wps[0].lat, wps[0].lon, wps[1].lat, wps[1].lon).lengthM;
  assert.ok(Math.abs(inverse(wps[0].lat, wps[0].lon, m.lat, m.lon).lengthM - l / 2) < 1e-3);
});

// The same examples as geo/track_test.go (TestParseLatLonSeamanForms): expected values are plain
// arithmetic, d + m/60 + s/3600, negative for S and W; the written forms are those used in logs
// and cruise plans (common practice, no source).
const ACCEPTED = [
  ["-12.5083", true, -12.5083],
  ["12.5", true, 12.5],
  ["+12.5", true, 12.5],
  ["12.5S", true, -12.5],
  ["12.5 s", true, -12.5],
  ["S12.5", true, -12.5],
  ["N 12.5", true, 12.5],
  ["12°30.5'S", true, -(12 + 30.5 / 60)],
  ["12° 30.5′ S", true, -(12 + 30.5 / 60)],
  ["12 30.5 S", true, -(12 + 30.5 / 60)],
  ["-12 30.500", true, -(12 + 30.5 / 60)],
  ["-0 30.0", true, -0.5],
  ["12:30.5N", true, 12 + 30.5 / 60],
  ["12°30'30\"S", true, -(12 + 30 / 60 + 30 / 3600)],
  ["12°30'30''N", true, 12 + 30 / 60 + 30 / 3600],
  ["\u221212.25", true, -12.25],
  ["90", true, 90],
  ["012°30.50'W", false, -(12 + 30.5 / 60)],
  ["012 30.50 E", false, 12 + 30.5 / 60],
  ["179 59.999W", false, -(179 + 59.999 / 60)],
  ["350.5", false, 350.5],
  ["W 5 15.2", false, -(5 + 15.2 / 60)],
];

// As geo/track_test.go (TestParseLatLonRejects): the input and a word of the message.
const REJECTED = [
  ["", "empty", true],
  ["12 60.0 S", "below 60", true],
  ["12.5 30 S", "only the last part", true],
  ["-12 30 S", "both a minus sign", true],
  ["12 30 E", "takes N or S", true],
  ["12 30 N", "takes E or W", false],
  ["91", "outside", true],
  ["-181", "outside", false],
  ["12x30", "unexpected", true],
  ["NaN", "unexpected", true],
  ["1e3", "unexpected", true],
  ["1 2 3 4", "not an angle", true],
];

test("typed positions: the forms the service accepts", async (t) => {
  for (const [input, lat, want] of ACCEPTED) {
    await t.test(input, () => {
      const got = (lat ? parseLatitude : parseLongitude)(input);
      assert.ok(Math.abs(got - want) <= 1e-12, `got ${got}, want ${want}`);
    });
  }
  for (const [input, word, lat] of REJECTED) {
    await t.test(`rejects ${JSON.stringify(input)}`, () => {
      assert.throws(() => (lat ? parseLatitude : parseLongitude)(input), (e) => e.message.includes(word));
    });
  }
});

test("degrees and decimal minutes written back", () => {
  // geo's ExampleParseLatitude: 12°30.5′S = −12.508333; the round trip keeps 1/1000′.
  assert.equal(formatDDM(-(12 + 30.5 / 60), true), "12°30.500′S");
  assert.equal(formatDDM(-(12 + 30.5 / 60), false), "012°30.500′W");
  assert.equal(formatDDM(59.99999999, true), "60°00.000′N");
  for (const [input, lat, want] of ACCEPTED) {
    if (want < -180 || want > 180) continue;
    const back = (lat ? parseLatitude : parseLongitude)(formatDDM(want, lat));
    assert.ok(Math.abs(back - want) <= 0.0005 / 60 + 1e-12, `${input}: ${back} vs ${want}`);
  }
});
