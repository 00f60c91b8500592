// The field calculator's arithmetic on the phone: the twin of frontend/calculators.py, built on the
// same functions the checklist uses (evaluate.js). Pure: no DOM, no network. The agreement test
// (tests/inspections/test_phone_agreement.py) holds it to the server's answers.
import {
  EngineeringInputError, filterLoading, plainMessage, oaFractionFromCo2, oaFractionFromTemperatures, pyRound, sensibleHeatW,
} from "./evaluate.js";
import { displayNumber, fixed, fromDisplay, render, toDisplay, unitLabel } from "./units.js";

// A figure in the reader's unit at the quantity's usual precision (frontend/calculators.py: _row).
function row(ctx, label, value, quantity, system) {
  return { label, value: displayNumber(ctx, value, quantity, system), unit: unitLabel(ctx.units, quantity, system) };
}

function fractionRows(r) {
  return [
    { label: "Outdoor-air fraction", value: pyRound(r.fraction * 100, 1), unit: "%" },
    { label: "Uncertainty (±)", value: pyRound(r.uncertainty * 100, 1), unit: "%" },
    { label: "Likely range", value: `${fixed(r.low * 100, 1)}–${fixed(r.high * 100, 1)}`, unit: "%" },
  ];
}

const COMPUTE = {
  "oa-temperatures": (ctx, system, si) => fractionRows(oaFractionFromTemperatures(si.t_outdoor_c, si.t_return_c, si.t_mixed_c)),
  "oa-co2": (ctx, system, si) => fractionRows(oaFractionFromCo2(si.co2_outdoor_ppm, si.co2_return_ppm, si.co2_supply_or_mixed_ppm)),
  "filter-loading": (ctx, system, si) => {
    const r = filterLoading(ctx, { dp: si.dp_pa, q: si.airflow_m3s, qd: si.design_airflow_m3s, clean: si.clean_dp_pa, final: si.final_dp_pa });
    return [
      row(ctx, "Pressure drop at design airflow", r.corrected, "pressure", system),
      { label: "Loading (clean = 0 %, final = 100 %)", value: pyRound(r.fraction * 100, 1), unit: "%" },
      { label: "Verdict", value: r.verdict, unit: "", verdict: r.verdict },
      { label: "Reason", value: r.reason, unit: "" },
    ];
  },
  // Dry air at sea level, density at the state where the airflow was measured (as the checklist's coil check).
  "sensible-heat": (ctx, system, si) => [
    row(ctx, "Sensible heat added to the air", sensibleHeatW({ airflow: si.airflow_m3s, tIn: si.t_in_c, tOut: si.t_out_c, airflowAt: si.airflow_at }), "heat_rate", system),
  ],
};

export const CALCULATORS = Object.keys(COMPUTE);

function display(ctx, valueSi, quantity, system) {
  return valueSi === null || valueSi === undefined ? null : pyRound(toDisplay(ctx.units, valueSi, quantity, system), 2);
}

function restate(ctx, exc, spec, typed, system) {
  if (exc.parts && exc.parts.length) { // its numbers as quantities: restated in the person's units
    const text = render(ctx, exc.parts, system);
    return spec ? `${spec.label}: ${text}` : text.slice(0, 1).toUpperCase() + text.slice(1);
  }
  if (!spec || (exc.low === null && exc.high === null)) return plainMessage(exc);
  const unit = unitLabel(ctx.units, spec.quantity, system);
  const lo = display(ctx, exc.low, spec.quantity, system);
  const hi = display(ctx, exc.high, spec.quantity, system);
  let allowed;
  if (lo !== null && hi !== null) allowed = `from ${lo} to ${hi} ${unit}`;
  else allowed = lo !== null ? `at least ${lo} ${unit}` : `at most ${hi} ${unit}`;
  return `${spec.label}: ${typed} ${unit} is not allowed; allowed ${allowed}`;
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
    if (spec.choices) {
      const keys = spec.choices.map(([k]) => k);
      const picked = raw === undefined || raw === null || raw === "" ? keys[0] : raw;
      if (keys.includes(picked)) si[spec.name] = picked;
      else errors[spec.name] = [`${spec.label}: choose ${spec.choices.map(([, w]) => w).join(" or ")}`];
      continue;
    }
    const unit = unitLabel(ctx.units, spec.quantity, system);
    const text = String(raw ?? "").trim().replace(",", ".");
    const number = text === "" ? NaN : Number(text);
    if (!Number.isFinite(number)) { errors[spec.name] = [`${spec.label}: ${JSON.stringify(raw ?? null)} is not a number in ${unit}`]; continue; }
    si[spec.name] = fromDisplay(ctx.units, number, spec.quantity, system);
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
