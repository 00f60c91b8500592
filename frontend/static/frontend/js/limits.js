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

export function describe(band, unit) {
  if (!present(band)) return "any value";
  const u = unit ? ` ${unit}` : "";
  if (band.min !== null && band.min !== undefined && band.max !== null && band.max !== undefined) return `${band.min} to ${band.max}${u}`;
  if (band.min !== null && band.min !== undefined) return `at least ${band.min}${u}`;
  return `at most ${band.max}${u}`;
}

/** Impossible / unusual value of one number, in the person's units; text "" when neither. */
export function plausibility(value, limits, unit = "") {
  if (value === null || value === undefined || Number.isNaN(value) || !limits) return { impossible: false, improbable: false, text: "" };
  if (!within(limits.physical, value)) {
    return { impossible: true, improbable: false, text: `impossible value; allowed ${describe(limits.physical, unit)}` };
  }
  if (!within(limits.plausible, value)) {
    return { impossible: false, improbable: true, text: `unusual value (expected ${describe(limits.plausible, unit)}), please re-check` };
  }
  return { impossible: false, improbable: false, text: "" };
}
