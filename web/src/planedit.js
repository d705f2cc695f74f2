// planedit.js: a survey plan's lines on the map, drawn as the WGS84
// geodesics the service samples, and edited in place:
//   - drag a square vertex handle to move a waypoint;
//   - click a round handle at the middle of a leg to insert a waypoint there
//     (at the geodesic's midpoint);
//   - right-click a vertex handle, or focus it and press Delete, to remove
//     the waypoint (a line keeps at least two);
//   - click a line to select it (only the selected line has handles).
// The lines are the panel's own objects ({name, waypoints: [{lat, lon, name}]}),
// changed in place; onChange(lineIndex) follows every finished edit.

import L from "leaflet";
import { mapParts, midpoint } from "./geodesic.js";
import { wrapLon } from "./format.js";

const VERTEX = (selected) => L.divIcon({ className: `vertex-handle plan-vertex${selected ? " plan-vertex-first" : ""}`, iconSize: [12, 12] });
const MIDPOINT = () => L.divIcon({ className: "midpoint-handle", iconSize: [10, 10] });

export class PlanMap {
  constructor(map, { onChange = () => {}, onSelect = () => {} } = {}) {
    this.map = map;
    this.onChange = onChange;
    this.onSelect = onSelect;
    this.lines = [];
    this.selected = -1;
    this.layer = L.layerGroup().addTo(map); // the geodesic lines
    this.handles = L.layerGroup().addTo(map); // handles of the selected line
    this.shapes = []; // one L.polyline per line
  }

  /** setLines shows lines (the panel's array, kept by reference) with line `selected` editable. */
  setLines(lines, selected = -1) {
    this.lines = lines;
    this.selected = selected;
    this.redraw();
  }

  select(i) {
    this.selected = i;
    this.redraw();
  }

  /** redraw draws every line again and puts the handles on the selected one. */
  redraw() {
    this.layer.clearLayers();
    this.shapes = this.lines.map((line, i) => {
      const shape = L.polyline(mapParts(line.waypoints, { zoom: this.map.getMaxZoom() }), {
        color: "#006d77",
        weight: i === this.selected ? 3.5 : 2.5,
        opacity: i === this.selected ? 1 : 0.75,
        smoothFactor: 0,
        className: `plan-line plan-line-${i}`,
        bubblingMouseEvents: false,
      });
      shape.planLine = i;
      shape.on("click", () => {
        if (this.selected !== i) {
          this.select(i);
          this.onSelect(i);
        }
      });
      shape.addTo(this.layer);
      return shape;
    });
    this.buildHandles();
  }

  /** redrawLine draws line i again (during a drag: no handle rebuild). */
  redrawLine(i) {
    this.shapes[i]?.setLatLngs(mapParts(this.lines[i].waypoints, { zoom: this.map.getMaxZoom() }));
  }

  buildHandles() {
    this.handles.clearLayers();
    const line = this.lines[this.selected];
    if (!line) return;
    const i = this.selected;
    const wps = line.waypoints;
    wps.forEach((w, k) => {
      const h = L.marker([w.lat, w.lon], {
        icon: VERTEX(k === 0),
        draggable: true,
        keyboard: true,
        autoPanOnFocus: false,
        title: `${w.name || `Waypoint ${k + 1}`}: drag to move; right-click or Delete removes it`,
        pane: "markerPane",
        zIndexOffset: 1000,
      });
      h.planVertex = k;
      if (w.name) h.bindTooltip(w.name, { permanent: true, direction: "right", offset: [8, 0], className: "waypoint-tooltip" });
      h.on("drag", (e) => {
        const p = e.target.getLatLng();
        wps[k].lat = p.lat;
        wps[k].lon = wrapLon(p.lng);
        this.redrawLine(i);
      });
      h.on("dragend", () => {
        this.buildHandles();
        this.onChange(i);
      });
      h.on("contextmenu", (e) => {
        L.DomEvent.stop(e);
        this.removeVertex(i, k);
      });
      h.on("keydown", (e) => {
        if (e.originalEvent.key === "Delete") this.removeVertex(i, k);
      });
      this.handles.addLayer(h);
    });
    for (let k = 1; k < wps.length; k++) {
      const m = midpoint(wps[k - 1], wps[k]);
      const h = L.marker([m.lat, m.lon], { icon: MIDPOINT(), keyboard: true, title: "Click to add a waypoint here", pane: "markerPane", zIndexOffset: 500 });
      h.planMidpoint = k;
      h.on("click", (e) => {
        L.DomEvent.stop(e);
        this.insertVertex(i, k, m);
      });
      this.handles.addLayer(h);
    }
  }

  /** insertVertex puts a new waypoint at position k of line i. */
  insertVertex(i, k, p) {
    this.lines[i].waypoints.splice(k, 0, { lat: p.lat, lon: wrapLon(p.lon), name: "" });
    this.redrawLine(i);
    this.buildHandles();
    this.onChange(i);
  }

  /** removeVertex removes waypoint k of line i, keeping at least two. */
  removeVertex(i, k) {
    const wps = this.lines[i].waypoints;
    if (wps.length <= 2) return false;
    wps.splice(k, 1);
    this.redrawLine(i);
    this.buildHandles();
    this.onChange(i);
    return true;
  }

  /** bounds covers every line (null without waypoints). */
  bounds() {
    const b = L.latLngBounds([]);
    for (const s of this.shapes) if (s.getLatLngs().flat().length) b.extend(s.getBounds());
    return b.isValid() ? b : null;
  }

  clear() {
    this.lines = [];
    this.selected = -1;
    this.layer.clearLayers();
    this.handles.clearLayers();
    this.shapes = [];
  }
}
