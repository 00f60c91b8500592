// A number as a person types it on the phone: a sign, digits with one decimal point or comma ("12,5" reads 12.5);
// anything else ("12,5a", "abc", "1_000", "Infinity") is no number, nor is a number written with an exponent
// ("1e5": more likely a slip than 100000; exponentWords says so with the field's range). A comma followed by exactly
// three digits after a whole part that is not zero ("12,075") may be a thousands separator as well: no number
// either, and commaWords says both readings. The twin of the server's reader of a person's typed number,
// accounts/typed_numbers.py parse_number(..., exponent=False), comma_words and exponent_words
// (tests/inspections/test_phone_agreement.py holds the two together).
const TYPED_NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)$/;
const EXPONENT = /^[+-]?(\d+[.,]?\d*|[.,]\d+)e[+-]?\d+$/i;
const AMBIGUOUS_COMMA = /^([+-]?)(\d+),(\d{3})$/;

/** The two numbers an ambiguous comma may mean, as typed ("12,075": ["12075", "12.075"]), or null. */
export function commaReadings(raw) {
  if (typeof raw !== "string") return null;
  const found = AMBIGUOUS_COMMA.exec(raw.trim());
  if (!found || /^0+$/.test(found[2])) return null;
  const sign = found[1] === "-" ? "-" : "";
  const whole = found[2].replace(/^0+/, "");
  return [`${sign}${whole}${found[3]}`, `${sign}${whole}.${found[3]}`];
}

/** "“12,075” could be 12075 or 12.075: type 12075 or 12.075" for an ambiguous comma, else null. */
export function commaWords(raw) {
  const readings = commaReadings(raw);
  if (!readings) return null;
  const [grouped, decimal] = readings;
  return `“${String(raw).trim()}” could be ${grouped} or ${decimal}: type ${grouped} or ${decimal}`;
}

/**
 * "“1e5” is not a plain number; type digits with an optional decimal point or comma, allowed 0 to 1000000 h" for
 * typed text in exponent notation, else null; ``allowed`` is the field's own range as its range refusal says it.
 */
export function exponentWords(raw, allowed = "") {
  if (typeof raw !== "string" || !EXPONENT.test(raw.trim())) return null;
  const words = `“${raw.trim().slice(0, 40)}” is not a plain number; type digits with an optional decimal point or comma`;
  return allowed ? `${words}, ${allowed}` : words;
}

/** A finite number from typed text or a number, or null. */
export function parseNumber(raw) {
  if (typeof raw === "number") return Number.isFinite(raw) ? raw : null;
  if (typeof raw !== "string") return null;
  if (commaReadings(raw)) return null;
  const text = raw.trim().replace(/,/g, ".");
  if (!text || text.length > 40 || !TYPED_NUMBER.test(text)) return null;
  const x = Number(text);
  return Number.isFinite(x) ? x : null;
}
