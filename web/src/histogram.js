// histogram.js: a bar chart of a region's residual-depth distribution (uPlot).

import uPlot from "uplot";
import "uplot/dist/uPlot.min.css";

let chart = null;

/**
 * drawHistogram draws bins into el. edges has n+1 bin edges (units in the
 * axis label), counts (or area fractions) has n values.
 */
export function drawHistogram(el, edges, counts, { xLabel = "Residual depth (m)", yLabel = "Share of area (%)" } = {}) {
  if (chart) {
    chart.destroy();
    chart = null;
  }
  el.replaceChildren();
  if (!edges?.length || !counts?.length) return;
  const centres = counts.map((_, i) => (edges[i] + edges[i + 1]) / 2);
  const width = Math.max(240, el.clientWidth || 300);
  const barPaths = uPlot.paths.bars({ size: [0.92, Infinity], align: 0 });
  chart = new uPlot(
    {
      width,
      height: 170,
      legend: { show: false },
      cursor: { drag: { x: false, y: false } },
      scales: { x: { time: false, range: [edges[0], edges[edges.length - 1]] } },
      axes: [
        { label: xLabel, size: 40, labelSize: 18, stroke: "#222" },
        { label: yLabel, size: 46, labelSize: 18, stroke: "#222" },
      ],
      series: [{}, { label: yLabel, paths: barPaths, fill: "rgba(35, 85, 140, 0.75)", stroke: "#1f3f74", points: { show: false } }],
    },
    [centres, counts],
    el,
  );
  el.dataset.bins = String(counts.length);
  return chart;
}
