// Unit tests of the page's pure modules (no browser): run with `npm test`.
import { test } from "node:test";
import assert from "node:assert/strict";
import { toWKT, ringFromLatLngs } from "../src/geometry.js";
import { trackMediaType, waypointsOf, splitAtAntimeridian } from "../src/trackanswer.js";
import { parametersOf, unitText, digitsFor } from "../src/parameters.js";
import { parseColourDocument } from "../src/colourscales.js";
import { niceTicks } from "../src/legend.js";
import { wrapLon } from "../src/format.js";
import { coverages, positions, rangeValues } from "../src/coveragejson.js";
import { jobIdFrom, progressOf } from "../src/jobs.js";

test("WKT and rings (lon lat order, closed rings, longitudes wrapped)", () => {
  const ring = ringFromLatLngs([{ lat: 1, lng: 190 }, { lat: 2, lng: 191 }, { lat: 1, lng: 192 }]);
  assert.deepEqual(ring, [[-170, 1], [-169, 2], [-168, 1], [-170, 1]]);
  assert.equal(toWKT({ type: "Polygon", coordinates: [ring] }), "POLYGON((-170 1, -169 2, -168 1, -170 1))");
  assert.equal(toWKT({ type: "Point", coordinates: [10, -5] }), "POINT(10 -5)");
  assert.equal(wrapLon(180), 180);
  assert.equal(wrapLon(-180), -180);
  assert.equal(wrapLon(360), 0);
});

test("track files go to the service as they are", () => {
  // Media types: RFC 4180 (text/csv), RFC 7946 (application/geo+json); GPX has no registered
  // type, application/gpx+xml is the one in common use (common practice, no source).
  assert.equal(trackMediaType("Line-A.GPX"), "application/gpx+xml");
  assert.equal(trackMediaType("line.geojson"), "application/geo+json");
  assert.equal(trackMediaType("line.json"), "application/geo+json");
  assert.equal(trackMediaType("quillon-line-a.csv"), "text/csv");
  assert.equal(trackMediaType("log.nav"), "text/csv"); // unknown: the service recognises the content
  assert.equal(trackMediaType(""), "text/csv");
});

test("the trajectory answer's waypoints and line", () => {
  const doc = { type: "Coverage", "ridgeflank:waypoints": [{ name: "QA-01", lon: -131.25, lat: -27.5, distance_km: 0 }, { name: "", lon: -128.3, lat: -25.7, distance_km: 330.5 }] };
  const w = waypointsOf(doc, doc);
  assert.deepEqual(w.map((x) => [x.name, x.named, x.distanceKm]), [["QA-01", true, 0], ["Waypoint 2", false, 330.5]]);
  assert.deepEqual(waypointsOf({}, {}), []);
  // A line crossing ±180 (longitudes answered in −180..180) is cut where it jumps.
  const parts = splitAtAntimeridian([[179, 1], [179.9, 1.1], [-179.8, 1.2], [-179, 1.3]]);
  assert.deepEqual(parts, [[[1, 179], [1.1, 179.9]], [[1.2, -179.8], [1.3, -179]]]);
  assert.equal(splitAtAntimeridian([[0, 0], [1, 1]]).length, 1);
});

test("parameters come from the collection document", () => {
  // A parameter object as CoverageJSON 1.0 (OGC 21-069r2, section 6.3) writes it.
  const c = {
    parameter_names: {
      heat_flow: { type: "Parameter", observedProperty: { id: "heat_flow", label: { en: "Heat flow" } }, unit: { label: { en: "milliwatt per square metre" }, symbol: { value: "mW/m2", type: "http://www.opengis.net/def/uom/UCUM/" } } },
      seafloor_age: { type: "Parameter", observedProperty: { label: { en: "Seafloor age" } }, unit: { symbol: "Ma" }, "ridgeflank:model_dependent": false },
    },
  };
  const ps = parametersOf(c);
  assert.deepEqual(ps.map((p) => [p.id, p.label, p.unit]), [["heat_flow", "Heat flow", "mW/m2"], ["seafloor_age", "Seafloor age", "Ma"]]);
  assert.equal(ps[0].modelDependent, undefined);
  assert.equal(ps[1].modelDependent, false);
  assert.deepEqual(parametersOf(null), []);
  // UCUM writes powers as digits after the unit atom (The Unified Code for Units of Measure; from memory).
  assert.equal(unitText("mW/m2"), "mW/m²");
  assert.equal(unitText("m2/s"), "m²/s");
  assert.equal(unitText("s-1"), "s⁻¹");
  assert.equal(unitText("Ma"), "Ma");
  // Decimals from the colour scale's span, else about four significant figures (common practice, no source).
  assert.deepEqual([4123.4, 23.456, 105.3, 0.5, 0, NaN].map((v) => digitsFor(v)), [0, 2, 1, 2, 0, 0]);
  assert.deepEqual([3000, 180, 270, 5].map((span) => digitsFor(30.25, span)), [0, 1, 1, 2]);
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

test("region statistics read with the unit in every name", async () => {
  const { normaliseStats, unitSuffixOf } = await import("../src/regionstats.js");
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
  // The unit suffix is found in the names the service wrote.
  assert.equal(unitSuffixOf({ count: 1, mean_mw_m2: 80 }), "mw_m2");
  assert.equal(normaliseStats({ mean_km: 7, p95_km: 9 }).p95, 9);
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
