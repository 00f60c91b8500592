// Display units on the phone: the factors, labels and precision come from the server (inspections/phone.py,
// built by engineering/formatting.py), so the phone converts exactly as the server does; moments on a
// site's clock from the server's zone table (accounts/clock.py), written as the server writes them. No DOM.

const PLAIN = new Set(["percent", "current", "time", ""]);

function spec(units, quantity, system) {
  const q = units && units[quantity];
  if (!q || PLAIN.has(quantity)) return null;
  return q[system === "us" ? "us" : "si"];
}

/**
 * A count with its noun as people say it, "1 form", "3 forms": the phone's twin of the server's
 * ``engineering.formatting.count_text`` (``plural`` where adding "s" is wrong).
 */
export function countText(n, noun, plural) {
  return `${n} ${n === 1 ? noun : plural || `${noun}s`}`;
}

/** Stored SI value → the person's display unit. */
export function toDisplay(units, value, quantity, system) {
  if (value === null || value === undefined) return value;
  const s = spec(units, quantity, system);
  if (!s) return value;
  const [scale, offset] = s.factor;
  return scale * value + offset;
}

/** A value typed in the person's display unit → stored SI value. */
export function fromDisplay(units, value, quantity, system) {
  if (value === null || value === undefined) return value;
  const s = spec(units, quantity, system);
  if (!s) return value;
  const [scale, offset] = s.factor;
  return (value - offset) / scale;
}

export function unitLabel(units, quantity, system) {
  const q = units && units[quantity];
  if (!q) return { percent: "%", current: "A", time: "s" }[quantity] || "";
  return q[system === "us" ? "us" : "si"].label;
}

/**
 * Python's round(x, d): correctly rounded on the exact binary value (as toFixed), and an exact tie
 * (only possible when x is a dyadic fraction such as 116.5 or 0.125) to even.
 */
export function pyRound(x, d = 0) {
  if (!Number.isFinite(x)) return x;
  const p = 10 ** d;
  const m2 = x * 2 * p;
  if (Number.isInteger(m2) && Math.abs(m2) % 2 === 1 && m2 % 5 ** d === 0 && m2 / (2 * p) === x) {
    const lo = (m2 - 1) / 2;
    return (lo % 2 === 0 ? lo : lo + 1) / p || 0;
  }
  return Number(x.toFixed(d)) || 0;
}

/** Python's f"{x:.{d}f}": a tie rounds to even, as Python formats it. */
export function fixed(x, d) {
  const text = pyRound(x, d).toFixed(d);
  return x < 0 && Number(text) === 0 ? `-${text}` : text; // Python keeps the sign of a negative that rounds to 0
}

/** |x| as it is written at its shortest (Python's repr, JS's String): [its digits, the power of ten of the last]. */
function writtenDigits(x) {
  const m = /^(\d+)(?:\.(\d+))?(?:e([+-]\d+))?$/.exec(String(Math.abs(x)));
  const fraction = m[2] || "";
  return [m[1] + fraction, Number(m[3] || 0) - fraction.length];
}

/**
 * engineering/formatting.py format_number: ``decimals`` places, a tie rounded half up (away from zero) on the
 * number as written (12.5 → "13", 0.15 → "0.2"; toFixed rounds the binary value, 0.15 → "0.1"), a true minus
 * sign, never "−0", never grouped: "12075 h" typed back reads 12075, where "12,075" would read as a decimal comma.
 */
export function formatNumber(x, decimals) {
  if (!Number.isFinite(x)) return fixed(x, decimals).replace("-", "−");
  const [digits, exp] = writtenDigits(x);
  const shift = exp + decimals;
  let n;
  if (shift >= 0) {
    n = BigInt(digits) * 10n ** BigInt(shift);
  } else {
    const padded = digits.padStart(1 - shift, "0");
    n = BigInt(padded.slice(0, shift)) + (padded[padded.length + shift] >= "5" ? 1n : 0n);
  }
  const text = n.toString().padStart(decimals + 1, "0");
  const number = decimals > 0 ? `${text.slice(0, -decimals)}.${text.slice(-decimals)}` : text;
  return x < 0 && n !== 0n ? `−${number}` : number;
}

/**
 * engineering/formatting.py typed_decimals: at least ``decimals``, more where the value has them (12.5 rpm reads
 * "12.5"), up to 3 (TYPED_DECIMALS_CAP); counted at 12 significant figures, so conversion noise is not typing.
 */
export function typedDecimals(x, decimals) {
  if (!Number.isFinite(x)) return decimals;
  const [, exp] = writtenDigits(Number(x.toPrecision(12)));
  const needed = Math.max(0, -exp);
  return needed <= 3 ? Math.max(decimals, needed) : decimals;
}

function decimalsOf(decimalsTable, part, system) {
  const [si, us] = (decimalsTable && decimalsTable[part.quantity]) || [1, 1];
  if (system === "us") return us;
  return part.decimals !== undefined && part.decimals !== null ? part.decimals : si;
}

/**
 * A stored SI value as a reader sees it (engineering/formatting.py: number_text), without its unit label; ``typed``
 * (a reading as typed) widens the precision to the decimals the value has (typedDecimals).
 */
export function displayNumber(ctx, value, quantity, system, typed = false) {
  const x = toDisplay(ctx.units, value, quantity, system);
  const d = decimalsOf(ctx.decimals, { quantity }, system);
  return formatNumber(x, typed ? typedDecimals(x, d) : d);
}

function withUnit(units, text, quantity, system) {
  const unit = unitLabel(units, quantity, system);
  return unit ? `${text} ${unit}` : text;
}

/** One reason part (inspections/reasons.py): text, a quantity {value, quantity} or a band {low, high, quantity}. */
export function renderPart(ctx, part, system) {
  if (typeof part === "string") return part;
  const { units, decimals } = ctx;
  const d = decimalsOf(decimals, part, system);
  const num = (x) => formatNumber(toDisplay(units, x, part.quantity, system), d);
  if ("value" in part) return withUnit(units, num(part.value), part.quantity, system);
  const { low, high } = part;
  if (low !== null && low !== undefined && high !== null && high !== undefined) {
    const [lo, hi] = [num(low), num(high)];
    const dash = `${lo}${hi}`.includes("−") ? " to " : "–"; // "−7.0 to −3.0 °C" (inspections/reasons.py)
    return withUnit(units, `${lo}${dash}${hi}`, part.quantity, system);
  }
  if (low !== null && low !== undefined) return `at least ${withUnit(units, num(low), part.quantity, system)}`;
  if (high !== null && high !== undefined) return `at most ${withUnit(units, num(high), part.quantity, system)}`;
  return "any value";
}

export function render(ctx, parts, system) {
  return (parts || []).map((p) => renderPart(ctx, p, system)).join("");
}

// ---------------------------------------------------------------------------------------------------------------
// Moments: accounts.clock.local_time_text on the phone, "2 Dec 2026 09:15 CET".

const MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"];
const two = (n) => String(n).padStart(2, "0");

/** The clock a page ships (accounts.clock.zone_clock, in <script type="application/json" id="site-clock">), or null. */
export function pageClock(doc = globalThis.document) {
  const node = doc && doc.getElementById("site-clock");
  try { return node ? JSON.parse(node.textContent) : null; } catch (error) { return null; }
}

/**
 * ``when`` (an ISO 8601 text, a Date or milliseconds) as the server writes it: "2 Dec 2026 09:15 CET".
 * With the server's ``clock`` ({zone, spans: [[start ms, offset s, abbreviation], ...]}) on the site's clock,
 * exactly as the server would; without one on the phone's own clock, still with its zone named. "" for no time.
 */
export function timeText(when, clock) {
  const ms = when instanceof Date ? when.getTime() : typeof when === "number" ? when : Date.parse(when || "");
  if (!Number.isFinite(ms)) return "";
  const spans = clock && Array.isArray(clock.spans) ? clock.spans : [];
  if (spans.length) {
    let span = spans[0];
    for (const s of spans) {
      if (s[0] > ms) break;
      span = s;
    }
    const d = new Date(ms + span[1] * 1000);
    return `${d.getUTCDate()} ${MONTHS[d.getUTCMonth()]} ${d.getUTCFullYear()} ${two(d.getUTCHours())}:${two(d.getUTCMinutes())} ${span[2]}`;
  }
  const parts = {};
  const format = new Intl.DateTimeFormat("en-GB", {
    year: "numeric", month: "numeric", day: "numeric", hour: "2-digit", minute: "2-digit", hourCycle: "h23",
    timeZoneName: "short",
  });
  for (const p of format.formatToParts(new Date(ms))) parts[p.type] = p.value;
  return `${Number(parts.day)} ${MONTHS[Number(parts.month) - 1]} ${parts.year} ${parts.hour}:${parts.minute} ${parts.timeZoneName}`;
}
