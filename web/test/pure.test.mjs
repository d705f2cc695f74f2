// Unit tests of the page's pure modules (no browser): run with `npm test`.
import { test } from "node:test";
import assert from "node:assert/strict";
import { haversineKm, cumulativeKm, toWKT, ringFromLatLngs } from "../src/geometry.js";
import { parseCSVTrack, parseGeoJSONTrack } from "../src/trackfiles.js";
import { parseColourDocument } from "../src/colourscales.js";
import { niceTicks } from "../src/legend.js";
import { wrapLon } from "../src/format.js";
import { coverages, positions, rangeValues } from "../src/coveragejson.js";
import { jobIdFrom, progressOf } from "../src/jobs.js";

test("haversine distances", async (t) => {
  const cases = [
    // One degree of a great circle on a sphere of radius R is R·π/180 km (definition of the radian).
    { name: "1° of latitude", args: [0, 0, 0, 1], want: (6371.0088 * Math.PI) / 180, tol: 1e-9 },
    { name: "1° of longitude at the equator", args: [0, 0, 1, 0], want: (6371.0088 * Math.PI) / 180, tol: 1e-9 },
    // Across the antimeridian: 179.5°E to 179.5°W is 1° of longitude.
    { name: "across the antimeridian", args: [179.5, 0, -179.5, 0], want: (6371.0088 * Math.PI) / 180, tol: 1e-9 },
    // Pole to pole is half a circumference, π·R.
    { name: "pole to pole", args: [0, 90, 0, -90], want: 6371.0088 * Math.PI, tol: 1e-6 },
    // At 60° latitude a degree of longitude along the parallel is R·cos60°·π/180; the great circle is
    // shorter by a hair (2R·asin(cos60°·sin(0.5°))), computed here independently.
    { name: "1° of longitude at 60°N", args: [0, 60, 1, 60], want: 2 * 6371.0088 * Math.asin(0.5 * Math.sin(Math.PI / 360)), tol: 1e-9 },
  ];
  for (const c of cases) {
    await t.test(c.name, () => {
      const got = haversineKm(...c.args);
      assert.ok(Math.abs(got - c.want) <= c.tol, `got ${got}, want ${c.want} ± ${c.tol}`);
    });
  }
  await t.test("cumulative", () => {
    const d = cumulativeKm([[0, 0], [0, 1], [0, 2]]);
    assert.equal(d.length, 3);
    assert.ok(Math.abs(d[2] - 2 * d[1]) < 1e-9);
  });
});

test("WKT and rings (lon lat order, closed rings, longitudes wrapped)", () => {
  const ring = ringFromLatLngs([{ lat: 1, lng: 190 }, { lat: 2, lng: 191 }, { lat: 1, lng: 192 }]);
  assert.deepEqual(ring, [[-170, 1], [-169, 2], [-168, 1], [-170, 1]]);
  assert.equal(toWKT({ type: "Polygon", coordinates: [ring] }), "POLYGON((-170 1, -169 2, -168 1, -170 1))");
  assert.equal(toWKT({ type: "Point", coordinates: [10, -5] }), "POINT(10 -5)");
  assert.equal(wrapLon(180), 180);
  assert.equal(wrapLon(-180), -180);
  assert.equal(wrapLon(360), 0);
});

test("track files", () => {
  assert.deepEqual(parseCSVTrack("lat;lon\n-10;350\n-11;-9\n"), [[-10, -10], [-9, -11]]);
  assert.throws(() => parseCSVTrack("a,b\n1,2\n3,4\n"), /longitude column/);
  assert.throws(() => parseCSVTrack("lon,lat\n1,95\n2,3\n"), /latitude 95/);
  assert.deepEqual(parseGeoJSONTrack('{"type":"LineString","coordinates":[[1,2],[3,4]]}'), [[1, 2], [3, 4]]);
  assert.throws(() => parseGeoJSONTrack('{"type":"Polygon","coordinates":[]}'), /not a track/);
  assert.throws(() => parseGeoJSONTrack("{"), /not valid JSON/);
});

test("colour scales follow the service's position rule", () => {
  const doc = {
    ramps: [
      { id: "div", kind: "diverging", samples: ["#0000ff", "#ffffff", "#ff0000"] },
      { id: "seq", kind: "sequential", samples: ["#000000", "#ffffff"] },
    ],
    bindings: [
      { parameter: "residual_depth", ramp: "div", min: -1000, max: 500, centre: 0, units: "m", label: "Residual depth (positive = shallower than the model)" },
      { parameter: "seafloor_age", ramp: "seq", min: 0, max: 200, units: "Ma", label: "Seafloor age" },
    ],
  };
  const s = parseColourDocument(doc);
  const r = s.get("residual_depth");
  assert.equal(r.note, "positive = shallower than the model");
  assert.equal(r.title, "Residual depth");
  assert.equal(r.position(0), 0.5); // centre at the middle of the ramp
  assert.equal(r.position(-1000), 0); // the larger half-range sets the scale
  assert.equal(r.position(500), 0.75);
  assert.deepEqual(r.colourAt(0.5), [255, 255, 255]);
  assert.deepEqual(r.colourAt(0.25), [128, 128, 255]);
  const a = s.get("seafloor_age");
  assert.equal(a.position(50), 0.25);
  assert.ok(Number.isNaN(a.position(NaN)));
});

test("legend ticks", () => {
  assert.deepEqual(niceTicks(-1500, 1500, 4), [-1000, 0, 1000]);
  assert.deepEqual(niceTicks(0, 200, 4), [0, 50, 100, 150, 200]);
});

test("CoverageJSON reading", () => {
  const point = { type: "Coverage", domain: { domainType: "Point", axes: { x: { values: [10] }, y: { values: [-5] } } }, ranges: { seafloor_age: { type: "NdArray", values: [12.5] }, observed_depth: { type: "NdArray", values: [null] } } };
  const cov = coverages(point)[0];
  assert.deepEqual(positions(cov), [[10, -5]]);
  assert.deepEqual(rangeValues(cov, "seafloor_age"), [12.5]);
  assert.deepEqual(rangeValues(cov, "observed_depth"), [null]);
  assert.equal(rangeValues(cov, "heat_flow"), null);
  const traj = { type: "CoverageCollection", parameters: {}, coverages: [{ type: "Coverage", domain: { domainType: "Trajectory", axes: { composite: { coordinates: ["t", "x", "y"], values: [["2026-01-01T00:00:00Z", 1, 2], ["2026-01-01T01:00:00Z", 3, 4]] } } }, ranges: {} }] };
  assert.deepEqual(positions(coverages(traj)[0]), [[1, 2], [3, 4]]);
});

test("jobs", () => {
  assert.equal(jobIdFrom({ job: { id: "j1" } }, null), "j1");
  assert.equal(jobIdFrom(null, "/api/jobs/42"), "42");
  assert.equal(progressOf({ state: "running", progress: 0.5 }).fraction, 0.5);
  assert.equal(progressOf({ state: "succeeded" }).done, true);
  assert.equal(progressOf({ state: "completed" }).done, true);
  assert.equal(progressOf({ state: "failed", error: "bad file" }).message, "bad file");
  // A job refused for bad input carries the problem its fault answers (GET /api/jobs/{id}).
  assert.equal(progressOf({ state: "failed", errors: ["JobCancelError: x"], problem: { code: "invalid-grid", parameter: "vertical", detail: "100% of the values are negative" } }).message, "100% of the values are negative");
});

test("area-weighted histogram of a grid coverage", async () => {
  const { histogramFromGrid, niceBinWidth } = await import("../src/regionstats.js");
  // Two rows, at 0° and 60°: cell areas in the ratio 1 : cos 60° = 1 : 0.5 (area element R² cos φ dφ dλ).
  const cov = {
    type: "Coverage",
    domain: { axes: { x: { start: 0, stop: 1, num: 2 }, y: { start: 60, stop: 0, num: 2 } } },
    ranges: { residual_depth: { axisNames: ["y", "x"], shape: [2, 2], values: [10, 10, -10, null] } },
  };
  const h = histogramFromGrid(cov, "residual_depth");
  assert.ok(h);
  // Values 10, 10 at 60° (weights 0.5 + 0.5), −10 at 0° (weight 1): half the area on each side.
  const total = h.counts.reduce((a, b) => a + b, 0);
  assert.ok(Math.abs(total - 100) < 1e-9);
  const neg = h.counts.filter((_, i) => h.edges[i + 1] <= 0).reduce((a, b) => a + b, 0);
  assert.ok(Math.abs(neg - 50) < 1e-9, `share below zero ${neg}`);
  assert.equal(niceBinWidth(3000, 40), 100);
  assert.equal(histogramFromGrid({ ranges: {} }, "residual_depth"), null);
});

test("region statistics read with the unit in every name", async () => {
  const { normaliseStats } = await import("../src/regionstats.js");
  // Names as in the service's OpenAPI document (components/schemas/StatisticsM, HistogramM).
  const s = normaliseStats({
    count: 4, no_data: 1, weight_sum: 3.5,
    mean_m: 120, std_m: 40, min_m: 50, max_m: 180, median_m: 110, p05_m: 55, p25_m: 90, p75_m: 150, p95_m: 175,
    histogram: { edges_m: [50, 100, 150, 200], counts: [1, 2, 1], area_fractions: [0.25, 0.5, 0.25], below: 0, above: 0 },
  });
  assert.deepEqual([s.count, s.noData, s.mean, s.median, s.std, s.p05, s.p95], [4, 1, 120, 110, 40, 55, 175]);
  assert.deepEqual(s.edges, [50, 100, 150, 200]);
  assert.deepEqual(s.counts, [25, 50, 25]); // area fractions as % of the area
  // Another unit's suffix, and names without a unit are not read.
  assert.equal(normaliseStats({ mean_ma: 12 }, "ma").mean, 12);
  assert.ok(Number.isNaN(normaliseStats({ mean: 120 }).mean));
  assert.equal(normaliseStats(undefined).edges, null);
});

test("land rings across the antimeridian and round a pole", async (t) => {
  const { fixRing } = await import("../src/geometry.js");
  await t.test("antimeridian: continuous longitudes", () => {
    const ring = [[179, 65], [-179, 65], [-179, 66], [179, 66], [179, 65]];
    assert.deepEqual(fixRing(ring), [[179, 65], [181, 65], [181, 66], [179, 66], [179, 65]]);
  });
  await t.test("south pole: longitudes kept, latitudes clamped to the mercator limit", () => {
    const ring = [[-180, -70], [0, -70], [180, -70], [180, -90], [-180, -90], [-180, -70]];
    const out = fixRing(ring);
    assert.deepEqual(out.map((p) => p[0]), ring.map((p) => p[0]));
    assert.equal(Math.min(...out.map((p) => p[1])), -85.0511);
  });
  await t.test("an ordinary ring is unchanged", () => {
    const ring = [[10, 10], [20, 10], [20, 20], [10, 10]];
    assert.deepEqual(fixRing(ring), ring);
  });
});
