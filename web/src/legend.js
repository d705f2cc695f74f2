// legend.js: the colour bar for the current layer, drawn value by value from
// the same scale definition the service uses for its PNG tiles.

import { fmt } from "./format.js";
import { unitText } from "./parameters.js";
import { legendTicks } from "./scalerange.js";
import { hatchCSS } from "./colourscales.js";

/** niceTicks returns round numbers spanning [min, max], about n of them. */
export function niceTicks(min, max, n = 5) {
  if (!(max > min)) return [min];
  const raw = (max - min) / n;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * mag).find((s) => s >= raw) || raw;
  const ticks = [];
  for (let v = Math.ceil(min / step) * step; v <= max + step * 1e-9; v += step) ticks.push(Math.abs(v) < step * 1e-9 ? 0 : v);
  return ticks;
}

/**
 * renderLegend draws scale (a Scale from colourscales.js, or null) for param
 * (a parameter of the collection, from parameters.js, or null) into container: title and units, the colour bar, ticks, and the scale's own
 * note (for residuals, its sign convention).
 */
export function renderLegend(container, scale, param, { noData = null, background = "", basis = "" } = {}) {
  container.replaceChildren();
  const title = document.createElement("div");
  title.className = "legend-title";
  const units = scale?.units || unitText(param?.unit);
  title.textContent = `${scale?.title || param?.label || ""}${units ? ` (${units})` : ""}`;
  container.append(title);
  if (!scale || !scale.samples.length || !(scale.max > scale.min)) {
    const p = document.createElement("p");
    p.className = "legend-missing";
    p.textContent = "No colour scale is available for this layer.";
    container.append(p);
    return;
  }
  const width = 256;
  const height = 14;
  const canvas = document.createElement("canvas");
  canvas.width = width;
  canvas.height = height;
  canvas.className = "legend-bar";
  canvas.setAttribute("role", "img");
  const digits = scale.max - scale.min < 10 ? 1 : 0;
  canvas.setAttribute("aria-label", `Colour bar from ${fmt(scale.min, digits)} to ${fmt(scale.max, digits)} ${units}`);
  const ctx = canvas.getContext("2d");
  const span = scale.max - scale.min;
  for (let x = 0; x < width; x++) {
    const v = scale.min + (span * (x + 0.5)) / width;
    const [r, g, b] = scale.colourAt(scale.position(v));
    ctx.fillStyle = `rgb(${r},${g},${b})`;
    ctx.fillRect(x, 0, 1, height);
  }
  container.append(canvas);

  const ticks = document.createElement("div");
  ticks.className = "legend-ticks";
  ticks.style.width = `${width}px`;
  container.dataset.min = String(scale.min);
  container.dataset.max = String(scale.max);
  for (const v of legendTicks(scale.min, scale.max, niceTicks(scale.min, scale.max, 4))) {
    const t = document.createElement("span");
    const pos = (v - scale.min) / span;
    t.style.left = `${pos * 100}%`;
    if (pos < 0.02) t.className = "tick-start";
    else if (pos > 0.98) t.className = "tick-end";
    const end = v === scale.min || v === scale.max;
    const d = end && !Number.isInteger(v) ? Math.max(digits, Math.min(3, -Math.floor(Math.log10(Math.abs(v) || 1)) + 2)) : digits;
    t.textContent = scale.diverging && v > 0 ? `+${fmt(v, d)}` : fmt(v, d);
    t.dataset.value = String(v);
    ticks.append(t);
  }
  container.append(ticks);

  const info = document.createElement("p");
  info.className = "legend-range small";
  info.id = "legend-range";
  const dflt = scale.custom ? ` (default ${fmt(scale.defaultMin, digits)} to ${fmt(scale.defaultMax, digits)})` : "";
  info.textContent = `Range ${fmt(scale.min, digits)} to ${fmt(scale.max, digits)}${units ? ` ${units}` : ""}${basis ? `, ${basis}` : scale.custom ? ", chosen" : ""}${dflt}; values beyond the ends take the end colours.`;
  container.append(info);

  if (noData) {
    const nd = document.createElement("div");
    nd.className = "legend-nodata";
    const sw = document.createElement("span");
    sw.className = "swatch";
    sw.style.background = hatchCSS(noData, "#ffffff");
    const bg = document.createElement("span");
    bg.className = "swatch";
    bg.style.background = background;
    nd.append(sw, document.createTextNode(" no data in the grid "), bg, document.createTextNode(" outside the grid"));
    container.append(nd);
  }

  if (scale.note) {
    const p = document.createElement("p");
    p.className = "legend-note";
    p.id = "legend-note";
    p.textContent = scale.diverging ? `Sign convention: ${scale.note}.` : `${scale.note[0].toUpperCase()}${scale.note.slice(1)}.`;
    container.append(p);
  }
  if (scale.diverging) {
    const ends = document.createElement("div");
    ends.className = "legend-ends";
    ends.innerHTML = "<span>deeper than the model</span><span>shallower than the model</span>";
    container.append(ends);
  }
}
