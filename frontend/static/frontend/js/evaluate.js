// The phone's twin of inspections/evaluation/: the same judgements, offline, from the
// evaluation context the server ships with the checklist (inspections/phone.py).
// Pure: no DOM, no network. SI values in, SI values out; reasons as parts rendered in the
// person's units (units.js). tests/inspections/test_phone_agreement.py runs both sides on
// the same cases and fails on any disagreement, or on a server check this file lacks.
import { fixed, formatNumber, pyRound, render, typedDecimals } from "./units.js";

export { fixed, pyRound };

// The verdict values of engineering/controls.py Verdict (tests/inspections/test_verdict_words.py holds them equal).
export const OK = "ok";
export const WATCH = "watch";
export const FAIL = "fail";

// Every check name of evaluation.CHECKS this twin judges.
export const CHECKS = [
  "check", "choice", "limits", "filter_loading", "filter_after_change", "oa_fraction_temperature", "oa_fraction_co2",
  "full_oa_airflow", "coil_balance", "supply_temperature", "duct_static", "damper_position", "sensor_drift", "heat_recovery",
  "coil_valve_leak",
];

// Checks of several readings (inspections/evaluation/results.py SPANNING_CHECKS): a coil's heat balance names the
// flow only as its place, never as the flow's verdict. The form shows each on a line of its own under its part, as
// the record page and the PDF do (tests/inspections/test_phone_agreement.py holds the two lists equal).
export const SPANNING_CHECKS = ["coil_balance"];
export const ownJudgement = (check) => !SPANNING_CHECKS.includes(check);

const RANK = { [OK]: 0, [WATCH]: 1, [FAIL]: 2 };
const worst = (...vs) => vs.reduce((a, b) => (RANK[b] > RANK[a] ? b : a), OK);

// ---------------------------------------------------------------------------
// Numbers as Python computes them
// ---------------------------------------------------------------------------

// Python's "{:.3g}" for the ordinary magnitudes of field readings.
const g3 = (x) => String(Number(x.toPrecision(3)));

function fmtG(x) {
  // Python's v.fmt / "{:g}" for the short numbers in messages.
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(6)));
}

export class EngineeringInputError extends Error {
  constructor(field, message, { low = null, high = null, parts = [] } = {}) {
    super(message); this.field = field; this.low = low; this.high = high; this.parts = parts;
  }
}

// SI unit (or label) → display quantity, so a refusal's numbers read in the person's units (engineering/validate.py).
const QUANTITY_OF_UNIT = { "m³/s": "airflow", Pa: "pressure", "°C": "temperature", K: "temperature_difference", ppm: "co2", W: "heat_rate" };
const QUANTITY_OF_LABEL = { "absolute pressure": "absolute_pressure", "fluid flow": "water_flow" };
const quantityOf = (unit, label = "") => QUANTITY_OF_LABEL[label] || QUANTITY_OF_UNIT[unit] || null;

function rangeParts(low, high, quantity, lowOpen = false, highOpen = false) {
  if (low !== null && high !== null && !lowOpen && !highOpen) return [{ low, high, quantity }];
  const parts = [];
  if (low !== null) parts.push(lowOpen ? "above " : "at least ", { value: low, quantity });
  if (high !== null) parts.push(parts.length ? " and " : "", highOpen ? "below " : "at most ", { value: high, quantity });
  const out = parts.filter((p) => p !== "");
  return out.length ? out : ["any finite number"];
}

/** An engineering refusal as reason parts: its numbers as SI quantities when it has them (inspections.display: refusal_parts). */
export function refusalParts(exc) {
  return exc && exc.parts && exc.parts.length ? [...exc.parts] : [plainMessage(exc)];
}

// An engineering refusal without its argument names ("airflow airflow_m3s=0.4 …" reads "airflow 0.4 …"),
// as the server's inspections.display.plain_message.
const ARGUMENT = /[A-Za-z_][A-Za-z0-9_]*(?:\[\d+\])?(?:\.[A-Za-z_][A-Za-z0-9_]*)*=/g;
export function plainMessage(exc) {
  return String(exc && exc.message !== undefined ? exc.message : exc).replace(ARGUMENT, "");
}

function finite(name, value, label = "") {
  if (typeof value !== "number" || !Number.isFinite(value)) {
    throw new EngineeringInputError(name, `${label ? `${label} ` : ""}${name}=${value} is not a number`);
  }
  return value;
}

function inRange(name, value, low, high, { unit = "", label = "", lowOpen = false, highOpen = false } = {}) {
  const x = finite(name, value, label);
  const below = low !== null && (lowOpen ? x <= low : x < low);
  const above = high !== null && (highOpen ? x >= high : x > high);
  if (below || above) {
    const u = unit ? ` ${unit}` : "";
    let allowed;
    if (low !== null && high !== null && !lowOpen && !highOpen) allowed = `${fmtG(low)}–${fmtG(high)}${u}`;
    else {
      const parts = [];
      if (low !== null) parts.push(`${lowOpen ? "above" : "at least"} ${fmtG(low)}${u}`);
      if (high !== null) parts.push(`${highOpen ? "below" : "at most"} ${fmtG(high)}${u}`);
      allowed = parts.join(" and ");
    }
    const quantity = quantityOf(unit, label);
    const band = rangeParts(low, high, quantity, lowOpen, highOpen);
    const parts = quantity ? [label ? `${label} ` : "", { value: x, quantity }, band[0].quantity ? " is outside " : " must be ", ...band] : [];
    throw new EngineeringInputError(name, `${label ? `${label} ` : ""}${name}=${fmtG(x)} is outside ${allowed}`, { low, high, parts: parts.filter((p) => p !== "") });
  }
  return x;
}
const airTemperature = (name, value, label) => inRange(name, value, -60, 80, { unit: "°C", label });
const co2 = (name, value) => inRange(name, value, 0, 50000, { unit: "ppm", label: "CO2 concentration" });

function grade(deviation, watch, fail) {
  const d = pyRound(Math.abs(deviation), 9);
  if (d > fail) return FAIL;
  if (d > watch) return WATCH;
  return OK;
}

// ---------------------------------------------------------------------------
// engineering/ in JavaScript (the formulas named in each Python docstring)
// ---------------------------------------------------------------------------

export function correctedPressureDrop(ctx, dp, q, qd) {
  const [lo, hi] = ctx.constants.filter_airflow_ratio;
  const n = ctx.constants.filter_exponent;
  inRange("dp_pa", dp, 0, 2500, { unit: "Pa", label: "filter pressure drop" });
  inRange("airflow_m3s", q, 0, 100, { unit: "m³/s", label: "airflow", lowOpen: true });
  inRange("design_airflow_m3s", qd, 0, 100, { unit: "m³/s", label: "design airflow", lowOpen: true });
  const r = q / qd;
  if (!(lo <= r && r <= hi)) {
    throw new EngineeringInputError("airflow_m3s",
      `airflow airflow_m3s=${fmtG(q)} is outside ${g3(lo * qd)}–${g3(hi * qd)} m³/s (${lo}–${hi} × design ${fmtG(qd)} m³/s): too far from design to correct the pressure drop reliably`,
      { low: lo * qd, high: hi * qd, parts: [
        "airflow ", { value: q, quantity: "airflow" }, " is outside ", { low: lo * qd, high: hi * qd, quantity: "airflow" },
        ` (${lo}–${hi} × design `, { value: qd, quantity: "airflow" }, "): too far from design to correct the pressure drop reliably",
      ] });
  }
  return dp * r ** (-n);
}

// engineering.filters.loading_percent: the loading as kept and shown, percent of the span to six decimals; texts
// and tables say it whole from this same figure (never rounded twice), so a reason and a table never differ by one.
export function loadingPercent(fractionOfSpan) {
  return pyRound(fractionOfSpan * 100, 6);
}

export function filterLoading(ctx, { dp, q, qd, clean, final, watchFraction = 0.75, failFraction = 0.95 }) {
  const corrected = correctedPressureDrop(ctx, dp, q, qd);
  inRange("clean_dp_pa", clean, 0, 2500, { unit: "Pa", label: "clean filter pressure drop" });
  inRange("final_dp_pa", final, 0, 2500, { unit: "Pa", label: "final filter pressure drop" });
  if (final <= clean) throw new EngineeringInputError("final_dp_pa", `final filter pressure drop ${fmtG(final)} Pa is not above the clean ${fmtG(clean)} Pa`, { low: clean });
  const frac = (corrected - clean) / (final - clean);
  const f = pyRound(frac, 9);
  const ofClean = clean > 0 ? corrected / clean : 1.0;
  const r = pyRound(ofClean, 9);
  const c = ctx.constants;
  const pct = (x) => fixed(x * 100, 0);
  if (r < c.filter_bypass_watch_fraction) {
    // Air going round or through torn media reads below clean (engineering.filters._below_clean).
    const verdict = r < c.filter_bypass_fail_fraction ? FAIL : WATCH;
    const word = verdict === FAIL ? "missing, torn or bypassed media" : "possibly torn or bypassed media";
    const reason = `filter ${fixed(corrected, 0)} Pa at design airflow is ${pct(ofClean)} % of its clean pressure drop ${fixed(clean, 0)} Pa: ${word} (fail below ${pct(c.filter_bypass_fail_fraction)} %, watch below ${pct(c.filter_bypass_watch_fraction)} % of clean)`;
    const parts = ["filter ", pa(corrected), ` at design airflow is ${pct(ofClean)} % of its clean pressure drop `, pa(clean),
      `: ${word} (fail below ${pct(c.filter_bypass_fail_fraction)} %, watch below ${pct(c.filter_bypass_watch_fraction)} % of clean)`];
    return { corrected, fraction: frac, ofClean, bypass: true, verdict, reason, parts };
  }
  // Judged on the whole percent the words show against the thresholds as written (engineering.filters.filter_loading).
  const loaded = fixed(loadingPercent(frac), 0);
  const [shown, watchAt, failAt] = [Number(loaded), Number(pct(watchFraction)), Number(pct(failFraction))];
  const verdict = shown >= failAt ? FAIL : shown >= watchAt ? WATCH : OK;
  if (f < 0) {
    // Below clean, not so far as to suspect bypassed media: never a negative share of the span.
    const tail = ` (${pct(ofClean)} % of clean; ${belowCleanRule(ctx)})`;
    const reason = `filter ${fixed(corrected, 0)} Pa at design airflow, below its clean pressure drop ${fixed(clean, 0)} Pa${tail}`;
    const parts = ["filter ", pa(corrected), " at design airflow, below its clean pressure drop ", pa(clean), tail];
    return { corrected, fraction: frac, ofClean, bypass: false, verdict, reason, parts };
  }
  const reason = `filter ${fixed(corrected, 0)} Pa at design airflow, ${loaded} % of the way from clean ${fixed(clean, 0)} Pa to final ${fixed(final, 0)} Pa (watch from ${watchAt} %, fail from ${failAt} %)`;
  const parts = ["filter ", pa(corrected), ` at design airflow, ${loaded} % of the way from clean `, pa(clean), " to final ", pa(final),
    ` (watch from ${watchAt} %, fail from ${failAt} %)`];
  return { corrected, fraction: frac, ofClean, bypass: false, verdict, reason, parts };
}

// engineering.filters.BELOW_CLEAN_RULE: what a reading between 80 % of clean and clean means.
function belowCleanRule(ctx) {
  const c = ctx.constants;
  return `within the rated value's tolerance; watch below ${fixed(c.filter_bypass_watch_fraction * 100, 0)} %, fail below ${fixed(c.filter_bypass_fail_fraction * 100, 0)} % of clean as missing, torn or bypassed media`;
}

// A pressure as a reason part (SI), shown in the reader's unit (engineering/filters/loading.py: _pa).
function pa(value) {
  return { value, quantity: "pressure" };
}

/** The pressure drop read just after a change against the rated clean value (engineering.filters.filter_after_change). */
export function filterAfterChange(ctx, { dp, q, qd, clean }) {
  const corrected = correctedPressureDrop(ctx, dp, q, qd);
  inRange("clean_dp_pa", clean, 0, 2500, { unit: "Pa", label: "clean filter pressure drop", lowOpen: true });
  const c = ctx.constants;
  const tol = c.filter_after_change_tolerance;
  const ofClean = corrected / clean;
  const r = pyRound(ofClean, 9);
  let verdict = OK;
  if (r < c.filter_bypass_fail_fraction) verdict = FAIL;
  else if (r < 1 - tol) verdict = WATCH;
  else if (r > c.filter_after_change_high_fail) verdict = FAIL;
  else if (r > 1 + tol) verdict = WATCH;
  return { corrected, ofClean, verdict, bypass: r < c.filter_bypass_fail_fraction };
}

// Theil–Sen with Sen's interval, as scipy.stats.theilslopes (method "joint") computes it.
function median(sorted) {
  const n = sorted.length;
  const mid = Math.floor(n / 2);
  return n % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

function normPpf(p) {
  // Acklam's rational approximation with one Halley refinement (|relative error| < 1e-12).
  const a = [-39.69683028665376, 220.9460984245205, -275.9285104469687, 138.357751867269, -30.66479806614716, 2.506628277459239];
  const b = [-54.47609879822406, 161.5858368580409, -155.6989798598866, 66.80131188771972, -13.28068155288572];
  const c = [-0.007784894002430293, -0.3223964580411365, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [0.007784695709041462, 0.3224671290700398, 2.445134137142996, 3.754408661907416];
  const pl = 0.02425;
  let x;
  if (p < pl) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  } else if (p <= 1 - pl) {
    const q = p - 0.5; const r = q * q;
    x = (((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -(((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  }
  const e = 0.5 * erfc(-x / Math.SQRT2) - p;
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);
  return x - u / (1 + (x * u) / 2);
}

function erfc(x) {
  // Numerical Recipes erfc (Chebyshev), fractional error < 1.2e-7; refined by Halley above.
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const r = t * Math.exp(-z * z - 1.26551223 + t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806
    + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))));
  return x >= 0 ? r : 2 - r;
}

function repeats(values) {
  const counts = new Map();
  for (const v of values) counts.set(v, (counts.get(v) || 0) + 1);
  return [...counts.values()].filter((k) => k > 1);
}

function npRound(x) {
  // numpy.round: half to even.
  const r = Math.round(x);
  return Math.abs(x - Math.trunc(x)) === 0.5 ? (r % 2 === 0 ? r : r - 1) : r;
}

export function robustRate(points, confidence = 0.95) {
  const xs = points.map((p) => p[0]);
  const ys = points.map((p) => p[1]);
  if (points.length < 2) throw new EngineeringInputError("points", `a rate needs at least 2 points; got ${points.length}`);
  if (Math.max(...xs) === Math.min(...xs)) throw new EngineeringInputError("points", "all points have the same x: no rate can be drawn");
  const slopes = [];
  for (let i = 0; i < xs.length; i++) {
    for (let j = 0; j < xs.length; j++) {
      const dx = xs[i] - xs[j];
      if (dx > 0) slopes.push((ys[i] - ys[j]) / dx);
    }
  }
  slopes.sort((p, q) => p - q);
  const slope = median(slopes);
  const interceptFor = (s) => median(points.map(([x, y]) => y - s * x).sort((p, q) => p - q));
  let alpha = confidence;
  if (alpha > 0.5) alpha = 1 - alpha;
  const z = normPpf(alpha / 2);
  const nt = slopes.length;
  const ny = ys.length;
  const term = (k) => k * (k - 1) * (2 * k + 5);
  const sigsq = (1 / 18) * (term(ny) - repeats(xs).reduce((s, k) => s + term(k), 0) - repeats(ys).reduce((s, k) => s + term(k), 0));
  const sigma = Math.sqrt(sigsq);
  const ru = Math.min(npRound((nt - z * sigma) / 2), nt - 1);
  const rl = Math.max(npRound((nt + z * sigma) / 2) - 1, 0);
  const low = slopes[rl];
  const high = slopes[ru];
  return {
    slope, low, high, intercept: interceptFor(slope), interceptLow: interceptFor(low), interceptHigh: interceptFor(high),
    xAt(y, which = "central") {
      const [s, b] = { central: [slope, this.intercept], low: [low, this.interceptLow], high: [high, this.interceptHigh] }[which];
      return (y - b) / s;
    },
  };
}

const DAY_MS = 86400000;
const isoDay = (ms) => new Date(ms).toISOString().slice(0, 10);
const dayMs = (iso) => Date.parse(`${iso}T00:00:00Z`);

export function filterForecast(ctx, { points, qd, final, confidence = 0.9, minRise = 2.0 }) {
  inRange("final_dp_pa", final, 0, 2500, { unit: "Pa", label: "final filter pressure drop" });
  const usable = [];
  points.forEach((p, i) => {
    const h = inRange(`points[${i}].run_hours`, p.run_hours, 0, null, { unit: "h", label: "run-hours" });
    let dp;
    try {
      dp = correctedPressureDrop(ctx, p.dp_pa, p.airflow_m3s, qd);
    } catch (exc) {
      if (exc.field !== "airflow_m3s") throw exc;
      return;
    }
    usable.push([h, dp, p.when]);
  });
  if (usable.length < 3) {
    const err = new EngineeringInputError("points", `a filter forecast needs at least 3 usable readings (airflow within 0.5–1.5 × design); got ${usable.length}`, { low: 3 });
    err.tooFew = usable.length;
    throw err;
  }
  const hours = usable.map((u) => u[0]);
  if (new Set(hours).size < 2) throw new EngineeringInputError("points", "all readings are at the same run-hours: no trend can be drawn");
  const rate = robustRate(usable.map(([h, dp]) => [h, dp]), confidence);
  const rise = rate.slope * (Math.max(...hours) - Math.min(...hours));
  if (rate.slope <= 0 || rise < minRise) {
    const err = new EngineeringInputError("points", `the pressure drop is not rising (trend ${rate.slope.toPrecision(3)} Pa per run-hour, ${fixed(rise, 1)} Pa over the readings; at least ${minRise} Pa needed): no forecast can be made`);
    err.notRising = true;
    throw err;
  }
  let atFinal = rate.xAt(final);
  let early = rate.xAt(final, "high");
  let late = rate.low > 0 ? rate.xAt(final, "low") : null;
  const last = usable.reduce((a, b) => (b[0] > a[0] ? b : a));
  const [lastH, lastDp, lastWhen] = last;
  // The last reading itself at or over the final value: due now, whatever the fitted line says.
  const overNow = pyRound(lastDp, 9) >= final;
  if (overNow) {
    atFinal = Math.min(atFinal, lastH);
    early = Math.min(early, lastH);
    late = late === null ? lastH : Math.min(late, lastH);
  }
  let hpd = null;
  try {
    const origin = Math.min(...usable.map((u) => dayMs(u[2])));
    const perDay = robustRate(usable.map(([h, , w]) => [(dayMs(w) - origin) / DAY_MS, h]));
    hpd = perDay.slope > 0 ? perDay.slope : null;
  } catch (exc) {
    hpd = null;
  }
  const latest = Math.max(...usable.map((u) => dayMs(u[2])));
  const toDate = (h) => {
    if (h === null) return null;
    if (h <= lastH) return isoDay(Math.floor((latest + DAY_MS / 2) / DAY_MS) * DAY_MS); // due now: the last reading's day
    if (hpd === null) return null;
    // Never before the reading the forecast comes from (nor any reading given).
    const at = Math.max(dayMs(lastWhen) + (Math.max(h - lastH, 0) / hpd) * DAY_MS, latest);
    return isoDay(Math.floor((at + DAY_MS / 2) / DAY_MS) * DAY_MS);
  };
  return {
    runHoursAtFinal: atFinal, dateAtFinal: toDate(atFinal), dateLow: toDate(early), dateHigh: toDate(late),
    rate: rate.slope, pointsUsed: usable.length, atFinalNow: overNow || atFinal <= lastH,
    method: `Theil–Sen line of pressure drop corrected to design airflow (n = ${ctx.constants.filter_exponent}) against run-hours, ${Math.round(confidence * 100)} % interval`,
  };
}

// A fraction and its uncertainty as a record keeps them, three decimals (engineering/outdoor_air.py: kept).
const keptFraction = (x) => pyRound(x, 3);

/** An uncertainty of a fraction as every text states it, of the value as kept: "± 3 points" (engineering/outdoor_air.py: points_words). */
export function pointsWords(u) {
  return `± ${fixed(keptFraction(u) * 100, 0)} points`;
}

/** A fraction and its uncertainty, as kept: "41 % ± 3 points" (engineering/outdoor_air.py: fraction_words). */
export function fractionWords(x, u) {
  return `${fixed(keptFraction(x) * 100, 0)} % ${pointsWords(u)}`;
}

function oaFraction({ method, outdoor, ret, mixed, accO, accR, accM, minDifference, maxUncertainty = 0.5, unit, names }) {
  const diff = ret - outdoor;
  if (Math.abs(diff) < minDifference) {
    const du = unit === "°C" ? "K" : unit;
    const [vq, dq] = [quantityOf(unit), quantityOf(du)];
    throw new EngineeringInputError(names[0], `cannot compute an outdoor-air fraction by ${method === "co2" ? "CO2" : "temperatures"}: outdoor ${fmtG(outdoor)} ${unit} and return ${fmtG(ret)} ${unit} differ by ${fmtG(pyRound(Math.abs(diff), 3))} ${du}; they must differ by at least ${fmtG(minDifference)} ${du}`,
      { low: minDifference, parts: [
        `cannot compute an outdoor-air fraction by ${method === "co2" ? "CO2" : "temperatures"}: outdoor `, { value: outdoor, quantity: vq },
        " and return ", { value: ret, quantity: vq }, " differ by ", { value: Math.abs(diff), quantity: dq },
        "; they must differ by at least ", { value: minDifference, quantity: dq },
      ] });
  }
  const x = (ret - mixed) / diff;
  const u = Math.sqrt((accM / diff) ** 2 + ((accO * (ret - mixed)) / diff ** 2) ** 2 + ((accR * (mixed - outdoor)) / diff ** 2) ** 2);
  if (u >= maxUncertainty) {
    const du = unit === "°C" ? "K" : unit;
    const by = `cannot compute an outdoor-air fraction by ${method === "co2" ? "CO2" : "temperatures"}: with the sensor accuracies given the result would be ${fractionWords(x, u)}, and an uncertainty of ${pointsWords(maxUncertainty)} or more says nothing; outdoor and return differ by only `;
    throw new EngineeringInputError(names[2], `${by}${fmtG(pyRound(Math.abs(diff), 3))} ${du}`,
      { high: maxUncertainty, parts: [by, { value: Math.abs(diff), quantity: quantityOf(du) }] });
  }
  if (x < -u || x > 1 + u) {
    const vq = quantityOf(unit);
    throw new EngineeringInputError(names[2], `mixed ${fmtG(mixed)} ${unit} is not between outdoor ${fmtG(outdoor)} ${unit} and return ${fmtG(ret)} ${unit} (even allowing ${pointsWords(u)} for sensor accuracy): check sensor placement, stratification or a heat source upstream`,
      { parts: [
        "mixed ", { value: mixed, quantity: vq }, " is not between outdoor ", { value: outdoor, quantity: vq }, " and return ", { value: ret, quantity: vq },
        ` (even allowing ${pointsWords(u)} for sensor accuracy): check sensor placement, stratification or a heat source upstream`,
      ] });
  }
  const fraction = Math.min(Math.max(x, 0), 1);
  return { fraction, uncertainty: u, low: Math.max(fraction - u, 0), high: Math.min(fraction + u, 1) };
}

export function oaFractionFromTemperatures(o, r, m, accuracy = 0.5) {
  airTemperature("t_outdoor_c", o, "outdoor air temperature");
  airTemperature("t_return_c", r, "return air temperature");
  airTemperature("t_mixed_c", m, "mixed air temperature");
  return oaFraction({ method: "temperature", outdoor: o, ret: r, mixed: m, accO: accuracy, accR: accuracy, accM: accuracy, minDifference: 3.0, unit: "°C", names: ["t_outdoor_c", "t_return_c", "t_mixed_c"] });
}

export function oaFractionFromCo2(o, r, m, accPpm = 50, accPct = 3) {
  co2("co2_outdoor_ppm", o);
  co2("co2_return_ppm", r);
  co2("co2_supply_or_mixed_ppm", m);
  const a = (c) => accPpm + (accPct / 100) * c;
  return oaFraction({ method: "co2", outdoor: o, ret: r, mixed: m, accO: a(o), accR: a(r), accM: a(m), minDifference: 100.0, unit: "ppm", names: ["co2_outdoor_ppm", "co2_return_ppm", "co2_supply_or_mixed_ppm"] });
}

function fractionCheck(x, u, mn) {
  const lo = x - u;
  const hi = x + u;
  const text = `outdoor-air fraction ${fractionWords(x, u)}`;
  if (lo >= mn) return { verdict: OK, reason: `${text} is at or above the minimum ${fixed(mn * 100, 0)} %` };
  if (hi < mn) return { verdict: FAIL, reason: `${text} is below the minimum ${fixed(mn * 100, 0)} %` };
  return { verdict: WATCH, reason: `cannot decide: ${text} spans the minimum ${fixed(mn * 100, 0)} %; measure again when outdoor and return differ more` };
}

/** Density and c_p of a coil's fluid at a temperature, interpolated in the server's 1 K table. */
export function fluidProperties(table, t) {
  inRange("temperature_c", t, table.t_min, table.t_max, { unit: "°C", label: `${table.label} temperature` });
  const pos = t - table.t_min;
  const i = Math.min(Math.floor(pos), table.rows.length - 2);
  const f = pos - i;
  const { rows } = table;
  return [rows[i][0] + f * (rows[i + 1][0] - rows[i][0]), rows[i][1] + f * (rows[i + 1][1] - rows[i][1])];
}

/** Heat picked up by the coil fluid, W: q = ρ V c_p (t_return − t_supply) at the mean fluid temperature. */
export function waterSideHeatW(table, { tSupply, tReturn, flow }) {
  inRange("flow_m3s", flow, 0, 1, { unit: "m³/s", label: "fluid flow" });
  inRange("t_supply_c", tSupply, table.t_min, table.t_max, { unit: "°C", label: `${table.label} supply temperature` });
  inRange("t_return_c", tReturn, table.t_min, table.t_max, { unit: "°C", label: `${table.label} return temperature` });
  const [rho, cp] = fluidProperties(table, (tSupply + tReturn) / 2);
  return rho * flow * cp * (tReturn - tSupply);
}

// ASHRAE Handbook—Fundamentals 2017 ch.1: v = R_da T (1 + 1.607858 W) / p (psychrolib GetMoistAirVolume),
// q_s = (V / v)(c_p,da + W c_p,v)(t_out − t_in), c_p,da = 1006, c_p,v = 1860 J/kg·K (eq. 32).
// The airflow is taken at the state where it was measured: "entering" or "leaving" the coil.
export function sensibleHeatW({ airflow, tIn, tOut, pressure = 101325, w = 0, airflowAt = "entering" }) {
  inRange("airflow_m3s", airflow, 0, 100, { unit: "m³/s", label: "airflow" });
  airTemperature("t_in_c", tIn, "entering air temperature");
  airTemperature("t_out_c", tOut, "leaving air temperature");
  inRange("pressure_pa", pressure, 50000, 110000, { unit: "Pa", label: "absolute pressure" });
  const t = airflowAt === "entering" ? tIn : tOut;
  const v = (287.042 * (t + 273.15) * (1 + 1.607858 * w)) / pressure;
  return (airflow / v) * (1006.0 + w * 1860.0) * (tOut - tIn);
}

/** Dry-air density ρ = p / (R_da·T), R_da = 287.042 J/kg·K (ASHRAE Fundamentals 2017 ch.1). */
export function dryAirDensity(t, pressure = 101325) {
  airTemperature("t_c", t, "air temperature");
  inRange("pressure_pa", pressure, 50000, 110000, { unit: "Pa", label: "absolute pressure" });
  return pressure / (287.042 * (t + 273.15));
}

function coilBalance(air, water, tolerancePct) {
  const a = Math.abs(air);
  const w = Math.abs(water);
  const mean = (a + w) / 2;
  // In words, as the server (engineering/airside/coil.py COIL_NOTHING_TO_COMPARE): 1 W would read "0.0 kW" or "3 Btu/h".
  if (mean < 1.0) {
    throw new EngineeringInputError("air_side_w", "both sides are below 1 W: nothing to compare", {
      parts: ["both sides carry almost no heat: nothing to compare"],
    });
  }
  const diff = ((a - w) / mean) * 100;
  const d = pyRound(Math.abs(diff), 9);
  const verdict = d <= tolerancePct ? OK : d <= 2 * tolerancePct ? WATCH : FAIL;
  return { differencePct: diff, verdict };
}

function heatRecoveryEffectiveness(o, s, e, accuracy = 0.5) {
  airTemperature("t_outdoor_c", o, "outdoor air temperature");
  airTemperature("t_supply_after_recovery_c", s, "supply air after recovery temperature");
  airTemperature("t_extract_c", e, "extract air temperature");
  const diff = e - o;
  if (Math.abs(diff) < 5.0) {
    throw new EngineeringInputError("t_extract_c", `cannot compute a heat-recovery effectiveness: outdoor ${fmtG(o)} °C and extract ${fmtG(e)} °C differ by ${fmtG(pyRound(Math.abs(diff), 3))} K; they must differ by at least 5 K (measure on a colder or warmer day)`);
  }
  const x = (s - o) / diff;
  const u = accuracy * Math.sqrt((1 / diff) ** 2 + ((s - e) / diff ** 2) ** 2 + ((s - o) / diff ** 2) ** 2);
  if (u >= 0.2) {
    throw new EngineeringInputError("t_extract_c", `cannot compute a heat-recovery effectiveness: with the sensor accuracy given the result would be ${fixed(x, 2)} ± ${fixed(u, 2)}; outdoor and extract differ by only ${fmtG(pyRound(Math.abs(diff), 3))} K`);
  }
  if (x < -u || x > 1 + u) {
    throw new EngineeringInputError("t_supply_after_recovery_c", `supply after recovery ${fmtG(s)} °C is not between outdoor ${fmtG(o)} °C and extract ${fmtG(e)} °C (even allowing ±${fixed(u, 2)}): check that the sensor sits after the exchanger and before any heating or cooling coil`);
  }
  return { effectiveness: Math.min(Math.max(x, 0), 1), uncertainty: u };
}

function heatRecoveryCheck(x, u, design, watch = 5.0, fail = 15.0) {
  const pct = x * 100;
  const uPct = u * 100;
  const below = design - pct;
  const text = `effectiveness ${fixed(pct, 0)} % ± ${fixed(uPct, 0)} points against design ${fixed(design, 0)} % (watch beyond ${watch} points below, fail beyond ${fail})`;
  if (pyRound(below, 9) <= watch) return { verdict: OK, below, reason: text };
  if (pyRound(design - (pct + uPct), 9) <= fail) {
    const decided = pyRound(below, 9) <= fail;
    return { verdict: WATCH, below, reason: `${decided ? "" : "cannot decide between watch and fail: "}${text}; ${fixed(below, 0)} points below design` };
  }
  return { verdict: FAIL, below, reason: `${text}; ${fixed(below, 0)} points below design` };
}

// ---------------------------------------------------------------------------
// The form
// ---------------------------------------------------------------------------

const q = (value, quantity, decimals) => (decimals === undefined ? { value, quantity } : { value, quantity, decimals });
const span = (low, high, quantity, decimals) => ({ low: low ?? null, high: high ?? null, quantity, decimals });

/** Key of one reading: item and component label code ("" for the unit itself). */
export const readingKey = (item, component) => `${item}|${component || ""}`;

// Decimals a set-aside value shows in SI (inspections.evaluation.form._shown_decimals): the item's own, else its
// quantity's, and a tenth where those are whole units (a typed 12.5 rpm reads 12.5).
function shownDecimals(ctx, slot) {
  const d = slot.decimals !== null && slot.decimals !== undefined ? slot.decimals : ((ctx.decimals || {})[slot.quantity] || [1, 1])[0];
  return d === 0 ? 1 : d;
}

/**
 * The form's numbers outside their plausible range (flagged, kept), in slot order, each with its words, as
 * inspections.evaluation.form.implausible_values: "supply fan speed now 12.5 rpm not used: outside the plausible
 * 50–5000 rpm". No check uses them.
 */
function implausibleValues(ctx, readings) {
  const out = new Map();
  for (const slot of ctx.slots) {
    const key = readingKey(slot.item, slot.component);
    const x = readings[key];
    const lim = slot.limits || {};
    const lo = lim.plausible_min ?? null;
    const hi = lim.plausible_max ?? null;
    if (slot.kind !== "number" || typeof x !== "number" || !Number.isFinite(x)) continue;
    if (!((lo !== null && x < lo) || (hi !== null && x > hi))) continue;
    const quantity = slot.quantity || "";
    const where = outsidePlausible(lo, hi, quantity);
    out.set(key, { component: slot.component || "", parts: [`${slot.label.toLowerCase()} `, q(x, quantity, shownDecimals(ctx, slot)), " not used: ", ...where] });
  }
  return out;
}

// Where a number lies against its plausible range (inspections.evaluation.form._outside).
function outsidePlausible(lo, hi, quantity) {
  if (lo !== null && hi !== null) return ["outside the plausible ", span(lo, hi, quantity)];
  return lo !== null ? ["below the plausible ", q(lo, quantity)] : ["above the plausible ", q(hi, quantity)];
}

/**
 * Why a reading set aside as implausible was not judged, as reason parts (inspections.evaluation.set_aside_parts):
 * "75.0 °C is outside the plausible 0.0–60.0 °C; re-check the reading"; [] for a value within its range or a
 * reading the checklist does not ask. ``x`` is in SI, as the readings ``evaluate`` takes.
 */
export function setAsideParts(ctx, key, x) {
  const slot = (ctx.slots || []).find((s) => readingKey(s.item, s.component) === key);
  if (!slot || slot.kind !== "number" || typeof x !== "number" || !Number.isFinite(x)) return [];
  const lim = slot.limits || {};
  const lo = lim.plausible_min ?? null;
  const hi = lim.plausible_max ?? null;
  if (!((lo !== null && x < lo) || (hi !== null && x > hi))) return [];
  const quantity = slot.quantity || "";
  return [q(x, quantity, shownDecimals(ctx, slot)), " is ", ...outsidePlausible(lo, hi, quantity), "; re-check the reading"];
}

/** The plain name of a check of several readings and its part: "Coil heat balance — Heating coil" (the server's
 * CHECK_LABELS, shipped as ``ctx.check_labels``; the part's name from the context's components). */
export function ownLineLabel(ctx, res) {
  const part = ((ctx && ctx.components) || []).find((c) => c.code === res.component);
  const name = ((ctx && ctx.check_labels) || {})[res.check] || "Check of several readings";
  return part ? `${name} — ${part.name}` : name;
}

/** Results as the form shows them: each reading's own verdicts by its reading key, and the checks of several
 * readings apart, each with its label (``ownLineLabel``) and the reading key it is shown under. */
export function resultsByPlace(ctx, results) {
  const byReading = new Map();
  const ownLines = [];
  for (const res of results) {
    const key = readingKey(res.item, res.component);
    if (ownJudgement(res.check)) byReading.set(key, [...(byReading.get(key) || []), res]);
    else ownLines.push({ result: res, key, label: ownLineLabel(ctx, res) });
  }
  return { byReading, ownLines };
}

class Form {
  constructor(ctx, readings, finishedOn, finishedAt) {
    this.ctx = ctx;
    this.readings = readings;
    this.finishedOn = finishedOn;
    this.finishedAt = finishedAt;
    this.components = ctx.components;
    this.unit = ctx.unit;
    this.setAside = implausibleValues(ctx, readings);
    this.asked = new Set();
  }

  raw(key, component) { return this.readings[readingKey(key, component && component.code)]; }

  has(key, component) { return this.raw(key, component) !== undefined; }

  num(key, component = null) {
    const k = readingKey(key, component && component.code);
    if (this.setAside.has(k)) {
      this.asked.add(k);
      return null;
    }
    const v = this.raw(key, component);
    return typeof v === "number" && Number.isFinite(v) ? v : null;
  }

  text(key, component = null) {
    const v = this.raw(key, component);
    return typeof v === "string" ? v : "";
  }

  of(kind) { return this.components.filter((c) => c.kind === kind); }
}

function result(fields) {
  return { component: null, verdict: OK, reason: "", parts: [], method: "", derived: {}, condition_code: "", ...fields };
}

function say(res, ...pieces) {
  const out = [];
  for (const p of pieces.flat(Infinity)) {
    if (typeof p === "string" && out.length && typeof out[out.length - 1] === "string") out[out.length - 1] += p;
    else if (p !== "") out.push(p);
  }
  res.parts = out;
}

// Said beside a speed reading's use when the fan has no variable-speed drive (twin of fixed_speed_words, form.py).
function fixedSpeedWords(specs) {
  if (specs.vsd === false) {
    return " (the fan has no variable-speed drive: its speed moves only with belt slip or a pulley change)";
  }
  return "";
}

function supplyAirflow(form) {
  const measured = form.num("visit.supply_airflow");
  if (measured) return [measured, "measured"];
  const speed = form.num("visit.supply_fan_speed");
  const fan = form.components.find((c) => c.kind === "fan" && c.specs.role === "supply");
  if (speed && fan && fan.specs.design_speed_rpm && fan.specs.design_flow_m3s) {
    const rpm = speed * 60; // stored rev/s, engineering.units rotational_speed
    const flow = (fan.specs.design_flow_m3s * rpm) / fan.specs.design_speed_rpm; // first fan law
    const asTyped = formatNumber(rpm, typedDecimals(rpm, 0)); // 12.5 rpm, never "12 rpm"
    return [flow, `from fan speed ${asTyped} rpm by the first fan law${fixedSpeedWords(fan.specs)}`];
  }
  return [form.unit.design_supply_airflow_m3s, "design airflow assumed (not measured)"];
}

function fmtDate(iso) {
  if (!iso) return "no date (run-hour rate unknown)";
  const d = new Date(`${iso}T00:00:00Z`);
  return `${d.getUTCDate()} ${d.toLocaleString("en-GB", { month: "long", timeZone: "UTC" })} ${d.getUTCFullYear()}`;
}

function noForecastWords(exc) {
  // Why a bank has no change date, in plain words (as inspections.evaluation.filter_checks._no_forecast_words).
  if (exc.notRising) return "; the trend gives no change date (pressure drop not rising)";
  if (exc.tooFew !== undefined) {
    const n = exc.tooFew;
    return `; no change forecast yet: ${n} reading${n === 1 ? "" : "s"} of the filters now fitted, a forecast needs at least ${exc.low}`;
  }
  return "; no change forecast yet";
}

function afterChangeForecast(form, res, { bank, dp, flow, qd }) {
  // The new filters' only reading is the one after the change: never a date from the removed filters'.
  const final = bank.specs.final_dp_pa;
  const hours = form.num("visit.run_hours");
  if (final === undefined || final === null || hours === null) return "";
  try {
    filterForecast(form.ctx, { points: [{ run_hours: hours, dp_pa: dp, airflow_m3s: flow, when: form.finishedOn }], qd, final });
  } catch (exc) {
    if (!(exc instanceof EngineeringInputError)) throw exc;
    res.derived.forecast_note = exc.message;
    return noForecastWords(exc);
  }
  return "";
}

// inspections.evaluation.filter_checks.kept_dp: a pressure drop at design airflow as kept and said (a tenth of a pascal).
const keptDp = (pa) => pyRound(pa, 1);

// inspections.evaluation.filter_checks: why a judged filter has no forecast (its derived forecast_note).
const BELOW_CLEAN_NOTE = "below its clean pressure drop: no loading to forecast from";
const RECHECK_NOTE = "re-check: this reading and the earlier values of these filters disagree";

/**
 * The points of a bank's present filters on one meter's scale, with this form's own reading joined (null: none),
 * as the server's inspections/selectors/filter_banks.py FilterLife.forecast_points gives them: a technician's
 * reading carries the typed meter, a trend day the trend-fed meter; where a reading (this one included) is within a
 * day of a trend day, the trend days are shifted by the two meters' difference at the closest such pair; else the
 * source of the newest point is used alone. points: the context's filter_points (at, source, when, run_hours, ...).
 */
export function onOneMeter(points, reading) {
  // A context saved offline before points carried their source and time held typed readings on one meter.
  const all = points.map((p) => ({ ...p, source: p.source || FILTER_READING, t: Date.parse(p.at || `${p.when}T12:00:00Z`) }));
  if (reading) all.push({ ...reading, source: FILTER_READING, t: Date.parse(reading.at) });
  let withHours = all.filter((p) => p.run_hours !== null && p.run_hours !== undefined);
  const typed = withHours.filter((p) => p.source === FILTER_READING);
  const other = withHours.filter((p) => p.source !== FILTER_READING);
  const order = (a, b) => a.t - b.t || (a.source === FILTER_READING) - (b.source === FILTER_READING);
  if (typed.length && other.length) {
    let best = null;
    for (const r of typed) for (const t of other) {
      const gap = Math.abs(t.t - r.t) / 1000;
      if (best === null || gap < best.gap) best = { gap, r, t };
    }
    if (best.gap <= 86400) {
      const offset = best.r.run_hours - best.t.run_hours;
      withHours = [...typed, ...other.map((p) => ({ ...p, run_hours: p.run_hours + offset }))].sort(order);
    } else {
      const newest = withHours.reduce((m, p) => (order(p, m) > 0 ? p : m));
      withHours = newest.source === FILTER_READING ? typed : other;
    }
  }
  return withHours.filter((p) => p.run_hours >= 0)
    .map((p) => ({ run_hours: p.run_hours, dp_pa: p.dp_pa, airflow_m3s: p.airflow_m3s, when: p.when }));
}

// inspections/selectors/filter_banks.py FILTER_READING: a technician's reading among a bank's points.
const FILTER_READING = "reading";

// As inspections.evaluation.filter_checks._fallen_since_last: below 80 % of the last value of the same filters.
function fallenSinceLast(form, res, { bank, qd, loading }) {
  const earlier = onOneMeter(form.ctx.filter_points[bank.code] || [], null);
  if (!earlier.length || form.text("filter_replace.replaced", bank) === "ok") return false;
  const last = earlier[earlier.length - 1];
  let lastDp;
  try {
    lastDp = correctedPressureDrop(form.ctx, last.dp_pa, last.airflow_m3s, qd);
  } catch (exc) {
    if (!(exc instanceof EngineeringInputError)) throw exc;
    return false;
  }
  const fall = form.ctx.constants.filter_fall_watch_fraction;
  if (lastDp <= 0 || pyRound(loading.corrected / lastDp, 9) >= fall) return false;
  if (res.verdict === OK) res.verdict = WATCH;
  Object.assign(res.derived, { last_corrected_dp_pa: keptDp(lastDp), forecast_note: RECHECK_NOTE });
  say(res, `${bank.name}: filter reads `, q(keptDp(loading.corrected), "pressure"),
    ` at design airflow, ${fixed(loading.corrected / lastDp * 100, 0)} % of the last value of these filters (`, q(keptDp(lastDp), "pressure"),
    ` on ${fmtDate(last.when)}): a filter's pressure drop does not fall without a change; re-check the gauge or sensor and its tubing, `
    + `and look for torn, missing or bypassed media (watch below ${fixed(fall * 100, 0)} % of the last value)`);
  return true;
}

function filterChecks(form, consumed) {
  const out = [];
  const [flow, how] = supplyAirflow(form);
  for (const bank of form.of("filter_bank")) {
    const dp = form.num("filter_check.dp", bank);
    if (dp === null) continue;
    consumed.add(readingKey("filter_check.dp", bank.code));
    const specs = bank.specs;
    const qd = specs.design_airflow_m3s || form.unit.design_supply_airflow_m3s;
    const res = result({ check: "filter_loading", item: "filter_check.dp", component: bank.code, condition_code: "filter_loaded" });
    let loading;
    try {
      if (specs.clean_dp_pa === undefined || specs.final_dp_pa === undefined) {
        throw new EngineeringInputError("specs", `the filter bank has no ${specs.clean_dp_pa === undefined ? "clean" : "final"} pressure drop in the registry`);
      }
      loading = filterLoading(form.ctx, { dp, q: flow, qd, clean: specs.clean_dp_pa, final: specs.final_dp_pa });
    } catch (exc) {
      if (!(exc instanceof EngineeringInputError)) throw exc;
      res.verdict = WATCH;
      say(res, "cannot judge the filter loading: ", refusalParts(exc));
      out.push(res);
      continue;
    }
    const pct = loadingPercent(loading.fraction);  // kept and said the same (one decimal, said whole)
    res.verdict = loading.verdict;
    res.derived = {
      dp_pa: dp, airflow_m3s: flow, airflow_source: how, design_airflow_m3s: qd,
      corrected_dp_pa: keptDp(loading.corrected), loading_pct: pct,
      clean_dp_pa: specs.clean_dp_pa, final_dp_pa: specs.final_dp_pa,
      fraction_of_clean_pct: pyRound(loading.ofClean * 100, 1), media_bypass_suspected: loading.bypass,
    };
    const c = form.ctx.constants;
    res.method = `Δp × (Q_design/Q)^${c.filter_exponent} against the clean-to-final span; below ${fixed(c.filter_bypass_fail_fraction * 100, 0)} % of clean fails, below ${fixed(c.filter_bypass_watch_fraction * 100, 0)} % watch (missing, torn or bypassed media; common practice); airflow: ${how}`;
    if (loading.bypass) {
      // A reading below clean says nothing about loading: no forecast from it.
      say(res, `${bank.name}: filter reads `, q(keptDp(loading.corrected), "pressure"),
        ` at design airflow, ${fixed(loading.ofClean * 100, 0)} % of its clean pressure drop `, q(specs.clean_dp_pa, "pressure"),
        `: ${res.verdict === FAIL ? "missing, torn or bypassed media" : "lower than a filter in service should read, check for torn or bypassed media"}`
        + ` (fail below ${fixed(c.filter_bypass_fail_fraction * 100, 0)} %, watch below ${fixed(c.filter_bypass_watch_fraction * 100, 0)} % of clean)`);
      out.push(res);
      continue;
    }
    if (fallenSinceLast(form, res, { bank, qd, loading })) {
      out.push(res);
      continue;
    }
    if (pyRound(loading.fraction, 9) < 0) {
      // Below clean, not so far as to suspect bypassed media: no loading to say, nor to forecast from.
      say(res, `${bank.name}: filter reads `, q(keptDp(loading.corrected), "pressure"), " at design airflow, below its clean pressure drop ",
        q(specs.clean_dp_pa, "pressure"), ` (${fixed(loading.ofClean * 100, 0)} % of clean; ${belowCleanRule(form.ctx)}): no loading to forecast from`);
      res.derived.forecast_note = BELOW_CLEAN_NOTE;
      out.push(res);
      continue;
    }
    let forecastText = "";
    const hours = form.num("visit.run_hours");
    if (form.text("filter_replace.replaced", bank) === "ok") {
      // Read before the change: the removed filters' state, the evidence for the change (as inspections.evaluation).
      forecastText = "; the reading before the change: these filters were replaced on this visit";
      res.derived.replaced_on_visit = true;
    } else if (hours !== null) {
      // This reading joins the earlier points on one meter, by the server's rule (onOneMeter).
      const reading = { run_hours: hours, dp_pa: dp, airflow_m3s: flow, when: form.finishedOn, at: form.finishedAt };
      const points = onOneMeter(form.ctx.filter_points[bank.code] || [], reading);
      try {
        const fc = filterForecast(form.ctx, { points, qd, final: specs.final_dp_pa });
        Object.assign(res.derived, {
          forecast_run_hours: pyRound(fc.runHoursAtFinal), forecast_change_date: fc.dateAtFinal,
          forecast_earliest_date: fc.dateLow, forecast_latest_date: fc.dateHigh,
          rate_pa_per_hour: pyRound(fc.rate, 4), points_used: fc.pointsUsed, forecast_at_final_now: fc.atFinalNow,
        });
        res.method += `; forecast: ${fc.method}`;
        forecastText = fc.atFinalNow
          ? "; at its final pressure drop by the trend: change now"
          : `; change forecast ${fmtDate(fc.dateAtFinal)}`;
        if (fc.atFinalNow && res.verdict !== FAIL) {
          // The line says "change now", this reading does not: never "ok" and "change now" on one row (as Python).
          res.verdict = WATCH;
          Object.assign(res.derived, { forecast_at_final_now: false, forecast_change_date: null, forecast_note: RECHECK_NOTE });
          forecastText = "; the trend of the earlier values is at its final pressure drop but this reading is not: "
            + "re-check the gauge or sensor and its tubing before changing the filters";
        }
      } catch (exc) {
        if (!(exc instanceof EngineeringInputError)) throw exc;
        forecastText = noForecastWords(exc);
        res.derived.forecast_note = exc.message;
      }
    }
    if (pyRound(loading.fraction, 9) >= 1.0 && !res.derived.replaced_on_visit) {
      // At or over the final value: change now, never a date ahead or "no date" (as inspections.evaluation).
      forecastText = "; at or over its final pressure drop: change now";
      res.derived.forecast_at_final_now = true;
    }
    say(res, `${bank.name}: filter at ${fixed(pct, 0)} % of its span after correcting to design airflow (`,
      q(keptDp(loading.corrected), "pressure"), " at design, clean ", q(specs.clean_dp_pa, "pressure"),
      ", final ", q(specs.final_dp_pa, "pressure"), `)${forecastText}`);
    out.push(res);
  }
  return out;
}

function filterChangeChecks(form, consumed) {
  const out = [];
  const [flow, how] = supplyAirflow(form);
  const c = form.ctx.constants;
  for (const bank of form.of("filter_bank")) {
    const dp = form.num("filter_replace.dp_after", bank);
    const clean = bank.specs.clean_dp_pa;
    if (dp === null || clean === undefined || clean === null) continue;
    consumed.add(readingKey("filter_replace.dp_after", bank.code));
    const qd = bank.specs.design_airflow_m3s || form.unit.design_supply_airflow_m3s;
    const res = result({ check: "filter_after_change", item: "filter_replace.dp_after", component: bank.code, condition_code: "filter_loaded" });
    let chk;
    try {
      chk = filterAfterChange(form.ctx, { dp, q: flow, qd, clean });
    } catch (exc) {
      if (!(exc instanceof EngineeringInputError)) throw exc;
      res.verdict = WATCH;
      say(res, `${bank.name}: cannot judge the pressure drop after the change: `, refusalParts(exc));
      out.push(res);
      continue;
    }
    const tol = c.filter_after_change_tolerance;
    res.verdict = chk.verdict;
    res.derived = {
      dp_pa: dp, airflow_m3s: flow, airflow_source: how, design_airflow_m3s: qd, corrected_dp_pa: keptDp(chk.corrected),
      clean_dp_pa: clean, fraction_of_clean_pct: pyRound(chk.ofClean * 100, 1), media_bypass_suspected: chk.bypass,
    };
    const pctOf = (x) => fixed(x * 100, 0);
    res.method = `Δp × (Q_design/Q)^${c.filter_exponent} against the rated clean pressure drop: ok within ±${pctOf(tol)} %, fail below ${pctOf(c.filter_bypass_fail_fraction)} % or above ${pctOf(c.filter_after_change_high_fail)} % (common practice); airflow: ${how}`;
    const r = pyRound(chk.ofClean, 9);
    let what = "as rated";
    if (chk.bypass) what = "missing, torn or bypassed media";
    else if (r < 1 - tol) what = "lower than a new filter should read, check the media is seated and sealed";
    else if (r > 1 + tol) what = "higher than a new filter should read, check the class and size fitted and the gauge lines";
    say(res, `${bank.name}: after the change the filter reads `, q(keptDp(chk.corrected), "pressure"),
      ` at design airflow, ${pctOf(chk.ofClean)} % of its rated clean pressure drop `, q(clean, "pressure"),
      `: ${what} (ok within ±${pctOf(tol)} %, fail below ${pctOf(c.filter_bypass_fail_fraction)} % or above ${pctOf(c.filter_after_change_high_fail)} %)`,
      afterChangeForecast(form, res, { bank, dp, flow, qd }));
    out.push(res);
  }
  return out;
}

function oaChecks(form) {
  const out = [];
  const u = form.unit;
  const [flow, how] = supplyAirflow(form);
  const pairs = [
    ["temperature", "ventilation_check.mixed_air", ["ventilation_check.outdoor_air", "ventilation_check.return_air", "ventilation_check.mixed_air"],
      (o, r, m) => oaFractionFromTemperatures(o, r, m)],
    ["co2", "ventilation_check.supply_co2", ["ventilation_check.outdoor_co2", "ventilation_check.return_co2", "ventilation_check.supply_co2"],
      (o, r, m) => oaFractionFromCo2(o, r, m)],
  ];
  for (const [method, item, keys, compute] of pairs) {
    const vals = keys.map((k) => form.num(k));
    if (vals.some((x) => x === null)) continue;
    const res = result({ check: `oa_fraction_${method}`, item, condition_code: "ventilation_low" });
    let frac;
    try {
      frac = compute(...vals);
    } catch (exc) {
      if (!(exc instanceof EngineeringInputError)) throw exc;
      res.verdict = WATCH;
      // A refusal that already says "cannot compute an outdoor-air fraction by …" is not led by it again.
      const lead = `outdoor-air fraction by ${method === "co2" ? "CO2" : "temperatures"}: `;
      say(res, String(exc.message).startsWith("cannot compute an outdoor-air fraction") ? "" : lead, refusalParts(exc));
      out.push(res);
      continue;
    }
    const oaQ = frac.fraction * flow;
    const need = u.ventilation_requirement;
    const designMinQ = u.design_min_oa_fraction * u.design_supply_airflow_m3s;
    res.derived = {
      oa_fraction: keptFraction(frac.fraction), uncertainty: keptFraction(frac.uncertainty),
      outdoor_airflow_m3s: pyRound(oaQ, 3), supply_airflow_m3s: flow, airflow_source: how,
      design_min_oa_fraction: u.design_min_oa_fraction,
      design_min_outdoor_airflow_m3s: pyRound(designMinQ, 3),
    };
    if (need) {
      Object.assign(res.derived, {
        required_outdoor_airflow_m3s: pyRound(need.vot_m3s, 3),
        breathing_zone_outdoor_airflow_m3s: pyRound(need.vbz_m3s, 3),
        zone_air_distribution_effectiveness: need.ez,
        zone_outdoor_airflow_m3s: pyRound(need.voz_m3s, 3),
        ventilation_system: need.system,
        occupant_diversity: need.occupant_diversity,
        uncorrected_outdoor_airflow_m3s: need.vou_m3s === null ? null : pyRound(need.vou_m3s, 3),
        system_ventilation_efficiency: need.ev === null ? null : pyRound(need.ev, 3),
        // Above what the unit was designed to take in: the design, not the upkeep, falls short.
        design_shortfall: need.vot_m3s > designMinQ,
      });
    }
    const label = method === "temperature" ? "temperatures" : "CO2";
    res.method = `mixing balance from ${label}; outdoor airflow = fraction × supply airflow (${how})${need ? `; requirement by ASHRAE 62.1: ${need.method}` : ""}`;
    if (u.full_outdoor_air) {
      res.verdict = OK;
      res.reason = `100 % outdoor-air unit; measured fraction ${fixed(frac.fraction * 100, 0)} %`;
      out.push(res);
      continue;
    }
    const words = form.ctx.constants.requirement_words;
    const chk = fractionCheck(frac.fraction, frac.uncertainty, u.design_min_oa_fraction);
    let verdict = chk.verdict;
    const c = form.ctx.constants;
    const parts = [
      `by ${label}: outdoor air ${fractionWords(frac.fraction, frac.uncertainty)} (`, q(oaQ, "airflow"),
      `); against the unit's design minimum ${fixed(u.design_min_oa_fraction * 100, 0)} % (`, q(designMinQ, "airflow"), `): ${words[chk.verdict]}`,
    ];
    if (need && flow > 0) {
      const basis = ` for ${u.space_label || "the space served"} (${need.words}, ASHRAE 62.1 ventilation rate procedure)`;
      parts.push("; against what the space needs, ", q(need.vot_m3s, "airflow"));
      let reqVerdict;
      if (need.vot_m3s > flow) {
        // More than all the air the unit supplied: even 100 % outdoor air falls short (never capped at 100 %).
        reqVerdict = FAIL;
        parts.push(basis, ": more than the ", q(flow, "airflow"), ` ${c.supply_taken}, ${c.not_met_at_all}`);
      } else {
        reqVerdict = fractionCheck(frac.fraction, frac.uncertainty, need.vot_m3s / flow).verdict;
        parts.push(` = ${fixed((need.vot_m3s / flow) * 100, 0)} % of the supply air${basis}: ${words[reqVerdict]}`);
      }
      verdict = worst(verdict, reqVerdict);
      if (res.derived.design_shortfall) {
        parts.push("; the requirement is above the unit's design minimum outdoor air ", q(designMinQ, "airflow"), ": the design falls short");
      }
      parts.push(judgedBy(verdict, chk.verdict, reqVerdict, "the design minimum"));
    }
    res.verdict = verdict;
    say(res, parts);
    out.push(res);
  }
  return out;
}

// A 100 % outdoor-air unit's delivered outdoor air (evaluation.ventilation_checks.full_oa_checks): its supply airflow against
// the space's requirement and its design airflow, each within the airflow's uncertainty.
// Which comparison decides a ventilation verdict (inspections.evaluation.ventilation_checks.judged_by).
function judgedBy(verdict, design, need, designName) {
  if (design === need) return "";
  return `; judged by ${verdict === design ? designName : "what the space needs"}`;
}

function airflowBandVerdict(flow, u, minimum) {
  if (flow >= minimum) return OK;
  if (flow + u >= minimum) return WATCH;
  return FAIL;
}

function fullOaChecks(form) {
  const u = form.unit;
  if (!u.full_outdoor_air || !Object.keys(form.readings).some((k) => k.startsWith("ventilation_check."))) return [];
  const [flow, how] = supplyAirflow(form);
  const design = u.design_supply_airflow_m3s;
  const need = u.ventilation_requirement;
  const res = result({ check: "full_oa_airflow", item: "visit.supply_airflow", condition_code: "ventilation_low" });
  res.method = `100 % outdoor air: outdoor airflow = supply airflow${need ? `; requirement by ASHRAE 62.1: ${need.method}` : ""}`;
  if (how.startsWith("design")) {
    res.verdict = WATCH;
    say(res, "100 % outdoor-air unit: the outdoor air delivered cannot be judged without the supply airflow; "
      + "measure the supply airflow (or read the supply fan speed) at the visit");
    return [res];
  }
  const uRel = form.ctx.constants.airflow_uncertainty[how === "measured" ? "measured" : "fan_speed"];
  const band = flow * uRel;
  res.derived = {
    outdoor_airflow_m3s: pyRound(flow, 3), airflow_uncertainty_m3s: pyRound(band, 3), airflow_source: how,
    design_supply_airflow_m3s: design,
  };
  const words = form.ctx.constants.requirement_words;
  const designVerdict = airflowBandVerdict(flow, band, design);
  const parts = [
    "100 % outdoor-air unit: outdoor air delivered ", q(flow, "airflow"),
    ` ± ${fixed(uRel * 100, 0)} % (${how}); against the unit's design airflow `, q(design, "airflow"), `: ${words[designVerdict]}`,
  ];
  let verdict = designVerdict;
  if (need) {
    Object.assign(res.derived, {
      required_outdoor_airflow_m3s: pyRound(need.vot_m3s, 3), zone_outdoor_airflow_m3s: pyRound(need.voz_m3s, 3),
      ventilation_system: need.system, design_shortfall: need.vot_m3s > design,
    });
    const reqVerdict = airflowBandVerdict(flow, band, need.vot_m3s);
    // Short of the design but the space's requirement met: a unit to look after, not a ventilation failure.
    verdict = worst(reqVerdict, designVerdict !== OK ? WATCH : OK);
    parts.push("; against what the space needs, ", q(need.vot_m3s, "airflow"),
      ` for ${u.space_label || "the space served"} (${need.words}, ASHRAE 62.1 ventilation rate procedure): ${words[reqVerdict]}`);
    if (need.vot_m3s > design) parts.push("; the requirement is above the unit's design airflow: the design falls short");
    parts.push(judgedBy(verdict, designVerdict, reqVerdict, "the design airflow"));
  }
  res.verdict = verdict;
  say(res, parts);
  return [res];
}

function coilChecks(form) {
  const out = [];
  const [flow, how] = supplyAirflow(form);
  const p = form.unit.site_pressure_pa;
  const tol = form.ctx.constants.coil_tolerance_pct;
  for (const coil of form.of("coil")) {
    for (const template of ["coil_clean", "cooling_season_check"]) {
      const vals = {};
      for (const k of ["air_in", "air_out", "water_in", "water_out", "water_flow"]) vals[k] = form.num(`${template}.${k}`, coil);
      if (Object.values(vals).some((x) => x === null)) continue;
      const fluid = coil.fluid;
      const res = result({ check: "coil_balance", item: `${template}.water_flow`, component: coil.code });
      if (!fluid.name) {
        if (coil.specs.fluid === "glycol") {
          res.verdict = WATCH;
          res.reason = `${coil.name}: cannot balance the coil: the registry does not give the glycol's kind and concentration`;
          out.push(res);
        }
        break; // steam or refrigerant: flow and temperatures do not give its heat
      }
      // The supply airflow is at the fan, after the coils (leaving state); a coil's own design airflow
      // is rated at its entering air (common practice).
      let airflow = flow;
      let airflowAt = "leaving";
      if (how.startsWith("design") && coil.specs.design_airflow_m3s) {
        airflow = coil.specs.design_airflow_m3s;
        airflowAt = "entering";
      }
      let air;
      let water;
      let bal;
      let rhoAir;
      try {
        air = sensibleHeatW({ airflow, tIn: vals.air_in, tOut: vals.air_out, pressure: p, airflowAt });
        rhoAir = dryAirDensity(airflowAt === "leaving" ? vals.air_out : vals.air_in, p);
        water = waterSideHeatW(fluid.table, { tSupply: vals.water_in, tReturn: vals.water_out, flow: vals.water_flow });
        bal = coilBalance(air, water, tol);
      } catch (exc) {
        if (!(exc instanceof EngineeringInputError)) throw exc;
        res.verdict = WATCH;
        say(res, `${coil.name}: cannot balance the coil: `, refusalParts(exc));
        out.push(res);
        break;
      }
      res.derived = {
        air_side_w: pyRound(air), water_side_w: pyRound(water), difference_pct: pyRound(bal.differencePct, 1),
        airflow_m3s: airflow, airflow_source: how, airflow_at: airflowAt, air_density_kg_m3: pyRound(rhoAir, 4), pressure_pa: pyRound(p),
        fluid: fluid.name, glycol_pct: fluid.glycol_pct,
      };
      const state = airflowAt === "leaving" ? "leaving air (airflow at the supply fan, after the coil)" : "entering air (the coil's design airflow)";
      res.method = `air side q = ρ·V·cp·Δt, sensible, dry air, ρ = p/(R·T) at the ${state}; fluid side q = ρ·V·cp·Δt with the properties of ${fluid.words} (CoolProp: IAPWS-95, Melinder 2010); balance within ${tol} % ok, ${2 * tol} % watch`;
      res.verdict = bal.verdict;
      const which = bal.differencePct > 0 ? "air side higher" : "water side higher";
      const parts = [`${coil.name}: air side `, q(Math.abs(air), "heat_rate"), ", water side ", q(Math.abs(water), "heat_rate"),
        `: ${fixed(Math.abs(bal.differencePct), 1)} % apart (${which}; ok within ${tol} %, watch within ${2 * tol} %)`];
      if (coil.specs.duty === "cooling" && res.verdict === FAIL) {
        res.verdict = WATCH; // latent heat is not measured: a wet cooling coil reads high on the water side
        parts.push(" (cooling coil: air side is sensible only, latent heat not measured)");
      }
      say(res, parts);
      out.push(res);
      break;
    }
  }
  return out;
}

function setpointChecks(form, consumed) {
  const out = [];
  const u = form.unit;
  for (const template of ["controls_check", "cooling_season_check"]) {
    const t = form.num(`${template}.supply_air`);
    if (t === null) continue;
    let sp = form.num(`${template}.supply_setpoint`);
    sp = sp !== null ? sp : u.supply_air_setpoint_c;
    if (sp === null || sp === undefined) continue;
    consumed.add(readingKey(`${template}.supply_air`, null));
    airTemperature("measured_c", t, "supply air temperature");
    airTemperature("setpoint_c", sp, "supply air set point");
    const dev = t - sp;
    const res = result({
      check: "supply_temperature", item: `${template}.supply_air`, verdict: grade(dev, 1.0, 2.0), condition_code: "supply_temp_off",
      method: "|supply − set point| against 1 K / 2 K (common practice)",
      derived: { supply_air_c: t, setpoint_c: sp, deviation_k: pyRound(dev, 2) },
    });
    const where = pyRound(dev, 1) === 0 ? ["at"] : [q(Math.abs(dev), "temperature_difference"), dev > 0 ? " above" : " below"];
    say(res, "supply air ", q(t, "temperature"), ", ", where, " set point ", q(sp, "temperature"),
      " (watch above ", q(1.0, "temperature_difference"), ", fail above ", q(2.0, "temperature_difference"), ")");
    out.push(res);
  }
  const p = form.num("controls_check.duct_static");
  if (p !== null) {
    let sp = form.num("controls_check.duct_static_setpoint");
    sp = sp !== null ? sp : u.duct_static_setpoint_pa;
    if (sp) {
      consumed.add(readingKey("controls_check.duct_static", null));
      inRange("measured_pa", p, -5000, 5000, { unit: "Pa", label: "static pressure" });
      inRange("setpoint_pa", sp, 0, 5000, { unit: "Pa", label: "static pressure set point", lowOpen: true });
      const dev = ((p - sp) / sp) * 100;
      const res = result({
        check: "duct_static", item: "controls_check.duct_static", verdict: grade(dev, 10, 20),
        method: "deviation as % of set point, 10 % / 20 % (common practice)",
        derived: { static_pa: p, setpoint_pa: sp, deviation_pct: pyRound(dev, 1) },
      });
      say(res, "static pressure ", q(p, "pressure"), `, ${fixed(Math.abs(dev), 1)} % ${dev > 0 ? "above" : "below"} set point `,
        q(sp, "pressure"), " (watch above 10 %, fail above 20 %)");
      out.push(res);
    }
  }
  for (const damper of form.of("damper")) {
    const cmd = form.num("damper_actuator.command", damper);
    const pos = form.num("damper_actuator.position", damper);
    if (cmd === null || pos === null) continue;
    consumed.add(readingKey("damper_actuator.position", damper.code));
    inRange("commanded_pct", cmd, 0, 100, { unit: "%", label: "commanded position" });
    inRange("measured_pct", pos, 0, 100, { unit: "%", label: "measured position" });
    const dev = pos - cmd;
    const where = pyRound(dev, 1) === 0 ? "matching" : `${fixed(Math.abs(dev), 1)} points ${dev > 0 ? "more open" : "more closed"} than`;
    out.push(result({
      check: "damper_position", item: "damper_actuator.position", component: damper.code, verdict: grade(dev, 5, 10),
      reason: `${damper.name}: damper at ${fixed(pos, 0)} %, ${where} commanded ${fixed(cmd, 0)} % (watch above 5 points, fail above 10 points)`,
      condition_code: "damper_position", method: "position − command, 5 / 10 points (common practice)",
      derived: { commanded_pct: cmd, measured_pct: pos, error_pct: pyRound(dev, 1) },
    }));
  }
  return out;
}

function driftChecks(form, consumed) {
  const out = [];
  const defaults = form.ctx.constants.drift_defaults;
  const quantities = form.ctx.constants.drift_quantities;
  for (const sensor of form.of("sensor")) {
    for (const [prefix, [absDefault, pctDefault]] of Object.entries(defaults)) {
      const s = form.num(`sensor_calibration.${prefix}_sensor`, sensor);
      const r = form.num(`sensor_calibration.${prefix}_reference`, sensor);
      if (s === null || r === null) continue;
      consumed.add(readingKey(`sensor_calibration.${prefix}_reference`, sensor.code));
      let tolAbs = absDefault;
      let tolPct = pctDefault;
      let source = "the sensor's stated accuracy";
      if (sensor.specs.accuracy) { tolAbs = Number(sensor.specs.accuracy); tolPct = 0; } else source = "a typical accuracy (common practice, from memory)";
      const allowed = tolAbs + (tolPct / 100) * Math.abs(r);
      if (!(allowed > 0)) throw new EngineeringInputError("tolerance_abs", "the sensor's tolerance allows no error at all");
      const diff = s - r;
      const res = result({
        check: "sensor_drift", item: `sensor_calibration.${prefix}_reference`, component: sensor.code,
        verdict: grade(diff, 0.8 * allowed, allowed), condition_code: "sensor_drift",
        method: `sensor − reference against ${source}`,
        derived: { sensor: s, reference: r, error: pyRound(diff, 3), allowed_error: pyRound(allowed, 3) },
      });
      const [valueQ, diffQ] = quantities[prefix];
      const spec = tolPct === 0 ? [q(tolAbs, diffQ)] : ["(", q(tolAbs, diffQ), ` + ${tolPct} % of reading)`];
      say(res, `${sensor.name}: sensor reads `, q(s, valueQ), ", ", q(Math.abs(diff), diffQ), ` ${diff > 0 ? "above" : "below"} reference `,
        q(r, valueQ), "; allowed ±", spec, ...(tolPct === 0 ? [] : [" = ±", q(allowed, diffQ)]));
      out.push(res);
    }
  }
  return out;
}

// A shut coil's leak-by test (inspections/evaluation/valve_checks.py): FAIL when the coil still cools (cooling
// duty) or warms (heating, preheat) the air by the trend rules' limit or more (constants.valve_leak_limit_k);
// WATCH when the air changes the other way by as much (a sensor or another coil: re-check).
const COIL_DUTIES = ["cooling", "heating", "preheat"];
function valveLeakChecks(form, consumed) {
  const out = [];
  const limit = form.ctx.constants.valve_leak_limit_k;
  for (const coil of form.of("coil")) {
    const tIn = form.num("coil_valve_leak.leak_air_in", coil);
    const tOut = form.num("coil_valve_leak.leak_air_out", coil);
    const duty = coil.specs.duty;
    if (tIn === null || tOut === null || !COIL_DUTIES.includes(duty)) continue;
    consumed.add(readingKey("coil_valve_leak.leak_air_out", coil.code));
    airTemperature("entering_c", tIn, "entering air temperature");
    airTemperature("leaving_c", tOut, "leaving air temperature");
    const change = duty === "cooling" ? tIn - tOut : tOut - tIn;
    let verdict = OK;
    if (pyRound(change, 9) >= pyRound(limit, 9)) verdict = FAIL;
    else if (pyRound(-change, 9) >= pyRound(limit, 9)) verdict = WATCH;
    const res = result({
      check: "coil_valve_leak", item: "coil_valve_leak.leak_air_out", component: coil.code, verdict,
      condition_code: "valve_leak", method: form.ctx.constants.valve_leak_method,
      derived: { entering_c: tIn, leaving_c: tOut, change_k: pyRound(change, 2), limit_k: pyRound(limit, 2) },
    });
    // Said the way the air went: a cooling coil's negative drop is a rise.
    const what = duty === "cooling" ? (change >= 0 ? "drop" : "rise") : (change >= 0 ? "rise" : "drop");
    const head = [`${coil.name}: air `, q(tIn, "temperature"), " entering, ", q(tOut, "temperature"),
      ` leaving the shut coil, a ${what} of `, q(Math.abs(change), "temperature_difference")];
    if (verdict === WATCH) {
      // The words by duty: engineering.controls.WRONG_WAY, in the evaluation constants.
      say(res, ...head, ` — re-check: air ${form.ctx.constants.valve_leak_wrong_way[duty]}; beyond the `, q(limit, "temperature_difference"),
        " allowance it cannot show whether the valve holds");
    } else {
      say(res, ...head, ` — ${verdict === FAIL ? "the valve passes water" : "the valve holds"} (a leak from `,
        q(limit, "temperature_difference"), ")");
    }
    out.push(res);
  }
  return out;
}

// The frost thermostat's trip setting (inspections/evaluation/freeze_checks.py, engineering.freeze
// .freeze_trip_setting_check): FAIL below the band's floor, WATCH just below the band (too little margin) or
// above it (nuisance trips, still protecting: condition freeze_trip_set_high), from the item's own band.
const TRIP_ITEM = "preheater_freeze.freeze_trip_temp";

function freezeTripChecks(form, consumed) {
  const out = [];
  for (const slot of form.ctx.slots.filter((s) => s.item === TRIP_ITEM)) {
    const key = readingKey(TRIP_ITEM, slot.component);
    const t = form.readings[key]; // the reading judged on its own, as typed: never set aside (Form.own on the server)
    const lim = slot.limits;
    const lo = lim.ok_min ?? null;
    const hi = lim.ok_max ?? null;
    if (typeof t !== "number" || lo === null || hi === null) continue;
    const floor = lim.watch_min ?? lo;
    consumed.add(key);
    if (!bandInOrder(floor, lo, hi, null)) {
      const res = result({ check: "limits", item: TRIP_ITEM, component: slot.component, condition_code: "freeze_protection_failed" });
      out.push(inconsistentBand(res, ["freeze-protection trip temperature ", q(t, "temperature", slot.decimals)], t,
        { ok_min: lo, ok_max: hi, watch_min: floor }, slot,
        { value: t, ok_min: lo, ok_max: hi, watch_min: floor, watch_open_high: true },
        { openHigh: true, harm: ": the coil can freeze before it trips" }));
      continue;
    }
    const x = pyRound(t, 9);
    const outside = setAsideParts(form.ctx, key, t);
    if (x >= floor && outside.length) {
      // Outside its plausible range and not below the floor: not proven (freeze_checks._implausible).
      const res = result({
        check: "limits", item: TRIP_ITEM, component: slot.component, verdict: WATCH,
        condition_code: "freeze_protection_failed",
        method: `reading against its plausible range: a setting outside it is not proven; ${slot.limits_source || "common practice"}`,
        derived: { value: t, ok_min: lo, ok_max: hi, watch_min: floor, watch_open_high: true, implausible: true },
      });
      say(res, "freeze-protection trip temperature ", ...outside.slice(0, -1),
        ": not proven that the coil is protected; re-check the reading");
      out.push(res);
      continue;
    }
    let verdict = OK;
    if (x < floor) verdict = FAIL;
    else if (x < lo || x > hi) verdict = WATCH;
    const high = verdict === WATCH && x > hi;
    const res = result({
      check: "limits", item: TRIP_ITEM, component: slot.component, verdict,
      condition_code: high ? "freeze_trip_set_high" : "freeze_protection_failed",
      method: `reading against its band, too high a watch (nuisance trips), never a failure; ${slot.limits_source || "common practice"}`,
      derived: { value: t, ok_min: lo, ok_max: hi, watch_min: floor, watch_open_high: true },
    });
    const d = slot.decimals;
    const head = ["freeze-protection trip temperature ", q(t, "temperature", d)];
    const band = span(lo, hi, "temperature", d);
    if (verdict === FAIL) say(res, ...head, " is below ", q(floor, "temperature", d), ": the coil can freeze before it trips");
    else if (verdict === OK) say(res, ...head, " is within the recommended ", band);
    else if (high) {
      say(res, ...head, " is above the recommended ", band,
        ": set higher than needed, nuisance trips likely (the unit stops on cool mornings); "
        + "adjust to the recommended setting. The coil is still protected.");
    } else say(res, ...head, " is below the recommended ", band, ": too little margin; adjust up and retest");
    out.push(res);
  }
  return out;
}

function heatRecoveryChecks(form) {
  const out = [];
  for (const hx of form.of("heat_recovery")) {
    const [o, s, e] = ["outdoor_in", "supply_out", "extract_in"].map((k) => form.num(`heat_recovery.${k}`, hx));
    if (o === null || s === null || e === null) continue;
    const res = result({
      check: "heat_recovery", item: "heat_recovery.supply_out", component: hx.code, condition_code: "heat_recovery_low",
      method: "ε = (supply − outdoor)/(extract − outdoor) temperatures, temperature ratio per EN 308 (from memory), ±0.5 K sensors; watch beyond 5, fail beyond 15 points below design (common practice)",
    });
    let hr;
    try {
      hr = heatRecoveryEffectiveness(o, s, e);
    } catch (exc) {
      if (!(exc instanceof EngineeringInputError)) throw exc;
      res.verdict = WATCH;
      say(res, `${hx.name}: ${plainMessage(exc)}`);
      out.push(res);
      continue;
    }
    const pct = hr.effectiveness * 100;
    const uPct = hr.uncertainty * 100;
    res.derived = {
      outdoor_c: o, supply_after_recovery_c: s, extract_c: e, effectiveness_pct: pyRound(pct, 1), uncertainty_pct: pyRound(uPct, 1),
    };
    const temps = [" (outdoor ", q(o, "temperature"), ", after recovery ", q(s, "temperature"), ", extract ", q(e, "temperature"), ")"];
    const design = hx.specs.design_effectiveness_pct;
    if (design === undefined || design === null) {
      res.verdict = WATCH;
      say(res, `${hx.name}: effectiveness ${fixed(pct, 0)} % ± ${fixed(uPct, 0)} points`, temps, "; no design effectiveness in the registry to judge it against");
      out.push(res);
      continue;
    }
    inRange("design_effectiveness_pct", design, 0, 100, { unit: "%", label: "design effectiveness", lowOpen: true });
    const chk = heatRecoveryCheck(hr.effectiveness, hr.uncertainty, design);
    res.verdict = chk.verdict;
    Object.assign(res.derived, { design_effectiveness_pct: design, below_design_points: pyRound(chk.below, 1) });
    say(res, `${hx.name}: ${chk.reason}`, temps);
    out.push(res);
  }
  return out;
}

// engineering.controls.band_in_order: the limits that are set (null: open) each at most the next.
function bandInOrder(watchLow, okLow, okHigh, watchHigh) {
  const set = [watchLow, okLow, okHigh, watchHigh].filter((x) => x !== null && x !== undefined);
  return set.every((x, i) => i === 0 || set[i - 1] <= x);
}

// A reading against a band whose limits are out of order (evaluation.readings.inconsistent_band): never ok. A fail
// when the value is beyond every limit on a side that fails (below them all; above them all unless openHigh),
// otherwise a watch (not proven); the words name the limits as they are, to be corrected.
function inconsistentBand(res, head, x, lim, slot, derived, { openHigh = false, harm = "" } = {}) {
  const has = (k) => lim[k] !== null && lim[k] !== undefined;
  const [wLo, okLo, okHi, wHi] = ["watch_min", "ok_min", "ok_max", "watch_max"].map((k) => (has(k) ? lim[k] : null));
  const failLo = wLo !== null ? wLo : okLo;
  const failHi = openHigh ? null : (wHi !== null ? wHi : okHi);
  const limits = [wLo, okLo, okHi, wHi].filter((v) => v !== null);
  const v = pyRound(x, 9);
  const below = failLo !== null && v < Math.min(...limits);
  const above = failHi !== null && v > Math.max(...limits);
  res.check = "limits";
  res.verdict = below || above ? FAIL : WATCH;
  res.method = `reading against its band, not judged: the band's limits are out of order; ${slot.limits_source || "common practice"}`;
  res.derived = { ...derived, limits_inconsistent: true };
  const at = (y) => q(y, slot.quantity, slot.decimals);
  const said = [];
  if (failLo !== null) said.push("fail below ", at(failLo));
  if (okLo !== null || okHi !== null) {
    said.push(said.length ? ", " : "", "ok ");
    if (okLo !== null) said.push("from ", at(okLo));
    if (okHi !== null) said.push(okLo !== null ? " to " : "up to ", at(okHi));
  }
  if (failHi !== null) said.push(", fail above ", at(failHi));
  let words = " is not proven: ";
  if (below) words = ` is below every limit set for it${harm}; `;
  else if (above) words = " is above every limit set for it; ";
  say(res, ...head, words, "the limits for this check are inconsistent: ", ...said,
    "; each must be at most the next. Correct the checklist's limits");
  return res;
}

function bandParts(slot, x, lim, verdict) {
  const d = slot.decimals;
  const okLo = lim.ok_min ?? null;
  const okHi = lim.ok_max ?? null;
  const wLo = lim.watch_min ?? okLo;
  const wHi = lim.watch_max ?? okHi;
  const head = [`${slot.label.toLowerCase()} `, q(x, slot.quantity, d)];
  // A one-sided band reads "at most 6.7 A" / "above 6.7 A", never "outside at most" (evaluation.readings._band_parts).
  const inside = (lo, hi) => [lo !== null && hi !== null ? " within " : " ", span(lo, hi, slot.quantity, d)];
  const outside = (lo, hi) => {
    if (lo !== null && hi !== null) return [" outside ", span(lo, hi, slot.quantity, d)];
    return hi !== null ? [" above ", q(hi, slot.quantity, d)] : [" below ", q(lo, slot.quantity, d)];
  };
  if (verdict === OK) return [...head, " is", ...inside(okLo, okHi)];
  if (verdict === WATCH) return [...head, " is", ...outside(okLo, okHi), " but", ...inside(wLo, wHi)];
  return [...head, " is", ...outside(wLo, wHi)];
}

function readingResult(slot, value) {
  if (value === "na") return null;
  const res = result({ check: slot.kind, item: slot.item, component: slot.component, condition_code: slot.condition || "" });
  if (slot.kind === "check") {
    res.verdict = value === "ok" ? OK : FAIL;
    res.reason = `${res.verdict === OK ? "confirmed" : "not confirmed"}: ${slot.label}`; // the verdict shows beside it
    return res;
  }
  if (slot.kind === "choice") {
    const choice = slot.choices.find((c) => c.value === value);
    if (!choice) return null;
    res.verdict = choice.ok === undefined || choice.ok ? OK : FAIL;
    res.reason = `${slot.label}: ${choice.label}`;
    return res;
  }
  if (slot.kind === "number" && typeof value === "number") {
    const lim = slot.limits;
    const has = (k) => lim[k] !== null && lim[k] !== undefined;
    if (!has("ok_min") && !has("ok_max")) return null;
    const derived = { value };
    for (const [k, v] of Object.entries(lim)) if (v !== null && v !== undefined && k.includes("_m")) derived[k] = v;
    if (!bandInOrder(lim.watch_min, lim.ok_min, lim.ok_max, lim.watch_max)) {
      return inconsistentBand(res, [`${slot.label.toLowerCase()} `, q(value, slot.quantity, slot.decimals)], value, lim, slot, derived);
    }
    const okLo = has("ok_min") ? lim.ok_min : -Infinity;
    const okHi = has("ok_max") ? lim.ok_max : Infinity;
    const wLo = has("watch_min") ? lim.watch_min : okLo;
    const wHi = has("watch_max") ? lim.watch_max : okHi;
    let verdict = FAIL;
    if (value >= okLo && value <= okHi) verdict = OK;
    else if (value >= wLo && value <= wHi) verdict = WATCH;
    res.check = "limits";
    res.verdict = verdict;
    say(res, bandParts(slot, value, lim, verdict));
    res.method = `reading against its band; ${slot.limits_source || "common practice"}`;
    res.derived = derived;
    return res;
  }
  return null;
}

// A check's reason with the readings it asked for and did not use (inspections.evaluation._say_set_aside).
function saySetAside(res, form) {
  const notes = [...form.setAside].filter(([k, why]) => form.asked.has(k) && (why.component === "" || why.component === res.component));
  if (!notes.length) return;
  const head = res.parts.length ? res.parts : (res.reason ? [res.reason] : []);
  say(res, head, ...notes.map(([, why]) => ["; ", ...why.parts]));
}

/**
 * Every judgement of one form, as inspections.evaluation.evaluate gives it.
 * readings: {readingKey(item, component code): SI number | "ok" | "not_ok" | "na" | choice value | text}.
 * finishedAt: the ISO moment the form is finished (its filter reading's time, joined to the earlier points by it);
 * finishedOn: its ISO date (the filter forecast's last point), the UTC day of finishedAt unless given; given alone,
 * the moment is noon UTC of that day (as the server takes a reading dated by its day).
 */
export function evaluate(ctx, readings, { finishedAt, finishedOn } = {}) {
  const at = finishedAt || (finishedOn ? `${finishedOn}T12:00:00Z` : new Date().toISOString());
  const form = new Form(ctx, readings, finishedOn || at.slice(0, 10), at);
  const consumed = new Set();
  const results = [];
  for (const fn of [filterChecks, filterChangeChecks, oaChecks, fullOaChecks, coilChecks, setpointChecks, driftChecks,
    heatRecoveryChecks, valveLeakChecks, freezeTripChecks]) {
    form.asked.clear();
    const found = fn(form, consumed);
    for (const res of found) saySetAside(res, form);
    results.push(...found);
  }
  for (const slot of ctx.slots) {
    const key = readingKey(slot.item, slot.component);
    if (consumed.has(key) || !(key in readings)) continue;
    const res = readingResult(slot, readings[key]);
    if (res) results.push(res);
  }
  for (const res of results) {
    if (res.parts.length) res.reason = render(ctx, res.parts, "si");
    else if (res.reason) res.parts = [res.reason];
  }
  return results;
}

/** A result's reason in the person's units ("si" or "us"). */
export function reasonIn(ctx, res, system) {
  return render(ctx, res.parts, system);
}
