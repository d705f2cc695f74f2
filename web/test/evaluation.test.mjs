// Unit tests of the evaluating choices every request carries (model, sediment, age uncertainty):
// `npm test`.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { evaluationParams, parseAgeSigma, ageSigmaMaxOf, hasAgeSigmaGrid, sigmaAskable, sigmaSource, AGE_SIGMA_PARAM } from "../src/evaluation.js";
import { query } from "../src/api.js";
import { loadRegionStats, loadAreaStats } from "../src/regionstats.js";

// The service's own OpenAPI document (server/openapi.json): the contract the page reads its limit from.
const openapi = JSON.parse(readFileSync(new URL("../../server/openapi.json", import.meta.url), "utf8"));

test("one helper builds the evaluating query: model, sediment, age-uncertainty-ma", () => {
  assert.deepEqual(evaluationParams({ model: "gdh1", sediment: "shale", ageUncertaintyMa: 2.5 }), { model: "gdh1", sediment: "shale", "age-uncertainty-ma": "2.5" });
  // Nothing chosen: empty values, which query() leaves out (the service's defaults and the grid).
  assert.deepEqual(evaluationParams({ model: "psm", sediment: "", ageUncertaintyMa: null }), { model: "psm", sediment: "", "age-uncertainty-ma": "" });
  assert.equal(query({ "parameter-name": "heat_flow", ...evaluationParams({ model: "psm", sediment: "", ageUncertaintyMa: null }) }), "?parameter-name=heat_flow&model=psm");
  assert.equal(query({ ...evaluationParams({ model: "psm", ageUncertaintyMa: 3 }) }), "?model=psm&age-uncertainty-ma=3");
  // 0 is the service's "use the grid" (evaluate.Options): the page never sends it.
  assert.equal(evaluationParams({ ageUncertaintyMa: 0 })[AGE_SIGMA_PARAM], "");
  assert.equal(evaluationParams(undefined)[AGE_SIGMA_PARAM], "");
});

test("the largest age uncertainty comes from the service's OpenAPI document", () => {
  // server/openapi.json, components/parameters/age-uncertainty-ma: schema maximum 100
  // (evaluate.MaxAgeUncertaintyMa).
  assert.equal(openapi.components.parameters[AGE_SIGMA_PARAM].schema.maximum, 100);
  assert.equal(ageSigmaMaxOf(openapi), 100);
  assert.equal(ageSigmaMaxOf({}), null);
  assert.equal(ageSigmaMaxOf({ components: { parameters: { sigma: { name: AGE_SIGMA_PARAM, schema: { maximum: 30 } } } } }), 30, "found by name under another key");
  assert.equal(ageSigmaMaxOf({ components: { parameters: { [AGE_SIGMA_PARAM]: { schema: { type: "number" } } } } }), null, "no maximum given");
});

test("the field's value is checked before anything is sent", () => {
  const max = ageSigmaMaxOf(openapi);
  assert.equal(parseAgeSigma("", max), null, "empty: the dataset's grid");
  assert.equal(parseAgeSigma("   ", max), null);
  assert.equal(parseAgeSigma("2", max), 2);
  assert.equal(parseAgeSigma(" 1.5 ", max), 1.5);
  assert.equal(parseAgeSigma("0,8", max), 0.8, "a decimal comma is read");
  assert.equal(parseAgeSigma(".5", max), 0.5);
  assert.equal(parseAgeSigma("1e1", max), 10);
  assert.equal(parseAgeSigma("100", max), 100, "the maximum itself is allowed (schema maximum is inclusive, JSON Schema 2020-12 §6.2.2)");
  assert.throws(() => parseAgeSigma("100.01", max), /Age uncertainty: 100\.01 Ma is out of range: give a number of Ma above 0 and at most 100, or leave the field empty/);
  assert.throws(() => parseAgeSigma("0", max), /out of range/, "0 would mean the grid: the field is left empty for that");
  assert.throws(() => parseAgeSigma("-1", max), /Age uncertainty: -1 Ma is out of range/);
  assert.throws(() => parseAgeSigma("two", max), /"two" is not a number/);
  assert.throws(() => parseAgeSigma("2 Ma", max), /not a number/);
  assert.throws(() => parseAgeSigma("Infinity", max), /not a number/);
  assert.throws(() => parseAgeSigma("1,2,3", max), /not a number/);
  // Without a known maximum only the lower bound is the page's; the service checks the rest.
  assert.equal(parseAgeSigma("500", null), 500);
  assert.throws(() => parseAgeSigma("0", null), /above 0, or leave/);
});

test("the uncertainty series are asked only when the service can answer them", () => {
  // A collection lists the uncertainty parameters only when its dataset has an age-uncertainty
  // grid (evaluate.Dataset.Available).
  const withGrid = { parameter_names: { seafloor_age: {}, predicted_depth: {}, predicted_depth_uncertainty: {} } };
  const without = { parameter_names: { seafloor_age: {}, predicted_depth: {} } };
  assert.equal(hasAgeSigmaGrid(withGrid), true);
  assert.equal(hasAgeSigmaGrid(without), false);
  assert.equal(hasAgeSigmaGrid(null), false);
  assert.equal(sigmaAskable(withGrid, { ageUncertaintyMa: null }), true);
  assert.equal(sigmaAskable(without, { ageUncertaintyMa: null }), false, "the service would answer a problem naming age-uncertainty-ma");
  assert.equal(sigmaAskable(without, { ageUncertaintyMa: 2 }), true);
  assert.match(sigmaSource({ ageUncertaintyMa: 2 }), /2 Ma \(1σ, given\)/);
  assert.match(sigmaSource({ ageUncertaintyMa: null }), /grid/);
});

test("statistics requests carry the age uncertainty", async () => {
  const asked = [];
  const saved = globalThis.fetch;
  globalThis.fetch = async (url) => {
    asked.push(String(url));
    return new Response(JSON.stringify({ statistics: { predicted_depth_uncertainty: { count: 1, mean_m: 42 } } }), { headers: { "Content-Type": "application/json" } });
  };
  try {
    const choices = evaluationParams({ model: "gdh1", sediment: "", ageUncertaintyMa: 4 });
    const r = await loadRegionStats("demo", { id: "7" }, "predicted_depth_uncertainty", choices, "m");
    assert.equal(r.mean, 42);
    await loadAreaStats("demo", "POLYGON((0 0, 1 0, 1 1, 0 0))", "predicted_depth_uncertainty", choices);
  } finally {
    globalThis.fetch = saved;
  }
  assert.equal(asked.length, 2);
  for (const u of asked) {
    const q = new URL(u, "http://x").searchParams;
    assert.equal(q.get("age-uncertainty-ma"), "4", u);
    assert.equal(q.get("model"), "gdh1", u);
    assert.equal(q.has("sediment"), false, u);
  }
});
