// The phone's twin of scheduling.services.meter_reading_check for the run-hour reading on a
// checklist: the same arithmetic, with the unit's latest reading and the rule's numbers shipped in
// the evaluation context ("meter", inspections/phone.py). Pure: no DOM, no network.
// tests/inspections/test_meter_agreement.py runs both sides on the same cases.
import { fixed } from "./units.js";

/** scheduling.services.meters.hours_text: whole hours unless a tenth matters, never grouped ("12075 h"). */
export function hoursText(h) {
  return Math.abs(h - Math.round(h)) < 0.05 ? `${fixed(h, 0)} h` : `${fixed(h, 1)} h`;
}

/** scheduling.services.meters.max_gain_h: elapsed + max(2 %, 1 h). */
export function maxGainH(meter, elapsedSeconds) {
  const hours = Math.max(elapsedSeconds, 0) / 3600.0;
  return hours + Math.max(hours * meter.gain_tolerance_fraction, meter.gain_tolerance_h);
}

/**
 * Judge a typed run-hour value against the unit's last reading, as of the phone's clock ``now`` (a Date).
 * null: nothing to say (no last reading, no number, or the last reading is later than now).
 * {verdict: "fail", code: "meter_too_fast", message}: the server's own words; it refuses the form.
 * {verdict: "watch", code: "meter_backwards", message}: below the last reading (the server keeps and flags it).
 */
export function meterReadingCheck(meter, hours, now, label = "Run hours") {
  if (!meter || !meter.last || typeof hours !== "number" || !Number.isFinite(hours)) return null;
  const last = meter.last;
  const lastAt = Date.parse(last.taken_at);
  const elapsedSeconds = (now.getTime() - lastAt) / 1000;
  if (!(elapsedSeconds >= 0)) return null; // the server compares only with a reading at or before the form's time
  if (hours < last.hours) return { verdict: "watch", code: "meter_backwards", message: meterBelowText(meter, hours, now) };
  const most = last.hours + maxGainH(meter, elapsedSeconds);
  if (hours > most + 1e-9) {
    return {
      verdict: "fail",
      code: "meter_too_fast",
      message:
        `${label} ${hoursText(hours)} is more than the meter can have run: the previous ` +
        `reading was ${hoursText(last.hours)} on ${last.taken_text}, ` +
        `${hoursText(elapsedSeconds / 3600)} of clock time earlier, so at most ` +
        `${hoursText(most)} is possible (the time passed plus 2 %, at least 1 h). Check the ` +
        `number; if the meter was replaced, ${meter.if_replaced}`,
    };
  }
  return null;
}

/**
 * What the meter rule checked of a run-hour value it accepts, in words ("" when nothing was checked: no last
 * reading, no number, a value below the last one or more than the clock allows, or a last reading later than
 * ``now``, the form's finish time). The twin of scheduling.services.meter_words.meter_plausible_words, which the
 * record page and the PDFs say beside the stored reading (tests/inspections/test_meter_words.py).
 */
export function meterPlausibleText(meter, hours, now) {
  if (!meter || !meter.last || typeof hours !== "number" || !Number.isFinite(hours) || hours < meter.last.hours) return "";
  const elapsedSeconds = (now.getTime() - Date.parse(meter.last.taken_at)) / 1000;
  if (!(elapsedSeconds >= 0) || hours > meter.last.hours + maxGainH(meter, elapsedSeconds) + 1e-9) return "";
  return `plausible: ${hoursText(hours - meter.last.hours)} since the last reading of ${hoursText(meter.last.hours)} on ${meter.last.taken_text}`;
}

/**
 * A run-hour value below the meter's last reading at or before ``now``, in words ("" for any other value). The twin
 * of scheduling.services.meter_words.meter_below_words (the record page and the PDFs say it beside the reading).
 */
export function meterBelowText(meter, hours, now) {
  if (!meter || !meter.last || typeof hours !== "number" || !Number.isFinite(hours) || hours >= meter.last.hours) return "";
  if (!(now.getTime() - Date.parse(meter.last.taken_at) >= 0)) return "";
  return `below the last reading of ${hoursText(meter.last.hours)} on ${meter.last.taken_text} — meter replaced or misread?`;
}

/**
 * A run-hour value against the meter's last reading as the record says it beside the value: {verdict, text},
 * verdict "watch" below the last reading (meterBelowText), "" otherwise with what the rule checked
 * (meterPlausibleText, "" for nothing). The twin of scheduling.services.meter_words.meter_words.
 */
export function meterWords(meter, hours, now) {
  const below = meterBelowText(meter, hours, now);
  return below ? { verdict: "watch", text: below } : { verdict: "", text: meterPlausibleText(meter, hours, now) };
}
