// snapshot.js: saves the current map view as a PNG: the data tiles, land and
// vector layers as drawn (all served by this service, so the canvas stays
// readable), with the legend, the model and the caution written below.

const FOOTER_PX = 74;

function paneOrder(map) {
  return Object.values(map.getPanes())
    .map((el) => ({ el, z: Number(getComputedStyle(el).zIndex) || 0 }))
    .sort((a, b) => a.z - b.z)
    .map((p) => p.el);
}

/** mapToCanvas draws the visible map into a new canvas and returns it. */
export function mapToCanvas(map, { title = "", legendCanvas = null, legendText = "", caution = "" } = {}) {
  const box = map.getContainer().getBoundingClientRect();
  const w = Math.round(box.width);
  const h = Math.round(box.height);
  const c = document.createElement("canvas");
  c.width = w;
  c.height = h + FOOTER_PX;
  const ctx = c.getContext("2d");
  ctx.fillStyle = getComputedStyle(map.getContainer()).backgroundColor || "#eef2f5";
  ctx.fillRect(0, 0, w, h);
  const seen = new Set();
  for (const pane of paneOrder(map)) {
    for (const el of pane.querySelectorAll("img.leaflet-tile-loaded, canvas")) {
      if (seen.has(el)) continue;
      seen.add(el);
      const r = el.getBoundingClientRect();
      if (r.width === 0 || r.height === 0 || r.right < box.left || r.left > box.right || r.bottom < box.top || r.top > box.bottom) continue;
      const alpha = Number(getComputedStyle(el.closest(".leaflet-layer") || el).opacity);
      ctx.globalAlpha = Number.isFinite(alpha) ? alpha : 1;
      try {
        ctx.drawImage(el, r.left - box.left, r.top - box.top, r.width, r.height);
      } catch {
        /* an image that is not decodable is skipped */
      }
    }
  }
  ctx.globalAlpha = 1;
  ctx.fillStyle = "#ffffff";
  ctx.fillRect(0, h, w, FOOTER_PX);
  ctx.fillStyle = "#111";
  ctx.font = "bold 13px sans-serif";
  ctx.fillText(title, 8, h + 18);
  ctx.font = "12px sans-serif";
  if (legendCanvas) {
    ctx.drawImage(legendCanvas, 8, h + 26);
    ctx.fillText(legendText, 8 + legendCanvas.width + 10, h + 38);
  }
  ctx.fillStyle = "#7a1f00";
  ctx.fillText(caution, 8, h + 62);
  return c;
}

/** downloadCanvas saves a canvas as a PNG file. */
export function downloadCanvas(canvas, filename) {
  return new Promise((resolve) => {
    canvas.toBlob((blob) => {
      const a = document.createElement("a");
      a.href = URL.createObjectURL(blob);
      a.download = filename;
      document.body.append(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(a.href), 1000);
      resolve();
    }, "image/png");
  });
}
