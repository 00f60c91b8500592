// App start: service worker, the outbox bar, replay on start and on reconnect, page modules.
import { metaGet, outboxAll } from "./outbox.js";
import { syncOutbox } from "./sync.js";

function formatTime(iso) {
  if (!iso) return "never";
  const d = new Date(iso);
  return d.toLocaleString(undefined, { dateStyle: "short", timeStyle: "short" });
}

export async function renderOutbox() {
  const bar = document.getElementById("outbox-status");
  if (!bar) return;
  const items = await outboxAll();
  const refused = items.filter((i) => i.state === "refused").length;
  bar.querySelector("[data-outbox-count]").textContent = String(items.length);
  bar.querySelector("[data-outbox-last]").textContent = formatTime(await metaGet("last_sync"));
  bar.querySelector("[data-outbox-network]").textContent = navigator.onLine ? "Online" : "Offline";
  const error = (await metaGet("last_error")) || "";
  bar.querySelector("[data-outbox-error]").textContent =
    refused ? `${refused} form(s) need fixing` + (error ? `; ${error}` : "") : error;
  bar.dataset.count = String(items.length);
  if ("outboxOptional" in bar.dataset) {
    // Not a technician: the bar is only in the way unless a form of theirs is waiting.
    bar.hidden = items.length === 0;
    document.body.classList.toggle("no-outbox", bar.hidden);
  }
}

function askWorker(message) {
  return navigator.serviceWorker.ready.then((registration) => new Promise((resolve) => {
    const channel = new MessageChannel();
    channel.port1.onmessage = (event) => resolve(event.data);
    registration.active.postMessage(message, [channel.port2]);
  }));
}

async function saveDayForOffline() {
  const holder = document.getElementById("offline-urls");
  if (!holder || !("serviceWorker" in navigator) || !navigator.onLine) return;
  const urls = JSON.parse(holder.textContent);
  const result = await askWorker({ type: "save-for-offline", urls });
  document.documentElement.dataset.offlineSaved = String(result.saved);
  const note = document.querySelector("[data-offline-note]");
  if (note) {
    note.textContent = result.failed.length
      ? `Saved ${result.saved} pages for offline use; ${result.failed.length} could not be saved.`
      : `Saved today's ${result.saved} pages and checklists for offline use.`;
  }
}

async function registerWorker() {
  if (!("serviceWorker" in navigator)) return;
  try {
    await navigator.serviceWorker.register(document.body.dataset.swUrl || "/sw.js", { scope: "/" });
    await navigator.serviceWorker.ready;
    document.documentElement.dataset.sw = "ready";
    await saveDayForOffline();
  } catch (error) {
    document.documentElement.dataset.sw = "failed";
    console.error("service worker:", error);
  }
}

async function start() {
  document.addEventListener("plenum:outbox", renderOutbox);
  window.addEventListener("online", () => { renderOutbox(); syncOutbox(); });
  window.addEventListener("offline", renderOutbox);
  const button = document.querySelector("[data-outbox-sync]");
  if (button) button.addEventListener("click", () => syncOutbox({ includeRefused: true }));
  await renderOutbox();
  if (document.querySelector("form[data-checklist]")) (await import("./checklist.js")).startChecklist();
  if (document.querySelector("form[data-calc]")) (await import("./calculator.js")).startCalculator();
  if (document.body.dataset.syncUrl) await syncOutbox();
  await registerWorker();
  document.documentElement.dataset.app = "ready";
}

start();
