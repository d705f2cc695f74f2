// mapview.js: the Leaflet map. A plain background (no remote tile servers),
// our own graticule, an optional land layer, and the data layer drawn from the
// service's web-mercator PNG tiles. It also keeps the ready marker that tests
// and scripts wait for: <body data-ready="true" data-ready-seq="N"> and
// window.ridgeflankReady, set when the data layer's tiles have loaded.

import L from "leaflet";
import "leaflet/dist/leaflet.css";

let readySeq = 0;

/** setReady records whether the data layer has finished drawing. */
export function setReady(ready, reason = "") {
  const body = document.body;
  if (ready) {
    readySeq += 1;
    body.dataset.readySeq = String(readySeq);
  }
  body.dataset.ready = ready ? "true" : "false";
  if (reason) body.dataset.readyReason = reason;
  else delete body.dataset.readyReason;
  window.ridgeflankReady = ready;
  document.dispatchEvent(new CustomEvent("ridgeflank:ready", { detail: { ready, seq: readySeq } }));
}

/** createMap builds the map in the element with the given id. */
export function createMap(id) {
  const map = L.map(id, {
    center: [0, 0],
    zoom: 2,
    minZoom: 1,
    maxZoom: 12,
    fadeAnimation: false,
    zoomSnap: 1,
    worldCopyJump: false,
    attributionControl: true,
    preferCanvas: true,
    doubleClickZoom: true,
    keyboard: true,
  });
  map.attributionControl.setPrefix(false);
  // Panes, bottom to top: land fill, data tiles (tilePane, 200), graticule,
  // regions and tracks (overlayPane, 400), drawing, markers.
  map.createPane("land").style.zIndex = "150";
  map.createPane("graticule").style.zIndex = "350";
  map.getPane("graticule").style.pointerEvents = "none";
  map.createPane("drawing").style.zIndex = "450";
  L.control.scale({ imperial: false }).addTo(map);
  return map;
}

/**
 * DataLayer owns the tile layer for one dataset, parameter and set of choices and
 * flips the ready marker while tiles load.
 */
export class DataLayer {
  constructor(map) {
    this.map = map;
    this.layer = null;
    this.key = "";
  }

  /**
   * url is the tile URL template of parameter in datasetId with the evaluating choices
   * (evaluation.js's evaluationParams: model, sediment, age-uncertainty-ma; empty ones are left
   * out) and range ("min,max" or "" for the scale's default).
   */
  static url(datasetId, parameter, choices = {}, range = "") {
    const q = new URLSearchParams();
    for (const [k, v] of Object.entries(choices)) if (v !== undefined && v !== null && v !== "") q.set(k, String(v));
    if (range) q.set("range", range); // min,max: the service draws the tiles over this range
    return `/tiles/${encodeURIComponent(datasetId)}/${encodeURIComponent(parameter)}/{z}/{x}/{y}.png?${q}`;
  }

  /**
   * show draws parameter for datasetId with the evaluating choices (see url; range "min,max"
   * or "" for the scale's default); bounds (L.LatLngBounds or null) limits tile requests to the
   * dataset's extent. With no dataset the layer is removed and the page is marked ready (nothing
   * to draw).
   */
  show(datasetId, parameter, choices, bounds, opacity = 0.9, range = "") {
    if (!datasetId || !parameter) {
      this.clear();
      setReady(true, "no-dataset");
      return;
    }
    const url = DataLayer.url(datasetId, parameter, choices, range);
    const key = `${url}|${bounds ? bounds.toBBoxString() : ""}`;
    if (key === this.key && this.layer) return;
    this.clear();
    this.key = key;
    setReady(false);
    let started = 0;
    const layer = L.tileLayer(url, {
      bounds: bounds || undefined,
      opacity,
      maxNativeZoom: 12,
      noWrap: true,
      crossOrigin: false,
      attribution: "Data layer: ridgeflank (model estimates, not for navigation)",
      className: "data-tiles",
    });
    layer.on("loading", () => {
      started += 1;
      setReady(false);
    });
    layer.on("load", () => setReady(true));
    layer.on("tileerror", (e) => {
      document.body.dataset.tileErrors = String(Number(document.body.dataset.tileErrors || 0) + 1);
      e.tile.classList.add("tile-missing");
    });
    this.layer = layer;
    layer.addTo(this.map);
    // No tiles in view (the extent is elsewhere): nothing will load, so the
    // layer is as drawn as it will get.
    if (started === 0) setReady(true, "no-tiles-in-view");
  }

  setOpacity(o) {
    if (this.layer) this.layer.setOpacity(o);
  }

  clear() {
    if (this.layer) {
      // Only our own listeners: Leaflet keeps a "remove" listener on the
      // layer that unhooks it from the map's events.
      this.layer.off("loading load tileerror");
      this.map.removeLayer(this.layer);
    }
    this.layer = null;
    this.key = "";
  }
}

export { L };
