// Times in the phone's own time and zone. The server stores and sends UTC and writes it in
// each page as <time datetime="..." data-local>…UTC</time>; this puts it in the phone's
// zone, with the zone's name, so no one has to work out what "UTC" means on site.

const DATE_AND_TIME = new Intl.DateTimeFormat("en-GB", {
  day: "numeric", month: "short", year: "numeric", hour: "2-digit", minute: "2-digit",
  timeZoneName: "short",
});
const TIME_ONLY = new Intl.DateTimeFormat("en-GB", {
  hour: "2-digit", minute: "2-digit", second: "2-digit", timeZoneName: "short",
});

/** A stored time (ISO, UTC) as the phone's local time with its zone; `seconds` gives the
 * time alone, with seconds, when it is today (the draft line's "kept at"). */
export function localTime(iso, { seconds = false } = {}) {
  const moment = new Date(iso);
  if (Number.isNaN(moment.getTime())) return String(iso ?? "");
  if (seconds && moment.toDateString() === new Date().toDateString()) {
    return TIME_ONLY.format(moment);
  }
  return DATE_AND_TIME.format(moment);
}

/** Every server-written time on the page, in the phone's zone (its UTC words kept as a title). */
export function showLocalTimes(root = document) {
  for (const node of root.querySelectorAll("time[data-local][datetime]")) {
    if (node.dataset.shown) continue;
    node.title = node.textContent;
    node.textContent = localTime(node.getAttribute("datetime"));
    node.dataset.shown = "local";
  }
}
