// sitecheck page script: progressive enhancement only; every page works without it.
document.addEventListener("DOMContentLoaded", () => {
  for (const form of document.querySelectorAll("form[data-confirm]")) {
    form.addEventListener("submit", (event) => {
      if (!window.confirm(form.dataset.confirm)) event.preventDefault();
    });
  }
  document.body.dataset.ready = "1";
});
