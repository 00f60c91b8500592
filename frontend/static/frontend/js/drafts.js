// Drafts: what a technician has typed on a checklist, kept on the phone as it is typed, so nothing is lost
// by leaving the page, going offline, or a form the server refused. One draft per person and work order:
// the key carries the owner (the page's data-person key, as outbox entries do), and a draft is only ever
// read back for the same owner, so on a shared phone nobody sees another person's draft.
import { draftDelete, draftGet, draftPut } from "./outbox.js";

export const draftKey = (owner, workOrder) => `${owner}|${workOrder}`;

/** Keep the fields (a list of [name, value-or-checked]) of ``owner``'s form for ``workOrder``, with the unit
 * system the numbers were typed in (a person who switches units gets them back converted). */
export async function saveDraft(owner, workOrder, fields, now = new Date(), unitSystem = null) {
  if (!owner || !workOrder) return;
  await draftPut({
    key: draftKey(owner, workOrder), owner, work_order: workOrder, fields, saved_at: now.toISOString(), unit_system: unitSystem,
  });
}

/** ``owner``'s draft for ``workOrder``, or null (never another person's). */
export async function loadDraft(owner, workOrder) {
  if (!owner || !workOrder) return null;
  const draft = await draftGet(draftKey(owner, workOrder));
  return draft && draft.owner === owner && draft.work_order === workOrder ? draft : null;
}

export async function dropDraft(owner, workOrder) {
  if (!owner || !workOrder) return;
  await draftDelete(draftKey(owner, workOrder));
}

/** ``action`` once typing has paused for ``wait`` ms; ``.flush()`` runs a pending call now. */
export function debounce(action, wait = 400) {
  let timer = null;
  let pending = null;
  const run = () => {
    timer = null;
    const args = pending;
    pending = null;
    return args ? action(...args) : undefined;
  };
  const debounced = (...args) => {
    pending = args;
    if (timer) clearTimeout(timer);
    timer = setTimeout(run, wait);
  };
  debounced.flush = () => {
    if (timer) clearTimeout(timer);
    return run();
  };
  return debounced;
}
