// Unit tests of the survey-plan panel's pure parts: `npm test`.
import { test } from "node:test";
import assert from "node:assert/strict";
import { settingsFrom, planBody, planFromBody, lineProfile, fmtDuration } from "../src/planview.js";

test("settings form → survey.Settings", () => {
  const values = { speed_on_line_kn: "10", speed_transit_kn: "12,5", swath_angle_deg: "130", swath_width_m: "4000", overlap_pct: "20", safety_depth_m: "", sample_spacing_km: "0.1" };
  const s = settingsFrom(values, "angle", { dataset: "demo", model: "gdh1", sediment: "" });
  // Only the chosen swath form goes; empty fields are left to the service; a decimal comma is read.
  assert.deepEqual(s, { speed_on_line_kn: 10, speed_transit_kn: 12.5, swath_angle_deg: 130, overlap_pct: 20, sample_spacing_km: 0.1, dataset: "demo", model: "gdh1" });
  assert.equal(settingsFrom(values, "width").swath_width_m, 4000);
  assert.equal(settingsFrom(values, "width").swath_angle_deg, undefined);
  assert.throws(() => settingsFrom({ overlap_pct: "120" }, "angle"), /Overlap.*outside/);
  assert.throws(() => settingsFrom({ speed_on_line_kn: "ten" }, "angle"), /Speed on line: "ten" is not a number/);
  assert.throws(() => settingsFrom({ swath_angle_deg: "190" }, "angle"), /Swath opening angle/);
});

test("plan body: lines, names, wrapped longitudes, id and version only when stored", () => {
  const plan = { id: "", version: 0, name: "Quillon lines (SYNTHETIC)", lines: [{ name: "L1", waypoints: [{ lat: -25, lon: 190, name: "A" }, { lat: -24, lon: -169, name: "" }] }], settings: { speed_on_line_kn: 10 } };
  const body = planBody(plan);
  assert.deepEqual(body, { name: "Quillon lines (SYNTHETIC)", lines: [{ name: "L1", waypoints: [{ lon: -170, lat: -25, name: "A" }, { lon: -169, lat: -24 }] }], settings: { speed_on_line_kn: 10 } });
  const stored = planBody({ ...plan, id: "p1", version: 3 });
  assert.equal(stored.id, "p1");
  assert.equal(stored.version, 3);
  const back = planFromBody(stored);
  assert.deepEqual(back.lines[0].waypoints[1], { lon: -169, lat: -24, name: "" });
  assert.equal(back.version, 3);
});

test("a checked line's profile: expected depth by source, band, hazards", () => {
  const check = {
    lines: [
      {
        name: "L1",
        samples: {
          lon: [0, 1, 2, 3, 4],
          lat: [0, 0, 0, 0, 0],
          distance_km: [0, 10, 20, 30, 40],
          distance_nmi: [0, 5.4, 10.8, 16.2, 21.6],
          time_h: [0, 0.54, 1.08, 1.62, 2.16],
          expected_depth_m: [4000, 4100, 1500, 4200, null],
          depth_source: ["observed", "observed", "predicted", "predicted", "none"],
          depth_uncertainty_m: [50, 50, 200, null, null],
        },
      },
    ],
    hazards: [{ kind: "shallower_than_safety_depth", line: 0, from_sample: 2, to_sample: 2, lon: 2, lat: 0, distance_km: 20 }, { kind: "no_data", line: 1, from_sample: 0, to_sample: 0 }],
  };
  const p = lineProfile(check, 0);
  // The two sources meet at the change (sample 1–2) so the line is unbroken.
  assert.deepEqual(p.observed, [4000, 4100, 1500, null, null]);
  assert.deepEqual(p.predicted, [null, 4100, 1500, 4200, null]);
  assert.deepEqual(p.bandLow, [3950, 4050, 1300, null, null]);
  assert.deepEqual(p.bandHigh, [4050, 4150, 1700, null, null]);
  assert.deepEqual(p.hazard, [null, null, 1500, null, null]);
  assert.equal(p.hazards.length, 1, "only this line's hazards");
  assert.deepEqual(p.positions[2], [2, 0]);
  assert.equal(lineProfile(check, 5).distanceKm.length, 0);
});

test("durations", () => {
  // 1 kn = 1 nmi/h (definition of the knot): 25 nmi at 10 kn is 2.5 h.
  assert.equal(fmtDuration(25 / 10), "2 h 30 min");
  assert.equal(fmtDuration(0.999), "1 h 00 min");
  assert.equal(fmtDuration(50.25), "2 d 02 h 15 min");
  assert.equal(fmtDuration(null), "no data");
});
