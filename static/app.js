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
if ("serviceWorker" in navigator) {
  navigator.serviceWorker.register("/sw.js", { scope: "/" }).catch((error) => {
    console.warn("sitecheck: offline use is not available:", error);
  });
}
