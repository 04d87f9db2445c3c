// sitecheck's service worker: the app's shell and the pages a person kept, for no signal.
//
// VERSION is set by the server when it serves this file: a digest of every file of the
// shell (sitecheck/web/assets.py shell_digest), so a change to any of them installs a new
// worker that fetches the new shell and drops the old. The shell list must name real files
// (cache.addAll is all or nothing, and a failed install leaves the phone without offline
// use); tests/test_sync_api.py fetches each.

const VERSION = "set-by-the-server";
const SHELL_CACHE = `sitecheck-shell-${VERSION}`;
const PAGES_CACHE = "sitecheck-pages"; // kept across versions: it holds what people chose to keep
const SHELL = [
  "/offline",
  "/refused",
  "/manifest.webmanifest",
  "/static/app.css",
  "/static/app.js",
  "/static/js/db.js",
  "/static/js/outbox.js",
  "/static/js/photos.js",
  "/static/js/unsent.js",
  // The as-built form, online and offline: drafts, refusals in words, the survey list.
  "/static/js/capture.js",
  "/static/js/messages.js",
  "/static/js/survey.js",
  "/phone-words.js", // written by the server: the form's labels, the trace's glossary
  // The phone's mirror of the core: the as-built form's provisional verdict, with no signal.
  "/static/js/verdict.js",
  "/static/js/bearing/basis.js",
  "/static/js/bearing/checks.js",
  "/static/js/bearing/errors.js",
  "/static/js/bearing/format.js",
  "/static/js/bearing/formulas.js",
  "/static/js/bearing/geometry.js",
  "/static/js/bearing/index.js",
  "/static/js/bearing/inputs.js",
  "/static/js/bearing/recheck.js",
  "/static/js/bearing/record.js",
  "/static/js/bearing/remedy.js",
  "/static/js/bearing/review.js",
  "/static/js/bearing/serial.js",
  "/static/js/bearing/strength.js",
  "/static/js/bearing/trace.js",
  "/static/js/bearing/typed.js",
  "/static/js/bearing/validate.js",
  "/static/icon-192.png",
  "/static/icon-512.png",
];
// Pages never kept: they belong to a moment (log-in) or change the session.
const NEVER_KEPT = new Set(["/login", "/logout"]);
const RECORD_FORM = /^\/sites\/[^/]+\/bearings\/[^/]+\/record$/;

self.addEventListener("install", (event) => {
  event.waitUntil(
    caches.open(SHELL_CACHE).then((cache) => cache.addAll(SHELL)).then(() => self.skipWaiting()),
  );
});

self.addEventListener("activate", (event) => {
  event.waitUntil((async () => {
    for (const name of await caches.keys()) {
      if (name.startsWith("sitecheck-shell-") && name !== SHELL_CACHE) await caches.delete(name);
    }
    await self.clients.claim(); // control the page that registered us without a reload
  })());
});

function keepable(response) {
  return response.ok && !response.redirected && response.type === "basic";
}

async function pageFirstFromNetwork(request, url) {
  try {
    const response = await fetch(request);
    if (keepable(response) && !NEVER_KEPT.has(url.pathname)) {
      const copy = response.clone();
      caches.open(PAGES_CACHE).then((cache) => cache.put(request, copy));
    }
    return response;
  } catch (error) {
    const site = url.pathname.match(/^\/sites\/([^/]+)\//);
    const offline = site && (await caches.match(`/sites/${site[1]}/offline`, { ignoreVary: true }));
    // "Record as built" with no signal: the site's offline page, which opens that bearing's
    // form from the site pack (a copy of the online form kept from an earlier visit may hold
    // an older design).
    if (offline && RECORD_FORM.test(url.pathname)) return offline;
    const kept = await caches.match(request, { ignoreVary: true });
    if (kept) return kept;
    // Any other page of a kept site falls back to that site's offline page.
    if (offline) return offline;
    return (await caches.match("/offline", { ignoreVary: true })) || Response.error();
  }
}

async function assetFirstFromCache(request) {
  const hit = await caches.match(request);
  if (hit) return hit;
  const response = await fetch(request);
  if (keepable(response)) {
    const copy = response.clone();
    caches.open(SHELL_CACHE).then((cache) => cache.put(request, copy));
  }
  return response;
}

self.addEventListener("fetch", (event) => {
  const request = event.request;
  const url = new URL(request.url);
  // Sending is the page's job, with its own retry rules: the worker never answers a POST,
  // an API call or another origin, so nothing is ever replayed or answered from a cache.
  if (request.method !== "GET" || url.origin !== self.location.origin) return;
  if (url.pathname.startsWith("/api/")) return;
  if (request.mode === "navigate") {
    event.respondWith(pageFirstFromNetwork(request, url));
  } else if (url.pathname.startsWith("/static/") || url.pathname === "/phone-words.js") {
    event.respondWith(assetFirstFromCache(request));
  }
});
