// Pure limit checks the phone can do offline: the value against the item's bands, in the user's units.
// The final verdict (anything needing other readings or the unit's data) comes from the server.

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

/** Verdict of one number: "ok" | "watch" | "fail" | "none" (no simple band), plus impossible/improbable. */
export function judge(value, limits, unit = "") {
  if (value === null || value === undefined || Number.isNaN(value)) return { verdict: "none", text: "" };
  if (!limits) return { verdict: "none", text: "judged on the server" };
  if (!within(limits.physical, value)) {
    return { verdict: "fail", impossible: true, text: `impossible value; allowed ${describe(limits.physical, unit)}` };
  }
  let verdict = "none";
  let text = "no simple limit; judged on the server";
  if (present(limits.ok)) {
    if (within(limits.ok, value)) { verdict = "ok"; text = `ok: ${describe(limits.ok, unit)}`; }
    else if (present(limits.watch) && within(limits.watch, value)) { verdict = "watch"; text = `watch: outside ${describe(limits.ok, unit)}`; }
    else { verdict = "fail"; text = `fail: outside ${describe(present(limits.watch) ? limits.watch : limits.ok, unit)}`; }
  }
  const improbable = !within(limits.plausible, value);
  if (improbable) text += `; unusual value (expected ${describe(limits.plausible, unit)}), please re-check`;
  return { verdict, improbable, text };
}
