// The field calculator's arithmetic on the phone: the twin of frontend/calculators.py, built on the
// same functions the checklist uses (evaluate.js). Pure: no DOM, no network. The agreement test
// (tests/inspections/test_phone_agreement.py) holds it to the server's answers.
import {
  EngineeringInputError, filterLoading, loadingPercent, fractionWords, plainMessage, oaFractionFromCo2, oaFractionFromTemperatures, pyRound, sensibleHeatW,
} from "./evaluate.js";
import { displayNumber, fixed, formatNumber, fromDisplay, render, unitLabel } from "./units.js";
import { commaWords, exponentWords, parseNumber } from "./numbers.js";

// A figure in the reader's unit at the quantity's usual precision (frontend/calculators.py: _row).
function row(ctx, label, value, quantity, system) {
  return { label, value: displayNumber(ctx, value, quantity, system), unit: unitLabel(ctx.units, quantity, system) };
}

// Said as the checklist's reasons say it: whole percent, the ± in percentage points.
function fractionRows(r) {
  return [
    { label: "Outdoor-air fraction", value: fractionWords(r.fraction, r.uncertainty), unit: "" },
    { label: "Likely range", value: `${fixed(r.low * 100, 0)}–${fixed(r.high * 100, 0)}`, unit: "%" },
  ];
}

const COMPUTE = {
  "oa-temperatures": (ctx, system, si) => fractionRows(oaFractionFromTemperatures(si.t_outdoor_c, si.t_return_c, si.t_mixed_c)),
  "oa-co2": (ctx, system, si) => fractionRows(oaFractionFromCo2(si.co2_outdoor_ppm, si.co2_return_ppm, si.co2_supply_or_mixed_ppm)),
  "filter-loading": (ctx, system, si) => {
    const r = filterLoading(ctx, { dp: si.dp_pa, q: si.airflow_m3s, qd: si.design_airflow_m3s, clean: si.clean_dp_pa, final: si.final_dp_pa });
    return [
      row(ctx, "Pressure drop at design airflow", r.corrected, "pressure", system),
      { label: "Loading (clean = 0 %, final = 100 %)", value: formatNumber(loadingPercent(r.fraction), 0), unit: "%" },
      { label: "Verdict", value: r.verdict, unit: "", verdict: r.verdict },
      { label: "Reason", value: render(ctx, r.parts, system), unit: "" },
    ];
  },
  // Dry air at the place's pressure, density at the state where the airflow was measured (as the checklist's coil check).
  "sensible-heat": (ctx, system, si) => [
    row(ctx, "Sensible heat added to the air", sensibleHeatW({
      airflow: si.airflow_m3s, tIn: si.t_in_c, tOut: si.t_out_c, airflowAt: si.airflow_at, pressure: si.place.pressure_pa,
    }), "heat_rate", system),
    { label: "Air assumed", value: si.place.assumed[system === "us" ? "us" : "si"], unit: "" },
  ],
};

export const CALCULATORS = Object.keys(COMPUTE);

const sys = (system) => (system === "us" ? "us" : "si");

// The typed text as a message repeats it, cut short (frontend/calculators.py: _typed).
function typedText(raw) {
  const text = String(raw).trim();
  return text.length <= 40 ? text : `${text.slice(0, 39)}…`;
}


/**
 * One typed number inside the input's shown range, in SI; or a message naming the field, the value and the
 * allowed range (frontend/calculators.py: check_number). ``raw`` NaN: the browser lost what was typed.
 */
export function checkNumber(ctx, spec, raw, system) {
  const allowed = spec.allowed[sys(system)];
  if (raw === undefined || raw === null || (typeof raw === "string" && raw.trim() === "")) return { problem: `${spec.label}: missing; enter a number ${allowed}` };
  const number = parseNumber(raw);
  const ambiguous = number === null ? commaWords(raw) || exponentWords(raw, `allowed ${allowed}`) : null;
  if (ambiguous) return { problem: `${spec.label}: ${ambiguous}` };
  if (number === null) {
    const said = typeof raw === "number" ? "" : `${typedText(raw)} is `;
    return { problem: `${spec.label}: ${said}not a usable number; allowed ${allowed}` };
  }
  const [lo, hi] = spec.bounds[sys(system)];
  if ((lo !== null && number < lo) || (hi !== null && number > hi)) {
    return { problem: `${spec.label}: ${typedText(raw)} ${unitLabel(ctx.units, spec.quantity, system)} is outside the allowed range, ${allowed}` };
  }
  return { value: fromDisplay(ctx.units, number, spec.quantity, system) };
}

function restate(ctx, exc, spec, typed, system) {
  if (exc.parts && exc.parts.length) { // its numbers as quantities: restated in the person's units
    const text = render(ctx, exc.parts, system);
    return spec ? `${spec.label}: ${text}` : text.slice(0, 1).toUpperCase() + text.slice(1);
  }
  if (!spec || (exc.low === null && exc.high === null)) return plainMessage(exc);
  const unit = unitLabel(ctx.units, spec.quantity, system);
  const lo = exc.low === null ? null : displayNumber(ctx, exc.low, spec.quantity, system);
  const hi = exc.high === null ? null : displayNumber(ctx, exc.high, spec.quantity, system);
  let allowed;
  if (lo !== null && hi !== null) allowed = `from ${lo} to ${hi} ${unit}`;
  else allowed = lo !== null ? `at least ${lo} ${unit}` : `at most ${hi} ${unit}`;
  return `${spec.label}: ${typedText(typed)} ${unit} is not allowed; allowed ${allowed}`;
}

/**
 * One calculator on values typed in the person's units: {rows} or {errors: {field: [message]}}.
 * ctx: the calculator context (frontend/calculators.py: calculator_context).
 */
export function calculate(ctx, name, values, system) {
  const inputs = ctx.calculators[name];
  const si = {};
  const errors = {};
  for (const spec of inputs) {
    const raw = values[spec.name];
    if (spec.choices || spec.place) {
      const offered = spec.place ? (ctx.places || []).map((p) => [p.key, p.words[sys(system)], p]) : spec.choices.map(([k, w]) => [k, w, k]);
      const picked = raw === undefined || raw === null || raw === "" ? offered[0][0] : raw;
      const found = offered.find(([k]) => k === picked);
      if (found) si[spec.name] = found[2];
      else errors[spec.name] = [`${spec.label}: choose ${offered.map(([, w]) => w).join(" or ")}`];
      continue;
    }
    const { value, problem } = checkNumber(ctx, spec, raw, system);
    if (problem) errors[spec.name] = [problem];
    else si[spec.name] = value;
  }
  if (Object.keys(errors).length) return { errors };
  try {
    return { rows: COMPUTE[name](ctx, system, si) };
  } catch (exc) {
    if (!(exc instanceof EngineeringInputError)) throw exc;
    const spec = inputs.find((i) => i.name === exc.field);
    return { errors: { [spec ? exc.field : "non_field_errors"]: [restate(ctx, exc, spec, values[exc.field], system)] } };
  }
}
