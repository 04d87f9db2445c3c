// On every page: the unsent count and the link to the refused list in the header, sending
// when the signal returns, the log-out warning, "Keep for offline" on the survey list, the
// list of kept sites and the refused list's own page.

import { get, getAll, put } from "./db.js";
// The words of messages and times are fetched only by a page that shows some (the log-in
// page shows none, and a phone's first load should not carry them twice).
const words = () => import("./messages.js");
import { counts, refusedItems, sync } from "./outbox.js";

const PAGES_CACHE = "sitecheck-pages"; // shared with sw.js

async function showCounts() {
  let n;
  try {
    n = await counts();
  } catch (error) {
    return; // no IndexedDB (private mode on some browsers): the online pages still work
  }
  const bar = document.querySelector("[data-unsent-bar]");
  if (!bar) return;
  bar.hidden = false;
  bar.querySelector("[data-unsent-count]").textContent = String(n.unsent);
  bar.dataset.unsent = String(n.unsent);
  // "Refused" alone when nothing is, "Refused: 2" when something is.
  const refused = bar.querySelector("[data-refused]");
  const shown = refused.querySelector("[data-refused-shown]");
  if (n.refused > 0) {
    const count = document.createElement("strong");
    count.dataset.refusedCount = "";
    count.textContent = String(n.refused);
    shown.replaceChildren(": ", count);
  } else {
    shown.replaceChildren();
  }
  refused.classList.toggle("has-refused", n.refused > 0);
}

function text(tag, className, content) {
  const node = document.createElement(tag);
  if (className) node.className = className;
  node.textContent = content;
  return node;
}

// The refused list's page: every refused record and photo on this phone, newest first.
async function showRefusedPage() {
  const list = document.querySelector("[data-refused-all]");
  if (!list) return;
  const { labelOf, localTime, refusalSentence } = await words();
  let items;
  try {
    items = await refusedItems();
  } catch (error) {
    list.replaceChildren(text("li", "card muted", "This browser keeps nothing for sitecheck (no IndexedDB)."));
    return;
  }
  items.sort((a, b) => String(b.refused_at).localeCompare(String(a.refused_at)));
  list.replaceChildren(...items.map((item) => {
    const li = document.createElement("li");
    li.className = "card refused-item";
    li.dataset.refusedItem = item.uuid;
    const what = item.kind === "photo" ? `${item.reference}: a photo` : item.reference;
    li.append(
      text("strong", "refused-what", `✗ ${what}`),
      text("span", "muted", item.site_name || ""),
      text("p", "refused-reason", refusalSentence(item)),
      text("p", "muted refused-when",
        `measured ${item.record ? localTime(item.record.measured_at) : "at a time not kept"} · refused ${age(item.refused_at)}`),
    );
    if (item.record && item.kind !== "photo") {
      // The values are kept so they can be recorded again without going back to the bearing.
      const details = document.createElement("details");
      details.append(text("summary", "", "What was measured"));
      const dl = document.createElement("dl");
      dl.className = "values";
      const values = { ...item.record.measurements, ...item.record.checklist };
      for (const [name, value] of Object.entries(values)) {
        const shown = value === true ? "yes" : value === false ? "no" : String(value);
        dl.append(text("dt", "", labelOf(name) || "another value"), text("dd", "", shown));
      }
      details.append(dl);
      if (item.record.notes) details.append(text("p", "notes", item.record.notes));
      li.append(details);
      // A fragment, not a query: the worker's kept copy of the offline page still answers.
      const again = document.createElement("a");
      again.className = "button";
      again.href = `/sites/${encodeURIComponent(item.site_id)}/offline#again=${encodeURIComponent(item.uuid)}`;
      again.dataset.recordAgain = item.uuid;
      again.textContent = "Record again from these values";
      li.append(again);
    }
    return li;
  }));
  if (!items.length) list.append(text("li", "card muted", "Nothing refused on this phone."));
}

function showProgress(text) {
  for (const el of document.querySelectorAll("[data-sync-progress]")) el.textContent = text;
}

export function age(iso) {
  const minutes = Math.round((Date.now() - Date.parse(iso)) / 60000);
  if (minutes < 1) return "just now";
  if (minutes < 90) return `${minutes} minute${minutes === 1 ? "" : "s"} ago`;
  const hours = Math.round(minutes / 60);
  if (hours < 36) return `${hours} hours ago`;
  return `${Math.round(hours / 24)} days ago`;
}

export async function askToKeep() {
  if (!navigator.storage || !navigator.storage.persist) return "unknown";
  const kept = (await navigator.storage.persisted()) || (await navigator.storage.persist());
  const text = kept
    ? "Storage on this phone: kept until you delete it."
    : "Storage on this phone: the browser may clear it when space runs short. Send unsent records as soon as you have signal.";
  for (const el of document.querySelectorAll("[data-persist]")) {
    el.textContent = text;
    el.dataset.persist = kept ? "yes" : "no";
  }
  return kept;
}

// The site pack as the phone keeps it, brought up to date: the server is told which pack
// is held (its version) and sends only the bearings changed since, or a whole pack when it
// cannot tell (sitecheck/web/sync.py pack).
export function mergePack(held, answer) {
  if (answer.full || !held || !held.version) return answer;
  const byId = new Map(held.bearings.map((b) => [b.id, b]));
  for (const id of answer.removed) byId.delete(id);
  // A bearing keeps its place in the survey order: it moves only when bearings are added,
  // and then the whole pack comes.
  for (const b of answer.bearings) byId.set(b.id, { ...b, order: byId.get(b.id)?.order ?? b.order });
  const designs = { ...held.designs, ...answer.designs };
  const bearings = [...byId.values()];
  const kept = {};
  for (const b of bearings) kept[b.design] = designs[b.design];
  return { ...answer, full: true, bearings, designs: kept };
}

// A bearing's design as the pack holds it: {input, designed, passed, utilisation, governing}.
// A pack kept before designs were shared holds each bearing's own.
export function designOf(pack, bearing) {
  if (pack.designs && typeof bearing.design === "string") return pack.designs[bearing.design];
  return { input: bearing.design_input, designed: bearing.designed, ...bearing.design };
}

async function bringPackUpToDate(siteId) {
  const held = await get("packs", siteId);
  const since = held && held.version ? `?since=${encodeURIComponent(held.version)}` : "";
  const response = await fetch(`/api/sites/${siteId}/pack${since}`, { cache: "no-store", credentials: "same-origin" });
  if (!response.ok) throw new Error(`the server answered ${response.status}`);
  const answer = await response.json();
  const pack = mergePack(held, answer);
  await put("packs", pack);
  return { pack, changed: answer.full ? null : answer.bearings.length + answer.removed.length };
}

function keptWords(pack, changed) {
  const news = changed === null ? "" : changed === 0 ? " Nothing had changed." : ` ${changed} changed.`;
  return `Kept for offline use: ${pack.bearings.length} bearings, downloaded ${age(pack.generated_at)}.${news}`;
}

async function keepSite(button, quietly = false) {
  const siteId = button.dataset.keepSite;
  const status = document.querySelector(`[data-pack-age="${siteId}"]`);
  button.disabled = true;
  if (!quietly) status.textContent = "Downloading the site pack…";
  try {
    const { pack, changed } = await bringPackUpToDate(siteId);
    const cache = await caches.open(PAGES_CACHE);
    await cache.add(button.dataset.offlineUrl);
    status.textContent = keptWords(pack, changed);
    status.dataset.generatedAt = pack.generated_at;
    document.body.dataset.packKept = siteId;
    await askToKeep();
  } catch (error) {
    if (!quietly) status.textContent = `The site pack could not be kept (${error.message}). Try again with signal.`;
  } finally {
    button.disabled = false;
  }
}

async function showPackAges() {
  const packs = await getAll("packs");
  for (const status of document.querySelectorAll("[data-pack-age]")) {
    const id = status.dataset.packAge;
    const pack = packs.find((p) => p.site.id === id);
    if (pack) status.textContent = `Kept for offline use: ${pack.bearings.length} bearings, downloaded ${age(pack.generated_at)}.`;
  }
  const list = document.querySelector("[data-kept-sites]");
  if (list) {
    list.replaceChildren();
    for (const pack of packs) {
      const li = document.createElement("li");
      li.className = "card";
      const a = document.createElement("a");
      a.href = `/sites/${pack.site.id}/offline`;
      a.textContent = pack.site.name;
      li.append(a, ` · downloaded ${age(pack.generated_at)}`);
      list.append(li);
    }
    if (!packs.length) {
      const li = document.createElement("li");
      li.className = "card muted";
      li.textContent = "No site is kept on this phone yet.";
      list.append(li);
    }
  }
}

function guardLogOut() {
  for (const form of document.querySelectorAll("form[data-logout]")) {
    form.addEventListener("submit", async (event) => {
      if (form.dataset.confirmed) return;
      event.preventDefault();
      let n = { unsent: 0, refused: 0 };
      let drafts = 0;
      try {
        n = await counts();
        drafts = (await getAll("drafts")).length;
      } catch (error) {
        /* no IndexedDB: nothing to lose */
      }
      const waiting = n.unsent + n.refused + drafts;
      const draftWords = drafts ? ` and ${drafts} draft(s) not yet kept as records` : "";
      if (
        waiting === 0 ||
        window.confirm(
          `${n.unsent} unsent and ${n.refused} refused record(s)${draftWords} are on this phone only. ` +
            "Logging out deletes them from this phone for good. Log out anyway?",
        )
      ) {
        form.dataset.confirmed = "1";
        form.requestSubmit();
      }
    });
  }
}

window.addEventListener("sitecheck:outbox", (event) => {
  if (event.detail.kind === "progress") showProgress(event.detail.text);
  showCounts();
  if (event.detail.kind === "refused") showRefusedPage();
});
window.addEventListener("online", () => sync("online"));

for (const button of document.querySelectorAll("[data-keep-site]")) {
  button.hidden = false;
  button.addEventListener("click", () => keepSite(button));
  // A site already kept is brought up to date whenever its list is opened with signal:
  // only what changed comes, so it costs little.
  if (navigator.onLine) {
    get("packs", button.dataset.keepSite)
      .then((held) => (held ? keepSite(button, true) : null))
      .catch(() => {});
  }
}
for (const button of document.querySelectorAll("[data-send-now]")) {
  button.addEventListener("click", () => sync("button"));
}
guardLogOut();
showCounts();
if (document.querySelector("time[data-local]")) {
  words().then((m) => m.showLocalTimes()).catch(() => {});
}
showRefusedPage();
showPackAges().catch(() => {});
if (document.querySelector("[data-persist]")) askToKeep().catch(() => {});
sync("start");
