/* Plenum service worker. Served from /sw.js so its scope is the whole app. */
const VERSION = __VERSION__;
const SHELL_CACHE = `plenum-shell-${VERSION}`;
// Pages and JSON of the day: kept across shell updates so an update never empties the day's work.
const DATA_CACHE = "plenum-data-1";
const PRECACHE = __PRECACHE__;
const STATIC_PREFIX = __STATIC_PREFIX__;
const OFFLINE_URL = __OFFLINE_URL__;

self.addEventListener("install", (event) => {
  event.waitUntil((async () => {
    const cache = await caches.open(SHELL_CACHE);
    await cache.addAll(PRECACHE);
    await self.skipWaiting();
  })());
});

self.addEventListener("activate", (event) => {
  event.waitUntil((async () => {
    const keep = new Set([SHELL_CACHE, DATA_CACHE]);
    const names = await caches.keys();
    await Promise.all(names.filter((n) => n.startsWith("plenum-") && !keep.has(n)).map((n) => caches.delete(n)));
    await self.clients.claim();
  })());
});

function cacheable(response) {
  return response && response.ok && response.type === "basic" && !response.redirected;
}

async function networkFirst(request) {
  const cache = await caches.open(DATA_CACHE);
  try {
    const response = await fetch(request);
    if (cacheable(response)) await cache.put(request, response.clone());
    return response;
  } catch (error) {
    const hit = await cache.match(request, { ignoreVary: true });
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

async function cacheFirst(request) {
  const hit = await caches.match(request, { ignoreSearch: true });
  if (hit) return hit;
  const response = await fetch(request);
  if (cacheable(response)) (await caches.open(SHELL_CACHE)).put(request, response.clone());
  return response;
}

self.addEventListener("fetch", (event) => {
  const request = event.request;
  if (request.method !== "GET") return;
  const url = new URL(request.url);
  if (url.origin !== self.location.origin || url.pathname === "/sw.js") return;
  if (url.pathname.startsWith("/admin/") || url.pathname.startsWith("/login/")) return;
  event.respondWith(url.pathname.startsWith(STATIC_PREFIX) ? cacheFirst(request) : networkFirst(request));
});

async function saveForOffline(urls) {
  const cache = await caches.open(DATA_CACHE);
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
  return { saved, failed };
}

self.addEventListener("message", (event) => {
  const data = event.data || {};
  const port = event.ports && event.ports[0];
  if (data.type === "save-for-offline") {
    event.waitUntil(saveForOffline(data.urls || []).then((result) => port && port.postMessage(result)));
  } else if (data.type === "version") {
    if (port) port.postMessage({ version: VERSION });
  }
});
