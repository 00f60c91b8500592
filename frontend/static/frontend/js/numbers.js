// A number as a person types it on the phone: a sign, digits with one decimal point or comma ("12,5" reads 12.5),
// an exponent; anything else ("12,5a", "abc", "1_000", "Infinity") is no number. The twin of the server's reader,
// accounts/inputs.py parse_number (tests/inspections/test_phone_agreement.py holds the two together).
const TYPED_NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i;

/** A finite number from typed text or a number, or null. */
export function parseNumber(raw) {
  if (typeof raw === "number") return Number.isFinite(raw) ? raw : null;
  if (typeof raw !== "string") return null;
  const text = raw.trim().replace(/,/g, ".");
  if (!text || text.length > 40 || !TYPED_NUMBER.test(text)) return null;
  const x = Number(text);
  return Number.isFinite(x) ? x : null;
}
