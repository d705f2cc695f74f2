// graticule.js: a longitude/latitude grid of our own, redrawn for the current
// view, with degree labels along the left and top edges. On a web-mercator
// map both meridians and parallels are straight lines, so two points each do.

import L from "leaflet";

const STEPS = [45, 30, 20, 10, 5, 2, 1, 0.5, 0.25, 0.1, 0.05];

/** stepFor picks a spacing that gives about six lines across the span. */
export function stepFor(spanDeg) {
  return STEPS.find((s) => spanDeg / s >= 4) ?? STEPS[STEPS.length - 1];
}

function label(v, pos, neg) {
  const a = Math.abs(v);
  const s = Number.isInteger(a) ? String(a) : a.toFixed(a < 1 ? 2 : 1).replace(/0+$/, "");
  if (v === 0) return "0°";
  if (a === 180) return "180°";
  return `${s}°${v > 0 ? pos : neg}`;
}

export class Graticule {
  constructor(map) {
    this.map = map;
    this.group = L.layerGroup();
    this.renderer = L.canvas({ pane: "graticule" });
    this.redraw = this.redraw.bind(this);
  }

  addTo() {
    this.group.addTo(this.map);
    this.map.on("moveend zoomend resize", this.redraw);
    this.redraw();
    return this;
  }

  remove() {
    this.map.off("moveend zoomend resize", this.redraw);
    this.group.remove();
  }

  redraw() {
    const b = this.map.getBounds();
    const south = Math.max(-85, b.getSouth());
    const north = Math.min(85, b.getNorth());
    const west = Math.max(-540, b.getWest());
    const east = Math.min(540, b.getEast());
    const step = stepFor(Math.min(east - west, (north - south) * 1.5));
    this.group.clearLayers();
    const style = { color: "#d5dde5", weight: 0.7, opacity: 0.5, interactive: false, renderer: this.renderer };
    // Labels stay clear of the zoom control in the top-left corner: a label that would sit
    // under it moves beside it (latitudes) or below it (longitudes).
    const zc = this.map.zoomControl?.getContainer?.();
    const avoid = zc ? { right: zc.offsetLeft + zc.offsetWidth + 4, bottom: zc.offsetTop + zc.offsetHeight + 4 } : { right: 0, bottom: 0 };
    const labelPane = "graticule";
    for (let lon = Math.ceil(west / step) * step; lon <= east; lon += step) {
      const l = +lon.toFixed(6);
      this.group.addLayer(L.polyline([[south, l], [north, l]], style));
      const wrapped = ((((l + 180) % 360) + 360) % 360) - 180;
      const px = this.map.latLngToContainerPoint([north, l]).x;
      const dy = px - 3 < avoid.right && px + 48 > 0 ? avoid.bottom : 2;
      this.group.addLayer(
        L.marker([north, l], {
          pane: labelPane,
          interactive: false,
          keyboard: false,
          icon: L.divIcon({ className: "grat-label grat-lon", html: label(+wrapped.toFixed(6), "E", "W"), iconSize: [48, 14], iconAnchor: [-3, -dy] }),
        }),
      );
    }
    for (let lat = Math.ceil(south / step) * step; lat <= north; lat += step) {
      const la = +lat.toFixed(6);
      this.group.addLayer(L.polyline([[la, west], [la, east]], style));
      const py = this.map.latLngToContainerPoint([la, west]).y;
      const dx = py - 15 < avoid.bottom && py > 0 ? avoid.right : 3;
      this.group.addLayer(
        L.marker([la, west], {
          pane: labelPane,
          interactive: false,
          keyboard: false,
          icon: L.divIcon({ className: "grat-label grat-lat", html: label(la, "N", "S"), iconSize: [48, 14], iconAnchor: [-dx, 15] }),
        }),
      );
    }
  }
}
