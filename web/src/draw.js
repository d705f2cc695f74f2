// draw.js: a small drawing and editing tool of our own for regions (polygons)
// and tracks (lines) on the Leaflet map.
//   Drawing: click to add a vertex (or, with the map focused, pan with the
//   arrow keys and press Space to add the map centre), double-click (or
//   Enter, or the Finish button) to finish, Backspace removes the last
//   vertex, Escape cancels.
//   Editing: drag the square vertex handles; right-click a handle to remove
//   that vertex (a polygon keeps at least three, a line at least two).

import L from "leaflet";
import { mapParts } from "./geodesic.js";

const HANDLE = () => L.divIcon({ className: "vertex-handle", iconSize: [12, 12] });

/** samePlace reports whether two latlngs are within px pixels on screen. */
function samePlace(map, a, b, px = 5) {
  return map.latLngToContainerPoint(a).distanceTo(map.latLngToContainerPoint(b)) <= px;
}

/**
 * Drawer draws one shape at a time. kind is "polygon" or "line". start()
 * returns a Promise resolving to the vertices (array of L.LatLng), or null
 * if cancelled.
 */
export class Drawer {
  constructor(map) {
    this.map = map;
    this.active = null;
  }

  get drawing() {
    return this.active !== null;
  }

  start(kind, { colour = "#b3005f" } = {}) {
    this.cancel();
    const map = this.map;
    const pts = [];
    const shape =
      kind === "polygon"
        ? L.polygon([], { pane: "drawing", color: colour, weight: 2, dashArray: "5 4", fillOpacity: 0.12, interactive: false })
        : L.polyline([], { pane: "drawing", color: colour, weight: 2.5, dashArray: "5 4", interactive: false, smoothFactor: 0 });
    const rubber = L.polyline([], { pane: "drawing", color: colour, weight: 1.5, opacity: 0.7, interactive: false, smoothFactor: 0 });
    const dots = L.layerGroup();
    shape.addTo(map);
    rubber.addTo(map);
    dots.addTo(map);
    const hadDblZoom = map.doubleClickZoom.enabled();
    map.doubleClickZoom.disable();
    map.getContainer().classList.add("drawing");
    document.body.dataset.drawing = kind;

    let resolveFn;
    const promise = new Promise((r) => (resolveFn = r));

    // A line is drawn as the WGS84 geodesics the service samples, not as
    // straight Mercator segments.
    const geodesic = (latlngs) => (kind === "polygon" ? latlngs : mapParts(latlngs, { zoom: map.getMaxZoom() }));
    const refresh = () => {
      shape.setLatLngs(geodesic(pts));
      dots.clearLayers();
      for (const p of pts) dots.addLayer(L.circleMarker(p, { pane: "drawing", radius: 4, color: colour, weight: 2, fillColor: "#fff", fillOpacity: 1, interactive: false }));
      document.body.dataset.drawVertices = String(pts.length);
    };
    const onClick = (e) => {
      pts.push(e.latlng);
      refresh();
    };
    const onMove = (e) => {
      if (pts.length) rubber.setLatLngs(kind === "polygon" && pts.length > 1 ? [pts[pts.length - 1], e.latlng, pts[0]] : geodesic([pts[pts.length - 1], e.latlng]));
    };
    const finish = () => {
      // A double-click also delivered two clicks at (nearly) one place.
      while (pts.length > 1 && samePlace(map, pts[pts.length - 1], pts[pts.length - 2])) pts.pop();
      const need = kind === "polygon" ? 3 : 2;
      if (pts.length < need) return false;
      end();
      resolveFn(pts.slice());
      return true;
    };
    const onDbl = (e) => {
      L.DomEvent.stop(e);
      finish();
    };
    const onKey = (e) => {
      if (e.key === "Escape") {
        end();
        resolveFn(null);
      } else if (e.key === "Enter") {
        e.preventDefault();
        finish();
      } else if (e.key === " " && document.activeElement === map.getContainer()) {
        // Keyboard drawing: pan with the arrow keys, Space adds the map centre.
        e.preventDefault();
        pts.push(map.getCenter());
        refresh();
      } else if (e.key === "Backspace" && document.activeElement === map.getContainer()) {
        e.preventDefault();
        pts.pop();
        refresh();
      }
    };
    const end = () => {
      map.off("click", onClick);
      map.off("mousemove", onMove);
      map.off("dblclick", onDbl);
      document.removeEventListener("keydown", onKey);
      shape.remove();
      rubber.remove();
      dots.remove();
      if (hadDblZoom) map.doubleClickZoom.enable();
      map.getContainer().classList.remove("drawing");
      delete document.body.dataset.drawing;
      this.active = null;
    };
    map.on("click", onClick);
    map.on("mousemove", onMove);
    map.on("dblclick", onDbl);
    document.addEventListener("keydown", onKey);
    this.active = { kind, finish, cancel: () => { end(); resolveFn(null); } };
    refresh();
    return promise;
  }

  /** finish ends the current drawing if it has enough vertices. */
  finish() {
    return this.active ? this.active.finish() : false;
  }

  cancel() {
    if (this.active) this.active.cancel();
  }
}

/**
 * Editor puts draggable handles on the vertices of a polygon or polyline
 * layer. onChange is called after each change. stop() removes the handles.
 */
export class Editor {
  constructor(map, layer, { onChange = () => {} } = {}) {
    this.map = map;
    this.layer = layer;
    this.onChange = onChange;
    this.handles = L.layerGroup().addTo(map);
    this.isPolygon = layer instanceof L.Polygon;
    this.build();
  }

  ring() {
    const ll = this.layer.getLatLngs();
    // Polygon: [[ring]] (first ring only is edited; holes are kept as they are).
    return this.isPolygon ? ll[0] : ll;
  }

  build() {
    this.handles.clearLayers();
    const ring = this.ring();
    ring.forEach((p, i) => {
      const h = L.marker(p, { icon: HANDLE(), draggable: true, pane: "markerPane", keyboard: true, title: `Vertex ${i + 1}: drag to move, right-click to remove`, autoPanOnFocus: false });
      h.on("drag", (e) => {
        ring[i] = e.target.getLatLng();
        this.layer.setLatLngs(this.layer.getLatLngs());
      });
      h.on("dragend", () => this.onChange());
      h.on("contextmenu", (e) => {
        L.DomEvent.stop(e);
        const min = this.isPolygon ? 3 : 2;
        if (ring.length > min) {
          ring.splice(i, 1);
          this.layer.setLatLngs(this.layer.getLatLngs());
          this.build();
          this.onChange();
        }
      });
      this.handles.addLayer(h);
    });
  }

  stop() {
    this.handles.remove();
  }
}
