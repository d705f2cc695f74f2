// coveragejson.js: reads the parts of CoverageJSON 1.0 the page needs: the
// point/trajectory positions of a domain and the values of each range, from a
// Coverage or a CoverageCollection (the collection's shared domain/parameters
// are honoured).

/** coverages returns the list of Coverage objects in a CoverageJSON document. */
export function coverages(doc) {
  if (!doc) return [];
  if (doc.type === "CoverageCollection") {
    return (doc.coverages || []).map((c) => ({ ...c, parameters: c.parameters || doc.parameters, domainType: c.domain?.domainType || doc.domainType }));
  }
  if (doc.type === "Coverage") return [doc];
  return [];
}

/** rangeValues returns the values of one parameter as an array (null = no data). */
export function rangeValues(cov, name) {
  const r = cov?.ranges?.[name];
  if (!r) return null;
  if (Array.isArray(r.values)) return r.values.map((v) => (v === null || v === undefined ? null : Number(v)));
  return null;
}

/** axisValues returns the values of a domain axis, expanding start/stop/num axes. */
export function axisValues(cov, axis) {
  const a = cov?.domain?.axes?.[axis];
  if (!a) return null;
  if (Array.isArray(a.values)) return a.values;
  if (a.num !== undefined) {
    const out = [];
    for (let i = 0; i < a.num; i++) out.push(a.num === 1 ? a.start : a.start + ((a.stop - a.start) * i) / (a.num - 1));
    return out;
  }
  return null;
}

/**
 * positions returns [lon, lat] per sample: from a composite axis (Trajectory,
 * MultiPoint) or from the x and y axes (Point).
 */
export function positions(cov) {
  const comp = cov?.domain?.axes?.composite;
  if (comp && Array.isArray(comp.values)) {
    const names = comp.coordinates || ["x", "y"];
    const ix = names.indexOf("x");
    const iy = names.indexOf("y");
    return comp.values.map((t) => [Number(t[ix >= 0 ? ix : 0]), Number(t[iy >= 0 ? iy : 1])]);
  }
  const xs = axisValues(cov, "x");
  const ys = axisValues(cov, "y");
  if (xs && ys && xs.length === ys.length) return xs.map((x, i) => [Number(x), Number(ys[i])]);
  if (xs && ys) {
    const out = [];
    for (const y of ys) for (const x of xs) out.push([Number(x), Number(y)]);
    return out;
  }
  return [];
}

/** parameterUnit returns the unit symbol (or label) of a parameter, if given. */
export function parameterUnit(cov, name) {
  const u = cov?.parameters?.[name]?.unit;
  if (!u) return "";
  if (typeof u.symbol === "string") return u.symbol;
  if (u.symbol?.value) return u.symbol.value;
  return u.label?.en || "";
}
