// latlon.js: reading and writing typed positions (pure). The forms accepted
// are the service's (geo.ParseLatitude / geo.ParseLongitude on the Go side):
// decimal degrees, or degrees and decimal minutes (and seconds) as written at
// sea, with a leading or trailing hemisphere letter or a minus sign.

const SEPARATORS = /[\s°º˚'′’"″”:]+/u;

/**
 * parseAngle reads one latitude (lat true) or longitude as decimal degrees,
 * north and east positive. Accepted, with or without spaces:
 *   -12.5083   12.5083S   S12.5083   12°30.5'S   12 30.5 S   -12 30.500   12°30'30"S   12:30.5 S
 * With minutes the degrees must be whole and minutes and seconds below 60; a
 * decimal fraction only on the last part; a hemisphere letter (N/S for a
 * latitude, E/W for a longitude) not together with a minus sign. Latitudes
 * lie in −90..90, longitudes in −180..360. Throws an Error saying what is wrong.
 */
export function parseAngle(input, lat) {
  let s = String(input ?? "").trim();
  if (s === "") throw new Error("empty value");
  let hemi = "";
  const last = s[s.length - 1].toUpperCase();
  const first = s[0].toUpperCase();
  if ("NSEW".includes(last)) {
    hemi = last;
    s = s.slice(0, -1).trim();
  } else if ("NSEW".includes(first)) {
    hemi = first;
    s = s.slice(1).trim();
  }
  let neg = false;
  if (s.startsWith("-")) [neg, s] = [true, s.slice(1)];
  else if (s.startsWith("\u2212")) [neg, s] = [true, s.slice(1)];
  else if (s.startsWith("+")) s = s.slice(1);
  const parts = s.split(SEPARATORS).filter((p) => p !== "");
  if (parts.length === 0 || parts.length > 3) throw new Error(`"${input}" is not an angle (want decimal degrees or degrees and decimal minutes)`);
  const vals = parts.map((p, i) => {
    const bad = /[^0-9.]/u.exec(p);
    if (bad) throw new Error(`"${input}" is not an angle: unexpected "${bad[0]}"`);
    if (!/^(\d+\.?\d*|\.\d+)$/.test(p)) throw new Error(`"${input}" is not an angle: bad number "${p}"`);
    const v = Number(p);
    if (i < parts.length - 1 && p.includes(".")) throw new Error(`"${input}": only the last part (degrees, minutes or seconds) may have a decimal fraction`);
    if (i > 0 && v >= 60) throw new Error(`"${input}": minutes and seconds must be below 60`);
    return v;
  });
  let v = vals[0];
  if (vals.length > 1) v += vals[1] / 60;
  if (vals.length > 2) v += vals[2] / 3600;
  if (hemi) {
    if (neg) throw new Error(`"${input}" has both a minus sign and a hemisphere letter`);
    if (lat && (hemi === "E" || hemi === "W")) throw new Error(`"${input}": a latitude takes N or S, not ${hemi}`);
    if (!lat && (hemi === "N" || hemi === "S")) throw new Error(`"${input}": a longitude takes E or W, not ${hemi}`);
    neg = hemi === "S" || hemi === "W";
  }
  if (neg) v = -v;
  if (lat && (v < -90 || v > 90)) throw new Error(`latitude "${input}" is outside −90..90`);
  if (!lat && (v < -180 || v > 360)) throw new Error(`longitude "${input}" is outside −180..360`);
  return v;
}

/** parseLatitude reads a latitude (see parseAngle). */
export const parseLatitude = (s) => parseAngle(s, true);

/** parseLongitude reads a longitude (see parseAngle); west negative. */
export const parseLongitude = (s) => parseAngle(s, false);

/**
 * formatDDM writes an angle as degrees and decimal minutes with a hemisphere
 * letter, e.g. formatDDM(-12.508333, true) = "12°30.500′S" (3 decimals of a
 * minute: 1/1000′ is under 2 m). Longitudes get three degree digits.
 */
export function formatDDM(v, lat, decimals = 3) {
  if (!Number.isFinite(v)) return "";
  const hemi = lat ? (v < 0 ? "S" : "N") : v < 0 ? "W" : "E";
  const scale = 10 ** decimals;
  let m = Math.round(Math.abs(v) * 60 * scale); // whole thousandths of a minute
  const d = Math.floor(m / (60 * scale));
  m -= d * 60 * scale;
  const deg = String(d).padStart(lat ? 2 : 3, "0");
  const min = (m / scale).toFixed(decimals).padStart(decimals + 3, "0");
  return `${deg}°${min}′${hemi}`;
}

/** formatDecimal writes an angle in decimal degrees with 6 decimals (about 0.1 m). */
export function formatDecimal(v) {
  return Number.isFinite(v) ? v.toFixed(6) : "";
}
