// urlstate.js: the page's state in the URL's fragment, so a link restores what was on
// screen: dataset, layer, model, sediment law, age uncertainty, colour range, the view (centre and zoom), the
// pinned point, the selected region, the open survey plan and a drawn track (its waypoints, at
// most MAX_TRACK_WAYPOINTS). Pure functions, no DOM.

const ID = /^[A-Za-z0-9._:-]{1,200}$/;

/** MAX_TRACK_WAYPOINTS bounds the waypoints a link carries (a longer track is left out). */
export const MAX_TRACK_WAYPOINTS = 100;

function numbers(text, n) {
  const parts = String(text ?? "").split(",");
  if (parts.length !== n) return null;
  const v = parts.map((p) => (p.trim() === "" ? NaN : Number(p)));
  return v.every(Number.isFinite) ? v : null;
}

/** round keeps a coordinate to 5 decimals (about 1 m), enough for a link. */
const round = (v, d = 5) => Number(v.toFixed(d));

/**
 * encodeState writes s ({datasetId, layer, model, sediment, ageUncertaintyMa, range: {min, max},
 * view: {lat, lon, zoom}, pin: {lat, lon}, region, plan, track: [[lon, lat], …]}; any may be
 * missing) as the
 * fragment's query string (without "#").
 */
export function encodeState(s) {
  const h = new URLSearchParams();
  if (s.datasetId) h.set("dataset", s.datasetId);
  if (s.layer) h.set("layer", s.layer);
  if (s.model) h.set("model", s.model);
  if (s.sediment) h.set("sediment", s.sediment);
  if (Number.isFinite(s.ageUncertaintyMa) && s.ageUncertaintyMa > 0) h.set("sigma", String(s.ageUncertaintyMa));
  if (s.range && Number.isFinite(s.range.min) && Number.isFinite(s.range.max)) h.set("range", `${s.range.min},${s.range.max}`);
  if (s.view) h.set("view", `${round(s.view.lat)},${round(s.view.lon)},${s.view.zoom}`);
  if (s.pin) h.set("pin", `${round(s.pin.lat)},${round(s.pin.lon)}`);
  if (s.region) h.set("region", s.region);
  if (s.plan) h.set("plan", s.plan);
  if (Array.isArray(s.track) && s.track.length >= 2 && s.track.length <= MAX_TRACK_WAYPOINTS) {
    h.set("track", s.track.map(([lon, lat]) => `${round(lon)},${round(lat)}`).join(";"));
  }
  return h.toString().replace(/%2C/g, ",").replace(/%3B/g, ";");
}

/**
 * decodeState reads a fragment (with or without "#") back. Values that cannot be right
 * (latitude beyond ±90°, zoom outside minZoom..maxZoom, ids with unexpected characters, an
 * empty or reversed range, an age uncertainty that is not a number above 0) are left out, so a damaged link opens the page on its defaults
 * for those parts only.
 */
export function decodeState(hash, { minZoom = 0, maxZoom = 22 } = {}) {
  const h = new URLSearchParams(String(hash || "").replace(/^#/, ""));
  const out = { datasetId: "", layer: "", model: "", sediment: "", ageUncertaintyMa: null, range: null, view: null, pin: null, region: "", plan: "", track: null };
  for (const [k, key] of [["dataset", "datasetId"], ["layer", "layer"], ["model", "model"], ["sediment", "sediment"], ["region", "region"], ["plan", "plan"]]) {
    const v = h.get(k) || "";
    if (ID.test(v)) out[key] = v;
  }
  const sigma = numbers(h.get("sigma"), 1);
  if (sigma && sigma[0] > 0) out.ageUncertaintyMa = sigma[0]; // the page checks it against the service's maximum
  const r = numbers(h.get("range"), 2);
  if (r && r[0] < r[1]) out.range = { min: r[0], max: r[1] };
  const v = numbers(h.get("view"), 3);
  if (v && Math.abs(v[0]) <= 90 && Math.abs(v[1]) <= 540 && Number.isInteger(v[2]) && v[2] >= minZoom && v[2] <= maxZoom) {
    out.view = { lat: v[0], lon: v[1], zoom: v[2] };
  }
  const p = numbers(h.get("pin"), 2);
  if (p && Math.abs(p[0]) <= 90 && Math.abs(p[1]) <= 540) out.pin = { lat: p[0], lon: p[1] };
  const t = String(h.get("track") || "").split(";").filter((x) => x !== "").map((x) => numbers(x, 2));
  if (t.length >= 2 && t.length <= MAX_TRACK_WAYPOINTS && t.every((w) => w && Math.abs(w[1]) <= 90 && Math.abs(w[0]) <= 540)) out.track = t;
  return out;
}
