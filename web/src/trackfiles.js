// trackfiles.js: reads a planned or surveyed track from a GeoJSON, CSV or GPX
// file into a list of [lon, lat] positions, so the page can send it to the
// service's trajectory query as a GeoJSON LineString.
//   GeoJSON (RFC 7946): LineString, MultiLineString (joined), MultiPoint, or
//     Features / a FeatureCollection of those or of Points, in order.
//   CSV: a header row naming longitude and latitude columns (lon/lng/long/
//     longitude, lat/latitude; any case); comma, semicolon or tab separated.
//   GPX 1.1: track points (trkpt), else route points (rtept), else waypoints.

function fail(msg) {
  throw new Error(msg);
}

function checkPos(lon, lat, where) {
  if (!Number.isFinite(lon) || !Number.isFinite(lat)) fail(`${where}: longitude/latitude is not a number.`);
  if (lat < -90 || lat > 90) fail(`${where}: latitude ${lat} is outside −90..90.`);
  if (lon < -180 || lon > 360) fail(`${where}: longitude ${lon} is outside −180..360.`);
  return [lon > 180 ? lon - 360 : lon, lat];
}

export function parseGeoJSONTrack(text) {
  let doc;
  try {
    doc = JSON.parse(text);
  } catch (err) {
    fail(`The GeoJSON file is not valid JSON (${err.message}).`);
  }
  const out = [];
  const addGeom = (g) => {
    if (!g) return;
    switch (g.type) {
      case "Point":
        out.push(g.coordinates);
        break;
      case "LineString":
      case "MultiPoint":
        out.push(...g.coordinates);
        break;
      case "MultiLineString":
        for (const l of g.coordinates) out.push(...l);
        break;
      case "GeometryCollection":
        (g.geometries || []).forEach(addGeom);
        break;
      default:
        fail(`A ${g.type} is not a track: use a LineString or points.`);
    }
  };
  if (doc.type === "FeatureCollection") (doc.features || []).forEach((f) => addGeom(f.geometry));
  else if (doc.type === "Feature") addGeom(doc.geometry);
  else addGeom(doc);
  return out.map((c, i) => checkPos(Number(c[0]), Number(c[1]), `GeoJSON position ${i + 1}`));
}

export function parseCSVTrack(text) {
  const lines = text.split(/\r?\n/).filter((l) => l.trim() && !l.trim().startsWith("#"));
  if (lines.length < 2) fail("The CSV file needs a header row and at least two positions.");
  const sep = [",", ";", "\t"].find((s) => lines[0].includes(s)) || ",";
  const header = lines[0].split(sep).map((h) => h.trim().replace(/^"|"$/g, "").toLowerCase());
  const ilon = header.findIndex((h) => ["lon", "lng", "long", "longitude", "lon_deg", "longitude_deg", "x"].includes(h));
  const ilat = header.findIndex((h) => ["lat", "latitude", "lat_deg", "latitude_deg", "y"].includes(h));
  if (ilon < 0 || ilat < 0) fail("The CSV header must name a longitude column (lon or longitude) and a latitude column (lat or latitude).");
  return lines.slice(1).map((l, i) => {
    const f = l.split(sep).map((x) => x.trim().replace(/^"|"$/g, ""));
    return checkPos(Number(f[ilon]), Number(f[ilat]), `CSV row ${i + 2}`);
  });
}

export function parseGPXTrack(text) {
  const doc = new DOMParser().parseFromString(text, "application/xml");
  if (doc.querySelector("parsererror")) fail("The GPX file is not well-formed XML.");
  for (const tag of ["trkpt", "rtept", "wpt"]) {
    const pts = [...doc.getElementsByTagName(tag)];
    if (pts.length) return pts.map((p, i) => checkPos(Number(p.getAttribute("lon")), Number(p.getAttribute("lat")), `GPX ${tag} ${i + 1}`));
  }
  fail("The GPX file holds no track, route or waypoints.");
}

/** parseTrackFile picks the reader by file name (then by content) and returns [lon, lat][]. */
export function parseTrackFile(name, text) {
  const lower = name.toLowerCase();
  let pts;
  if (lower.endsWith(".gpx") || /^\s*<\?xml|^\s*<gpx/i.test(text)) pts = parseGPXTrack(text);
  else if (lower.endsWith(".csv") || lower.endsWith(".txt")) pts = parseCSVTrack(text);
  else pts = parseGeoJSONTrack(text);
  if (pts.length < 2) fail("A track needs at least two positions.");
  return pts;
}
