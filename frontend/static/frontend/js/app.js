// App start: service worker, the outbox bar, replay on start and on reconnect, page modules, sign-out.
// A shared phone: the bar counts only the signed-in person's forms; the worker keeps only their pages.
import { currentOwner, myMeta, myOutbox, syncOutbox } from "./sync.js";
import { countText, pageClock, timeText } from "./units.js";

// As the server writes times: on the clock the page ships (the site's, or where the person works), zone named.
function formatTime(iso) {
  return (iso && timeText(iso, pageClock())) || "never";
}

export async function renderOutbox() {
  const bar = document.getElementById("outbox-status");
  if (!bar) return;
  const items = await myOutbox();
  const refused = items.filter((i) => i.state === "refused").length;
  bar.querySelector("[data-outbox-count]").textContent = String(items.length);
  bar.querySelector("[data-outbox-last]").textContent = formatTime(await myMeta("last_sync"));
  bar.querySelector("[data-outbox-network]").textContent = navigator.onLine ? "Online" : "Offline";
  const error = (await myMeta("last_error")) || "";
  bar.querySelector("[data-outbox-error]").textContent =
    refused ? `${countText(refused, "form")} ${refused === 1 ? "needs" : "need"} fixing` + (error ? `; ${error}` : "") : error;
  // The one line: the network, and that something needs a look (its words in full are a tap away).
  const trouble = refused ? `${refused} to fix` : error ? "not sent yet" : "";
  bar.querySelector("[data-outbox-state]").textContent = ` · ${navigator.onLine ? "Online" : "Offline"}`;
  bar.querySelector("[data-outbox-trouble]").textContent = trouble ? ` · ${trouble}` : "";
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

// Ask the worker, but never wait on it for long (no worker yet, or one still starting).
async function tellWorker(message, ms = 3000) {
  if (!("serviceWorker" in navigator)) return null;
  const registration = await navigator.serviceWorker.getRegistration();
  if (!registration || !registration.active) return null;
  return Promise.race([askWorker(message), new Promise((resolve) => setTimeout(() => resolve(null), ms))]);
}

// Sign-out: try to send this person's finished forms first; if some cannot go, say so and let them choose.
// Forms left behind stay in the outbox under their owner and go the next time that person signs in here.
async function signOut(event) {
  const form = event.currentTarget;
  if (form.dataset.confirmed) return;
  event.preventDefault();
  let waiting = await myOutbox();
  if (waiting.length && navigator.onLine) {
    await syncOutbox({ includeRefused: true });
    waiting = await myOutbox();
  }
  if (waiting.length) {
    const refused = waiting.filter((i) => i.state === "refused").length;
    const ok = window.confirm(
      `${countText(waiting.length, "finished form")} of yours ${waiting.length === 1 ? "has" : "have"} not reached the server yet` +
      (refused ? ` (${refused} refused and need fixing)` : "") +
      ". They stay on this phone, hidden from anyone else, and are sent the next time you sign in here. " +
      "Sign out anyway? (Cancel to stay and send them.)");
    if (!ok) return;
  }
  await tellWorker({ type: "sign-out" });
  form.dataset.confirmed = "yes";
  form.submit();
}

async function saveDayForOffline() {
  const holder = document.getElementById("offline-urls");
  if (!holder || !("serviceWorker" in navigator) || !navigator.onLine) return;
  const urls = JSON.parse(holder.textContent);
  const result = await askWorker({ type: "save-for-offline", person: currentOwner(), urls });
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
    // Whoever is signed in now (or nobody): the worker drops any other person's saved pages. The offline page is
    // the same for everyone and says nothing of who is signed in (no data-person).
    if ("person" in document.body.dataset) await tellWorker({ type: "person", person: currentOwner() });
    await saveDayForOffline();
  } catch (error) {
    document.documentElement.dataset.sw = "failed";
    console.error("service worker:", error);
  }
}

// The page ends below the outbox bar whatever its height (it wraps to two or three lines on a phone), so it never
// covers the last field or "Finish and sign" (app.css pads the body by --outbox-height).
function keepClearOfOutbox() {
  const bar = document.getElementById("outbox-status");
  if (!bar || !("ResizeObserver" in window)) return;
  const measure = () => {
    const height = bar.hidden ? 0 : bar.getBoundingClientRect().height;
    document.documentElement.style.setProperty("--outbox-height", `${Math.ceil(height)}px`);
  };
  new ResizeObserver(measure).observe(bar);
  measure();
}

// A page form is sent once per tap: a second tap (or a double click) while the answer is on its way does not
// post it again (two report requests, two assignments). Forms run by a module (checklist, calculator, sign-out)
// are left to it. The buttons come back when the page is shown again from history, or after a while when the
// answer was a download that left the page where it was.
function sendOnce(event) {
  const form = event.target;
  if (form.dataset.sending) { event.preventDefault(); return; }
  form.dataset.sending = "1";
  const buttons = [...form.querySelectorAll("button[type=submit], button:not([type]), input[type=submit]")];
  // Disabled after this turn, so the tapped button's own name and value still go with the form.
  setTimeout(() => { for (const b of buttons) b.disabled = true; }, 0);
  setTimeout(() => { delete form.dataset.sending; for (const b of buttons) b.disabled = false; }, 8000);
}

function guardForms() {
  for (const form of document.querySelectorAll("form[method=post], form[method=POST]")) {
    if (form.matches("[data-checklist], [data-calc], [data-sign-out]")) continue;
    form.addEventListener("submit", sendOnce);
  }
  window.addEventListener("pageshow", (event) => {
    if (!event.persisted) return;
    for (const form of document.querySelectorAll("form[data-sending]")) {
      delete form.dataset.sending;
      for (const b of form.querySelectorAll("button, input[type=submit]")) b.disabled = false;
    }
  });
}

// "Start visit" needs the server: offline the button is hidden and a note says the form, once sent, marks the
// visit started and done (frontend/views/visit_start.py).
function startVisitWhenOnline() {
  const box = document.querySelector("[data-start-visit]");
  if (!box) return;
  const show = () => {
    box.querySelector("[data-start-online]").hidden = !navigator.onLine;
    box.querySelector("[data-start-offline]").hidden = navigator.onLine;
  };
  window.addEventListener("online", show);
  window.addEventListener("offline", show);
  show();
}

async function start() {
  keepClearOfOutbox();
  startVisitWhenOnline();
  guardForms();
  document.addEventListener("plenum:outbox", renderOutbox);
  window.addEventListener("online", () => { renderOutbox(); syncOutbox(); });
  window.addEventListener("offline", renderOutbox);
  const toggle = document.querySelector("[data-outbox-toggle]");
  if (toggle) toggle.addEventListener("click", () => {
    const details = document.querySelector("[data-outbox-details]");
    details.hidden = !details.hidden;
    toggle.setAttribute("aria-expanded", String(!details.hidden));
  });
  const button = document.querySelector("[data-outbox-sync]");
  if (button) button.addEventListener("click", () => syncOutbox({ includeRefused: true }));
  for (const form of document.querySelectorAll("form[data-sign-out]")) form.addEventListener("submit", signOut);
  await renderOutbox();
  if (document.querySelector("form[data-checklist]")) (await import("./checklist.js")).startChecklist();
  if (document.querySelector("form[data-calc]")) (await import("./calculator.js")).startCalculator();
  if (document.body.dataset.syncUrl) await syncOutbox();
  await registerWorker();
  document.documentElement.dataset.app = "ready";
}

start();
