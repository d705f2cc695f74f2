// Unit tests of the colour range and URL state modules (no browser): run with `npm test`.
import { test } from "node:test";
import assert from "node:assert/strict";
import { histogramPercentile, robustRange, symmetricAbout, niceOutward, fitRange, parseRange, rangeParam, legendTicks } from "../src/scalerange.js";
import { encodeState, decodeState } from "../src/urlstate.js";

const near = (got, want, tol, what) => assert.ok(Math.abs(got - want) <= tol, `${what}: ${got}, want ${want} ± ${tol}`);

test("percentiles from a histogram (linear within a bin)", () => {
  // Worked by hand: a uniform distribution on [0, 100] in 10 equal bins has its p-th
  // percentile at 100·p exactly (the CDF of a uniform distribution is linear).
  const edges = Array.from({ length: 11 }, (_, i) => i * 10);
  const uniform = Array(10).fill(0.1);
  for (const [p, want] of [[0.02, 2], [0.5, 50], [0.98, 98], [0, 0], [1, 100]]) near(histogramPercentile(edges, uniform, p), want, 1e-9, `uniform p=${p}`);
  // Worked by hand: all the area in the bin 40–50 puts every percentile inside it, 2 % at 40.2.
  const spike = Array(10).fill(0);
  spike[4] = 1;
  near(histogramPercentile(edges, spike, 0.02), 40.2, 1e-9, "spike p=0.02");
  near(histogramPercentile(edges, spike, 0.98), 49.8, 1e-9, "spike p=0.98");
  assert.ok(Number.isNaN(histogramPercentile(edges, [1], 0.5)), "edges and fractions that do not match");
  assert.ok(Number.isNaN(histogramPercentile(edges, Array(10).fill(0), 0.5)), "an empty histogram");
});

test("robust range: histogram percentiles, else the service's 5th–95th", () => {
  // A residual distribution of 98 % within ±200 m and 2 % of outliers out to ±1500 m: the
  // 2–98 % range ignores the outliers (hand-built histogram, 1 % of area in each outer bin).
  const edges = [-1500, -200, -100, 0, 100, 200, 1500];
  const fr = [0.01, 0.24, 0.25, 0.25, 0.24, 0.01];
  const r = robustRange({ edges, fractions: fr });
  near(r.min, -200 + 100 * (0.01 / 0.24), 1e-9, "2 % point");
  near(r.max, 200 - 100 * (0.01 / 0.24), 1e-9, "98 % point");
  const f = robustRange({ p05: -120, p95: 80 });
  assert.deepEqual([f.min, f.max], [-120, 80]);
  assert.match(f.basis, /5–95/);
  assert.equal(robustRange({ p05: NaN, p95: NaN }), null);
  const flat = robustRange({ p05: 4000, p95: 4000 });
  assert.ok(flat.max > flat.min, "one value everywhere still gives a width");
});

test("diverging ranges are symmetric about the centre, ends are rounded outward", () => {
  assert.deepEqual(symmetricAbout(-150, 200), { min: -200, max: 200 });
  assert.deepEqual(symmetricAbout(-150, 20), { min: -150, max: 150 });
  assert.deepEqual(symmetricAbout(10, 30, 15), { min: 0, max: 30 });
  // span 373.2, step 1/20 of it → 20; ends outward to multiples of 20.
  assert.deepEqual(niceOutward(-187.3, 185.9), { min: -200, max: 200 });
  assert.deepEqual(niceOutward(2612, 5933), { min: 2600, max: 6000 });
  const edges = [-1500, -200, -100, 0, 100, 200, 1500];
  const fr = [0.01, 0.24, 0.25, 0.25, 0.24, 0.01];
  const d = fitRange({ edges, fractions: fr }, { diverging: true });
  assert.equal(d.min, -d.max, "diverging fit is symmetric");
  assert.deepEqual([d.min, d.max], [-200, 200]);
});

test("typed ranges", () => {
  assert.deepEqual(parseRange("-150", "+200", { diverging: true }), { min: -200, max: 200 });
  assert.deepEqual(parseRange("\u2212100", "50"), { min: -100, max: 50 });
  assert.deepEqual(parseRange(" 2500 ", "6500"), { min: 2500, max: 6500 });
  assert.throws(() => parseRange("6500", "2500"), /less than/);
  assert.throws(() => parseRange("", "10"), /number/);
  assert.throws(() => parseRange("a", "10"), /number/);
  assert.throws(() => parseRange("0", "1e9"), /within/);
  assert.equal(rangeParam({ min: -200, max: 200 }), "-200,200");
  assert.equal(rangeParam(null), "");
});

test("legend labels: both ends and zero always, inner values only where they do not crowd", () => {
  assert.deepEqual(legendTicks(-200, 200), [-200, 0, 200]);
  assert.deepEqual(legendTicks(-1500, 1500, [-1000, 0, 1000]), [-1500, 0, 1500]);
  assert.deepEqual(legendTicks(-200, 200, [-200, -100, 0, 100, 200]), [-200, -100, 0, 100, 200]);
  assert.deepEqual(legendTicks(0, 6500, [0, 2000, 4000, 6000]), [0, 2000, 4000, 6500]);
  assert.deepEqual(legendTicks(30, 300, []), [30, 300]);
});

test("URL state round trip", () => {
  const s = {
    datasetId: "demo-basin",
    layer: "residual_depth",
    model: "gdh1",
    sediment: "shale",
    ageUncertaintyMa: 2.5,
    range: { min: -200, max: 200 },
    view: { lat: -29.300001, lon: -143.5, zoom: 6 },
    pin: { lat: -30.123456789, lon: -140.5 },
    region: "7",
    plan: "plan-3",
    track: [[179.5, -20.123456789], [-179.5, -21]],
  };
  const h = encodeState(s);
  assert.match(h, /view=-29\.3,-143\.5,6/);
  assert.match(h, /(^|&)sigma=2\.5(&|$)/);
  const back = decodeState(`#${h}`);
  assert.match(h, /track=179\.5,-20\.12346;-179\.5,-21/);
  assert.deepEqual(back, { ...s, view: { lat: -29.3, lon: -143.5, zoom: 6 }, pin: { lat: -30.12346, lon: -140.5 }, track: [[179.5, -20.12346], [-179.5, -21]] });
  // An empty state writes nothing and reads back empty.
  assert.equal(encodeState({}), "");
  assert.deepEqual(decodeState(""), { datasetId: "", layer: "", model: "", sediment: "", ageUncertaintyMa: null, range: null, view: null, pin: null, region: "", plan: "", track: null });
});

test("URL state: damaged parts are dropped, the rest kept", () => {
  const d = decodeState("#dataset=demo&view=95,10,3&pin=abc&range=5,1&region=%3Cscript%3E&layer=heat_flow", { minZoom: 1, maxZoom: 12 });
  assert.equal(d.datasetId, "demo");
  assert.equal(d.layer, "heat_flow");
  assert.equal(d.view, null, "latitude 95° is not on Earth");
  assert.equal(d.pin, null);
  assert.equal(d.range, null, "reversed range");
  assert.equal(d.region, "", "id with markup");
  assert.equal(decodeState("view=0,0,13", { maxZoom: 12 }).view, null, "zoom beyond the map's maximum");
  assert.equal(decodeState("view=0,0,2.5").view, null, "fractional zoom");
  assert.equal(decodeState("track=10,95;11,0").track, null, "a waypoint beyond the pole");
  // The age uncertainty: a number above 0, else the dataset's grid (null).
  assert.equal(decodeState("sigma=0").ageUncertaintyMa, null, "0 means the grid, written as no value");
  assert.equal(decodeState("sigma=-1").ageUncertaintyMa, null, "negative");
  assert.equal(decodeState("sigma=two").ageUncertaintyMa, null, "not a number");
  assert.equal(decodeState("sigma=1,2").ageUncertaintyMa, null, "two numbers");
  assert.equal(decodeState("sigma=").ageUncertaintyMa, null, "empty");
  assert.equal(decodeState("sigma=0.75").ageUncertaintyMa, 0.75);
  assert.equal(encodeState({ ageUncertaintyMa: null }), "", "the grid is the default and is not written");
  assert.equal(encodeState({ ageUncertaintyMa: 0 }), "");
  assert.equal(decodeState("track=10,5").track, null, "one waypoint is no track");
  const long = Array.from({ length: 101 }, (_, i) => `${i / 10},0`).join(";");
  assert.equal(decodeState(`track=${long}`).track, null, "more waypoints than a link carries");
});
