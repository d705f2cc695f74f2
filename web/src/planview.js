// planview.js: the pure parts of the survey-plan panel (no browser needed):
// the plan body sent to /api/plans and /api/plans/check (survey.Plan), the
// settings form's fields, and reading a check answer (survey.Check) into
// what the profile, tables and map draw. Every number shown is the
// service's; nothing here recomputes a check.

import { wrapLon } from "./format.js";

/**
 * SETTINGS are the settings form's number fields: the JSON name of
 * survey.Settings, a label, the unit shown, and the swath mode a swath field
 * belongs to. An empty field is left out of the body (the service's default).
 */
export const SETTINGS = [
  { key: "speed_on_line_kn", label: "Speed on line", unit: "kn", min: 0 },
  { key: "speed_transit_kn", label: "Speed in transit", unit: "kn", min: 0 },
  { key: "swath_angle_deg", label: "Swath opening angle (total)", unit: "°", min: 0, max: 180, swath: "angle" },
  { key: "swath_width_m", label: "Swath width on the seafloor", unit: "m", min: 0, swath: "width" },
  { key: "overlap_pct", label: "Overlap of adjacent swaths", unit: "%", min: 0, max: 100 },
  { key: "safety_depth_m", label: "Safety depth", unit: "m", min: 0 },
  { key: "sample_spacing_km", label: "Sample spacing", unit: "km", min: 0 },
  { key: "water_temperature_c", label: "Water temperature", unit: "°C", min: -2.5, max: 40 },
  { key: "salinity_psu", label: "Salinity", unit: "psu", min: 0, max: 45 },
];

/**
 * settingsFrom reads the form's text values {key: string} into
 * survey.Settings numbers for the chosen swath mode ("angle" or "width"),
 * leaving empty fields out. Throws an Error naming the field for a value
 * that is not a number or lies outside the field's range (the service
 * checks again and has the last word).
 */
export function settingsFrom(values, swathMode, choices = {}) {
  const out = {};
  for (const f of SETTINGS) {
    if (f.swath && f.swath !== swathMode) continue;
    const raw = String(values[f.key] ?? "").trim();
    if (raw === "") continue;
    const v = Number(raw.replace(",", "."));
    if (!Number.isFinite(v)) throw new Error(`${f.label}: "${raw}" is not a number.`);
    if (v < f.min || (f.max !== undefined && v > f.max)) throw new Error(`${f.label}: ${v} ${f.unit} is outside ${f.min}..${f.max ?? "∞"} ${f.unit}.`);
    out[f.key] = v;
  }
  for (const k of ["dataset", "model", "sediment"]) if (choices[k]) out[k] = choices[k];
  return out;
}

/**
 * planBody is the survey.Plan JSON of the page's plan: lines of waypoints
 * with longitudes wrapped into −180..180, names kept when given; id and
 * version only when the plan is stored.
 */
export function planBody(plan) {
  const body = {
    name: plan.name || "",
    lines: plan.lines.map((l) => {
      const line = { waypoints: l.waypoints.map((w) => ({ lon: wrapLon(w.lon), lat: w.lat, ...(w.name ? { name: w.name } : {}) })) };
      if (l.name) line.name = l.name;
      return line;
    }),
    settings: { ...plan.settings },
  };
  if (plan.description) body.description = plan.description;
  if (plan.id) body.id = plan.id;
  if (plan.version) body.version = plan.version;
  return body;
}

/** planFromBody reads a stored survey.Plan into the page's plan (a copy). */
export function planFromBody(p) {
  return {
    id: p.id || "",
    version: p.version || 0,
    name: p.name || "",
    description: p.description || "",
    lines: (p.lines || []).map((l) => ({ name: l.name || "", waypoints: (l.waypoints || []).map((w) => ({ lon: Number(w.lon), lat: Number(w.lat), name: w.name || "" })) })),
    settings: { ...(p.settings || {}) },
  };
}

const num = (v) => (v === null || v === undefined || v === "" ? null : Number.isFinite(Number(v)) ? Number(v) : null);

/**
 * lineProfile reads line i of a check answer into chart columns: distance,
 * the expected depth split by its source (observed, predicted: each null
 * where the other source holds, joined at the changes so the line is
 * unbroken), the band expected ± depth_uncertainty_m, the hazard marks
 * (expected depth on the samples a hazard covers, else null), and the
 * sample positions [lon, lat].
 */
export function lineProfile(check, i) {
  const line = check?.lines?.[i];
  const s = line?.samples || {};
  const d = (s.distance_km || []).map(num);
  const n = d.length;
  const col = (name) => (Array.isArray(s[name]) && s[name].length === n ? s[name].map(num) : d.map(() => null));
  const depth = col("expected_depth_m");
  const unc = col("depth_uncertainty_m");
  const source = Array.isArray(s.depth_source) && s.depth_source.length === n ? s.depth_source : d.map(() => "none");
  const bySource = (want) =>
    depth.map((v, k) => {
      if (source[k] === want) return v;
      // A neighbour of the wanted source: keep the value so the two parts meet.
      if ((k > 0 && source[k - 1] === want) || (k < n - 1 && source[k + 1] === want)) return v;
      return null;
    });
  const band = (sign) => depth.map((v, k) => (v !== null && unc[k] !== null ? v + sign * unc[k] : null));
  const hazard = d.map(() => null);
  const hazards = (check.hazards || []).filter((h) => h.line === i);
  for (const h of hazards) for (let k = Math.max(0, h.from_sample); k <= Math.min(n - 1, h.to_sample); k++) hazard[k] = depth[k];
  return {
    name: line?.name || `Line ${i + 1}`,
    distanceKm: d,
    expected: depth,
    observed: bySource("observed"),
    predicted: bySource("predicted"),
    source,
    uncertainty: unc,
    bandLow: band(-1),
    bandHigh: band(+1),
    hazard,
    hazards,
    positions: d.map((_, k) => [num(s.lon?.[k]), num(s.lat?.[k])]),
    timeH: col("time_h"),
    swathM: col("swath_width_m"),
    soundSpeed: col("sound_speed_m_s"),
    soundingSpacingM: col("sounding_spacing_m"),
    distanceNmi: col("distance_nmi"),
  };
}

/** fmtDuration writes hours as "3 h 05 min", or "2 d 04 h 10 min" from 48 h. */
export function fmtDuration(h) {
  if (h === null || h === undefined || !Number.isFinite(h)) return "no data";
  let min = Math.round(h * 60);
  const d = h >= 48 ? Math.floor(min / 1440) : 0;
  min -= d * 1440;
  const hh = Math.floor(min / 60);
  const mm = String(min - hh * 60).padStart(2, "0");
  return d ? `${d} d ${String(hh).padStart(2, "0")} h ${mm} min` : `${hh} h ${mm} min`;
}

/** HAZARD_LABELS name the service's hazard kinds (survey.Hazard*) for people. */
export const HAZARD_LABELS = {
  shallower_than_safety_depth: "shallower than the safety depth",
  observed_above_prediction: "observed far above the prediction (seamount?)",
  steep_slope: "steep slope",
  no_data: "no data",
};
