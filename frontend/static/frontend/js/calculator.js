// Field calculator: every figure worked on the phone by calc.js (the twin of frontend/calculators.py,
// proven equal by the agreement test), online or offline; the server answers only if the page came without
// its calculator context.
import { calculate } from "./calc.js";
import { commaWords, exponentWords, parseNumber } from "./numbers.js";

function calculatorContext() {
  const node = document.getElementById("calculator-context");
  try { return node ? JSON.parse(node.textContent) : null; } catch (error) { return null; }
}
function csrfToken() {
  const match = document.cookie.match(/(?:^|;\s*)csrftoken=([^;]+)/);
  return match ? decodeURIComponent(match[1]) : "";
}

// What each field holds: its text as typed (a number field is a text field: a browser's number field turned
// "12,5" into 125 unseen), a choice's value; calc.js reads the numbers as the server does (numbers.js).
function typedValues(form) {
  return Object.fromEntries([...form.querySelectorAll("input[data-number], select")].map((i) => [i.name, i.value]));
}

// Without the calculator context (a page from before it): the shown ranges only, in the server's words.
function rangeProblems(form) {
  const problems = [];
  for (const input of form.querySelectorAll("input[data-number]")) {
    const label = form.querySelector(`label[for="${input.id}"]`).textContent;
    const allowed = input.dataset.allowed || "";
    const v = parseNumber(input.value);
    if (input.value.trim() === "") { problems.push(`${label}: missing; enter a number ${allowed}`); continue; }
    const ambiguous = v === null ? commaWords(input.value) || exponentWords(input.value, `allowed ${allowed}`) : null;
    if (ambiguous) { problems.push(`${label}: ${ambiguous}`); continue; }
    if (v === null) { problems.push(`${label}: ${input.value.trim()} is not a usable number; allowed ${allowed}`); continue; }
    const lo = input.dataset.min === undefined ? null : Number(input.dataset.min);
    const hi = input.dataset.max === undefined ? null : Number(input.dataset.max);
    if ((lo !== null && v < lo) || (hi !== null && v > hi)) problems.push(`${label}: ${input.value} ${input.dataset.unit} is outside the allowed range, ${allowed}`);
  }
  return problems;
}

function show(box, rows, errors, note) {
  box.replaceChildren();
  for (const e of errors) { const p = document.createElement("p"); p.className = "errorlist"; p.textContent = e; box.append(p); }
  if (note) { const p = document.createElement("p"); p.className = "hint"; p.textContent = note; box.append(p); }
  if (!rows.length) return;
  const table = document.createElement("table");
  const body = table.createTBody();
  for (const r of rows) {
    const tr = body.insertRow();
    const th = document.createElement("th"); th.scope = "row"; th.textContent = r.label; tr.append(th);
    const td = tr.insertCell();
    if (r.verdict) { const s = document.createElement("span"); s.className = `verdict ${r.verdict}`; s.textContent = r.value; td.append(s); }
    else td.textContent = `${r.value} ${r.unit}`;
  }
  box.append(table);
}

async function run(form) {
  const box = form.querySelector("[data-calc-result]");
  const ctx = calculatorContext();
  if (ctx && ctx.calculators[form.dataset.calc]) {
    const answer = calculate(ctx, form.dataset.calc, typedValues(form), document.body.dataset.units || "si");
    if (answer.rows) show(box, answer.rows, [], "");
    else show(box, [], Object.values(answer.errors).flat(), "");
    return;
  }
  const problems = rangeProblems(form);
  if (!navigator.onLine) {
    show(box, [], problems, problems.length ? "" : "Offline, and this copy of the page has no calculator data: open it once with a connection so the phone keeps it.");
    return;
  }
  if (problems.length) { show(box, [], problems, ""); return; }
  const values = typedValues(form);
  try {
    const response = await fetch(`/api/calc/${form.dataset.calc}/`, {
      method: "POST", credentials: "same-origin",
      headers: { "Content-Type": "application/json", "X-CSRFToken": csrfToken() },
      body: JSON.stringify({ values }),
    });
    const body = await response.json();
    if (response.ok) show(box, body.results, [], "");
    else show(box, [], Object.values(body.errors || { detail: [body.detail] }).flat(), "");
  } catch (error) {
    show(box, [], [], "No connection: the values are within range; the figure needs the server.");
  }
}

export function startCalculator() {
  for (const form of document.querySelectorAll("form[data-calc]")) {
    // The page's own checks answer every field in words (a blank one, 1e400), and the old result goes: the
    // browser's bubbles would stop the submit and leave the last figure showing.
    form.noValidate = true;
    form.addEventListener("submit", (event) => { event.preventDefault(); run(form); });
  }
}
