// What the phone checks on "Finish and sign" before a form goes into the outbox: the flags the server would
// raise from the form alone (inspections/flags.py FORM_FLAGS, shipped with their words and each item's
// required / note / photo rules in the checklist document as form_flags and form_slots).
// Pure: no DOM, no network. tests/inspections/test_form_flags.py fails when the server names a flag here missing.

const KEY = (item, component) => `${item}|${component || ""}`;

/**
 * One checker per flag code of the server's FORM_FLAGS: (ctx, answers) -> [{code, key, text}].
 * ``answers`` maps a slot key ("item|component") to {answered, verdict, note, photographed}.
 */
export const FORM_FLAG_CHECKS = {
  incomplete(ctx, answers) {
    const missing = ctx.form_slots.filter((s) => {
      const a = answers.get(KEY(s.item, s.component)) || {};
      return s.required && !(s.kind === "photo" ? a.photographed : a.answered);
    });
    if (!missing.length) return [];
    const named = ctx.form_flags_named || 10;
    const more = missing.length > named ? ` and ${missing.length - named} more` : "";
    const items = missing.slice(0, named).map((s) => s.place).join("; ") + more;
    // The server's one line, with each named item a link to its field.
    return [{
      code: "incomplete", key: KEY(missing[0].item, missing[0].component),
      text: ctx.form_flags.incomplete.replace("{items}", items),
      lead: ctx.form_flags.incomplete.split("{items}")[0],
      more,
      keys: missing.slice(0, named).map((s) => ({ key: KEY(s.item, s.component), label: s.place })),
    }];
  },
  missing_photo(ctx, answers) {
    return perItem(ctx, answers, "missing_photo", (s, a) => s.photo_required_when_not_ok && !a.photographed);
  },
  missing_note(ctx, answers) {
    return perItem(ctx, answers, "missing_note", (s, a) => !(a.note || "").trim());
  },
};

function perItem(ctx, answers, code, lacks) {
  const out = [];
  for (const s of ctx.form_slots) {
    const key = KEY(s.item, s.component);
    const a = answers.get(key);
    if (!a || a.verdict !== "fail" || !lacks(s, a)) continue;
    out.push({ code, key, text: ctx.form_flags[code].replace("{label}", s.label) });
  }
  return out;
}

/** The flags the server would raise on this form, in the server's order and words. */
export function formFlags(ctx, answers) {
  if (!ctx || !ctx.form_flags || !ctx.form_slots) return [];
  const problems = [];
  for (const code of Object.keys(ctx.form_flags)) {
    const check = FORM_FLAG_CHECKS[code];
    // A rule the server ships that this phone does not know: say so rather than pass silently.
    if (!check) problems.push({ code, key: null, text: `the server checks a rule this phone does not know (${ctx.form_flags[code].replace(/\{\w+\}/g, "…")}); open the page with a connection to update it` });
    else problems.push(...check(ctx, answers));
  }
  return problems;
}
