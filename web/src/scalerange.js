// scalerange.js: the value range of a colour scale chosen by the user, typed or fitted to
// what is in view. Pure functions, no DOM: the page feeds them the service's statistics.

/**
 * histogramPercentile returns the value below which the share p (0..1) of the area lies,
 * from a histogram with n+1 edges and n area fractions (summing to 1 over the values in
 * the histogram's range). Values are taken as spread evenly within each bin (linear
 * interpolation of the cumulative distribution), so the answer is within one bin width of
 * the exact weighted percentile. NaN without a usable histogram.
 */
export function histogramPercentile(edges, fractions, p) {
  if (!Array.isArray(edges) || !Array.isArray(fractions) || edges.length !== fractions.length + 1 || !fractions.length) return NaN;
  const total = fractions.reduce((a, f) => a + (f > 0 ? f : 0), 0);
  if (!(total > 0) || !(p >= 0 && p <= 1)) return NaN;
  const target = p * total;
  let cum = 0;
  for (let i = 0; i < fractions.length; i++) {
    const f = fractions[i] > 0 ? fractions[i] : 0;
    if (f > 0 && cum + f >= target) return edges[i] + ((target - cum) / f) * (edges[i + 1] - edges[i]);
    cum += f;
  }
  return edges[edges.length - 1];
}

/** FIT_LOW and FIT_HIGH are the percentiles "fit to view" spans: 2 % to 98 % of the area. */
export const FIT_LOW = 0.02;
export const FIT_HIGH = 0.98;

/**
 * robustRange picks a range from one parameter's statistics (as normaliseStats in
 * regionstats.js reads them): the FIT_LOW–FIT_HIGH percentiles from the histogram, else the
 * 5th–95th percentiles the service reports. Returns {min, max, basis} or null when the
 * statistics hold no data.
 */
export function robustRange(s) {
  let lo = histogramPercentile(s?.edges, s?.fractions, FIT_LOW);
  let hi = histogramPercentile(s?.edges, s?.fractions, FIT_HIGH);
  let basis = `${FIT_LOW * 100}–${FIT_HIGH * 100} % of the area in view`;
  if (!(Number.isFinite(lo) && Number.isFinite(hi))) {
    [lo, hi] = [s?.p05, s?.p95];
    basis = "5–95 % of the area in view";
  }
  if (!(Number.isFinite(lo) && Number.isFinite(hi))) return null;
  if (!(hi > lo)) {
    // One value everywhere: a range around it, so the scale still has a width.
    const pad = Math.abs(lo) > 0 ? Math.abs(lo) * 0.01 : 1;
    [lo, hi] = [lo - pad, hi + pad];
  }
  return { min: lo, max: hi, basis };
}

/**
 * symmetricAbout widens [min, max] to centre ± the larger distance from centre, the form a
 * diverging scale is drawn in (the service's colour.Binding.Linear does the same).
 */
export function symmetricAbout(min, max, centre = 0) {
  const half = Math.max(Math.abs(max - centre), Math.abs(centre - min));
  return { min: centre - half, max: centre + half };
}

/**
 * niceOutward rounds the ends of [min, max] outward to a step of 1, 2 or 5 × 10^k about a
 * twentieth of the span, so the legend reads round numbers (+200 m, not +187.3 m).
 */
export function niceOutward(min, max) {
  const span = max - min;
  if (!(span > 0)) return { min, max };
  const raw = span / 20;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw);
  const r = (v) => Number(v.toPrecision(12));
  return { min: r(Math.floor(min / step) * step), max: r(Math.ceil(max / step) * step) };
}

/**
 * fitRange is "fit to what is in view": the robust range of s, rounded outward, and made
 * symmetric about centre for a diverging scale. Null without data.
 */
export function fitRange(s, { diverging = false, centre = 0 } = {}) {
  const r = robustRange(s);
  if (!r) return null;
  let out = diverging ? symmetricAbout(r.min, r.max, centre) : { min: r.min, max: r.max };
  out = niceOutward(out.min, out.max);
  if (diverging) out = symmetricAbout(out.min, out.max, centre);
  return { ...out, basis: r.basis };
}

/** MAX_RANGE_MAGNITUDE is the service's limit on range ends (colour.MaxRangeMagnitude). */
export const MAX_RANGE_MAGNITUDE = 1e7;

/**
 * parseRange reads the two typed ends; a diverging scale is made symmetric about centre.
 * Throws an Error with a message for the reader when the ends are not usable.
 */
export function parseRange(minText, maxText, { diverging = false, centre = 0 } = {}) {
  const read = (t, which) => {
    const v = Number(String(t ?? "").trim().replace(/\u2212/g, "-").replace(/^\+/, ""));
    if (String(t ?? "").trim() === "" || !Number.isFinite(v)) throw new Error(`The ${which} of the colour range must be a number.`);
    if (Math.abs(v) > MAX_RANGE_MAGNITUDE) throw new Error(`The ${which} of the colour range must lie within ±${MAX_RANGE_MAGNITUDE}.`);
    return v;
  };
  const min = read(minText, "start");
  const max = read(maxText, "end");
  if (!(min < max)) throw new Error("The start of the colour range must be less than its end.");
  return diverging ? symmetricAbout(min, max, centre) : { min, max };
}

/** rangeParam is the tiles' range=min,max query value. */
export function rangeParam(r) {
  return r ? `${r.min},${r.max}` : "";
}

/**
 * legendTicks are the values labelled under the colour bar: both ends always, zero when it
 * lies inside (the centre of a diverging scale), and round values between them that do not
 * crowd the others (at least a fifth of the bar apart, room for "+1,500").
 */
export function legendTicks(min, max, inner = []) {
  const span = max - min;
  const out = [min, max];
  if (min < 0 && max > 0) out.push(0);
  for (const v of inner) {
    if (v > min && v < max && out.every((u) => Math.abs(u - v) >= 0.2 * span)) out.push(v);
  }
  return out.sort((a, b) => a - b);
}
