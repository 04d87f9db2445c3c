// Site record progress: asks the progress page's .json instead of reloading the whole page.
// Progressive enhancement only: without this module the page refreshes itself (noscript).

const panel = document.querySelector("[data-record-job][data-poll]");

if (panel) {
  const url = panel.dataset.poll;
  const every = Math.max(1, Number(panel.dataset.pollSeconds) || 2) * 1000;
  const status = panel.querySelector("[data-status]");
  const bar = panel.querySelector("[data-progress]");
  let misses = 0;

  const ask = async () => {
    try {
      const response = await fetch(url, {
        headers: { Accept: "application/json" },
        credentials: "same-origin",
        cache: "no-store",
      });
      if (!response.ok) throw new Error(`HTTP ${response.status}`);
      const job = (await response.json()).job;
      misses = 0;
      if (!job || job.state !== panel.dataset.recordJob || !job.running) {
        // A new state (started, finished, failed) has its own page: let the server draw it.
        window.location.reload();
        return;
      }
      // The server words the progress (one context, two renderings); only its text changes.
      if (status && job.status) status.textContent = job.status;
      if (bar) {
        bar.max = Math.max(1, job.bearings);
        bar.value = job.bearings_done;
        bar.textContent = `${job.percent} %`;
      }
    } catch (error) {
      // A dropped connection or a restarting server: try again, then fall back to a reload,
      // which shows the server's own error page if there is one.
      misses += 1;
      if (misses >= 3) {
        window.location.reload();
        return;
      }
    }
    window.setTimeout(ask, every);
  };

  window.setTimeout(ask, every);
}
