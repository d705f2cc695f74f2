// geometry.js: small conversions between Leaflet shapes, GeoJSON and WKT.
// Distances along tracks come from the service (geodesic), not from here.

import { wrapLon } from "./format.js";

/** ringFromLatLngs closes a ring of L.LatLng as GeoJSON positions [lon, lat]. */
export function ringFromLatLngs(latlngs) {
  const ring = latlngs.map((p) => [+wrapLon(p.lng).toFixed(6), +p.lat.toFixed(6)]);
  if (ring.length && (ring[0][0] !== ring[ring.length - 1][0] || ring[0][1] !== ring[ring.length - 1][1])) ring.push([...ring[0]]);
  return ring;
}

/** polygonFromLatLngs returns a GeoJSON Polygon for one outer ring. */
export function polygonFromLatLngs(latlngs) {
  return { type: "Polygon", coordinates: [ringFromLatLngs(latlngs)] };
}

/** lineFromLatLngs returns a GeoJSON LineString. */
export function lineFromLatLngs(latlngs) {
  return { type: "LineString", coordinates: latlngs.map((p) => [+wrapLon(p.lng).toFixed(6), +p.lat.toFixed(6)]) };
}

const pos = (c) => `${c[0]} ${c[1]}`;
const ring = (r) => `(${r.map(pos).join(", ")})`;

/** toWKT writes a GeoJSON Polygon, MultiPolygon, LineString or Point as WKT (lon lat). */
export function toWKT(g) {
  switch (g?.type) {
    case "Point":
      return `POINT(${pos(g.coordinates)})`;
    case "LineString":
      return `LINESTRING(${g.coordinates.map(pos).join(", ")})`;
    case "Polygon":
      return `POLYGON(${g.coordinates.map(ring).join(", ")})`;
    case "MultiPolygon":
      return `MULTIPOLYGON(${g.coordinates.map((p) => `(${p.map(ring).join(", ")})`).join(", ")})`;
    default:
      throw new Error(`Cannot write a ${g?.type || "missing"} geometry as WKT.`);
  }
}

/** MAX_MERCATOR_LAT is the latitude limit of web mercator (°), where the map ends. */
const MAX_MERCATOR_LAT = 85.0511;

/**
 * fixRing makes a ring drawable on a web-mercator map: a ring that crosses
 * the antimeridian (a jump of more than 180° between neighbours) gets
 * continuous longitudes (beyond ±180), and a ring that goes round a pole
 * (its longitudes advance by a whole turn) keeps its longitudes but has its
 * latitudes clamped to the map's edge, so no edge runs off to infinity.
 */
export function fixRing(ring) {
  const out = [[ring[0][0], ring[0][1]]];
  let shift = 0;
  for (let i = 1; i < ring.length; i++) {
    const d = ring[i][0] - ring[i - 1][0];
    if (d > 180) shift -= 360;
    else if (d < -180) shift += 360;
    out.push([ring[i][0] + shift, ring[i][1]]);
  }
  if (shift === 0) return out;
  return ring.map(([x, y]) => [x, Math.max(-MAX_MERCATOR_LAT, Math.min(MAX_MERCATOR_LAT, y))]);
}
