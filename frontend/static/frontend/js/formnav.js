// Moving through a long checklist: how much is answered (the whole form and each section, in the section list at
// the top), and "All pass" for a section's OK / Not OK items: every one not yet answered is marked OK, answers
// already given (the exceptions) stay, and "Undo all pass" takes back exactly what it marked.

import { parseNumber } from "./numbers.js";

const ANSWERED_KINDS = new Set(["number", "check", "choice"]);

function answered(block) {
  const na = block.querySelector("input[name^='na:']");
  if (na && na.checked) return true;
  if (block.dataset.kind === "number") {
    const input = block.querySelector("input[data-number]");
    // Text that is no number ("12,5a") is not an answer yet: the form says so at the field.
    return Boolean(input && parseNumber(input.value) !== null);
  }
  return Boolean(block.querySelector("input[type=radio]:checked"));
}

function askable(section) {
  return [...section.querySelectorAll("[data-item]")].filter((b) => ANSWERED_KINDS.has(b.dataset.kind));
}

/** Answered / total of the form and of each section, written into the section list. */
export function showProgress(form) {
  let done = 0;
  let total = 0;
  for (const section of form.querySelectorAll("fieldset[data-section]")) {
    const blocks = askable(section);
    const mine = blocks.filter(answered).length;
    done += mine;
    total += blocks.length;
    const count = form.querySelector(`[data-section-count="${section.dataset.section}"]`);
    if (count && count.textContent !== `${mine}/${blocks.length}`) {
      count.textContent = `${mine}/${blocks.length}`;
      count.classList.toggle("complete", blocks.length > 0 && mine === blocks.length);
    }
  }
  const progress = form.querySelector("[data-progress]");
  if (!progress) return { done, total };
  const complete = total > 0 && done === total;
  progress.dataset.complete = String(complete);
  const words = complete ? `All ${total}` : `${done} of ${total}`;
  // Written only when it changes: the line is a polite status, read out once per new answer, not per keystroke.
  const count = progress.querySelector("[data-progress-count]");
  if (count.textContent !== words) count.textContent = words;
  return { done, total };
}

function changed(form) {
  // As if typed: the verdicts, the progress and the draft follow (checklist.js listens on the form).
  form.dispatchEvent(new Event("change", { bubbles: true }));
}

function attachAllPass(form, section) {
  const button = section.querySelector("button[data-all-pass]");
  const undo = section.querySelector("button[data-all-pass-undo]");
  if (!button || !undo) return;
  let marked = [];
  button.addEventListener("click", () => {
    marked = [];
    for (const block of section.querySelectorAll("[data-item][data-kind='check']")) {
      if (answered(block)) continue;
      const ok = block.querySelector("input[type=radio][value='ok']");
      if (!ok) continue;
      ok.checked = true;
      marked.push(ok);
    }
    undo.hidden = marked.length === 0;
    changed(form);
    if (marked.length) undo.focus();
  });
  undo.addEventListener("click", () => {
    // Only what "All pass" marked and is still OK: an answer changed since is the person's own.
    for (const ok of marked) if (ok.checked) ok.checked = false;
    marked = [];
    undo.hidden = true;
    changed(form);
    button.focus();
  });
  // Typing into the section after "All pass" keeps the undo; a fresh "All pass" starts a new one.
}

export function startFormNav(form) {
  for (const section of form.querySelectorAll("fieldset[data-section]")) attachAllPass(form, section);
  const update = () => showProgress(form);
  form.addEventListener("input", update);
  form.addEventListener("change", update);
  update();
  return update;
}
