// regionstats.js: statistics of one parameter over a stored region
// (/collections/{id}/locations/{regionId}/statistics) or over any polygon, such
// as the map's view (/collections/{id}/statistics?coords=…): area-weighted
// statistics per parameter under "statistics", without the grid.
// Returns {count, noData, mean, median, std, p05, p25, p75, p95, edges, counts,
// fractions} with counts as the share of the area in each bin (%) and fractions
// the same as parts of 1. The service
// names every field that carries a unit with that unit (mean_m, p05_m,
// edges_m for residual depth, in metres).

import { request, query } from "./api.js";

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
  const fractions = h.area_fractions || null;
  const counts = fractions && fractions.length ? fractions.map((c) => c * 100) : fractions;
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
    fractions,
  };
}

/**
 * loadRegionStats fetches the statistics of parameter over region r in datasetId with the
 * evaluating choices (evaluation.js's evaluationParams: model, sediment, age-uncertainty-ma);
 * unit is the parameter's unit symbol (from the collection) for the page's labels.
 */
export async function loadRegionStats(datasetId, r, parameter, choices, unit = "") {
  const body = await request(
    `/api/collections/${encodeURIComponent(datasetId)}/locations/${encodeURIComponent(r.id)}/statistics${query({
      "parameter-name": parameter,
      ...choices,
    })}`,
    { what: "Computing the region's statistics" },
  );
  const s = normaliseStats(body?.statistics?.[parameter]);
  s.unit = unit;
  return s;
}

/**
 * loadAreaStats fetches the statistics of parameter over the polygon coords (WKT) in
 * datasetId with the evaluating choices (as loadRegionStats), as "fit to view" uses them.
 */
export async function loadAreaStats(datasetId, coords, parameter, choices) {
  const body = await request(
    `/api/collections/${encodeURIComponent(datasetId)}/statistics${query({ coords, "parameter-name": parameter, ...choices })}`,
    { what: "Computing the statistics of the view" },
  );
  return normaliseStats(body?.statistics?.[parameter]);
}
