// planprofile.js: the depth profile of one checked survey line (uPlot):
// distance along the line against the expected depth, drawn by its source
// (observed bathymetry or the cooling model's prediction), with the band
// expected ± uncertainty, the safety depth and the hazards marked. Depths are
// positive down, so the depth axis grows downward. Series colours come from
// the project's colour ramps (GET /api/colour-scales) when the page has them.

import uPlot from "uplot";
import "uplot/dist/uPlot.min.css";

/**
 * seriesColours picks the profile's colours from the project's colour
 * scales (Map parameter → Scale): observed from the deep end of the residual
 * ramp, predicted and hazards from the heat-flow ramp; fixed fallbacks when
 * the scales are not loaded.
 */
export function seriesColours(scales) {
  const rgb = (scale, t, fallback) => {
    const c = scale?.colourAt?.(t);
    return c ? `rgb(${c[0]}, ${c[1]}, ${c[2]})` : fallback;
  };
  const residual = scales?.get?.("residual_depth");
  const heat = scales?.get?.("heat_flow");
  return {
    observed: rgb(residual, 0.02, "#1346b8"),
    predicted: rgb(heat, 0.45, "#b0402f"),
    hazard: rgb(heat, 0.7, "#e07a40"),
    band: "rgba(90, 110, 140, 0.22)",
    safety: "#222",
  };
}

/**
 * drawPlanProfile draws prof (from planview.lineProfile) into el with the
 * safety depth (m, may be null) and colours; onHover(index|null) follows the
 * cursor. Returns the uPlot instance.
 */
export function drawPlanProfile(el, prof, { safetyDepthM = null, colours, onHover } = {}) {
  el.replaceChildren();
  const width = Math.max(320, el.clientWidth || 600);
  const hasBand = prof.bandLow.some((v) => v !== null);
  const safety = prof.distanceKm.map(() => (Number.isFinite(safetyDepthM) && safetyDepthM > 0 ? safetyDepthM : null));
  const data = [prof.distanceKm, prof.bandHigh, prof.bandLow, prof.predicted, prof.observed, prof.hazard, safety];
  const chart = new uPlot(
    {
      width,
      height: 200,
      legend: { show: false },
      cursor: { y: false, drag: { x: true, y: false } },
      scales: { x: { time: false }, depth: { dir: -1 } },
      axes: [
        { label: "Distance along the line (km)", labelSize: 18, size: 36, stroke: "#222" },
        { scale: "depth", label: "Expected depth (m)", labelSize: 18, size: 60, stroke: "#222" },
      ],
      series: [
        { label: "Distance (km)" },
        { label: "Band upper", scale: "depth", stroke: colours.band, width: 0, show: hasBand, points: { show: false } },
        { label: "Band lower", scale: "depth", stroke: colours.band, width: 0, show: hasBand, points: { show: false } },
        { label: "Expected depth, predicted (m)", scale: "depth", stroke: colours.predicted, width: 2, dash: [6, 3], points: { show: false } },
        { label: "Expected depth, observed (m)", scale: "depth", stroke: colours.observed, width: 2, points: { show: false } },
        { label: "Hazard", scale: "depth", stroke: colours.hazard, width: 5, points: { show: true, size: 6, stroke: colours.hazard, fill: colours.hazard } },
        { label: "Safety depth (m)", scale: "depth", stroke: colours.safety, width: 1, dash: [2, 4], points: { show: false } },
      ],
      bands: hasBand ? [{ series: [1, 2], fill: colours.band }] : [],
      hooks: {
        setCursor: [
          (u) => {
            const i = u.cursor.idx;
            onHover?.(i === null || i === undefined ? null : i);
          },
        ],
      },
    },
    data,
    el,
  );
  el.dataset.points = String(prof.distanceKm.length);
  el.dataset.hazardPoints = String(prof.hazard.filter((v) => v !== null).length);
  return chart;
}

/** planLegend lists the profile's series with their swatches in ul. */
export function planLegend(ul, colours, { hasBand, hasSafety }) {
  ul.replaceChildren();
  const items = [
    ["Expected depth from observed bathymetry", colours.observed, "solid"],
    ["Expected depth predicted by the cooling model (no bathymetry)", colours.predicted, "dashed"],
    ...(hasBand ? [["Band: expected depth ± its uncertainty", colours.band, "band"]] : []),
    ["Hazard", colours.hazard, "solid"],
    ...(hasSafety ? [["Safety depth", colours.safety, "dashed"]] : []),
  ];
  for (const [label, colour, style] of items) {
    const li = document.createElement("li");
    const sw = document.createElement("span");
    sw.className = `swatch swatch-${style}`;
    sw.style.setProperty("--c", colour);
    li.append(sw, document.createTextNode(label));
    ul.append(li);
  }
}
