// colourscales.js: reads GET /api/colour-scales, the one definition of the
// colour scales that the service also uses to draw its PNG tiles, and turns it
// into per-parameter scales for the legend. The document holds ramps (stops
// and 32 evenly spaced samples, interpolated by the service in OKLab) and
// bindings (parameter → ramp, min, max, centre, units, label).

import { request } from "./api.js";

let cache = null;

function hexToRgb(h) {
  const m = /^#?([0-9a-f]{2})([0-9a-f]{2})([0-9a-f]{2})$/i.exec(h || "");
  return m ? [parseInt(m[1], 16), parseInt(m[2], 16), parseInt(m[3], 16)] : [128, 128, 128];
}

/**
 * Scale is one parameter's colour scale. position(v) maps a value to [0, 1]
 * exactly as the service does (diverging ramps put the centre at 0.5 and
 * scale both sides by the larger half-range); colourAt(t) reads the ramp's
 * samples with linear interpolation between neighbours.
 */
export class Scale {
  constructor(binding, ramp) {
    this.parameter = binding.parameter;
    const m = /^(.*?)\s*\((.*)\)\s*$/.exec(binding.label || "");
    this.title = m ? m[1] : binding.label || binding.parameter;
    this.note = m ? m[2] : "";
    this.label = binding.label || binding.parameter;
    this.units = binding.units || "";
    this.min = Number(binding.min);
    this.max = Number(binding.max);
    this.centre = Number(binding.centre || 0);
    this.kind = ramp?.kind || "sequential";
    this.rampId = ramp?.id || binding.ramp;
    this.description = ramp?.description || "";
    const samples = ramp?.samples?.length ? ramp.samples : (ramp?.stops || []).map((s) => s.colour);
    this.samples = samples.map(hexToRgb);
  }

  /**
   * withRange is this scale drawn over [min, max] instead of the service's default range
   * (the tiles get the same range as range=min,max); defaultMin/defaultMax keep the default.
   */
  withRange(min, max) {
    const s = Object.create(Scale.prototype);
    Object.assign(s, this, { min, max, defaultMin: this.defaultMin ?? this.min, defaultMax: this.defaultMax ?? this.max, custom: true });
    return s;
  }

  get diverging() {
    return this.kind === "diverging";
  }

  position(v) {
    if (!Number.isFinite(v)) return NaN;
    if (this.diverging) {
      const half = Math.max(this.max - this.centre, this.centre - this.min);
      return half <= 0 ? 0.5 : 0.5 + (0.5 * (v - this.centre)) / half;
    }
    return this.max === this.min ? 0.5 : (v - this.min) / (this.max - this.min);
  }

  colourAt(t) {
    const n = this.samples.length;
    if (!n) return [128, 128, 128];
    const x = Math.min(1, Math.max(0, t)) * (n - 1);
    const i = Math.min(n - 2, Math.floor(x));
    if (n === 1) return this.samples[0];
    const f = x - i;
    const a = this.samples[i];
    const b = this.samples[i + 1];
    return [0, 1, 2].map((k) => Math.round(a[k] + f * (b[k] - a[k])));
  }
}

/**
 * parseColourDocument builds a Map parameter → Scale from the JSON document; the map also
 * carries the document's background colour (.background) and no-data hatch (.noData).
 */
export function parseColourDocument(doc) {
  const ramps = new Map((doc?.ramps || []).map((r) => [r.id, r]));
  const out = new Map();
  for (const b of doc?.bindings || []) out.set(b.parameter, new Scale(b, ramps.get(b.ramp)));
  out.background = doc?.background || "";
  out.noData = doc?.no_data || null;
  return out;
}

/**
 * hatchCSS is a CSS background drawing the service's no-data hatch (diagonal lines of
 * noData.colour, line_width_px wide every spacing_px pixels) over background.
 */
export function hatchCSS(noData, background = "transparent") {
  if (!noData?.colour) return background;
  const w = noData.line_width_px || 2;
  const sp = noData.spacing_px || 6;
  // Lines of constant x + y run at 45° (from lower left to upper right); along x the period
  // is spacing_px, so across the lines it is spacing_px / √2.
  const period = (sp / Math.SQRT2).toFixed(3);
  const line = ((w / sp) * (sp / Math.SQRT2)).toFixed(3);
  return `repeating-linear-gradient(-45deg, ${noData.colour} 0 ${line}px, transparent ${line}px ${period}px), ${background}`;
}

/** loadColourScales fetches the document once and returns Map parameter → Scale. */
export async function loadColourScales() {
  if (!cache) {
    cache = request("/api/colour-scales", { what: "Loading the colour scales" })
      .then(parseColourDocument)
      .catch((err) => {
        cache = null;
        throw err;
      });
  }
  return cache;
}
