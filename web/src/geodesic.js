// geodesic.js: WGS84 geodesics for drawing (pure, no browser needed). The
// service samples survey lines along WGS84 geodesics (Karney 2013,
// "Algorithms for geodesics", J. Geodesy 87, 43–55, through PROJ); the page
// draws the same geodesics with GeographicLib's own JavaScript port of those
// algorithms (geographiclib-geodesic), densified so that the straight pieces
// Leaflet draws on the Web-Mercator map stay within a small fraction of a
// screen pixel of the geodesic at the map's deepest zoom (and so at every
// shallower one, where a pixel covers more ground).

import geographiclib from "geographiclib-geodesic";

const { Geodesic } = geographiclib;
const WGS84 = Geodesic.WGS84;
const POSITION = Geodesic.LATITUDE | Geodesic.LONGITUDE | Geodesic.LONG_UNROLL;

/** NMI_M is the international nautical mile in metres (1852 m by definition). */
export const NMI_M = 1852;

/** MAX_MERCATOR_LAT is the latitude (°) where Leaflet's spherical Mercator (EPSG:3857) stops. */
export const MAX_MERCATOR_LAT = 85.0511287798;

/** azimuth360 brings an azimuth into 0..360 degrees clockwise from north. */
export function azimuth360(a) {
  const r = ((a % 360) + 360) % 360;
  return r === 360 ? 0 : r;
}

/**
 * inverse solves the inverse geodesic problem on WGS84 between (lat1, lon1)
 * and (lat2, lon2), in degrees: the length in metres and the initial and
 * final azimuths in degrees clockwise from true north, 0..360.
 */
export function inverse(lat1, lon1, lat2, lon2) {
  const r = WGS84.Inverse(lat1, lon1, lat2, lon2);
  return { lengthM: r.s12, azimuth1Deg: azimuth360(r.azi1), azimuth2Deg: azimuth360(r.azi2) };
}

/**
 * direct solves the direct geodesic problem on WGS84: from (lat, lon) at
 * azimuth aziDeg for distanceM metres. Returns {lat, lon} in degrees with the
 * longitude unrolled (continuous from lon, so it may leave −180..180).
 */
export function direct(lat, lon, aziDeg, distanceM) {
  const r = WGS84.Direct(lat, lon, aziDeg, distanceM, POSITION);
  return { lat: r.lat2, lon: r.lon2 };
}

/**
 * mercatorPx projects (lat, lon) to Leaflet's spherical Mercator pixel plane
 * at zoom z (256·2^z pixels round the world; Leaflet's CRS.EPSG3857), with
 * latitudes clamped to the map's edge. Longitudes are not wrapped.
 */
export function mercatorPx(lat, lon, z) {
  const w = 256 * 2 ** z;
  const phi = (Math.max(-MAX_MERCATOR_LAT, Math.min(MAX_MERCATOR_LAT, lat)) * Math.PI) / 180;
  return [((lon + 180) / 360) * w, (0.5 - Math.log(Math.tan(Math.PI / 4 + phi / 2)) / (2 * Math.PI)) * w];
}

/** latFromMercatorY inverts mercatorPx's y at zoom z. */
function latFromMercatorY(y, z) {
  const w = 256 * 2 ** z;
  return ((2 * Math.atan(Math.exp((0.5 - y / w) * 2 * Math.PI)) - Math.PI / 2) * 180) / Math.PI;
}

/** distanceToChord is the distance (px) from point p to the segment a–b. */
export function distanceToSegment(p, a, b) {
  const dx = b[0] - a[0];
  const dy = b[1] - a[1];
  const l2 = dx * dx + dy * dy;
  let t = l2 > 0 ? ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / l2 : 0;
  t = Math.max(0, Math.min(1, t));
  return Math.hypot(p[0] - a[0] - t * dx, p[1] - a[1] - t * dy);
}

// The deepest the bisection goes: a leg of 20,000 km halved 24 times is ~1 m.
const MAX_DEPTH = 24;
// No drawn piece is longer than this, so a short bulge cannot hide between two test points.
const MAX_PIECE_M = 100e3;

/**
 * geodesicLeg returns the geodesic from a = {lat, lon} to b as [lat, lon]
 * points, both ends included exactly, with longitudes continuous from a.lon
 * (unrolled: they may pass ±180). Points are added by bisection until every
 * straight piece between neighbours lies within tolerancePx pixels of the
 * geodesic on the Web-Mercator plane at zoom (tested at the quarter, middle
 * and three-quarter points of the piece). Legs between (nearly) antipodal
 * points have no unique geodesic; GeographicLib picks one, as PROJ does.
 */
export function geodesicLeg(a, b, { zoom = 12, tolerancePx = 0.1 } = {}) {
  const line = WGS84.InverseLine(a.lat, a.lon, b.lat, b.lon, POSITION | Geodesic.DISTANCE_IN);
  const s12 = line.s13;
  const at = (s) => {
    const r = line.Position(s, POSITION);
    return { s, lat: r.lat2, lon: r.lon2, px: mercatorPx(r.lat2, r.lon2, zoom) };
  };
  const start = { s: 0, lat: a.lat, lon: a.lon, px: mercatorPx(a.lat, a.lon, zoom) };
  if (!(s12 > 0)) return [[a.lat, a.lon], [b.lat, a.lon + lonDelta(a.lon, b.lon)]];
  const end = at(s12);
  // Keep b's latitude exactly; its longitude is b.lon shifted by whole turns to follow a.
  end.lat = b.lat;
  end.lon = b.lon + 360 * Math.round((end.lon - b.lon) / 360);
  end.px = mercatorPx(end.lat, end.lon, zoom);
  const out = [[start.lat, start.lon]];
  const refine = (p, q, depth) => {
    const len = q.s - p.s;
    const mids = [0.25, 0.5, 0.75].map((f) => at(p.s + f * len));
    const far = len > MAX_PIECE_M || mids.some((m) => distanceToSegment(m.px, p.px, q.px) > tolerancePx);
    if (far && depth < MAX_DEPTH) {
      refine(p, mids[1], depth + 1);
      refine(mids[1], q, depth + 1);
    } else {
      out.push([q.lat, q.lon]);
    }
  };
  refine(start, end, 0);
  return out;
}

/** lonDelta is the shortest signed longitude change from lon1 to lon2 (°). */
function lonDelta(lon1, lon2) {
  const d = ((((lon2 - lon1) % 360) + 540) % 360) - 180;
  return d;
}

/**
 * geodesicPath joins the geodesic legs between consecutive waypoints
 * [{lat, lon}] as one list of [lat, lon] with continuous longitudes (every
 * waypoint appears once, in order).
 */
export function geodesicPath(waypoints, opts = {}) {
  if (!waypoints.length) return [];
  const out = [[waypoints[0].lat, waypoints[0].lon]];
  let shift = 0; // keeps the longitudes continuous from leg to leg
  for (let i = 1; i < waypoints.length; i++) {
    const a = { lat: waypoints[i - 1].lat, lon: waypoints[i - 1].lon + shift };
    const leg = geodesicLeg(a, waypoints[i], opts);
    shift = leg[leg.length - 1][1] - waypoints[i].lon;
    for (let k = 1; k < leg.length; k++) out.push(leg[k]);
  }
  return out;
}

/**
 * splitForMap cuts a path of [lat, lon] with continuous longitudes into
 * pieces that each lie within −180..180, as the map (one world, no copies)
 * needs: where the path crosses ±180 (or any odd multiple of 180) the
 * crossing point is put at the end of one piece and the start of the next,
 * found on the straight piece in the Mercator plane (so on the drawn line).
 */
export function splitForMap(path, zoom = 12) {
  if (!path.length) return [];
  const turn = (lon) => Math.floor((lon + 180) / 360); // which copy of the world
  const inWorld = ([lat, lon], k) => [lat, lon - 360 * k];
  const parts = [];
  let k = turn(path[0][1]);
  let cur = [inWorld(path[0], k)];
  for (let i = 1; i < path.length; i++) {
    const [lat0, lon0] = path[i - 1];
    const [lat1, lon1] = path[i];
    let k1 = turn(lon1);
    if (lon1 === 180 + 360 * (k1 - 1)) k1 -= 1; // exactly on the edge: stay
    while (k1 !== k) {
      const edge = k1 > k ? 180 + 360 * k : -180 + 360 * k; // the edge crossed, in unrolled longitude
      const t = (edge - lon0) / (lon1 - lon0);
      const y0 = mercatorPx(lat0, lon0, zoom)[1];
      const y1 = mercatorPx(lat1, lon1, zoom)[1];
      const lat = latFromMercatorY(y0 + t * (y1 - y0), zoom);
      cur.push(inWorld([lat, edge], k));
      parts.push(cur);
      k += k1 > k ? 1 : -1;
      cur = [inWorld([lat, edge], k)];
    }
    cur.push(inWorld(path[i], k));
  }
  parts.push(cur);
  return parts.filter((p) => p.length > 1 || parts.length === 1);
}

/**
 * legsOf gives the length (km and international nautical miles) and the
 * initial azimuth of each leg between consecutive waypoints [{lat, lon}],
 * for the editor's table; the checked plan's legs come from the service.
 */
export function legsOf(waypoints) {
  const legs = [];
  for (let i = 1; i < waypoints.length; i++) {
    const a = waypoints[i - 1];
    const b = waypoints[i];
    const r = inverse(a.lat, a.lon, b.lat, b.lon);
    legs.push({ from: i - 1, to: i, lengthKm: r.lengthM / 1000, lengthNmi: r.lengthM / NMI_M, azimuthDeg: r.azimuth1Deg });
  }
  return legs;
}

/** midpoint is the point halfway along the geodesic from a to b ({lat, lon}, longitude in −180..180). */
export function midpoint(a, b) {
  const line = WGS84.InverseLine(a.lat, a.lon, b.lat, b.lon, POSITION | Geodesic.DISTANCE_IN);
  const r = line.Position(line.s13 / 2, Geodesic.LATITUDE | Geodesic.LONGITUDE);
  return { lat: r.lat2, lon: r.lon2 };
}

/**
 * mapParts is what a line of waypoints ({lat, lon} or Leaflet's {lat, lng})
 * looks like on the map: its WGS84 geodesics densified for the deepest zoom
 * (see geodesicLeg) and split at the antimeridian (see splitForMap), as
 * pieces of [lat, lon] for L.polyline (draw with smoothFactor 0, so Leaflet
 * does not simplify the vertices away again).
 */
export function mapParts(waypoints, opts = {}) {
  const wps = waypoints.map((p) => ({ lat: p.lat, lon: p.lon ?? p.lng }));
  if (wps.length < 2) return wps.map((p) => [[p.lat, p.lon]]);
  return splitForMap(geodesicPath(wps, opts), opts.zoom ?? 12);
}
