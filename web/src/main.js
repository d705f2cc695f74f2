// main.js: starts the page. Wires the map, the dataset/layer/model/age-uncertainty choices,
// the legend, the read-out, regions, tracks, imports and the write token.

import "./style.css";
import L from "leaflet";
import { request, query, openapiDocument } from "./api.js";
import { createMap, DataLayer, setReady } from "./mapview.js";
import { Graticule } from "./graticule.js";
import { LandLayer } from "./coastline.js";
import { loadColourScales } from "./colourscales.js";
import { encodeState, decodeState } from "./urlstate.js";
import { fitRange, parseRange, rangeParam } from "./scalerange.js";
import { loadAreaStats } from "./regionstats.js";
import { renderLegend } from "./legend.js";
import { parametersOf, parameterById } from "./parameters.js";
import { evaluationParams, parseAgeSigma, ageSigmaMaxOf, hasAgeSigmaGrid } from "./evaluation.js";
import { Readout } from "./readout.js";
import { Drawer } from "./draw.js";
import { RegionsPanel } from "./regions.js";
import { TracksPanel } from "./tracks.js";
import { PlansPanel } from "./plans.js";
import { JobsPanel } from "./jobs.js";
import { mapToCanvas, downloadCanvas } from "./snapshot.js";
import { askForToken, getToken, setToken } from "./token.js";
import { state, update, onChange } from "./state.js";
import * as messages from "./messages.js";

const $ = (id) => document.getElementById(id);
const CAUTION = "Predicted depths are model estimates, not for navigation: use official charts and surveys and defer to the local hydrographic authority.";

setReady(false);

const map = createMap("map");
new Graticule(map).addTo();
const land = new LandLayer(map);
const data = new DataLayer(map);
const drawer = new Drawer(map);
const readout = new Readout(map, $("readout"), { isBusy: () => drawer.drawing || Boolean(regions?.editor) });
const regions = new RegionsPanel(map, drawer);
const tracks = new TracksPanel(map, drawer);
const plans = new PlansPanel(map, drawer);
new JobsPanel({ onDatasetCreated: (id) => messages.guard(() => loadCollections(id)) });
let scales = new Map();

// ---- choices -------------------------------------------------------------
// Layers, units, models and sediment choices all come from the API: the
// collection document (parameter_names, ridgeflank:models) and /api/models.

// The page opens on residual depth when the dataset offers it (it is a
// residual-depth review page); otherwise on one of the dataset's own grids.
const OPENING_LAYER = "residual_depth";

// The page's state lives in the URL's fragment (urlstate.js): a link restores the
// dataset, layer, model, colour range, view, pinned point, region and plan.
const initial = decodeState(location.hash, { minZoom: map.getMinZoom(), maxZoom: map.getMaxZoom() });

function readHash() {
  return initial;
}

function writeHash() {
  if (!started) return; // the link is read, not overwritten, while the page starts
  const c = map.getCenter();
  const pin = readout.pinned;
  const h = encodeState({
    ...state,
    view: { lat: c.lat, lon: c.lng, zoom: map.getZoom() },
    pin: pin ? { lat: pin.lat, lon: pin.lng } : null,
    region: regions.selected?.id || "",
    plan: plans.plan?.id || "",
    track: tracks.drawnWaypoints || null,
  });
  history.replaceState(null, "", `#${h}`);
  document.body.dataset.hash = h;
}
document.addEventListener("ridgeflank:urlstate", () => writeHash());
map.on("moveend", () => writeHash());

/** currentScale is the layer's colour scale with the user's range, if one is chosen. */
function currentScale() {
  const base = scales.get(state.layer) || null;
  return base && state.range ? base.withRange(state.range.min, state.range.max) : base;
}

/** fillLayers offers exactly the collection's parameters as map layers. */
function fillLayers(c) {
  const sel = $("layer-select");
  sel.replaceChildren();
  for (const p of parametersOf(c)) sel.add(new Option(p.label, p.id));
}

/** fillSediments offers the collection's sediment compaction choices. */
function fillSediments(c) {
  const sel = $("sediment-select");
  const names = c?.["ridgeflank:models"]?.sediment || [];
  sel.replaceChildren(new Option("Service default", ""));
  for (const n of names) sel.add(new Option(n, n));
  const want = state.sediment || readHash().sediment;
  sel.value = names.includes(want) ? want : "";
  sel.disabled = !names.length;
  return sel.value;
}

function collectionBounds(c) {
  const bb = c?.extent?.spatial?.bbox?.[0];
  if (!bb || bb.length < 4 || !bb.every(Number.isFinite)) return null;
  const [w, s, e, n] = bb.length === 6 ? [bb[0], bb[1], bb[3], bb[4]] : bb;
  return L.latLngBounds([s, w], [n, e]);
}

let rangeBasis = ""; // how the current range was found, for the legend

function redraw() {
  const param = parameterById(state.collection, state.layer);
  const scale = currentScale();
  renderLegend($("legend"), scale, param, { noData: scales.noData, background: scales.background, basis: state.range ? rangeBasis : "" });
  $("range-min").value = scale ? String(scale.min) : "";
  $("range-max").value = scale ? String(scale.max) : "";
  $("range-units").textContent = scale?.units || "";
  $("range-reset").disabled = !state.range;
  $("model-select").disabled = !state.datasetId;
  $("model-note").textContent = param?.modelDependent === false ? "This layer does not depend on the cooling model." : "";
  showAgeSigmaHint();
  const bounds = collectionBounds(state.collection);
  data.show(state.datasetId, state.layer, evaluationParams(state), bounds, Number($("opacity").value), rangeParam(state.range));
  document.body.dataset.layer = state.layer;
  document.body.dataset.model = state.model;
  document.body.dataset.dataset = state.datasetId;
  writeHash();
}

let started = false; // no drawing until the initial choices are loaded

onChange((changed) => {
  if (!started) return;
  if (changed.includes("collection")) readout.buildTable();
  if (changed.some((k) => ["datasetId", "layer", "model", "sediment", "ageUncertaintyMa", "collection", "range"].includes(k))) redraw();
  if (changed.includes("layer") && !changed.includes("collection")) regions.refresh();
  if (["model", "sediment", "ageUncertaintyMa", "datasetId", "collection"].some((k) => changed.includes(k))) {
    readout.refresh();
    regions.refresh();
    tracks.refresh();
  }
});

$("layer-select").addEventListener("change", (e) => update({ layer: e.target.value, range: null }));

// ---- colour range ----------------------------------------------------------

$("range-apply").addEventListener("click", () => {
  const scale = scales.get(state.layer);
  try {
    const r = parseRange($("range-min").value, $("range-max").value, { diverging: scale?.diverging, centre: scale?.centre });
    $("range-status").textContent = scale?.diverging && (r.min !== Number($("range-min").value) || r.max !== Number($("range-max").value)) ? "A diverging scale is drawn symmetric about zero." : "";
    rangeBasis = "typed";
    update({ range: r });
  } catch (err) {
    $("range-status").textContent = err.message;
  }
});
for (const id of ["range-min", "range-max"]) $(id).addEventListener("keydown", (e) => e.key === "Enter" && $("range-apply").click());
$("range-reset").addEventListener("click", () => {
  $("range-status").textContent = "";
  update({ range: null });
});

/** viewPolygon is the part of the view inside the dataset's extent, as WKT, or "". */
function viewPolygon() {
  const v = map.getBounds();
  const d = collectionBounds(state.collection);
  const w = Math.max(v.getWest(), d ? d.getWest() : -180);
  const e = Math.min(v.getEast(), d ? d.getEast() : 180);
  const s = Math.max(v.getSouth(), d ? d.getSouth() : -90);
  const n = Math.min(v.getNorth(), d ? d.getNorth() : 90);
  if (!(e > w && n > s)) return "";
  const r = (x) => Number(x.toFixed(5));
  return `POLYGON((${r(w)} ${r(s)}, ${r(e)} ${r(s)}, ${r(e)} ${r(n)}, ${r(w)} ${r(n)}, ${r(w)} ${r(s)}))`;
}

$("range-fit").addEventListener("click", () =>
  messages.guard(async () => {
    const scale = scales.get(state.layer);
    const coords = viewPolygon();
    if (!coords || !state.datasetId) {
      $("range-status").textContent = "The view holds none of this dataset: pan to the data first.";
      return;
    }
    $("range-status").textContent = "Fitting to the values in view…";
    document.body.dataset.fitting = "true";
    try {
      const s = await loadAreaStats(state.datasetId, coords, state.layer, evaluationParams(state));
      const r = fitRange(s, { diverging: scale?.diverging, centre: scale?.centre });
      if (!r) {
        $("range-status").textContent = "No values of this layer are in view.";
        return;
      }
      rangeBasis = `fitted to ${r.basis}`;
      $("range-status").textContent = "";
      update({ range: { min: r.min, max: r.max } });
    } finally {
      delete document.body.dataset.fitting;
    }
  }),
);
$("model-select").addEventListener("change", (e) => update({ model: e.target.value }));
$("sediment-select").addEventListener("change", (e) => update({ sediment: e.target.value }));

// ---- age uncertainty ---------------------------------------------------------
// One seafloor-age uncertainty (Ma, 1σ) for every position in place of the dataset's
// age-uncertainty grid (the service's age-uncertainty-ma); empty means the grid. The page checks
// it against the service's maximum (from its OpenAPI document) and sends nothing while it is wrong.

let ageSigmaMax = null; // the service's largest age uncertainty, Ma; null until known

/** applyAgeSigma reads the field: a good value (or empty) becomes the state, a bad one a message. */
function applyAgeSigma() {
  const input = $("age-sigma");
  try {
    const v = parseAgeSigma(input.value, ageSigmaMax);
    input.removeAttribute("aria-invalid");
    $("age-sigma-status").textContent = "";
    update({ ageUncertaintyMa: v });
  } catch (err) {
    input.setAttribute("aria-invalid", "true");
    $("age-sigma-status").textContent = err.message;
  }
}
$("age-sigma").addEventListener("change", applyAgeSigma);
$("age-sigma").addEventListener("keydown", (e) => e.key === "Enter" && applyAgeSigma());

/** showAgeSigmaHint says what the field does for the chosen dataset. */
function showAgeSigmaHint() {
  const grid = hasAgeSigmaGrid(state.collection);
  const given = state.ageUncertaintyMa !== null;
  const max = ageSigmaMax ? ` (above 0, at most ${ageSigmaMax} Ma)` : " (above 0)";
  $("age-sigma-hint").textContent = !state.collection
    ? ""
    : grid
      ? `Empty: this dataset's age-uncertainty grid. A value${max} replaces the grid at every position: uncertainty layers, read-out, profile band, statistics and downloads. Survey plan checks keep the grid.`
      : `This dataset has no age-uncertainty grid: ${given ? "the value given" : "give a value"}${max} for the track profile's ±1σ band of predicted depth. The uncertainty layers need a grid; survey plan checks do without.`;
}
$("dataset-select").addEventListener("change", (e) => messages.guard(() => chooseDataset(e.target.value, true)));
$("opacity").addEventListener("input", (e) => data.setOpacity(Number(e.target.value)));
$("land-toggle").addEventListener("change", (e) => messages.guard(() => (e.target.checked ? land.show() : land.hide())));

// ---- datasets ------------------------------------------------------------

async function chooseDataset(id, fit) {
  if (!id) {
    update({ datasetId: "", collection: null });
    $("dataset-info").textContent = "No dataset is loaded yet. Upload grids below, or start the service with the synthetic demo basin.";
    return;
  }
  const c = await request(`/api/collections/${encodeURIComponent(id)}`, { what: `Opening dataset ${id}` });
  $("dataset-info").textContent = [c.title, c.description].filter(Boolean).join(" — ");
  const b = collectionBounds(c);
  if (fit && b) map.fitBounds(b, { padding: [10, 10], animate: false });
  // Offer exactly the parameters this dataset's collection document lists.
  const params = parametersOf(c);
  const ids = params.map((p) => p.id);
  const before = parameterById(state.collection, state.layer);
  fillLayers(c);
  const sediment = fillSediments(c);
  const wasLayer = state.layer;
  let layer = state.layer || readHash().layer;
  if (!ids.includes(layer)) {
    const own = (c["ridgeflank:grids"] || []).map((g) => g.role);
    layer = ids.includes(OPENING_LAYER) ? OPENING_LAYER : ids.find((id) => own.includes(id)) || ids[0] || "";
    if (state.layer && before) {
      const now = parameterById(c, layer);
      messages.show(`${c.title || id} has no ${before.label.toLowerCase()}; showing ${(now?.label || layer).toLowerCase()}.`, "info");
    }
  }
  $("layer-select").value = layer;
  // A range from the link belongs to the link's layer; a new layer starts on its default.
  const range = !started && layer === initial.layer ? initial.range : layer === wasLayer ? state.range : null;
  update({ datasetId: id, collection: c, layer, sediment, range });
}

async function loadCollections(prefer = "") {
  const body = await request("/api/collections", { what: "Listing datasets" });
  const list = body?.collections || [];
  const sel = $("dataset-select");
  const current = prefer || state.datasetId || readHash().datasetId;
  sel.replaceChildren();
  for (const c of list) sel.add(new Option(c.title ? `${c.title}` : c.id, c.id));
  if (!list.length) sel.add(new Option("(no datasets)", ""));
  const pick = list.find((c) => c.id === current) ? current : list[0]?.id || "";
  sel.value = pick;
  await chooseDataset(pick, (!state.datasetId || pick !== state.datasetId) && !(initial.view && !started));
}

async function loadModels() {
  const body = await request("/api/models", { what: "Listing cooling models" });
  const list = Array.isArray(body) ? body : body?.models || body?.items || [];
  const sel = $("model-select");
  sel.replaceChildren();
  for (const m of list) {
    const id = m.id || m.params?.id;
    sel.add(new Option(m.name ? `${m.name}` : id, id));
  }
  // The hash's model, else the one already chosen, else the collection's default.
  const ids = list.map((m) => m.id || m.params?.id);
  const pick = [readHash().model, state.model, state.collection?.["ridgeflank:models"]?.default].find((m) => m && ids.includes(m)) || ids[0] || "";
  sel.value = pick;
  update({ models: list, model: pick });
}

// ---- token, snapshot -----------------------------------------------------

function showTokenState() {
  $("token-state").textContent = getToken() ? "Write token set" : "No write token";
  $("token-forget").hidden = !getToken();
}
document.addEventListener("ridgeflank:token", showTokenState);
$("token-button").addEventListener("click", () => askForToken("Paste the write token the service printed at start-up (or one made for you)."));
$("token-forget").addEventListener("click", () => setToken(""));
showTokenState();

function snapshotCanvas() {
  const param = parameterById(state.collection, state.layer);
  const scale = currentScale();
  return mapToCanvas(map, {
    title: `${state.collection?.title || state.datasetId || "no dataset"} · ${param?.label || state.layer} · model ${state.model}${state.sediment ? ` · sediment ${state.sediment}` : ""}${state.ageUncertaintyMa !== null ? ` · age uncertainty ${state.ageUncertaintyMa} Ma (1σ)` : ""}`,
    legendCanvas: $("legend").querySelector("canvas"),
    legendText: scale ? `${scale.min} to ${scale.max} ${scale.units}${scale.note ? ` (${scale.note})` : ""}` : "",
    caution: CAUTION,
  });
}

// "Save map" asks the server for the figure of the view (GET …/figure: graticule labels, scale
// bar, colour bar with units and sign convention, caution drawn in), the one path every tool
// uses; without a dataset it falls back to the canvas snapshot.
$("snapshot").addEventListener("click", () =>
  messages.guard(() =>
    state.datasetId ? saveFigure() : downloadCanvas(snapshotCanvas(), `ridgeflank-map-${state.layer}-${state.model}.png`),
  ),
);

async function saveFigure() {
  const b = map.getBounds();
  const wrap = (x) => ((((x + 180) % 360) + 360) % 360) - 180;
  let [w, e] = [wrap(b.getWest()), wrap(b.getEast())];
  if (b.getEast() - b.getWest() >= 360) [w, e] = [-180, 180];
  const [s, n] = [Math.max(-90, b.getSouth()), Math.min(90, b.getNorth())];
  const q = query({
    bbox: [w, s, e, n].map((v) => v.toFixed(4)).join(","),
    "parameter-name": state.layer,
    ...evaluationParams(state),
    f: "png",
    "width-px": 1600,
    dpi: 150,
  });
  const token = getToken();
  const res = await request(`/api/collections/${encodeURIComponent(state.datasetId)}/figure${q}`, {
    raw: true,
    headers: token ? { Authorization: `Bearer ${token}` } : {},
    what: "Save map",
  });
  const name = res.headers.get("Content-Disposition")?.match(/filename="([^"]+)"/)?.[1] || `ridgeflank-${state.datasetId}-${state.layer}.png`;
  const a = document.createElement("a");
  a.href = URL.createObjectURL(await res.blob());
  a.download = name;
  a.click();
  setTimeout(() => URL.revokeObjectURL(a.href), 10000);
}

// A small scripting surface for tests and power users: the Leaflet map, the
// track panel (its layer holds the drawn track), the plan panel and
// the map snapshot as a PNG data URL.
window.ridgeflank = { map, state, tracks, plans, snapshotDataURL: () => snapshotCanvas().toDataURL("image/png") };

// ---- start ---------------------------------------------------------------

/** loadAgeSigmaLimit reads the service's largest age uncertainty and the link's value against it. */
async function loadAgeSigmaLimit() {
  ageSigmaMax = ageSigmaMaxOf(await openapiDocument().catch(() => null));
  if (initial.ageUncertaintyMa === null) return;
  $("age-sigma").value = String(initial.ageUncertaintyMa);
  applyAgeSigma(); // a value beyond the maximum shows its message and is not used
}

async function start() {
  const land0 = $("land-toggle").checked ? land.show().catch(messages.error) : null;
  await loadAgeSigmaLimit(); // before anything evaluates: a link's value reaches the first requests
  const [sc] = await Promise.all([loadColourScales().catch((e) => (messages.error(e), new Map())), messages.guard(loadCollections)]);
  scales = sc;
  if (sc.background) $("map").style.background = sc.background;
  await messages.guard(loadModels); // after the collection: it names the default model
  if (initial.view) map.setView([initial.view.lat, initial.view.lon], initial.view.zoom, { animate: false });
  started = true;
  readout.buildTable();
  regions.fillParameters();
  redraw();
  await messages.guard(() => regions.load());
  await plans.list().catch((err) => ($("plan-status").textContent = err.message));
  // The rest of the link: region, plan and pinned point, then its exact view again (opening
  // a region or plan fits the map to it).
  if (initial.region && regions.regions.some((r) => r.id === initial.region)) await messages.guard(() => regions.select(initial.region));
  if (initial.track) await messages.guard(() => tracks.useWaypoints(initial.track, false)); // the view comes from the link
  if (initial.plan) await messages.guard(() => plans.openStored(initial.plan));
  if (initial.pin && state.datasetId) readout.pin(L.latLng(initial.pin.lat, initial.pin.lon));
  if (initial.view) map.setView([initial.view.lat, initial.view.lon], initial.view.zoom, { animate: false });
  writeHash();
  document.body.dataset.restored = "true";
  await land0;
}

window.addEventListener("unhandledrejection", (e) => {
  messages.error(e.reason);
  e.preventDefault();
});

start();
