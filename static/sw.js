/* Rondo's service worker (served at /sw.js by webapp/pwa.py, scope "/").
   - rondo-shell-<version>: the four screens, CSS, JS, icons, manifest and map assets, fetched at
     install. Assets answer from it first; screens ask the laptop first and keep the last copy.
   - rondo-data-v1: the last good answer of each read the page needs offline (settings, client
     book, day plans, drives) and of other documents such as the day's map; kept across versions.
   - rondo-tiles-v1: map tiles the rep actually looked at, at most CONFIG.tileCap of them, least
     recently used dropped first. Tiles are never fetched ahead of being viewed.
   Writes (anything but GET), exports, solve jobs and stored solves are never cached. */
"use strict";

const CONFIG = {"filled": "by webapp/pwa.py"};
const SHELL_CACHE = `rondo-shell-${CONFIG.version}`;
const DATA_CACHE = "rondo-data-v1";
const TILE_CACHE = "rondo-tiles-v1";
const KEEP = new Set([SHELL_CACHE, DATA_CACHE, TILE_CACHE]);
// How long a read waits for the laptop before the phone's copy is shown (common practice, no
// source); the laptop's late answer still refreshes the copy.
const NETWORK_WAIT_MS = 4000;
const SAVED_AT = "X-Rondo-Copy-Saved-At";
const TILE_FRESH_MS = 7 * 24 * 3600 * 1000;
const SOURCE = "X-Rondo-Source";

const DATA_PATHS = [/^\/api\/settings$/, /^\/api\/clients$/, /^\/api\/clients\/\d+$/,
  /^\/api\/days$/, /^\/api\/days\/\d{4}-\d{2}-\d{2}$/, /^\/api\/drives$/];
const TILE_PATH = /^\/tiles\/\d+\/\d+\/\d+\.png$/;
const SCREENS = new Set(CONFIG.screens);
const SHELL = new Set(CONFIG.shell);

self.addEventListener("install", (event) => {
  event.waitUntil((async () => {
    const cache = await caches.open(SHELL_CACHE);
    // "reload": the files as the laptop has them now, not an older copy from the HTTP cache.
    // One file the laptop cannot serve does not stop the rest; it is fetched when first used.
    await Promise.allSettled(CONFIG.shell.map(async (url) => {
      const response = await fetch(new Request(url, { cache: "reload" }));
      if (keepable(response)) await cache.put(url, response);
    }));
    await self.skipWaiting();
  })());
});

self.addEventListener("activate", (event) => {
  event.waitUntil((async () => {
    for (const name of await caches.keys()) {
      if (name.startsWith("rondo-") && !KEEP.has(name)) await caches.delete(name);
    }
    await self.clients.claim();
  })());
});

self.addEventListener("fetch", (event) => {
  const request = event.request;
  if (request.method !== "GET") return; // writes always go straight to the laptop
  const url = new URL(request.url);
  if (url.origin !== self.location.origin) return;
  if (TILE_PATH.test(url.pathname)) {
    event.respondWith(tile(event, request));
  } else if (isData(url)) {
    event.respondWith(read(event, request, url));
  } else if (request.mode === "navigate" && !url.pathname.startsWith("/api/")) {
    event.respondWith(page(event, request, url));
  } else if (SHELL.has(url.pathname + url.search) || /^\/(static|vendor)\//.test(url.pathname)) {
    event.respondWith(asset(request));
  }
  // Anything else (exports, solve jobs, stored solves, the API description) is not touched.
});

self.addEventListener("message", (event) => {
  const message = event.data || {};
  if (message.type === "remember" && typeof message.path === "string") {
    event.waitUntil(remember(message.path, message.body));
  } else if (message.type === "warm" && Array.isArray(message.urls)) {
    event.waitUntil(warm(message.urls).then(() => {
      if (event.source) event.source.postMessage({ type: "warmed" });
    }));
  }
});

function isData(url) {
  return DATA_PATHS.some((pattern) => pattern.test(url.pathname));
}

/* A response worth keeping: a whole 200 from the laptop, not a download, not "no-store". */
function keepable(response) {
  return response.ok && response.status === 200 && response.type === "basic"
    && !/attachment/i.test(response.headers.get("Content-Disposition") || "")
    && !/no-store/i.test(response.headers.get("Cache-Control") || "");
}

async function stamped(response) {
  const headers = new Headers(response.headers);
  headers.set(SAVED_AT, new Date().toISOString());
  return new Response(await response.blob(), { status: response.status,
    statusText: response.statusText, headers });
}

function marked(copy) {
  const headers = new Headers(copy.headers);
  headers.set(SOURCE, "phone-copy");
  return new Response(copy.body, { status: copy.status, statusText: copy.statusText, headers });
}

/* The laptop's answer; `store` keeps a good one even when it arrives after the wait. */
function fromNetwork(event, request, store) {
  const answer = fetch(request).then(async (response) => {
    if (keepable(response)) await store(response.clone());
    return response;
  });
  event.waitUntil(answer.catch(() => null));
  return answer;
}

function within(promise, ms) {
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error("the laptop is slow to answer")), ms);
    promise.then((value) => { clearTimeout(timer); resolve(value); },
      (error) => { clearTimeout(timer); reject(error); });
  });
}

/* Network first: the laptop is the authority; its last good answer stands in while away. */
async function read(event, request, url) {
  const cache = await caches.open(DATA_CACHE);
  // Searches are answered offline from the whole book instead of being kept one by one.
  const storable = !url.searchParams.has("q");
  const answer = fromNetwork(event, request, async (response) => {
    if (storable) await cache.put(request, await stamped(response));
  });
  try {
    return await within(answer, NETWORK_WAIT_MS);
  } catch (error) {
    const copy = (await cache.match(request)) || (await searchCopy(cache, url));
    if (copy) return marked(copy);
    return answer;
  }
}

/* /api/clients?q=... offline: the saved book filtered the way the laptop filters it. */
async function searchCopy(cache, url) {
  if (url.pathname !== "/api/clients" || !url.searchParams.has("q")) return null;
  const whole = new URL(url);
  whole.searchParams.delete("q");
  const copy = (await cache.match(whole.href)) || (await cache.match(`${url.origin}/api/clients`));
  if (!copy) return null;
  const needle = url.searchParams.get("q").toLowerCase();
  const active = url.searchParams.get("active");
  const rows = (await copy.clone().json()).filter((c) =>
    (c.name.toLowerCase().includes(needle) || c.notes.toLowerCase().includes(needle))
    && (active === null || String(c.active) === active));
  return new Response(JSON.stringify(rows), { status: 200, headers: {
    "Content-Type": "application/json", [SAVED_AT]: copy.headers.get(SAVED_AT) || "" } });
}

/* Screens and other documents (the day's map): laptop first, the last copy when away. */
async function page(event, request, url) {
  const screen = SCREENS.has(url.pathname);
  const cache = await caches.open(screen ? SHELL_CACHE : DATA_CACHE);
  const answer = fromNetwork(event, request, async (response) => {
    if (/^text\/html/i.test(response.headers.get("Content-Type") || "")) {
      await keepDocument(cache, request, response, screen);
    }
  });
  try {
    return await within(answer, NETWORK_WAIT_MS);
  } catch (error) {
    let copy = await cache.match(request);
    // /day?date=... offline: the day screen's shell; the page reads the date from the address.
    if (!copy && screen) copy = await cache.match(url.pathname, { ignoreSearch: true });
    if (copy) return marked(copy);
    return answer;
  }
}

/* A document's copy; for the day's map (/days/<date>/map?solve=N) only the newest solve's. */
async function keepDocument(cache, request, response, screen) {
  const url = new URL(request.url);
  if (!screen) {
    for (const older of await cache.keys(url.href, { ignoreSearch: true })) {
      if (older.url !== url.href) await cache.delete(older);
    }
  }
  await cache.put(url.href, await stamped(response));
}

/* Shell files: the copy made at install; the version in the cache name changes with them. */
async function asset(request) {
  const cache = await caches.open(SHELL_CACHE);
  const copy = await cache.match(request);
  if (copy) return copy;
  const response = await fetch(request);
  if (keepable(response)) await cache.put(request, response.clone());
  return response;
}

/* Tile bookkeeping runs one step at a time so the count cap holds under parallel loads. */
let tileSteps = Promise.resolve();
function tileStep(event, task) {
  const step = tileSteps.then(task, task);
  tileSteps = step.catch(() => null);
  event.waitUntil(tileSteps);
  return step;
}

function tileFresh(copy) {
  // The laptop keeps a tile at least 7 days (webapp/tiles.py); the phone asks again after that,
  // and at once for a tile the laptop itself could only serve stale.
  const savedMs = Date.parse(copy.headers.get(SAVED_AT) || "");
  return copy.headers.get("X-Tile-Cache") !== "stale" && Date.now() - savedMs < TILE_FRESH_MS;
}

async function tile(event, request) {
  const cache = await caches.open(TILE_CACHE);
  const copy = await cache.match(request);
  if (copy && tileFresh(copy)) {
    tileStep(event, async () => {
      // keys() lists entries in the order they were put: put again = most recently used.
      const again = await cache.match(request);
      if (again) { await cache.delete(request); await cache.put(request, again); }
    });
    return copy;
  }
  let response;
  try {
    response = await fetch(request);
  } catch (error) {
    if (copy) return copy;
    throw error;
  }
  if (!response.ok && copy) return copy;
  if (keepable(response) && /^image\//.test(response.headers.get("Content-Type") || "")) {
    const kept = response.clone();
    tileStep(event, async () => {
      await cache.put(request, await stamped(kept));
      const keys = await cache.keys();
      for (const old of keys.slice(0, Math.max(0, keys.length - CONFIG.tileCap))) {
        await cache.delete(old);
      }
    });
  }
  return response;
}

/* The page hands over a day it got from a write or a finished solve. */
async function remember(path, body) {
  const url = new URL(path, self.location.origin);
  if (url.origin !== self.location.origin || !isData(url) || body === undefined) return;
  const cache = await caches.open(DATA_CACHE);
  await cache.put(url.href, new Response(JSON.stringify(body), { status: 200, headers: {
    "Content-Type": "application/json", [SAVED_AT]: new Date().toISOString() } }));
}

/* Reads and documents the page made before this worker controlled it, asked again once so
   they are kept. Tiles are never on this list. */
async function warm(urls) {
  for (const raw of urls) {
    const url = new URL(raw, self.location.origin);
    if (url.origin !== self.location.origin || TILE_PATH.test(url.pathname)) continue;
    const screen = SCREENS.has(url.pathname);
    if (!isData(url) && url.pathname.startsWith("/api/")) continue;
    const cache = await caches.open(isData(url) || !screen ? DATA_CACHE : SHELL_CACHE);
    try {
      const response = await fetch(url.href, { credentials: "same-origin" });
      const html = /^text\/html/i.test(response.headers.get("Content-Type") || "");
      if (!keepable(response) || url.searchParams.has("q")) continue;
      if (isData(url)) await cache.put(url.href, await stamped(response));
      else if (html) await keepDocument(cache, new Request(url.href), response, screen);
    } catch (error) {
      // The laptop went away meanwhile: nothing to keep this time.
    }
  }
}
