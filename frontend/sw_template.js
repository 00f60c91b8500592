/* Plenum service worker. Served from /sw.js so its scope is the whole app.
 *
 * A shared phone: the day's pages live in one data cache per person ("plenum-data-p-<key>", the key from the
 * page's data-person). Only what the page's offline list names is kept, the list of each day replaces the last
 * one, and another person's cache is dropped as soon as a page says who is signed in. Sign-out drops them all.
 * Finished forms are never here: they wait in the outbox (IndexedDB), which nothing in this file touches. */
const VERSION = __VERSION__;
const SHELL_CACHE = `plenum-shell-${VERSION}`;
// Pages and JSON of the day: kept across shell updates so an update never empties the day's work.
const DATA_PREFIX = "plenum-data-p-";
const PRECACHE = __PRECACHE__;
const STATIC_PREFIX = __STATIC_PREFIX__;
const OFFLINE_URL = __OFFLINE_URL__;
const START_URLS = __START_URLS__;
const TODAY_URL = __TODAY_URL__;
const SIGN_OUT_URL = __SIGN_OUT_URL__;

self.addEventListener("install", (event) => {
  event.waitUntil((async () => {
    const cache = await caches.open(SHELL_CACHE);
    await cache.addAll(PRECACHE);
    await self.skipWaiting();
  })());
});

self.addEventListener("activate", (event) => {
  event.waitUntil((async () => {
    // Older shells and the old shared data cache (one for everybody, never pruned) go; a person's day stays.
    const names = await caches.keys();
    const stale = names.filter((n) => n.startsWith("plenum-") && n !== SHELL_CACHE && !n.startsWith(DATA_PREFIX));
    await Promise.all(stale.map((n) => caches.delete(n)));
    await self.clients.claim();
  })());
});

// The data cache of the person signed in on this phone, if any page has said who that is.
async function dataCacheName() {
  return (await caches.keys()).find((n) => n.startsWith(DATA_PREFIX)) || null;
}

// Keep only this person's data cache ("" keeps none: nobody is signed in).
async function keepOnly(person) {
  const mine = person ? DATA_PREFIX + person : null;
  const names = (await caches.keys()).filter((n) => n.startsWith(DATA_PREFIX) && n !== mine);
  await Promise.all(names.map((n) => caches.delete(n)));
  return mine;
}

function cacheable(response) {
  return response && response.ok && response.type === "basic" && !response.redirected;
}

async function savedCopy(url) {
  const name = await dataCacheName();
  if (!name) return null;
  return (await (await caches.open(name)).match(url, { ignoreVary: true })) || null;
}

async function networkFirst(request) {
  try {
    const response = await fetch(request);
    // Refresh a page the offline list already saved; never add one it does not name.
    const name = await dataCacheName();
    if (name && cacheable(response)) {
      const cache = await caches.open(name);
      if (await cache.match(request, { ignoreVary: true })) await cache.put(request, response.clone());
    }
    return response;
  } catch (error) {
    const hit = await savedCopy(request);
    if (hit) return hit;
    if (request.mode === "navigate") {
      const offline = await caches.match(OFFLINE_URL);
      if (offline) return offline;
    }
    return new Response(JSON.stringify({ detail: "offline: no saved copy of this address" }), {
      status: 503, headers: { "Content-Type": "application/json" },
    });
  }
}

// The installed app's start: online the server answers; offline the person's saved day, else the offline page
// (which says to sign in once the phone has a connection).
async function start(request) {
  try {
    return await fetch(request);
  } catch (error) {
    return (await savedCopy(TODAY_URL)) || (await caches.match(OFFLINE_URL)) || Response.error();
  }
}

async function cacheFirst(request) {
  const hit = await caches.match(request, { ignoreSearch: true });
  if (hit) return hit;
  const response = await fetch(request);
  if (cacheable(response)) (await caches.open(SHELL_CACHE)).put(request, response.clone());
  return response;
}

self.addEventListener("fetch", (event) => {
  const request = event.request;
  const url = new URL(request.url);
  if (url.origin !== self.location.origin || url.pathname === "/sw.js") return;
  if (request.method === "POST" && url.pathname === SIGN_OUT_URL) {
    // Signing out, even if the page's script did not get to say so: nobody's pages stay behind.
    event.waitUntil(keepOnly(""));
    return;
  }
  if (request.method !== "GET") return;
  if (url.pathname.startsWith("/admin/") || url.pathname.startsWith("/login/")) return;
  if (request.mode === "navigate" && START_URLS.includes(url.pathname)) {
    event.respondWith(start(request));
    return;
  }
  event.respondWith(url.pathname.startsWith(STATIC_PREFIX) ? cacheFirst(request) : networkFirst(request));
});

async function saveForOffline(person, urls) {
  const name = await keepOnly(person);
  if (!name) return { saved: 0, failed: urls };
  const cache = await caches.open(name);
  let saved = 0;
  const failed = [];
  await Promise.all(urls.map(async (u) => {
    try {
      const response = await fetch(u, { credentials: "same-origin" });
      if (cacheable(response)) { await cache.put(u, response); saved += 1; } else failed.push(u);
    } catch (error) {
      failed.push(u);
    }
  }));
  // Pruned: what today's list no longer names (yesterday's visits) goes; a page that failed just now stays.
  const wanted = new Set(urls.map((u) => new URL(u, self.location.origin).href));
  const old = (await cache.keys()).filter((r) => !wanted.has(r.url));
  await Promise.all(old.map((r) => cache.delete(r)));
  return { saved, failed };
}

self.addEventListener("message", (event) => {
  const data = event.data || {};
  const port = event.ports && event.ports[0];
  const reply = (result) => port && port.postMessage(result);
  if (data.type === "save-for-offline") {
    event.waitUntil(saveForOffline(data.person || "", data.urls || []).then(reply));
  } else if (data.type === "person") {
    event.waitUntil(keepOnly(data.person || "").then(() => reply({ ok: true })));
  } else if (data.type === "sign-out") {
    event.waitUntil(keepOnly("").then(() => reply({ ok: true })));
  } else if (data.type === "version") {
    reply({ version: VERSION });
  }
});
