// readout.js: the point read-out. Hovering the map (throttled) or clicking it
// asks the service's EDR position query for every read-out parameter and
// shows the answer; a click pins the point until the next click or Escape.
// Each value cell carries data-value with the full-precision number.

import L from "leaflet";
import { request, query } from "./api.js";
import { coverages, rangeValues } from "./coveragejson.js";
import { parametersOf, unitText, digitsFor } from "./parameters.js";
import { loadColourScales } from "./colourscales.js";
import { fmt, fmtLatLon, fmtSigned, wrapLon } from "./format.js";
import { state } from "./state.js";
import { evaluationParams } from "./evaluation.js";
import * as messages from "./messages.js";

const HOVER_DELAY_MS = 250;

export class Readout {
  constructor(map, el, { isBusy = () => false } = {}) {
    this.map = map;
    this.el = el;
    this.isBusy = isBusy;
    this.seq = 0;
    this.pinned = null;
    this.marker = L.circleMarker([0, 0], { radius: 6, color: "#111", weight: 2, fillColor: "#ffd400", fillOpacity: 1, interactive: false, pane: "markerPane" });
    this.hoverTimer = 0;
    this.controller = null;
    this.buildTable();
    map.on("click", (e) => {
      if (this.isBusy()) return;
      this.pin(e.latlng);
    });
    map.on("mousemove", (e) => {
      if (this.pinned || this.isBusy()) return;
      clearTimeout(this.hoverTimer);
      this.hoverTimer = setTimeout(() => this.lookup(e.latlng, "hover"), HOVER_DELAY_MS);
    });
    map.getContainer().addEventListener("mouseleave", () => clearTimeout(this.hoverTimer));
    // Keyboard: with the map focused, Enter pins the point at the map centre.
    map.getContainer().addEventListener("keydown", (e) => {
      if (e.key === "Enter" && e.target === map.getContainer() && !this.isBusy()) this.pin(map.getCenter());
    });
    document.addEventListener("keydown", (e) => {
      if (e.key === "Escape" && this.pinned && !this.isBusy()) this.unpin();
    });
    el.querySelector("#readout-unpin")?.addEventListener("click", () => this.unpin());
  }

  /**
   * buildTable makes one row per parameter of the chosen collection (its
   * parameter_names, in document order), labelled and united as the
   * service describes them.
   */
  buildTable() {
    const tbody = this.el.querySelector("tbody");
    tbody.replaceChildren();
    this.params = parametersOf(state.collection);
    for (const p of this.params) {
      const tr = document.createElement("tr");
      const th = document.createElement("th");
      th.scope = "row";
      th.textContent = p.label;
      const td = document.createElement("td");
      td.dataset.param = p.id;
      td.textContent = "–";
      tr.append(th, td);
      tbody.append(tr);
    }
  }

  /** pin shows the read-out for latlng and keeps it until unpinned. */
  pin(latlng) {
    if (!state.datasetId) return this.lookup(latlng, "click"); // says there is nothing to read
    this.pinned = latlng;
    this.marker.setLatLng(latlng).addTo(this.map);
    this.el.dataset.pinned = "true";
    this.el.querySelector("#readout-unpin").hidden = false;
    document.dispatchEvent(new Event("ridgeflank:urlstate"));
    return this.lookup(latlng, "click");
  }

  unpin() {
    this.pinned = null;
    this.marker.remove();
    this.el.dataset.pinned = "false";
    this.el.querySelector("#readout-unpin").hidden = true;
    document.dispatchEvent(new Event("ridgeflank:urlstate"));
  }

  /** refresh repeats the pinned query (after a model, sediment, age-uncertainty or dataset change). */
  refresh() {
    if (this.pinned) this.lookup(this.pinned, "click");
  }

  async lookup(latlng, how) {
    if (!state.datasetId) {
      this.el.querySelector("#readout-status").textContent = "No dataset is chosen, so there is nothing to read here.";
      return;
    }
    const seq = ++this.seq;
    if (this.controller) this.controller.abort?.();
    const lon = wrapLon(latlng.lng);
    const lat = latlng.lat;
    const status = this.el.querySelector("#readout-status");
    this.el.dataset.state = "loading";
    const params = (this.params || []).map((p) => p.id);
    this.el.querySelector("#readout-position").textContent = fmtLatLon(lat, lon);
    this.el.dataset.lon = String(lon);
    this.el.dataset.lat = String(lat);
    try {
      const doc = await request(
        `/api/collections/${encodeURIComponent(state.datasetId)}/position${query({
          coords: `POINT(${lon.toFixed(6)} ${lat.toFixed(6)})`,
          "parameter-name": params.join(","),
          ...evaluationParams(state),
        })}`,
        { what: "Reading values at this point", headers: { Accept: "application/vnd.cov+json, application/problem+json" } },
      );
      if (seq !== this.seq) return; // a newer request superseded this one
      const cov = coverages(doc)[0];
      let any = false;
      const scales = await loadColourScales().catch(() => new Map());
      if (seq !== this.seq) return;
      for (const p of this.params) {
        const td = this.el.querySelector(`td[data-param="${p.id}"]`);
        if (!td) continue;
        const vals = cov ? rangeValues(cov, p.id) : null;
        const v = vals && vals.length ? vals[0] : null;
        td.dataset.value = v === null ? "" : String(v);
        // Diverging scales (residuals) are signed quantities: show the sign.
        const sc = scales.get(p.id);
        const f = sc?.diverging ? fmtSigned : fmt;
        td.textContent = vals ? f(v, digitsFor(v, sc ? sc.max - sc.min : NaN), unitText(p.unit)) : "not in this answer";
        if (v !== null) any = true;
      }
      status.textContent = any
        ? `${how === "click" ? "Pinned point" : "Under the pointer"} · model ${state.model}`
        : "No data at this point.";
      this.el.dataset.state = "done";
      this.el.dataset.model = state.model;
    } catch (err) {
      if (seq !== this.seq) return;
      this.el.dataset.state = "error";
      status.textContent = err.message;
      if (how === "click") messages.error(err);
    }
  }
}
