// Replays the outbox to the sync API. The server stores each client UUID once, so a retry is harmless.
import { metaSet, outboxAll, outboxDelete, outboxPut, resultPut } from "./outbox.js";

const BATCH = 50;
let running = null;

function csrfToken() {
  const match = document.cookie.match(/(?:^|;\s*)csrftoken=([^;]+)/);
  return match ? decodeURIComponent(match[1]) : "";
}

export function announce() {
  document.dispatchEvent(new CustomEvent("plenum:outbox"));
}

async function postBatch(url, items) {
  const forms = items.map((item) => item.form);
  const response = await fetch(url, {
    method: "POST",
    credentials: "same-origin",
    headers: { "Content-Type": "application/json", "X-CSRFToken": csrfToken(), Accept: "application/json" },
    body: JSON.stringify({ forms }),
  });
  if (!response.ok) {
    let detail = `${response.status} ${response.statusText}`;
    try { detail = (await response.json()).detail || detail; } catch (error) { /* body was not JSON */ }
    throw new Error(`sync refused: ${detail}`);
  }
  return (await response.json()).results || [];
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
  await resultPut({ ...result, work_order: item.form.work_order, received_at: new Date().toISOString() });
  await outboxDelete(item.client_uuid);
  return true;
}

async function replay(url) {
  const pending = (await outboxAll()).filter((item) => item.state !== "refused");
  let sent = 0;
  for (let i = 0; i < pending.length; i += BATCH) {
    const items = pending.slice(i, i + BATCH);
    const results = await postBatch(url, items);
    const byUuid = new Map(results.map((r) => [r.client_uuid, r]));
    for (const item of items) {
      const result = byUuid.get(item.client_uuid);
      if (result) { await apply(item, result); sent += 1; }
    }
  }
  await metaSet("last_sync", new Date().toISOString());
  await metaSet("last_error", "");
  return sent;
}

export async function syncOutbox({ url = document.body.dataset.syncUrl, includeRefused = false } = {}) {
  if (!url || !navigator.onLine) return 0;
  if (running) return running;
  running = (async () => {
    try {
      if (includeRefused) {
        for (const item of await outboxAll()) if (item.state === "refused") await outboxPut({ ...item, state: "waiting" });
      }
      return await replay(url);
    } catch (error) {
      await metaSet("last_error", String(error.message || error));
      return 0;
    } finally {
      running = null;
      announce();
    }
  })();
  return running;
}
