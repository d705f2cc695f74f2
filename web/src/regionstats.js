// regionstats.js: residual-depth statistics of a stored region, from the
// service's EDR locations query (/collections/{id}/locations/{regionId}),
// whose CoverageJSON answer carries area-weighted statistics per parameter
// under "ridgeflank:statistics".
// Returns {count, noData, mean, median, std, p05, p25, p75, p95, edges, counts}
// with counts as the share of the region's area in each bin (%).

import { request, query } from "./api.js";

const num = (v) => (v === null || v === undefined ? NaN : Number(v));

function pick(o, ...names) {
  for (const n of names) if (o && o[n] !== undefined) return o[n];
  return undefined;
}

/** normaliseStats reads a statistics object as the service writes it. */
export function normaliseStats(s) {
  const h = s.histogram || {};
  let edges = h.edges || h.bin_edges || h.edges_m || null;
  let counts = h.area_fractions || h.area_fraction || h.fractions || null;
  if (!counts && h.counts) {
    const n = h.counts.reduce((a, b) => a + b, 0);
    counts = n > 0 ? h.counts.map((c) => c / n) : h.counts;
  }
  if (!edges && Array.isArray(h.bins)) {
    edges = [...h.bins.map((b) => num(pick(b, "min", "from", "lower", "min_m"))), num(pick(h.bins[h.bins.length - 1], "max", "to", "upper", "max_m"))];
    counts = h.bins.map((b) => num(pick(b, "fraction", "area_fraction", "count", "weight")));
  }
  if (counts && counts.length) {
    const total = counts.reduce((a, b) => a + b, 0);
    if (total > 0 && total <= 1.0001) counts = counts.map((c) => c * 100);
  }
  return {
    count: num(pick(s, "count", "cells", "n")),
    noData: num(pick(s, "no_data", "nodata", "no_data_cells", "missing")),
    mean: num(pick(s, "mean_m", "mean", "area_weighted_mean_m")),
    median: num(pick(s, "median_m", "median")),
    std: num(pick(s, "std_m", "stddev_m", "std", "spread_m")),
    p05: num(pick(s, "p05_m", "p05", "p5_m")),
    p25: num(pick(s, "p25_m", "p25")),
    p75: num(pick(s, "p75_m", "p75")),
    p95: num(pick(s, "p95_m", "p95")),
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
  const all = body?.["ridgeflank:statistics"] || body?.statistics || {};
  const s = normaliseStats(all.residual_depth || {});
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
