// A tiny promise wrapper over IndexedDB: the outbox of finished forms, their server results, a few settings,
// and the drafts of forms being typed (drafts.js: one per person and work order).
const DB_NAME = "plenum";
const DB_VERSION = 2;
let dbPromise = null;

function openDb() {
  if (!dbPromise) {
    dbPromise = new Promise((resolve, reject) => {
      const request = indexedDB.open(DB_NAME, DB_VERSION);
      request.onupgradeneeded = () => {
        const db = request.result;
        if (!db.objectStoreNames.contains("outbox")) db.createObjectStore("outbox", { keyPath: "client_uuid" });
        if (!db.objectStoreNames.contains("results")) db.createObjectStore("results", { keyPath: "client_uuid" });
        if (!db.objectStoreNames.contains("meta")) db.createObjectStore("meta");
        if (!db.objectStoreNames.contains("drafts")) db.createObjectStore("drafts", { keyPath: "key" });
      };
      request.onsuccess = () => resolve(request.result);
      request.onerror = () => reject(request.error);
    });
  }
  return dbPromise;
}

async function run(store, mode, action) {
  const db = await openDb();
  return new Promise((resolve, reject) => {
    const tx = db.transaction(store, mode);
    const request = action(tx.objectStore(store));
    tx.oncomplete = () => resolve(request ? request.result : undefined);
    tx.onerror = () => reject(tx.error);
    tx.onabort = () => reject(tx.error);
  });
}

export const outboxPut = (form) => run("outbox", "readwrite", (s) => s.put(form));
export const outboxAll = () => run("outbox", "readonly", (s) => s.getAll());
export const outboxGet = (uuid) => run("outbox", "readonly", (s) => s.get(uuid));
export const outboxDelete = (uuid) => run("outbox", "readwrite", (s) => s.delete(uuid));
export const resultPut = (result) => run("results", "readwrite", (s) => s.put(result));
export const resultAll = () => run("results", "readonly", (s) => s.getAll());
export const metaGet = (key) => run("meta", "readonly", (s) => s.get(key));
export const metaSet = (key, value) => run("meta", "readwrite", (s) => s.put(value, key));
export const draftPut = (draft) => run("drafts", "readwrite", (s) => s.put(draft));
export const draftGet = (key) => run("drafts", "readonly", (s) => s.get(key));
export const draftDelete = (key) => run("drafts", "readwrite", (s) => s.delete(key));

export function newUuid() {
  if (self.crypto && crypto.randomUUID) return crypto.randomUUID();
  const b = crypto.getRandomValues(new Uint8Array(16));
  b[6] = (b[6] & 0x0f) | 0x40;
  b[8] = (b[8] & 0x3f) | 0x80;
  const h = [...b].map((x) => x.toString(16).padStart(2, "0")).join("");
  return `${h.slice(0, 8)}-${h.slice(8, 12)}-${h.slice(12, 16)}-${h.slice(16, 20)}-${h.slice(20)}`;
}
