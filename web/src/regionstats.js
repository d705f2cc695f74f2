// regionstats.js: residual-depth statistics of a stored region, from the
// service's EDR locations query (/collections/{id}/locations/{regionId}),
// whose CoverageJSON answer carries area-weighted statistics per parameter
// under "ridgeflank:statistics".
// Returns {count, noData, mean, median, std, p05, p25, p75, p95, edges, counts}
// with counts as the share of the region's area in each bin (%). The service
// names every field that carries a unit with that unit (mean_m, p05_m,
// edges_m for residual depth, in metres).

import { request, query } from "./api.js";

const num = (v) => (v === null || v === undefined ? NaN : Number(v));

/**
 * normaliseStats reads one parameter's statistics object as the service
 * writes it; unit is the name suffix of the parameter's unit ("m", "ma",
 * "mw_m2", "km").
 */
export function normaliseStats(s, unit = "m") {
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

/** niceBinWidth picks a round bin width giving at most maxBins bins over span. */
export function niceBinWidth(span, maxBins = 40) {
  for (const w of [1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 5000]) if (span / w <= maxBins) return w;
  return span / maxBins;
}

/**
 * histogramFromGrid bins the values of a CoverageJSON Grid coverage's
 * parameter, weighting each cell by its area on the sphere, which for cells of
 * equal angular size is proportional to cos(latitude) (the area element
 * R² cos φ dφ dλ). Returns {edges, counts} with counts in % of the area with
 * data, or null when the coverage is not a grid or holds no data.
 */
export function histogramFromGrid(cov, parameter) {
  const r = cov?.ranges?.[parameter];
  const y = cov?.domain?.axes?.y;
  if (!r || !Array.isArray(r.values) || !y) return null;
  const names = r.axisNames || ["y", "x"];
  const shape = r.shape || [];
  const iy = names.indexOf("y");
  const ny = shape[iy] ?? y.num ?? y.values?.length;
  const nx = r.values.length / ny;
  if (!Number.isInteger(nx) || names[names.length - 1] !== "x") return null;
  const lat = (j) => (y.values ? y.values[j] : ny === 1 ? y.start : y.start + ((y.stop - y.start) * j) / (ny - 1));
  let min = Infinity;
  let max = -Infinity;
  for (const v of r.values) {
    if (v === null || !Number.isFinite(v)) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  if (!(max >= min)) return null;
  const w = niceBinWidth(Math.max(max - min, 1));
  const lo = Math.floor(min / w) * w;
  const n = Math.max(1, Math.ceil((max - lo) / w + 1e-9));
  const edges = Array.from({ length: n + 1 }, (_, i) => lo + i * w);
  const weights = new Array(n).fill(0);
  let total = 0;
  for (let j = 0; j < ny; j++) {
    const cw = Math.cos((lat(j) * Math.PI) / 180);
    for (let i = 0; i < nx; i++) {
      const v = r.values[j * nx + i];
      if (v === null || !Number.isFinite(v)) continue;
      const b = Math.min(n - 1, Math.floor((v - lo) / w));
      weights[b] += cw;
      total += cw;
    }
  }
  if (!(total > 0)) return null;
  return { edges, counts: weights.map((x) => (100 * x) / total) };
}

/** loadRegionStats fetches the residual statistics of region r in datasetId. */
export async function loadRegionStats(datasetId, r, model) {
  const body = await request(
    `/api/collections/${encodeURIComponent(datasetId)}/locations/${encodeURIComponent(r.id)}${query({
      "parameter-name": "residual_depth",
      model,
    })}`,
    { what: "Computing the region's statistics", headers: { Accept: "application/vnd.cov+json, application/problem+json" } },
  );
  const s = normaliseStats(body?.["ridgeflank:statistics"]?.residual_depth, "m");
  if (!s.edges?.length) {
    // The service gave no histogram: bin the returned grid here.
    const h = histogramFromGrid(body, "residual_depth");
    if (h) {
      s.edges = h.edges;
      s.counts = h.counts;
      s.histogramSource = "binned in the browser from the returned grid (area-weighted)";
    }
  }
  return s;
}
