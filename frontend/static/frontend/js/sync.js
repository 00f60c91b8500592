// Replays the outbox to the sync API. The server stores each client UUID once, so a retry is harmless.
// Form by form (inspections/SYNC.md): the server answers one result per form; a refused form stays here with its
// errors for the technician to fix, and never holds back the forms after it. The phone sends its own clock
// ("sent_at") so the server can place the visit on its timeline when the phone's clock is off.
// A shared phone: every form and result carries its owner (the page's data-person key); only the person signed in
// now sees and sends their own, so a form is only ever sent under the session of the person who signed it.
import { dropDraft } from "./drafts.js";
import { metaGet, metaSet, outboxAll, outboxDelete, outboxPut, resultAll, resultPut } from "./outbox.js";

const BATCH = 50;
let running = null;

// A sync that could not reach the server (signal back before the network is, the server restarting, a 503) is
// tried again by itself while the phone is online: after 5 s, then twice as long each time, at most every 2 min.
// Nothing waits on the technician noticing; the "online" event and "Sync now" still send at once.
export const RETRY_FIRST_MS = 5000;
export const RETRY_MAX_MS = 120000;
let retryTimer = null;
let retryDelay = 0;

class SessionChanged extends Error {}

function retryLater() {
  if (retryTimer) return;
  retryDelay = retryDelay ? Math.min(retryDelay * 2, RETRY_MAX_MS) : RETRY_FIRST_MS;
  retryTimer = setTimeout(() => { retryTimer = null; syncOutbox(); }, retryDelay);
}

function retryDone() {
  if (retryTimer) clearTimeout(retryTimer);
  retryTimer = null;
  retryDelay = 0;
}

function csrfToken() {
  const match = document.cookie.match(/(?:^|;\s*)csrftoken=([^;]+)/);
  return match ? decodeURIComponent(match[1]) : "";
}

// Whose forms these pages may show and send: the signed-in person's key ("" when nobody is signed in).
export function currentOwner() {
  return (document.body && document.body.dataset.person) || "";
}

// The signed-in person's forms. A form saved before forms carried an owner goes to the first person who signs in.
export async function myOutbox() {
  const owner = currentOwner();
  if (!owner) return [];
  const mine = [];
  for (const item of await outboxAll()) {
    if (!item.owner) { const adopted = { ...item, owner }; await outboxPut(adopted); mine.push(adopted); }
    else if (item.owner === owner) mine.push(item);
  }
  return mine;
}

export async function myResults() {
  const owner = currentOwner();
  return owner ? (await resultAll()).filter((r) => r.owner === owner) : [];
}

// The last sync's time and trouble, kept per person.
export const myMeta = (key) => metaGet(`${key}:${currentOwner()}`);
const setMyMeta = (key, value) => metaSet(`${key}:${currentOwner()}`, value);

export function announce() {
  document.dispatchEvent(new CustomEvent("plenum:outbox"));
}

// Answers about the body as a whole (not readable, too big): the server judged no form of it.
const BODY_REFUSED = [400, 413];

async function postBatch(url, items) {
  const forms = items.map((item) => item.form);
  const response = await fetch(url, {
    method: "POST",
    credentials: "same-origin",
    headers: { "Content-Type": "application/json", "X-CSRFToken": csrfToken(), Accept: "application/json" },
    body: JSON.stringify({ sent_at: new Date().toISOString(), forms }),
  });
  let body = null;
  try { body = await response.json(); } catch (error) { /* body was not JSON */ }
  return { ok: response.ok, status: response.status, statusText: response.statusText, body: body || {} };
}

function refusalOf(answer) {
  // The server's error shape {detail, errors}: keep its field errors, else its sentence.
  const errors = answer.body.errors && Object.keys(answer.body.errors).length ? answer.body.errors : null;
  return { status: "refused", errors: errors || { form: [answer.body.detail || `refused (${answer.status})`] } };
}

// Send some forms; a body refused whole is split so one bad form never holds back the others.
async function send(url, items) {
  const answer = await postBatch(url, items);
  if (answer.ok) {
    const byUuid = new Map((answer.body.results || []).filter(Boolean).map((r) => [r.client_uuid, r]));
    let sent = 0;
    for (const item of items) {
      const result = byUuid.get(item.client_uuid);
      if (result) { await apply(item, result); sent += 1; }
    }
    return sent;
  }
  if (BODY_REFUSED.includes(answer.status)) {
    if (items.length > 1) {
      let sent = 0;
      for (const item of items) sent += await send(url, [item]);
      return sent;
    }
    await apply(items[0], { client_uuid: items[0].client_uuid, ...refusalOf(answer) });
    return 1;
  }
  // Signed out, the server or the database unavailable: keep every form and try again later.
  throw new Error(`sync refused: ${answer.body.detail || `${answer.status} ${answer.statusText}`}`);
}

// Only these answers say the server holds the form (inspections/SYNC.md); any other answer keeps it.
export const KEPT_BY_SERVER = ["stored", "flagged", "duplicate"];

export async function apply(item, result) {
  if (result.status === "refused") {
    // Nothing was saved: keep the form, show why, resend later with the same client UUID.
    await outboxPut({ ...item, state: "refused", errors: result.errors || {}, tried_at: new Date().toISOString() });
    return false;
  }
  if (!KEPT_BY_SERVER.includes(result.status)) {
    // An answer this phone does not know (or a per-form server error): keep the form and send it again later.
    await outboxPut({ ...item, state: "waiting", tried_at: new Date().toISOString() });
    return false;
  }
  await resultPut({ ...result, owner: item.owner, work_order: item.form.work_order, received_at: new Date().toISOString() });
  await outboxDelete(item.client_uuid);
  // The server holds the form: its draft (kept while typing, drafts.js) has done its work.
  await dropDraft(item.owner, item.form.work_order);
  return true;
}

// The session must still be the page's person: another window may have signed out and someone else in since this
// page loaded. Then nothing is sent; the forms wait for their owner.
async function checkSession() {
  const url = document.body.dataset.personUrl || "/person/";
  const response = await fetch(url, { credentials: "same-origin", cache: "no-store", headers: { Accept: "application/json" } });
  let body = {};
  try { body = await response.json(); } catch (error) { /* not JSON */ }
  // No answer from the server (its 5xx, or the worker's "offline" 503): not a question of who is signed in.
  if (response.status >= 500) throw new Error(`the server could not be reached (${body.detail || response.status})`);
  if (!response.ok || body.person !== currentOwner()) {
    throw new SessionChanged("someone else is signed in on this phone now; reload the page (your forms stay here until you sign in again)");
  }
}

async function replay(url) {
  await checkSession();
  const pending = (await myOutbox()).filter((item) => item.state !== "refused");
  let sent = 0;
  for (let i = 0; i < pending.length; i += BATCH) sent += await send(url, pending.slice(i, i + BATCH));
  await setMyMeta("last_sync", new Date().toISOString());
  await setMyMeta("last_error", "");
  return sent;
}

export async function syncOutbox({ url = document.body.dataset.syncUrl, includeRefused = false } = {}) {
  if (!url || !navigator.onLine || !currentOwner()) return 0;
  if (running) return running;
  running = (async () => {
    try {
      if (includeRefused) {
        for (const item of await myOutbox()) if (item.state === "refused") await outboxPut({ ...item, state: "waiting" });
      }
      const sent = await replay(url);
      retryDone();
      return sent;
    } catch (error) {
      const retries = !(error instanceof SessionChanged) && (await myOutbox()).some((i) => i.state !== "refused");
      const words = String(error.message || error);
      await setMyMeta("last_error", retries ? `${words}; the phone tries again by itself` : words);
      // Another person signed in: only a reload helps, so no retry; any other trouble is tried again later.
      if (retries) retryLater();
      return 0;
    } finally {
      running = null;
      announce();
    }
  })();
  return running;
}
