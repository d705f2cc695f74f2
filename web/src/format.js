// format.js: number and position formatting for the page.

/** fmt formats a number with a fixed number of digits, or "no data". */
export function fmt(v, digits = 0, units = "") {
  if (v === null || v === undefined || !Number.isFinite(v)) return "no data";
  const s = v.toLocaleString("en-GB", { minimumFractionDigits: digits, maximumFractionDigits: digits });
  return units ? `${s} ${units}` : s;
}

/** fmtSigned is fmt with an explicit "+" for positive values. */
export function fmtSigned(v, digits = 0, units = "") {
  const s = fmt(v, digits, units);
  return Number.isFinite(v) && v > 0 ? `+${s}` : s;
}

/** fmtLatLon writes a position as degrees with hemisphere letters. */
export function fmtLatLon(lat, lon) {
  const la = `${Math.abs(lat).toFixed(4)}° ${lat >= 0 ? "N" : "S"}`;
  const lo = `${Math.abs(lon).toFixed(4)}° ${lon >= 0 ? "E" : "W"}`;
  return `${la}, ${lo}`;
}

/** wrapLon brings a longitude into −180..180 degrees. */
export function wrapLon(lon) {
  let l = ((((lon + 180) % 360) + 360) % 360) - 180;
  if (l === -180 && lon > 0) l = 180;
  return l;
}
