// The checklist page: every reading judged on the phone the moment it is entered (evaluate.js, the
// twin of the server's evaluation), photos, signature, and the finished form into the outbox.
import { debounce, loadDraft, saveDraft } from "./drafts.js";
import { evaluate, ownJudgement, ownLineLabel, readingKey, reasonIn, resultsByPlace, setAsideParts } from "./evaluate.js";
import { formFlags } from "./formcheck.js";
import { startFormNav } from "./formnav.js";
import { outOfRange, plausibility } from "./limits.js";
import { commaWords, exponentWords, parseNumber } from "./numbers.js";
import { meterReadingCheck, meterWords } from "./meter.js";
import { newUuid, outboxPut } from "./outbox.js";
import { attachSignature } from "./signature.js";
import { announce, currentOwner, myOutbox, myResults, syncOutbox } from "./sync.js";
import { fromDisplay, pageClock, render, timeText, toDisplay } from "./units.js";

const PHOTO_MAX_SIDE = 1600;

function evaluationContext() {
  const node = document.getElementById("evaluation-context");
  try { return node ? JSON.parse(node.textContent) : null; } catch (error) { return null; }
}

// A number field keeps exactly what was typed (a text field: a browser's number field empties itself on "12,5a"
// and the reading vanished unseen); numbers.js reads it as the server does, a decimal comma as a point.
function typedText(block) {
  const input = block.querySelector("input[data-number]");
  return input ? input.value.trim() : "";
}

function typedNumber(block) {
  const raw = typedText(block);
  return raw === "" ? null : parseNumber(raw);
}

function answer(block) {
  const na = block.querySelector("input[name^='na:']");
  if (na && na.checked) return "na";
  if (block.dataset.kind === "number") return typedNumber(block);
  const checked = block.querySelector("input[type=radio]:checked");
  return checked ? checked.value : null;
}

function verdictBox(block) {
  const input = block.querySelector("input[data-number]");
  if (input) return document.getElementById(`${input.id}-verdict`);
  let out = block.querySelector("output[data-verdict]");
  if (!out) {
    out = document.createElement("output");
    out.className = "hint";
    out.dataset.verdict = "";
    out.setAttribute("aria-live", "polite");
    (block.querySelector(".choices-set") || block).after(out);
  }
  return out;
}

/** The readings as the server would store them (SI), and per block what the phone knows of each. */
function readingsOf(form, ctx) {
  const system = form.dataset.unitSystem || "si";
  const slots = new Map((ctx ? ctx.slots : []).map((s) => [readingKey(s.item, s.component), s]));
  const readings = {};
  const blocks = [];
  for (const block of form.querySelectorAll("[data-item]")) {
    const kind = block.dataset.kind;
    if (kind === "photo" || kind === "text") continue;
    const key = readingKey(block.dataset.item, block.dataset.component);
    const value = answer(block);
    let range = { impossible: false, improbable: false, text: "" };
    const input = block.querySelector("input[data-number]");
    const slot = slots.get(key);
    const decimals = slot && ctx.decimals && ctx.decimals[slot.quantity] ? ctx.decimals[slot.quantity][system === "us" ? 1 : 0] : null;
    const limits = input ? JSON.parse(input.dataset.limits || "null") : null;
    const typed = input ? typedText(block) : "";
    if (value === null && typed !== "") {
      // Typed, but no number ("12,5a", "abc", "1e400"): said at the field at once, the text kept as typed.
      range = { impossible: true, improbable: false, unusable: true, typed, text: plausibility(Infinity, limits, input.dataset.unit || "", decimals).allowed };
    } else if (typeof value === "number") {
      range = { ...plausibility(value, limits, input.dataset.unit || "", decimals), typed };
      // Entered in the person's units; judged in SI, converted exactly as the server converts.
      if (!range.impossible) readings[key] = slot ? fromDisplay(ctx.units, value, slot.quantity, system) : value;
    } else if (value !== null) readings[key] = value;
    blocks.push({ block, key, value, range });
  }
  return { readings, blocks, system };
}

// "Supply-air temperature: −300 °C is impossible; allowed −60 to 120 °C": the server's words for it (limits.js).
function impossibleText(block, range) {
  const input = block.querySelector("input[data-number]");
  return outOfRange(captionOf(block), range.typed, (input && input.dataset.unit) || "", range.allowed);
}

// "“12,5a” is not a number; allowed −40 to 60 °C, a decimal comma or point": the value as typed and what is allowed;
// "“12,075” could be 12075 or 12.075: type 12075 or 12.075" for a comma that may group thousands, "“1e5” is not a
// plain number; type digits …, allowed 0 to 1000000 h" for an exponent, with the field's range (numbers.js; the
// server's words, inspections/services/reading_check.py).
function notANumber(range) {
  const ambiguous = commaWords(range.typed) || exponentWords(range.typed, range.text);
  if (ambiguous) return ambiguous;
  const allowed = range.text ? `${range.text}, ` : "allowed ";
  return `“${range.typed}” is not a number; ${allowed}a number with a decimal point or comma`;
}

function badge(verdict, label) {
  const span = document.createElement("span");
  span.className = `verdict ${verdict}`;
  span.textContent = label || VERDICT_WORDS[verdict] || verdict;
  return span;
}

const RUN_HOURS_KEY = readingKey("visit.run_hours", null);

/** The run-hour value against the unit's last meter reading, by the server's rule (meter.js), as of ``at``: the
 * form's finish time (the server judges the stored form by it), the phone's clock now until the form is finished. */
function meterVerdict(ctx, hours, at) {
  const slot = (ctx.slots || []).find((s) => readingKey(s.item, s.component) === RUN_HOURS_KEY);
  try {
    return meterReadingCheck(ctx.meter, hours, at, slot ? slot.label : "Run hours");
  } catch (error) {
    return null;
  }
}

// Every verdict as of one moment ``at``, the form's finish time (a Date; now while the form is being filled in):
// the meter rule, what it checked and the evaluation all read the same clock, as the server reads the form's.
function showVerdicts(form, ctx, at = new Date()) {
  const { readings, blocks, system } = readingsOf(form, ctx);
  const found = { blocks, byKey: new Map(), meterCheck: null };
  const meterCheck = ctx ? meterVerdict(ctx, readings[RUN_HOURS_KEY], at) : null;
  // A run-hour value the server refuses never reaches a filter forecast: judged without it, as the server
  // stores no form with it.
  const judged = meterCheck && meterCheck.verdict === "fail" ? { ...readings, [RUN_HOURS_KEY]: undefined } : readings;
  if (judged !== readings) delete judged[RUN_HOURS_KEY];
  let results = [];
  try {
    results = ctx ? evaluate(ctx, judged, { finishedAt: at.toISOString() }) : [];
  } catch (error) {
    results = [];
  }
  // A reading's own verdicts under it; a check of several readings (a coil's heat balance) on a line of its own
  // under its part, never as the verdict of the reading it names (the server's own_judgement).
  const { byReading: byKey, ownLines } = resultsByPlace(ctx, results);
  for (const { block, key, value, range } of blocks) {
    const out = verdictBox(block);
    if (!out) continue;
    out.replaceChildren();
    const input = block.querySelector("input[data-number]");
    if (input) {
      // A value the server refuses (no number, or outside what can be): the field is marked as wrong.
      if (range.unusable || range.impossible) input.setAttribute("aria-invalid", "true");
      else input.removeAttribute("aria-invalid");
    }
    if (range.unusable) {
      out.append(badge("fail", commaWords(range.typed) ? "which number?" : "not a number"), ` ${notANumber(range)}`);
      continue;
    }
    if (value === null || value === "na") continue;
    if (range.impossible) {
      out.append(badge("fail", "out of range"), ` ${impossibleText(block, range)}`);
      continue;
    }
    const mine = byKey.get(key) || [];
    for (const r of mine) {
      if (out.childNodes.length) out.append(document.createElement("br"));
      out.append(badge(r.verdict), ` ${withoutPart(reasonIn(ctx, r, system), captionOf(block))}`);
      if (r.verdict === "fail") out.append(" — say what you found in the note");
    }
    const meter = key === RUN_HOURS_KEY ? meterCheck : null;
    if (meter) {
      if (out.childNodes.length) out.append(document.createElement("br"));
      out.append(badge(meter.verdict), ` ${meter.message}`);
      if (meter.verdict === "fail") out.append(" — the server will refuse this form with this value unless the meter was replaced");
      mine.push(meter);
    }
    const checked = key === RUN_HOURS_KEY && !meter && ctx ? meterWords(ctx.meter, value, at).text : "";
    // No check judges it: the server's words (inspections.display reading_words, in the checklist's context), or
    // for run-hours what the meter rule checked, as the record says it (meter_words.meter_words).
    // Set aside as implausible and judged by nothing: "Not judged — 75.0 °C is outside the plausible 0.0–60.0 °C;
    // re-check the reading" (inspections.display reading_verdict_words), never the words of a reading no limit has.
    const words = (ctx && ctx.words) || {};
    const aside = !mine.length && range.improbable && ctx ? render(ctx, setAsideParts(ctx, key, readings[key]), system) : "";
    const said = aside || checked || words.unjudged;
    if (!mine.length) out.append(badge("recorded", aside ? words.not_judged : words.recorded), said ? ` — ${said}` : "");
    if (range.improbable && !aside) out.append(`; ${range.text}`);
    out.dataset.phoneVerdict = mine.length ? mine.map((r) => r.verdict).join(" ") : "recorded";
  }
  showOwnLines(form, ctx, ownLines, system);
  found.byKey = byKey;
  found.meterCheck = meterCheck;
  return found;
}

// The checks of several readings, each on a line after the last field of its part in its checklist: "Fail Coil
// heat balance — Heating coil: air side 70.3 kW, water side 41.2 kW, 41 % apart". Kept while it stands, so a
// screen reader hears a change once; gone when a reading it needs is cleared.
function showOwnLines(form, ctx, ownLines, system) {
  const kept = new Set();
  for (const { result: r, label } of ownLines) {
    const template = r.item.split(".")[0];
    const blocks = [...form.querySelectorAll(`[data-item^="${template}."][data-component="${r.component || ""}"]`)];
    if (!blocks.length) continue;
    const id = `${r.check}|${template}|${r.component || ""}`;
    let out = [...form.querySelectorAll("output[data-own-check]")].find((o) => o.dataset.ownCheck === id);
    if (!out) {
      out = el("output", { class: "hint own-check", "data-own-check": id, "aria-live": "polite" });
    }
    blocks[blocks.length - 1].after(out);
    out.replaceChildren(badge(r.verdict), ` ${label}: ${withoutPart(reasonIn(ctx, r, system), label)}`);
    out.dataset.phoneVerdict = r.verdict;
    kept.add(out);
  }
  for (const old of form.querySelectorAll("output[data-own-check]")) if (!kept.has(old)) old.remove();
}

// ---------------------------------------------------------------------------------------------------------------
// "Finish and sign" first checks what the server would refuse (an impossible value, a number it cannot read, a
// run-hour value the meter cannot have reached) and the flags it would raise from the form alone (formcheck.js,
// with the server's rules and words from the checklist document). Refusals stop the form; flags may be
// accepted with "Finish anyway".

function fieldOf(block, what) {
  if (what === "note" || what === "photo") {
    const details = block.querySelector("details");
    if (details) details.open = true;
    return block.querySelector(what === "note" ? "input[name^='n:']" : "input[type=file]");
  }
  return block.querySelector("input[data-number], textarea, input[type=radio], input[type=file]");
}

function finishProblems(form, ctx, at = new Date()) {
  const judged = showVerdicts(form, ctx, at);
  const refusals = [];
  const answers = new Map();
  for (const { block, key, value, range } of judged.blocks) {
    const label = captionOf(block);
    if (range.unusable) refusals.push({ key, text: `${label}: ${notANumber(range)}` });
    else if (range.impossible) refusals.push({ key, text: impossibleText(block, range) });
    if (key === RUN_HOURS_KEY && judged.meterCheck && judged.meterCheck.verdict === "fail") refusals.push({ key, text: judged.meterCheck.message });
  }
  for (const block of form.querySelectorAll("[data-item]")) {
    const key = readingKey(block.dataset.item, block.dataset.component);
    const kind = block.dataset.kind;
    const files = block.querySelector("input[type=file]");
    const note = block.querySelector("input[name^='n:']");
    let answered;
    if (kind === "text") answered = block.querySelector("textarea").value.trim() !== "";
    else if (kind === "photo") answered = false;
    else answered = answer(block) !== null;
    const first = (judged.byKey.get(key) || [])[0];
    answers.set(key, {
      answered, verdict: first ? first.verdict : null, note: note ? note.value : "", photographed: Boolean(files && files.files.length),
    });
  }
  const flags = formFlags(ctx, answers).map((f) => ({ ...f, what: f.code === "missing_note" ? "note" : f.code === "missing_photo" ? "photo" : "" }));
  return { refusals, flags };
}

function problemLink(form, key, text, what = "") {
  const [item, component] = key.split("|");
  const block = blockOf(form, item, component || null);
  const a = el("a", { href: "#", "data-problem": key }, text);
  a.addEventListener("click", (event) => {
    event.preventDefault();
    const field = block && fieldOf(block, what);
    if (!field) return;
    field.scrollIntoView({ block: "center" });
    field.focus();
  });
  return a;
}

function showProblems(form, box, { refusals, flags }) {
  box.replaceChildren();
  box.hidden = !refusals.length && !flags.length;
  if (box.hidden) return;
  if (refusals.length) {
    box.append(el("p", {}, el("strong", {}, "The server will refuse this form. Correct these first:")),
      el("ul", { "data-refusals": "" }, ...refusals.map((r) => el("li", {}, problemLink(form, r.key, r.text)))));
  }
  if (flags.length) {
    box.append(el("p", {}, el("strong", {}, "The server will flag this form for the supervisor:")));
    const list = el("ul", { "data-flags": "" });
    for (const f of flags) {
      const li = el("li", {});
      if (f.keys) {
        li.append(f.lead);
        f.keys.forEach((k, i) => li.append(i ? "; " : "", problemLink(form, k.key, k.label)));
        li.append(f.more || "");
      } else if (f.key) li.append(problemLink(form, f.key, f.text, f.what));
      else li.append(f.text);
      list.append(li);
    }
    box.append(list);
    if (!refusals.length) {
      const anyway = el("button", { type: "button", class: "btn secondary", "data-finish-anyway": "" }, "Finish anyway");
      anyway.addEventListener("click", () => { form.dataset.acceptFlags = "1"; form.requestSubmit(); });
      box.append(el("p", { class: "hint" }, "Answer them above, or finish anyway and say why in a note; the supervisor sees each flag."), anyway);
    }
  }
}

async function photoDataUrl(file) {
  // Downscale on the phone: a smaller picture survives a weak signal and fits the outbox.
  const bitmap = await createImageBitmap(file);
  const scale = Math.min(1, PHOTO_MAX_SIDE / Math.max(bitmap.width, bitmap.height));
  const canvas = document.createElement("canvas");
  canvas.width = Math.round(bitmap.width * scale);
  canvas.height = Math.round(bitmap.height * scale);
  canvas.getContext("2d").drawImage(bitmap, 0, 0, canvas.width, canvas.height);
  return canvas.toDataURL("image/jpeg", 0.85);
}

// The form as it goes to the server, finished at ``at`` (a Date: the moment "Finish and sign" judged it).
async function collect(form, pad, at) {
  const readings = [];
  const photos = [];
  for (const block of form.querySelectorAll("[data-item]")) {
    const item = block.dataset.item;
    const component = block.dataset.component || null;
    const kind = block.dataset.kind;
    const noteInput = block.querySelector("input[name^='n:']");
    const note = noteInput ? noteInput.value.trim() : "";
    const fileInput = block.querySelector("input[type=file]");
    for (const file of fileInput ? fileInput.files : []) {
      photos.push({ client_uuid: newUuid(), item, component, data: await photoDataUrl(file) });
    }
    if (kind === "photo") continue;
    let value = null;
    const na = block.querySelector("input[name^='na:']");
    if (na && na.checked) value = "na";
    else if (kind === "number") {
      const raw = typedText(block);
      // What is no number never gets here ("Finish and sign" refuses it); were it to, it goes as typed and the
      // server names it: nothing typed is dropped.
      if (raw !== "") value = parseNumber(raw) ?? raw;
    } else if (kind === "text") {
      const raw = block.querySelector("textarea").value.trim();
      if (raw !== "") value = raw;
    } else {
      const checked = block.querySelector("input[type=radio]:checked");
      if (checked) value = checked.value;
    }
    if (value !== null) readings.push({ item, component, value, note });
  }
  const now = at.toISOString();
  return {
    client_uuid: form.dataset.clientUuid,
    work_order: form.dataset.workOrder,
    work_order_version: Number(form.dataset.version),
    unit_system: form.dataset.unitSystem,
    started_at: form.elements.started_at.value || now,
    finished_at: now,
    readings,
    photos,
    signature: { name: form.elements.signature_name.value.trim(), image: pad.toDataUrl(), signed_at: now },
  };
}

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) node.setAttribute(k, v);
  node.append(...children);
  return node;
}

// Words a person reads for the server's codes (as the server's own rendering, inspections/display/).
// The verdicts' labels (engineering/controls.py Verdict, as inspections.display VERDICT_WORDS reads them).
const VERDICT_WORDS = { ok: "OK", watch: "Watch", fail: "Fail", na: "Not applicable" };
const STATUS_WORDS = {
  stored: "stored", flagged: "flagged for the supervisor", verified: "verified", duplicate: "already received",
  refused: "refused: nothing was stored", error: "not stored: the server failed, try again",
};
const STATE_WORDS = {
  planned: "planned", assigned: "assigned", in_progress: "in progress", completed: "completed", verified: "verified",
  cancelled: "cancelled",
};
const SEVERITY_WORDS = { low: "Low", medium: "Medium", high: "High", critical: "Critical" };

// A reason without a leading "<part>: " when its label ("Pressure drop — Final filters") names the part already
// (the twin of inspections/reasons.py text_without_subject).
function withoutLead(text, lead) {
  return lead && text.startsWith(`${lead}: `) && text.length > lead.length + 2 ? text.slice(lead.length + 2) : text;
}

// A reason under a line labelled "<item> — <part>" without what the label already says (the twin of
// inspections/reasons.py text_said_once): "Fin condition: Clean" reads "Clean"; "confirmed: <item>" reads "confirmed".
function withoutPart(reason, label) {
  const [item, part] = (label || "").split(" — ");
  let text = withoutLead(withoutLead(reason, part), item);
  for (const lead of ["not confirmed: ", "confirmed: "]) {
    if (item && text.startsWith(lead) && text.slice(lead.length).startsWith(item)) {
      const rest = text.slice(lead.length + item.length).replace(/^[ :;,.]+/, "");
      return lead.slice(0, -2) + (rest ? `; ${rest}` : "");
    }
  }
  return text;
}

function captionOf(block) {
  // An item's label as the form shows it (never its key).
  const caption = block && block.querySelector("label, legend");
  return caption ? caption.textContent.replace(/\s*\(required\)\s*$/, "").trim() : "Evaluation";
}

function formLabels() {
  // Every item's label by its reading key, read from the form once (not a scan of the form per line).
  const labels = new Map();
  for (const block of document.querySelectorAll("[data-item]")) {
    labels.set(readingKey(block.dataset.item, block.dataset.component || null), captionOf(block));
  }
  return labels;
}

async function renderResult(box, result, ctx = evaluationContext()) {
  const section = el("section", { class: "card", "data-server-result": result.status });
  section.append(el("h2", {}, "Evaluation by the server"));
  const state = result.work_order_state ? STATE_WORDS[result.work_order_state] || "" : "";
  section.append(el("p", {}, "Status: ", el("strong", {}, STATUS_WORDS[result.status] || "unknown"),
    state ? ` · work order ${state}` : ""));
  if (result.flags && result.flags.length) {
    section.append(el("p", {}, "Flagged for the supervisor:"), el("ul", {}, ...result.flags.map((f) => el("li", {}, f.reason))));
  }
  const list = el("ul", { class: "results" });
  const labels = formLabels();
  for (const e of result.evaluation || []) {
    // The derived values wait for the server's own rendering (labelled, in the person's units).
    // The label names the part ("Pressure drop — Final filters"): the reason does not say it again
    // (inspections/reasons.py text_without_subject).
    // A check of several readings (a coil's heat balance) by its own name and part, never the reading it names.
    const label = ownJudgement(e.check) ? labels.get(readingKey(e.item, e.component || null)) || "Evaluation" : ownLineLabel(ctx, e);
    const reason = withoutPart(e.reason, label);
    list.append(el("li", {}, el("span", { class: `verdict ${e.verdict}` }, VERDICT_WORDS[e.verdict] || "Recorded"),
      ` ${label}: ${reason}`));
  }
  section.append(list);
  if (result.findings && result.findings.length) {
    section.append(el("p", {}, "Findings:"), el("ul", {}, ...result.findings.map((f) => el("li", {}, `${SEVERITY_WORDS[f.severity] || ""}: ${f.title}`))));
  }
  box.replaceChildren(section);
  await showServerResult(box);
}

async function showServerResult(box) {
  // The server renders its evaluation with derived values in the person's units; the phone keeps its copy offline.
  if (!navigator.onLine || !box.dataset.resultUrl) return;
  try {
    const response = await fetch(box.dataset.resultUrl, { credentials: "same-origin", headers: { Accept: "text/html" } });
    if (response.ok) box.innerHTML = await response.text();
  } catch (error) { /* offline after all: the phone's copy stays */ }
}

// Where in the form a server error is, in words (the server's messages name the item; never show its field keys).
function placeOf(key) {
  const photo = /^photos\[(\d+)\]/.exec(key);
  if (photo) return `Photo ${Number(photo[1]) + 1}: `;
  if (key.startsWith("signature")) return "Signature: ";
  return "";
}

function renderPending(box, item) {
  const section = el("section", { class: "card", "data-pending": item.state || "waiting" });
  section.append(el("h2", {}, "Saved on this phone"));
  if (item.state === "refused") {
    section.append(el("p", {}, "The server refused this form; nothing was saved there. Fix and finish again:"));
    section.append(el("ul", { class: "errorlist" },
      ...Object.entries(item.errors || {}).map(([k, v]) => el("li", {}, placeOf(k) + [].concat(v).join(" ")))));
  } else {
    section.append(el("p", {}, `Finished ${timeText(item.form.finished_at, pageClock())}; waiting in the outbox to be sent.`));
  }
  box.replaceChildren(section);
}

const DONE_STATES = new Set(["completed", "verified"]);

function showDone(form, results) {
  // The server has this work order done: no second "Finish and sign" from a stale copy of the page.
  // Forms already in the outbox still go (the server stores a late one and flags it), so nothing is lost.
  const done = results.some((r) => DONE_STATES.has(r.work_order_state));
  form.hidden = done;
  const note = document.querySelector("[data-server-done]");
  if (note) note.hidden = !done;
  doneWhere();
}

// The done note's last words follow the connection: a link to the record online, "open it with a connection"
// only while offline.
function doneWhere() {
  const online = document.querySelector("[data-done-online]");
  const offline = document.querySelector("[data-done-offline]");
  if (online) online.hidden = !navigator.onLine;
  if (offline) offline.hidden = navigator.onLine;
}

// "Start visit" is for a visit not yet done: once this work order's form is finished (waiting in the outbox or
// sent) or the server has it done, the page no longer offers it (frontend/views/visit_start.py).
function hideStart(finished) {
  const box = document.querySelector("[data-start-visit]");
  if (box && finished) box.hidden = true;
}

// ---------------------------------------------------------------------------------------------------------------
// Nothing typed is lost: a draft per person and work order (drafts.js) as fields are typed, restored when the
// page opens; a form the server refused comes back into the fields with its errors beside them.

const SKIPPED_FIELDS = new Set(["csrfmiddlewaretoken"]);

/** The form's fields as [name, value] (radios and check boxes: [name, value, true] when ticked). */
function formFields(form) {
  const fields = [];
  for (const input of form.elements) {
    if (!input.name || SKIPPED_FIELDS.has(input.name) || ["file", "submit", "button"].includes(input.type)) continue;
    if (input.type === "checkbox" || input.type === "radio") {
      if (input.checked) fields.push([input.name, input.value, true]);
    } else fields.push([input.name, input.value]);
  }
  return fields;
}

/** ``fields`` back into the form; numbers typed in another unit system (the person switched since) are
 * converted into the form's units, never read as if typed in them. */
function restoreFields(form, fields, typedIn = null) {
  const values = new Map();
  const ticked = new Set();
  for (const [name, value, checked] of fields) {
    if (checked) ticked.add(`${name}\u0000${value}`);
    else values.set(name, value);
  }
  for (const input of form.elements) {
    if (!input.name || SKIPPED_FIELDS.has(input.name) || ["file", "submit", "button"].includes(input.type)) continue;
    if (input.type === "checkbox" || input.type === "radio") input.checked = ticked.has(`${input.name}\u0000${input.value}`);
    else if (values.has(input.name)) input.value = inFormUnits(form, input, values.get(input.name), typedIn);
  }
}

function inFormUnits(form, input, raw, typedIn) {
  const block = input.closest("[data-item]");
  if (!input.hasAttribute("data-number") || !typedIn || typedIn === form.dataset.unitSystem || !block || String(raw).trim() === "") return raw;
  const value = parseNumber(String(raw));
  if (value === null) return raw;
  const shown = inPersonUnits(form, value, block.dataset.item, block.dataset.component || null, typedIn);
  // Two places more than the quantity is shown with: 180 Pa reads 0.7226 in. w.c., 14 °C reads 57.2 °F.
  const ctx = evaluationContext();
  const slot = ctx && ctx.slots.find((s) => s.item === block.dataset.item && (s.component || null) === (block.dataset.component || null));
  const places = slot && ctx.decimals && ctx.decimals[slot.quantity] ? ctx.decimals[slot.quantity][form.dataset.unitSystem === "us" ? 1 : 0] + 2 : 4;
  return String(Number(shown.toFixed(places)));
}

function blockOf(form, item, component) {
  for (const block of form.querySelectorAll("[data-item]")) {
    if (block.dataset.item === item && (block.dataset.component || null) === (component || null)) return block;
  }
  return null;
}

/** A number as the person types it now: the payload keeps typed numbers in its own unit system (collect()). */
function inPersonUnits(form, value, item, component, payloadSystem) {
  const system = form.dataset.unitSystem || "si";
  const ctx = evaluationContext();
  const slot = ctx && ctx.slots.find((s) => s.item === item && (s.component || null) === (component || null));
  if (!slot || !slot.quantity || !payloadSystem || payloadSystem === system || !ctx.units[slot.quantity]) return value;
  return toDisplay(ctx.units, fromDisplay(ctx.units, value, slot.quantity, payloadSystem), slot.quantity, system);
}

function putBackReading(form, reading, payloadSystem) {
  const block = blockOf(form, reading.item, reading.component);
  if (!block) return;
  const na = block.querySelector("input[name^='na:']");
  if (na) na.checked = reading.value === "na";
  if (reading.value !== "na") {
    if (block.dataset.kind === "number") {
      const input = block.querySelector("input[data-number]");
      const value = inPersonUnits(form, Number(reading.value), reading.item, reading.component, payloadSystem);
      if (input) input.value = String(value);
    } else if (block.dataset.kind === "text") {
      const area = block.querySelector("textarea");
      if (area) area.value = reading.value;
    } else {
      for (const radio of block.querySelectorAll("input[type=radio]")) radio.checked = radio.value === String(reading.value);
    }
  }
  const note = block.querySelector("input[name^='n:']");
  if (note) note.value = reading.note || "";
}

/** The server's errors beside the fields they are about (the rest stay in the list above the form). */
function showFieldErrors(form, item) {
  for (const old of form.querySelectorAll("[data-field-error]")) old.remove();
  const readings = (item.form && item.form.readings) || [];
  for (const [key, messages] of Object.entries(item.errors || {})) {
    const at = /^readings\[(\d+)\]/.exec(key);
    const reading = at ? readings[Number(at[1])] : null;
    const block = reading ? blockOf(form, reading.item, reading.component) : null;
    if (!block) continue;
    const p = el("p", { class: "errorlist", "data-field-error": "", role: "alert" }, [].concat(messages).join(" "));
    block.append(p);
  }
}

async function putBackRefused(form, item) {
  // Once per refused form on this page; and not over what was typed after the refusal (the draft is newer).
  if (form.dataset.restoredFrom !== item.client_uuid) {
    form.dataset.restoredFrom = item.client_uuid;
    const draft = await loadDraft(currentOwner(), form.dataset.workOrder);
    const typedSince = draft && item.tried_at && draft.saved_at > item.tried_at;
    if (!typedSince && item.form) {
      for (const reading of item.form.readings || []) putBackReading(form, reading, item.form.unit_system);
      if (item.form.signature && item.form.signature.name) form.elements.signature_name.value = item.form.signature.name;
      if (item.form.started_at) form.elements.started_at.value = item.form.started_at;
      form.dispatchEvent(new Event("change"));
    }
  }
  showFieldErrors(form, item);
}

async function showState(form) {
  const box = document.querySelector("[data-local-result]");
  const wo = form.dataset.workOrder;
  // Only the signed-in person's forms and results: another person's work on this phone stays out of sight.
  const pending = (await myOutbox()).filter((i) => i.form.work_order === wo);
  const results = (await myResults()).filter((r) => r.work_order === wo);
  results.sort((a, b) => (a.received_at < b.received_at ? 1 : -1));
  showDone(form, pending.length ? [] : results);
  hideStart(pending.some((i) => i.state !== "refused") || results.length > 0);
  if (pending.length) {
    const last = pending[pending.length - 1];
    renderPending(box, last);
    if (last.state === "refused") {
      form.dataset.clientUuid = last.client_uuid;
      await putBackRefused(form, last);
    }
  } else if (results.length) {
    const rendered = box.querySelector("[data-rendered=server]");
    if (!rendered || rendered.dataset.inspection !== String(results[0].inspection_id)) await renderResult(box, results[0]);
  }
}

export function startChecklist() {
  const form = document.querySelector("form[data-checklist]");
  form.dataset.clientUuid = newUuid();
  const error = form.querySelector("[data-form-error]");
  const ctx = evaluationContext();
  const problemsBox = el("div", { class: "card", "data-finish-problems": "", role: "alert", hidden: "" });
  form.querySelector("button[type=submit]").before(problemsBox);
  const judgeAll = (event) => {
    // A changed field no longer carries the server's refusal of its old value.
    const changed = event && event.target && event.target.closest ? event.target.closest("[data-item]") : null;
    if (changed) for (const old of changed.querySelectorAll("[data-field-error]")) old.remove();
    showVerdicts(form, ctx);
    // The list above the button follows what is typed once it is shown.
    if (!problemsBox.hidden) showProblems(form, problemsBox, finishProblems(form, ctx));
  };
  form.addEventListener("input", judgeAll);
  form.addEventListener("change", judgeAll);
  judgeAll();
  const progress = startFormNav(form);
  const owner = currentOwner();
  const keep = () => saveDraft(owner, form.dataset.workOrder, formFields(form), new Date(), form.dataset.unitSystem).catch(() => {});
  const keepSoon = debounce(keep, 300);
  let restored = false;
  form.addEventListener("input", () => { if (restored) keepSoon(); });
  form.addEventListener("change", () => { if (restored) { keepSoon(); keepSoon.flush(); } });
  window.addEventListener("pagehide", () => keepSoon.flush());
  const block = form.querySelector("[data-signature-block]");
  block.hidden = false;
  const pad = attachSignature(form.querySelector("canvas.signature"));
  form.querySelector("[data-signature-clear]").addEventListener("click", () => pad.clear());
  document.addEventListener("plenum:outbox", () => { if (restored) showState(form); });
  window.addEventListener("online", doneWhere);
  window.addEventListener("offline", doneWhere);
  (async () => {
    try {
      const draft = await loadDraft(owner, form.dataset.workOrder);
      if (draft) {
        restoreFields(form, draft.fields || [], draft.unit_system || null);
        judgeAll();
        progress();
      }
    } catch (err) { /* no draft store on this phone: the form starts empty */ }
    restored = true;
    form.dataset.draftReady = "";
    await showState(form);
  })();

  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    error.hidden = true;
    const acceptFlags = form.dataset.acceptFlags === "1";
    delete form.dataset.acceptFlags;
    const finishedAt = new Date(); // the form's finish time: judged by it here, sent as it, judged by it there
    const problems = finishProblems(form, ctx, finishedAt);
    if (acceptFlags) problems.flags = [];
    showProblems(form, problemsBox, problems);
    if (problems.refusals.length || problems.flags.length) {
      problemsBox.scrollIntoView({ block: "nearest" });
      return;
    }
    if (!form.elements.signature_name.value.trim() || pad.isEmpty()) {
      error.textContent = "Type your name and sign in the box before finishing.";
      error.hidden = false;
      return;
    }
    const button = form.querySelector("button[type=submit]");
    button.disabled = true;
    try {
      await keep();
      const payload = await collect(form, pad, finishedAt);
      await outboxPut({
        client_uuid: payload.client_uuid, owner: currentOwner(), state: "waiting", form: payload, saved_at: payload.finished_at,
      });
      form.dataset.clientUuid = newUuid();
      announce();
      await syncOutbox();
    } catch (err) {
      error.textContent = `Could not save the form on the phone: ${err.message || err}`;
      error.hidden = false;
    } finally {
      button.disabled = false;
    }
  });
}
