// coastline.js: the optional land layer, from Natural Earth's 1:50m land
// polygons (public domain) as redistributed in the world-atlas npm package.
// The build copies the TopoJSON file next to the page, so it is served by the
// ridgeflank service itself and fetched only when the layer is switched on.

import L from "leaflet";
import { feature } from "topojson-client";
import { fixRing } from "./geometry.js";

let loaded = null;

async function landGeoJSON() {
  if (!loaded) {
    loaded = fetch("land-50m.json").then((r) => {
      if (!r.ok) throw new Error(`The land outline could not be loaded (HTTP ${r.status}).`);
      return r.json();
    }).then((topo) => continuousRings(feature(topo, topo.objects.land)));
  }
  return loaded;
}

function continuousRings(fc) {
  for (const f of fc.features || [fc]) {
    const g = f.geometry;
    if (g?.type === "Polygon") g.coordinates = g.coordinates.map(fixRing);
    else if (g?.type === "MultiPolygon") g.coordinates = g.coordinates.map((p) => p.map(fixRing));
  }
  return fc;
}

export class LandLayer {
  constructor(map) {
    this.map = map;
    this.layer = null;
  }

  /** show adds the land layer (loading it on first use). */
  async show() {
    if (!this.layer) {
      const gj = await landGeoJSON();
      this.layer = L.geoJSON(gj, {
        pane: "land",
        renderer: L.canvas({ pane: "land" }),
        interactive: false,
        attribution: "Land: Natural Earth (public domain)",
        style: { color: "#55606b", weight: 0.8, fillColor: "#d9d4c7", fillOpacity: 1 },
      });
    }
    this.layer.addTo(this.map);
  }

  hide() {
    if (this.layer) this.layer.remove();
  }
}
