// trackanswer.js: the pure parts of the track panel (no browser needed):
// the media type a track file is sent with, and reading the service's
// trajectory answer for drawing.

/**
 * trackMediaType picks the Content-Type a track file is sent with, from its
 * name's extension; anything unknown goes as text/csv, and the service
 * recognises the format from the content.
 */
export function trackMediaType(name) {
  const ext = /\.([^.]+)$/.exec(String(name || "").toLowerCase())?.[1] || "";
  if (ext === "gpx") return "application/gpx+xml";
  if (ext === "geojson" || ext === "json") return "application/geo+json";
  return "text/csv";
}

/** waypointsOf reads the answer's "ridgeflank:waypoints" as [{name, lon, lat, distanceKm}]. */
export function waypointsOf(doc, cov) {
  const list = cov?.["ridgeflank:waypoints"] || doc?.["ridgeflank:waypoints"] || [];
  return list.map((w, i) => ({
    name: w.name ? String(w.name) : `Waypoint ${i + 1}`,
    named: Boolean(w.name),
    lon: Number(w.lon),
    lat: Number(w.lat),
    distanceKm: Number(w.distance_km),
  }));
}

/**
 * splitAtAntimeridian cuts a list of [lon, lat] where consecutive longitudes
 * jump by more than 180° (the service answers longitudes in −180..180, so a
 * track crossing ±180 jumps there), giving the pieces as Leaflet latlngs.
 */
export function splitAtAntimeridian(pos) {
  const parts = [[]];
  for (let i = 0; i < pos.length; i++) {
    if (i > 0 && Math.abs(pos[i][0] - pos[i - 1][0]) > 180) parts.push([]);
    parts[parts.length - 1].push([pos[i][1], pos[i][0]]);
  }
  return parts.filter((p) => p.length);
}
