// parameters.js: the parameters a dataset offers, read from its EDR
// collection document (GET /api/collections/{id}): "parameter_names" holds
// one CoverageJSON parameter object per parameter id, with its label,
// description and UCUM unit. The page keeps no list of its own: every
// selector, read-out row and unit shown comes from here.

/**
 * parametersOf returns the collection's parameters in document order as
 * [{id, label, description, unit, unitLabel, modelDependent}]; unit is the
 * UCUM symbol as the service gives it ("" when none), modelDependent is the
 * optional "ridgeflank:model_dependent" member (undefined when not given).
 */
export function parametersOf(collection) {
  const pn = collection?.parameter_names;
  if (!pn || typeof pn !== "object") return [];
  return Object.entries(pn).map(([id, p]) => ({
    id,
    label: i18n(p?.observedProperty?.label) || i18n(p?.label) || id,
    description: i18n(p?.description),
    unit: unitSymbol(p?.unit),
    unitLabel: i18n(p?.unit?.label),
    modelDependent: typeof p?.["ridgeflank:model_dependent"] === "boolean" ? p["ridgeflank:model_dependent"] : undefined,
  }));
}

/** parameterById finds one parameter of the collection, or null. */
export function parameterById(collection, id) {
  return parametersOf(collection).find((p) => p.id === id) || null;
}

/** i18n picks the English text of a CoverageJSON i18n object (or a plain string). */
export function i18n(o) {
  if (!o) return "";
  if (typeof o === "string") return o;
  return o.en || Object.values(o)[0] || "";
}

/** unitSymbol reads a CoverageJSON unit object's symbol (string or {value}). */
export function unitSymbol(u) {
  if (!u) return "";
  if (typeof u.symbol === "string") return u.symbol;
  if (u.symbol?.value) return u.symbol.value;
  return i18n(u.label);
}

const SUPERSCRIPT = { "-": "⁻", 0: "⁰", 1: "¹", 2: "²", 3: "³", 4: "⁴", 5: "⁵", 6: "⁶", 7: "⁷", 8: "⁸", 9: "⁹" };

/**
 * unitText writes a UCUM unit symbol for reading: exponents (digits right
 * after a unit atom's letters, UCUM's way of writing powers) become
 * superscripts, so "mW/m2" reads "mW/m²" and "m2/s" reads "m²/s".
 */
export function unitText(symbol) {
  return String(symbol || "").replace(/([A-Za-z\]])(-?\d+)/g, (_, a, e) => a + [...e].map((c) => SUPERSCRIPT[c] || c).join(""));
}

/**
 * digitsFor chooses the decimals shown for a value. With span (the extent of
 * the parameter's colour scale from the service, max − min): no decimals for
 * spans of 1000 or more, one from 10, two below, so depths show whole metres
 * and ages tenths of a million years. Without it: about four significant
 * figures, at most two decimals. (Common practice, no source.)
 */
export function digitsFor(v, span = NaN) {
  if (Number.isFinite(span) && span > 0) return span >= 1000 ? 0 : span >= 10 ? 1 : 2;
  if (!Number.isFinite(v) || v === 0) return 0;
  const mag = Math.floor(Math.log10(Math.abs(v)));
  return Math.min(2, Math.max(0, 3 - mag));
}
