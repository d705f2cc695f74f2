// regions.js: the regions panel. Lists stored regions (GET /api/regions),
// draws new ones and saves them (POST), edits their vertices and saves with
// the version they were read at (PUT with If-Match), deletes them (DELETE),
// and for the chosen region shows the map layer's statistics (with a
// comparison of the cooling models) and download
// links for its grids, all through the public API.

import L from "leaflet";
import { request, query } from "./api.js";
import { Editor } from "./draw.js";
import { polygonFromLatLngs, toWKT } from "./geometry.js";
import { drawHistogram } from "./histogram.js";
import { fmt, fmtSigned } from "./format.js";
import { state } from "./state.js";
import { evaluationParams } from "./evaluation.js";
import { parametersOf, parameterById, unitText, digitsFor } from "./parameters.js";
import * as messages from "./messages.js";
import { loadRegionStats } from "./regionstats.js";

const $ = (id) => document.getElementById(id);

/** regionFromFeature normalises one GeoJSON Feature from the service. */
export function regionFromFeature(f, etag = "") {
  const p = f.properties || {};
  return {
    id: String(f.id ?? p.id ?? ""),
    name: p.name || p.title || `Region ${f.id ?? ""}`,
    version: p.version ?? f.version ?? null,
    areaKm2: p.area_km2 ?? null,
    geometry: f.geometry,
    etag,
    feature: f,
  };
}

function featuresOf(body) {
  if (!body) return [];
  if (Array.isArray(body)) return body;
  if (Array.isArray(body.features)) return body.features;
  if (Array.isArray(body.regions)) return body.regions;
  if (Array.isArray(body.items)) return body.items;
  return [];
}

export class RegionsPanel {
  constructor(map, drawer) {
    this.map = map;
    this.drawer = drawer;
    this.regions = [];
    this.selected = null;
    this.layers = L.featureGroup().addTo(map);
    this.layerById = new Map();
    this.editor = null;
    this.pending = null; // a drawn, unsaved polygon layer
    $("region-draw").addEventListener("click", () => this.draw());
    $("region-finish").addEventListener("click", () => this.drawer.finish());
    $("region-save").addEventListener("click", () => messages.guard(() => this.save()));
    $("region-cancel").addEventListener("click", () => this.cancelEdit());
    $("region-edit").addEventListener("click", () => this.edit());
    $("region-delete").addEventListener("click", () => messages.guard(() => this.remove()));
    $("region-download-param").addEventListener("change", () => this.updateDownloads());
  }

  /** fillParameters offers the collection's own parameters for download. */
  fillParameters() {
    const sel = $("region-download-param");
    const keep = sel.value;
    sel.replaceChildren();
    for (const p of parametersOf(state.collection)) sel.add(new Option(p.label, p.id));
    if ([...sel.options].some((o) => o.value === keep)) sel.value = keep;
    else if ([...sel.options].some((o) => o.value === state.layer)) sel.value = state.layer;
  }

  async load() {
    const body = await request("/api/regions", { what: "Listing regions" });
    this.regions = featuresOf(body).map((f) => regionFromFeature(f));
    this.render();
  }

  render() {
    const ul = $("region-list");
    ul.replaceChildren();
    this.layers.clearLayers();
    this.layerById.clear();
    if (!this.regions.length) {
      const li = document.createElement("li");
      li.className = "empty";
      li.textContent = "No regions saved yet. Draw one on the map.";
      ul.append(li);
    }
    for (const r of this.regions) {
      const li = document.createElement("li");
      const b = document.createElement("button");
      b.type = "button";
      b.className = "region-item";
      b.dataset.regionId = r.id;
      b.setAttribute("aria-pressed", String(this.selected?.id === r.id));
      b.textContent = r.name;
      if (r.areaKm2) {
        const s = document.createElement("small");
        s.textContent = ` ${fmt(r.areaKm2, 0)} km²`;
        b.append(s);
      }
      b.addEventListener("click", () => messages.guard(() => this.select(r.id)));
      li.append(b);
      ul.append(li);
      if (r.geometry) {
        const sel = this.selected?.id === r.id;
        const lyr = L.geoJSON(r.geometry, {
          interactive: false,
          style: () => ({ color: sel ? "#b3005f" : "#333", weight: sel ? 3 : 1.5, fillOpacity: 0.05, interactive: false }),
        });
        lyr.addTo(this.layers);
        this.layerById.set(r.id, lyr);
      }
    }
    $("regions").dataset.count = String(this.regions.length);
  }

  setMode(mode) {
    // mode: "idle", "drawing", "naming", "editing"
    $("regions").dataset.mode = mode;
    $("region-draw").hidden = mode !== "idle";
    $("region-finish").hidden = mode !== "drawing";
    $("region-name-row").hidden = mode !== "naming" && mode !== "editing";
    $("region-save").hidden = mode !== "naming" && mode !== "editing";
    $("region-cancel").hidden = mode === "idle";
    $("region-selected").hidden = !this.selected || mode !== "idle";
  }

  async draw() {
    this.cancelEdit();
    this.setMode("drawing");
    $("region-hint").textContent = "Click the map to add corners (or focus the map, pan with the arrow keys and press Space); double-click, press Enter or use Finish to close the region; Escape cancels.";
    const pts = await this.drawer.start("polygon");
    $("region-hint").textContent = "";
    if (!pts) {
      this.setMode("idle");
      return;
    }
    this.pending = L.polygon(pts, { color: "#b3005f", weight: 2, fillOpacity: 0.1 }).addTo(this.map);
    this.editor = new Editor(this.map, this.pending);
    $("region-name").value = `Region ${this.regions.length + 1}`;
    this.setMode("naming");
    $("region-name").focus();
    $("region-name").select();
  }

  async save() {
    const name = $("region-name").value.trim();
    if (!name) {
      messages.show("Give the region a name before saving.", "warning");
      $("region-name").focus();
      return;
    }
    if (this.pending) {
      const geometry = polygonFromLatLngs(this.pending.getLatLngs()[0]);
      const res = await request("/api/regions", {
        method: "POST",
        write: true,
        body: { type: "Feature", properties: { name }, geometry },
        what: "Saving the region",
        raw: true,
      });
      const f = await res.json();
      const r = regionFromFeature(f, res.headers.get("ETag") || "");
      this.cancelEdit();
      await this.load();
      messages.show(`Region "${r.name}" saved.`, "info");
      await this.select(r.id);
    } else if (this.selected && this.editing) {
      const r = this.selected;
      const lyr = this.editingLayer;
      const geometry = polygonFromLatLngs(lyr.getLatLngs()[0]);
      const res = await request(`/api/regions/${encodeURIComponent(r.id)}`, {
        method: "PUT",
        write: true,
        headers: { "If-Match": ifMatch(r) },
        body: { type: "Feature", id: r.id, properties: { ...r.feature.properties, name }, geometry },
        what: "Saving the region's changes",
        raw: true,
      }).catch((err) => {
        if (err.status === 412 || err.status === 409) {
          err.message += " Someone else changed this region since you opened it: reload the list to see their version.";
        }
        throw err;
      });
      const f = await res.json();
      this.cancelEdit();
      await this.load();
      messages.show(`Region "${f.properties?.name || name}" updated.`, "info");
      await this.select(String(f.id ?? r.id));
    }
    document.body.dataset.regionSaved = String(Number(document.body.dataset.regionSaved || 0) + 1);
  }

  edit() {
    const r = this.selected;
    if (!r) return;
    const polygon = singlePolygon(r.geometry);
    if (!polygon) {
      messages.show("Only single polygons can be edited here; this region has several parts.", "warning");
      return;
    }
    this.cancelEdit();
    const ring = polygon[0].slice(0, -1).map(([lon, lat]) => L.latLng(lat, lon));
    this.editingLayer = L.polygon(ring, { color: "#b3005f", weight: 2, fillOpacity: 0.1 }).addTo(this.map);
    this.layerById.get(r.id)?.setStyle({ opacity: 0.2, fillOpacity: 0 });
    this.editor = new Editor(this.map, this.editingLayer);
    this.editing = true;
    $("region-name").value = r.name;
    $("region-hint").textContent = "Drag the square handles to move corners; right-click a handle to remove it. Save or cancel when done.";
    this.setMode("editing");
  }

  cancelEdit() {
    this.drawer.cancel();
    this.editor?.stop();
    this.editor = null;
    this.pending?.remove();
    this.pending = null;
    this.editingLayer?.remove();
    this.editingLayer = null;
    this.editing = false;
    $("region-hint").textContent = "";
    this.render();
    this.setMode("idle");
  }

  async remove() {
    const r = this.selected;
    if (!r) return;
    if (!window.confirm(`Delete region "${r.name}"? This cannot be undone.`)) return;
    await request(`/api/regions/${encodeURIComponent(r.id)}`, {
      method: "DELETE",
      write: true,
      headers: r.version !== null ? { "If-Match": ifMatch(r) } : {},
      what: "Deleting the region",
    });
    this.selected = null;
    document.dispatchEvent(new Event("ridgeflank:urlstate"));
    await this.load();
    this.setMode("idle");
    messages.show(`Region "${r.name}" deleted.`, "info");
  }

  async select(id) {
    const res = await request(`/api/regions/${encodeURIComponent(id)}`, { what: "Opening the region", raw: true });
    const r = regionFromFeature(await res.json(), res.headers.get("ETag") || "");
    const i = this.regions.findIndex((x) => x.id === r.id);
    if (i >= 0) this.regions[i] = r;
    this.selected = r;
    this.render();
    this.setMode("idle");
    $("region-selected-name").textContent = r.name;
    const lyr = this.layerById.get(r.id);
    if (lyr) this.map.fitBounds(lyr.getBounds(), { padding: [30, 30], maxZoom: 8, animate: false });
    this.updateDownloads();
    document.dispatchEvent(new Event("ridgeflank:urlstate"));
    await this.showStats();
  }

  /**
   * showStats asks the service for the chosen region's statistics of the layer on the map
   * (every parameter the dataset has is answered), draws its histogram, and for a layer that
   * depends on the cooling model compares the models side by side for the same region.
   */
  async showStats() {
    const r = this.selected;
    const box = $("region-stats");
    box.dataset.state = "loading";
    const table = $("region-stats-table");
    const hist = $("region-histogram");
    const cmp = $("region-compare");
    table.replaceChildren();
    hist.replaceChildren();
    cmp.replaceChildren();
    if (!r || !state.datasetId || !state.layer) {
      box.dataset.state = "empty";
      return;
    }
    const param = parameterById(state.collection, state.layer);
    const label = param?.label || state.layer;
    const signed = state.layer === "residual_depth";
    const f = signed ? fmtSigned : fmt;
    $("region-stats-title").textContent = `${label} in this region`;
    box.dataset.parameter = state.layer;
    const seq = (this.statsSeq = (this.statsSeq || 0) + 1);
    try {
      const s = await loadRegionStats(state.datasetId, r, state.layer, evaluationParams(state), param?.unit || "");
      if (seq !== this.statsSeq) return; // a newer question was asked meanwhile
      const unit = unitText(s.unit);
      const digits = digitsFor(NaN, s.p95 - s.p05);
      const rows = [
        ["Cells with data", fmt(s.count, 0)],
        ["Cells without data", fmt(s.noData, 0)],
        ["Area-weighted mean", f(s.mean, digits, unit)],
        ["Median", f(s.median, digits, unit)],
        ["Standard deviation", fmt(s.std, digits, unit)],
        ["5th–95th percentile", Number.isFinite(s.p05) ? `${f(s.p05, digits)} to ${f(s.p95, digits, unit)}` : "no data"],
      ];
      for (const [k, v] of rows) {
        const tr = document.createElement("tr");
        const th = document.createElement("th");
        th.scope = "row";
        th.textContent = k;
        const td = document.createElement("td");
        td.textContent = v;
        tr.append(th, td);
        table.append(tr);
      }
      if (s.count > 0 && s.edges?.length) {
        drawHistogram(hist, s.edges, s.counts, { xLabel: `${label}${unit ? ` (${unit})` : ""}` });
      } else {
        const p = document.createElement("p");
        p.textContent = s.count > 0 ? "No histogram is available for this region." : `This region has no ${label.toLowerCase()} data in this dataset.`;
        hist.append(p);
      }
      box.dataset.state = "done";
      box.dataset.count = String(s.count);
      if (param?.modelDependent !== false && state.models.length > 1) await this.compareModels(r, param, seq);
    } catch (err) {
      if (seq !== this.statsSeq) return;
      const p = document.createElement("p");
      if (err.code === "no-data") {
        // Not a failure: the region simply lies outside this dataset's grids.
        box.dataset.state = "done";
        box.dataset.count = "0";
        const d = (err.detail || "").trim();
        p.textContent = `This region has no ${label.toLowerCase()} data in this dataset.${d ? ` ${d[0].toUpperCase()}${d.slice(1)}${/[.!?]$/.test(d) ? "" : "."}` : ""}`;
      } else {
        box.dataset.state = "error";
        p.className = "inline-error";
        p.textContent = err.message;
      }
      hist.append(p);
    }
  }

  /** compareModels tabulates the layer's statistics over region r for every cooling model. */
  async compareModels(r, param, seq) {
    const cmp = $("region-compare");
    const ids = state.models.map((m) => m.id || m.params?.id).filter(Boolean);
    const names = new Map(state.models.map((m) => [m.id || m.params?.id, m.name || m.id || m.params?.id]));
    const all = await Promise.all(
      ids.map((id) => loadRegionStats(state.datasetId, r, param.id, { ...evaluationParams(state), model: id }, param.unit || "").catch((err) => ({ error: err }))),
    );
    if (seq !== this.statsSeq) return;
    const unit = unitText(param.unit);
    const f = param.id === "residual_depth" ? fmtSigned : fmt;
    const digits = digitsFor(NaN, Math.max(...all.map((s) => (Number.isFinite(s.p95 - s.p05) ? s.p95 - s.p05 : 0))));
    const t = document.createElement("table");
    t.className = "compare";
    t.id = "region-compare-table";
    const cap = document.createElement("caption");
    cap.textContent = `${param.label} by cooling model, same region${unit ? ` (${unit})` : ""}`;
    const head = document.createElement("tr");
    for (const h of ["Model", "Mean", "Median", "5th–95th"]) {
      const th = document.createElement("th");
      th.scope = "col";
      th.textContent = h;
      head.append(th);
    }
    t.append(cap, head);
    ids.forEach((id, i) => {
      const s = all[i];
      const tr = document.createElement("tr");
      tr.dataset.model = id;
      if (id === state.model) tr.className = "current";
      const cells = s.error
        ? [names.get(id), s.error.code === "no-data" ? "no data" : "failed", "", ""]
        : [names.get(id), f(s.mean, digits), f(s.median, digits), Number.isFinite(s.p05) ? `${f(s.p05, digits)} to ${f(s.p95, digits)}` : "no data"];
      cells.forEach((c, k) => {
        const td = document.createElement(k === 0 ? "th" : "td");
        if (k === 0) td.scope = "row";
        td.textContent = c;
        if (k === 1 && !s.error) td.dataset.value = String(s.mean);
        tr.append(td);
      });
      t.append(tr);
    });
    cmp.append(t);
  }

  updateDownloads() {
    const r = this.selected;
    const ul = $("region-downloads");
    ul.replaceChildren();
    if (!r || !state.datasetId || !r.geometry) return;
    const param = $("region-download-param").value || state.layer;
    const base = `/api/collections/${encodeURIComponent(state.datasetId)}/area`;
    const coords = toWKT(r.geometry);
    const formats = [
      ["GeoTIFF (COG)", "COG", "tif"],
      ["netCDF (CF)", "netCDF", "nc"],
      ["CSV", "CSV", "csv"],
      ["PNG map", "PNG", "png"],
    ];
    for (const [label, f, ext] of formats) {
      const li = document.createElement("li");
      const a = document.createElement("a");
      a.href = `${base}${query({ coords, "parameter-name": param, ...evaluationParams(state), f })}`;
      a.download = `${slug(r.name)}-${param}-${state.model}.${ext}`;
      a.textContent = label;
      a.dataset.format = f;
      li.append(a);
      ul.append(li);
    }
  }

  /** datasetOrModelChanged refreshes what depends on the dataset or model. */
  refresh() {
    this.fillParameters();
    if (this.selected) {
      this.updateDownloads();
      messages.guard(() => this.showStats());
    }
  }
}

/** singlePolygon returns the rings of a Polygon or of a one-part MultiPolygon, else null. */
function singlePolygon(g) {
  if (g?.type === "Polygon") return g.coordinates;
  if (g?.type === "MultiPolygon" && g.coordinates.length === 1) return g.coordinates[0];
  return null;
}

function ifMatch(r) {
  if (r.etag) return r.etag;
  return `"${r.version}"`;
}

function slug(s) {
  return s.toLowerCase().replace(/[^a-z0-9]+/g, "-").replace(/^-|-$/g, "") || "region";
}
