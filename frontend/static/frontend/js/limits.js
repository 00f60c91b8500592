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

// A limit as a person reads it: at most 6 significant digits (a converted 100 000 L/s is not 99999.99999999999),
// thousands grouped from 10 000 and a true minus sign, as the reasons show numbers (inspections/reasons.py).
export function nice(x) {
  const n = Number(Number(x).toPrecision(6));
  const text = Math.abs(n) >= 10000 ? n.toLocaleString("en-US", { maximumFractionDigits: 6 }) : String(n);
  return text.replace("-", "−");
}

export function describe(band, unit) {
  if (!present(band)) return "any value";
  const u = unit ? ` ${unit}` : "";
  if (band.min !== null && band.min !== undefined && band.max !== null && band.max !== undefined) return `${nice(band.min)} to ${nice(band.max)}${u}`;
  if (band.min !== null && band.min !== undefined) return `at least ${nice(band.min)}${u}`;
  return `at most ${nice(band.max)}${u}`;
}

/** Impossible / unusual value of one number, in the person's units; text "" when neither. */
export function plausibility(value, limits, unit = "") {
  if (value === null || value === undefined || Number.isNaN(value) || !limits) return { impossible: false, improbable: false, text: "" };
  if (!within(limits.physical, value)) {
    return { impossible: true, improbable: false, text: `not possible; allowed ${describe(limits.physical, unit)}` }; // after an "impossible" badge
  }
  if (!within(limits.plausible, value)) {
    return { impossible: false, improbable: true, text: `unusual value (expected ${describe(limits.plausible, unit)}), please re-check` };
  }
  return { impossible: false, improbable: false, text: "" };
}
