// profile.js: the track profile chart (uPlot): distance along the track
// against observed depth, corrected depth, predicted depth for the chosen
// model with its uncertainty band, and residual depth on a second axis.
// Depths are positive down, so the depth axis grows downward.

import uPlot from "uplot";
import "uplot/dist/uPlot.min.css";

/**
 * drawProfile draws p = {distanceKm, observed, corrected, predicted, bandLow,
 * bandHigh, residual, bandLabel, sigma, sigmaLabel, units, waypoints} into el (sigma: the
 * predicted depth's age uncertainty, m, drawn as a band of its own, named by sigmaLabel); units holds the
 * display unit of each series as the service gave it, waypoints
 * [{name, distanceKm}] are marked by a line and their name. onHover(index|null)
 * follows the cursor. Returns the uPlot instance.
 */
export function drawProfile(el, p, onHover) {
  el.replaceChildren();
  const u = p.units || {};
  const depthUnit = u.predicted || u.observed || u.corrected || "";
  const withUnit = (label, unit) => (unit ? `${label} (${unit})` : label);
  const width = Math.max(320, el.clientWidth || 600);
  const hasBand = p.bandLow?.some(Number.isFinite);
  const nul = (a) => (a ? a.map((v) => (Number.isFinite(v) ? v : null)) : p.distanceKm.map(() => null));
  // ±1σ of the predicted depth from the seafloor-age uncertainty (predicted_depth_uncertainty),
  // a band of its own beside the spread of the models.
  const hasSigma = !!p.predicted && p.sigma?.some(Number.isFinite);
  const off = (k) => (hasSigma ? p.predicted.map((v, i) => (Number.isFinite(v) && Number.isFinite(p.sigma[i]) ? v + k * p.sigma[i] : null)) : null);
  // Drawing order: bands, predicted, corrected, observed on top, residual.
  const data = [p.distanceKm, nul(p.bandHigh), nul(p.bandLow), nul(p.predicted), nul(p.corrected), nul(p.observed), nul(p.residual), nul(off(1)), nul(off(-1))];
  const opts = {
    width,
    height: 190,
    legend: { show: false },
    cursor: { y: false, drag: { x: true, y: false } },
    scales: {
      x: { time: false },
      depth: { dir: -1 },
      res: {},
    },
    axes: [
      { label: "Distance along track (km)", labelSize: 18, size: 36, stroke: "#222" },
      { scale: "depth", label: withUnit("Depth", depthUnit), labelSize: 18, size: 56, stroke: "#222" },
      { scale: "res", side: 1, label: withUnit("Residual", u.residual), labelSize: 18, size: 56, stroke: "#7a4a14", grid: { show: false } },
    ],
    series: [
      { label: "Distance (km)" },
      { label: "Band upper", scale: "depth", stroke: "rgba(179,0,95,0.35)", width: 0.5, show: hasBand, points: { show: false } },
      { label: "Band lower", scale: "depth", stroke: "rgba(179,0,95,0.35)", width: 0.5, show: hasBand, points: { show: false } },
      { label: withUnit("Predicted depth", u.predicted), scale: "depth", stroke: "#b3005f", width: 2, points: { show: false } },
      { label: withUnit("Corrected depth", u.corrected), scale: "depth", stroke: "#1b8a6b", width: 1.2, dash: [6, 3], points: { show: false } },
      { label: withUnit("Observed depth", u.observed), scale: "depth", stroke: "#0d2a5c", width: 1.6, points: { show: false } },
      { label: withUnit("Residual", u.residual), scale: "res", stroke: "#c0650f", width: 1, points: { show: false } },
      { label: "Age-uncertainty upper", scale: "depth", stroke: "rgba(90,84,146,0.45)", width: 0.5, show: hasSigma, points: { show: false } },
      { label: "Age-uncertainty lower", scale: "depth", stroke: "rgba(90,84,146,0.45)", width: 0.5, show: hasSigma, points: { show: false } },
    ],
    bands: [...(hasBand ? [{ series: [1, 2], fill: "rgba(179,0,95,0.18)" }] : []), ...(hasSigma ? [{ series: [7, 8], fill: "rgba(90,84,146,0.22)" }] : [])],
    hooks: {
      ready: [(u) => placeWaypoints(u, p.waypoints || [])],
      setSize: [(u) => placeWaypoints(u, p.waypoints || [])],
      setCursor: [
        (u) => {
          const i = u.cursor.idx;
          onHover?.(i === null || i === undefined ? null : i);
        },
      ],
    },
  };
  const chart = new uPlot(opts, data, el);
  const legend = document.getElementById("profile-legend");
  if (legend) {
    legend.replaceChildren();
    const items = [
      ["Observed depth", "#0d2a5c", "solid"],
      ["Corrected depth", "#1b8a6b", "dashed"],
      ["Predicted depth", "#b3005f", "solid"],
      ...(p.waypoints?.length ? [["Waypoint (name from the track file)", "#003c43", "waypoint"]] : []),
      ...(hasBand ? [[`Band: ${p.bandLabel || "uncertainty"}`, "rgba(179,0,95,0.3)", "band"]] : []),
      ...(hasSigma ? [[`Band: ${p.sigmaLabel || "predicted depth ±1σ from the seafloor-age uncertainty"}`, "rgba(90,84,146,0.35)", "band"]] : []),
      ["Residual, right axis (+ = shallower than the model)", "#c0650f", "solid"],
    ];
    for (const [label, colour, style] of items) {
      const li = document.createElement("li");
      const sw = document.createElement("span");
      sw.className = `swatch swatch-${style}`;
      sw.style.setProperty("--c", colour);
      li.append(sw, document.createTextNode(label));
      legend.append(li);
    }
  }
  el.dataset.points = String(p.distanceKm.length);
  return chart;
}

/**
 * placeWaypoints marks each waypoint on the chart: a vertical line at its
 * distance along the track and its name above, as elements over the plot
 * (class wp-mark, data-distance-km), moved again when the chart resizes.
 */
function placeWaypoints(u, waypoints) {
  for (const old of u.over.querySelectorAll(".wp-mark")) old.remove();
  for (const w of waypoints) {
    if (!Number.isFinite(w.distanceKm)) continue;
    const x = u.valToPos(w.distanceKm, "x");
    const mark = document.createElement("div");
    mark.className = "wp-mark";
    mark.dataset.distanceKm = String(w.distanceKm);
    mark.style.left = `${x}px`;
    const label = document.createElement("span");
    label.className = "wp-label";
    if (x > u.over.clientWidth * 0.75) label.classList.add("wp-label-left");
    label.textContent = w.name;
    mark.append(label);
    u.over.append(mark);
  }
}
