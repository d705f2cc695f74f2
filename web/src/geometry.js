// geometry.js: small conversions between Leaflet shapes, GeoJSON and WKT, and
// spherical lengths for display.

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

/** Mean Earth radius R1 = (2a + b)/3 for WGS84, km (Moritz 1980, Geodetic Reference System 1980). */
export const EARTH_RADIUS_KM = 6371.0088;

/**
 * haversineKm is the great-circle distance on a sphere of mean radius, for
 * display along tracks when the service does not give distances (the
 * haversine formula; Sinnott 1984, "Virtues of the haversine").
 */
export function haversineKm(lon1, lat1, lon2, lat2) {
  const r = Math.PI / 180;
  const dLat = (lat2 - lat1) * r;
  const dLon = (lon2 - lon1) * r;
  const a = Math.sin(dLat / 2) ** 2 + Math.cos(lat1 * r) * Math.cos(lat2 * r) * Math.sin(dLon / 2) ** 2;
  return 2 * EARTH_RADIUS_KM * Math.asin(Math.min(1, Math.sqrt(a)));
}

/** cumulativeKm returns distance along a list of [lon, lat] from its first point. */
export function cumulativeKm(coords) {
  const out = [0];
  for (let i = 1; i < coords.length; i++) out.push(out[i - 1] + haversineKm(coords[i - 1][0], coords[i - 1][1], coords[i][0], coords[i][1]));
  return out;
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
