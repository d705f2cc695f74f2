// regionstats.js: residual-depth statistics of a stored region, from the
// service's EDR locations query (/collections/{id}/locations/{regionId}),
// whose CoverageJSON answer carries area-weighted statistics per parameter
// under "ridgeflank:statistics".
// Returns {count, noData, mean, median, std, p05, p25, p75, p95, edges, counts}
// with counts as the share of the region's area in each bin (%). The service
// names every field that carries a unit with that unit (mean_m, p05_m,
// edges_m for residual depth, in metres).

import { request, query } from "./api.js";
import { unitSymbol } from "./parameters.js";

const num = (v) => (v === null || v === undefined ? NaN : Number(v));

/**
 * unitSuffixOf finds the unit suffix the service put in a statistics
 * object's names (the "m" of mean_m), so the page needs no table of units.
 */
export function unitSuffixOf(s) {
  for (const k of Object.keys(s || {})) {
    const m = /^mean_(.+)$/.exec(k);
    if (m) return m[1];
  }
  return "";
}

/**
 * normaliseStats reads one parameter's statistics object as the service
 * writes it; unit is the name suffix of the parameter's unit (found in the
 * object's own names when not given).
 */
export function normaliseStats(s, unit = unitSuffixOf(s)) {
  const u = (name) => num(s?.[`${name}_${unit}`]);
  const h = s?.histogram || {};
  const edges = h[`edges_${unit}`] || null;
  let counts = h.area_fractions || null;
  if (counts && counts.length) counts = counts.map((c) => c * 100);
  return {
    count: num(s?.count),
    noData: num(s?.no_data),
    mean: u("mean"),
    median: u("median"),
    std: u("std"),
    p05: u("p05"),
    p25: u("p25"),
    p75: u("p75"),
    p95: u("p95"),
    edges,
    counts,
  };
}

/** loadRegionStats fetches the residual statistics of region r in datasetId. */
export async function loadRegionStats(datasetId, r, model, sediment = "") {
  const body = await request(
    `/api/collections/${encodeURIComponent(datasetId)}/locations/${encodeURIComponent(r.id)}${query({
      "parameter-name": "residual_depth",
      model,
      sediment,
    })}`,
    { what: "Computing the region's statistics", headers: { Accept: "application/vnd.cov+json, application/problem+json" } },
  );
  const s = normaliseStats(body?.["ridgeflank:statistics"]?.residual_depth);
  s.unit = unitSymbol(body?.parameters?.residual_depth?.unit);
  return s;
}
