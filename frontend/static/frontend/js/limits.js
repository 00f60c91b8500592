// Range checks of one typed number the phone does before any judgement: a value outside the item's
// physical range is impossible (the server refuses it), one outside its plausible range is unusual.
// Verdicts themselves come from evaluate.js, the twin of the server's evaluation.
function present(band) {
  return Boolean(band) && (band.min !== null && band.min !== undefined || band.max !== null && band.max !== undefined);
}

export function within(band, value) {
  if (!present(band)) return true;
  const lowOk = band.min === null || band.min === undefined || value >= band.min;
  const highOk = band.max === null || band.max === undefined || value <= band.max;
  return lowOk && highOk;
}

// A limit as a person reads it: at the quantity's display precision when known (a converted 5000 Pa is
// "20.07 in. w.c.", not 20.0732), else at most 6 significant digits; never grouped (12075, not 12,075, which a
// field reads as a decimal comma) and a true minus sign, as the reasons show numbers (inspections/reasons.py).
export function nice(x, decimals = null) {
  const n = decimals === null || decimals === undefined ? Number(Number(x).toPrecision(6)) : Number(Number(x).toFixed(decimals));
  return String(n).replace("-", "−");
}

// A conversion's noise (120 °C read back as 120.00000000001) is no bound (inspections/limits.py BOUND_NOISE).
const BOUND_NOISE = 1e-6;

// A range's bound at the quantity's display precision, rounded inward (a maximum down, a minimum up), so every
// value the words allow is allowed and every value refused or flagged lies outside them: 10 000 Pa is "40.14 in.
// w.c.", never "40.15" beside a refused 40.15 (inspections/limits.py bound_text, its twin). Without a precision
// known: ``nice``.
export function bound(x, decimals, side) {
  if (decimals === null || decimals === undefined) return nice(x);
  const scale = 10 ** decimals;
  const steps = side === "max" ? Math.floor(x * scale + BOUND_NOISE) : Math.ceil(x * scale - BOUND_NOISE);
  const n = Number((steps / scale).toFixed(decimals));
  return String(n === 0 ? 0 : n).replace("-", "−");
}

export function describe(band, unit, decimals = null) {
  if (!present(band)) return "any value";
  const u = unit ? ` ${unit}` : "";
  const has = (v) => v !== null && v !== undefined;
  if (has(band.min) && has(band.max)) return `${bound(band.min, decimals, "min")} to ${bound(band.max, decimals, "max")}${u}`;
  if (has(band.min)) return `at least ${bound(band.min, decimals, "min")}${u}`;
  return `at most ${bound(band.max, decimals, "max")}${u}`;
}

/**
 * Impossible / unusual value of one number, in the person's units (``decimals``: the quantity's display
 * precision). ``text`` follows an "impossible" badge or the verdict ("" when neither); ``allowed`` is the range.
 */
export function plausibility(value, limits, unit = "", decimals = null) {
  const allowed = limits && present(limits.physical) ? `allowed ${describe(limits.physical, unit, decimals)}` : "";
  if (value === null || value === undefined || Number.isNaN(value) || !limits) return { impossible: false, improbable: false, text: "", allowed };
  if (!within(limits.physical, value)) return { impossible: true, improbable: false, text: allowed, allowed };
  if (!within(limits.plausible, value)) {
    return { impossible: false, improbable: true, text: `unusual value (expected ${describe(limits.plausible, unit, decimals)}), please re-check`, allowed };
  }
  return { impossible: false, improbable: false, text: "", allowed };
}

/**
 * A number outside its physical range as the server refuses it (inspections/services/reading_check.py): the field,
 * the value as typed, and what is allowed: "Supply-air temperature: −300 °C is impossible; allowed −60 to 120 °C".
 * ``allowed`` is ``plausibility(...).allowed``; beside the field and in "Finish and sign" alike.
 */
export function outOfRange(label, typed, unit, allowed) {
  const value = String(typed).trim().replace(/^-/, "−");
  return `${label ? `${label}: ` : ""}${value}${unit ? ` ${unit}` : ""} is impossible${allowed ? `; ${allowed}` : ""}`;
}
