// sitecheck page script: progressive enhancement only; every page works without it.
document.addEventListener("DOMContentLoaded", () => {
  for (const form of document.querySelectorAll("form[data-confirm]")) {
    form.addEventListener("submit", (event) => {
      if (!window.confirm(form.dataset.confirm)) event.preventDefault();
    });
  }
  document.body.dataset.ready = "1";
});

// The unsent count and sending live in a module; a browser too old for modules still gets
// every page, only without offline use.
import("/static/js/unsent.js").catch((error) => {
  console.warn("sitecheck: the unsent outbox is not available:", error);
});

// The service worker keeps the app's shell and kept pages for basements with no signal.
// Its install fetches the whole shell at once and fails if any file does (one bar of signal,
// a server restarting): it is tried again, a little later each time, rather than leaving
// the phone without offline use until the next page happens to register it.
const SHELL_RETRIES = 5;

function registerWorker(attempt = 0) {
  const retry = () => {
    if (attempt < SHELL_RETRIES) setTimeout(() => registerWorker(attempt + 1), 2000 * 2 ** attempt);
  };
  navigator.serviceWorker.register("/sw.js", { scope: "/" }).then((registration) => {
    const installing = registration.installing;
    if (!installing) return;
    installing.addEventListener("statechange", () => {
      if (installing.state === "redundant" && !navigator.serviceWorker.controller) retry();
    });
  }).catch((error) => {
    console.warn("sitecheck: offline use is not available yet:", error);
    retry();
  });
}

if ("serviceWorker" in navigator) registerWorker();
