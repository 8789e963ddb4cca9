// Gapwise's service worker: keeps the whole build of the app (page, scripts, workers, the EPSG list,
// the demo data, icons) in one cache per build, so the app opens and works with no network after the
// first visit. pwa/build-service-worker.ts writes it into dist/sw.js with the build's file list, each
// file with its SHA-256 (fetched with that integrity, so a half-uploaded deployment is never kept).
//
// A new build (a different sw.js) installs beside the one in use and waits: the page shows "a new
// version is ready" and sends "activate-now" when the user chooses; only then does the new build take
// over (the page reloads once). Samples and work live in IndexedDB, which this worker never touches.
// Only this app's own files are answered here; any other request goes to the network untouched.

/* global self, caches, fetch, URL, Request, Response */
const BUILD = '__GAPWISE_BUILD__';
/** @type {{ url: string, integrity: string }[]} */
const FILES = __GAPWISE_FILES__;
const CACHE = `gapwise-${BUILD}`;
const SCOPE = new URL('./', self.location.href).href;
const INDEX = new URL('index.html', SCOPE).href;

self.addEventListener('install', (event) => {
  event.waitUntil((async () => {
    const cache = await caches.open(CACHE);
    for (const file of FILES) {
      const url = new URL(file.url, SCOPE).href;
      if (await cache.match(url)) continue;
      const response = await fetch(new Request(url, { cache: 'no-cache', integrity: file.integrity }));
      if (!response.ok) throw new Error(`${file.url}: HTTP ${response.status}`);
      await cache.put(url, response);
    }
  })());
});

self.addEventListener('activate', (event) => {
  event.waitUntil((async () => {
    for (const name of await caches.keys()) {
      if (name.startsWith('gapwise-') && name !== CACHE) await caches.delete(name);
    }
    await self.clients.claim();
  })());
});

self.addEventListener('message', (event) => {
  if (event.data && event.data.type === 'activate-now') self.skipWaiting();
  if (event.data && event.data.type === 'build' && event.ports[0]) event.ports[0].postMessage({ build: BUILD });
});

self.addEventListener('fetch', (event) => {
  const request = event.request;
  if (request.method !== 'GET' || !request.url.startsWith(SCOPE)) return;
  event.respondWith((async () => {
    const cache = await caches.open(CACHE);
    const url = new URL(request.url);
    url.search = '';
    url.hash = '';
    // The page itself, whatever its query (?gapwise-test), is the build's index.html.
    const page = request.mode === 'navigate' && (url.href === SCOPE || url.href === INDEX);
    const hit = await cache.match(page ? INDEX : request.url);
    if (hit) return hit;
    try {
      return await fetch(request);
    } catch (e) {
      const index = request.mode === 'navigate' ? await cache.match(INDEX) : undefined;
      if (index) return index;
      throw e;
    }
  })());
});
