// The online as-built form with JavaScript: the record goes through the phone's outbox like
// any record made offline (kept with its photos before it leaves), and the server's answer
// is shown as without JavaScript: its re-check page. No signal, a server that cannot be
// reached, a log-in that ran out: the record waits in unsent and the page says so, with the
// next bearing to measure. Without JavaScript the form posts as it always did.

import { attachCapture } from "./capture.js";
import { get } from "./db.js";
import { refusalSentence } from "./messages.js";
import { unsentItems } from "./outbox.js";

const form = document.querySelector("form[data-capture=online]");
const capture_ = JSON.parse(document.getElementById("capture-context").textContent);
const verdictContext = JSON.parse(document.getElementById("verdict-context").textContent);
const user = document.body.dataset.user;
const status = form.querySelector("[data-capture-status]");
const sendRow = form.querySelector(".send-row");
const bearing = {
  id: capture_.bearing_id,
  reference: capture_.reference,
  revision: capture_.revision,
  site_id: capture_.site_id,
  site_name: capture_.site_name,
};
let pending = null; // the record kept from this page and not yet answered

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === "class") node.className = v;
    else node.setAttribute(k, v);
  }
  node.append(...children);
  return node;
}

// The next bearing to measure in survey order: not this one, and not one already waiting
// in unsent on this phone.
async function nextOffer() {
  let waiting = new Set();
  try {
    waiting = new Set((await unsentItems()).map((i) => i.bearing_id));
  } catch (error) {
    /* no IndexedDB: offer the next in order */
  }
  const next = capture_.next.find((b) => b.id !== bearing.id && !waiting.has(b.id));
  if (!next) {
    return el("p", { class: "next-offer", "data-next": "" }, "Every bearing on the survey list has a record or one waiting. ",
      el("a", { class: "tap", href: capture_.survey_url }, "Back to the survey list"));
  }
  return el("p", { class: "next-offer", "data-next": next.id },
    el("a", { class: "button primary big", href: next.url }, `Next to measure: ${next.reference} →`));
}

async function say(words, tone, { again = null } = {}) {
  const parts = [el("p", { class: `capture-${tone}` }, ...words)];
  if (again) parts.push(again);
  if (tone !== "sending") parts.push(await nextOffer());
  status.replaceChildren(...parts);
  status.hidden = false;
  status.dataset.tone = tone;
}

async function onKept(item) {
  pending = item.uuid;
  sendRow.hidden = true;
  if (navigator.onLine) await say(["✓ Kept on this phone. Sending it to the server…"], "sending");
  else await waiting("offline");
  status.scrollIntoView({ block: "nearest" });
}

async function refused(uuid) {
  const item = await get("refused", uuid);
  const again = el("button", { type: "button", class: "primary", "data-record-again": uuid },
    "Record again from these values");
  again.addEventListener("click", async () => {
    pending = null;
    status.hidden = true;
    sendRow.hidden = false;
    await capture.open(bearing, { values: item.values || {}, photos: [] });
    form.querySelector("[data-section]").scrollIntoView({ block: "start" });
  });
  await say([el("strong", {}, "✗ The server did not take this record. "),
    item ? refusalSentence(item) : "",
    " It is kept on this phone in the refused list; nothing is lost."], "refused", { again });
}

const WAITING = {
  offline: "✓ Kept in unsent on this phone. There is no signal: it is sent when the signal returns, from any page of sitecheck.",
  waiting: "✓ Kept in unsent on this phone. The server cannot be reached just now: it is tried again soon, from any page of sitecheck.",
  login: "✓ Kept in unsent on this phone. Log in again to send it: it waits until you do.",
};

function waiting(state) {
  const login = state === "login"
    ? [" ", el("a", { class: "tap", href: `/login?next=${encodeURIComponent(window.location.pathname)}` }, "Log in")]
    : [];
  return say([WAITING[state], ...login], "kept");
}

window.addEventListener("sitecheck:outbox", (event) => {
  const d = event.detail || {};
  if (!pending) return;
  if (d.kind === "sent" && d.uuid === pending) {
    pending = null;
    say(["✓ Sent. Opening the server's re-check…"], "sent").then(() => {
      window.location.assign(d.answer.url);
    });
  } else if (d.kind === "refused" && d.uuid === pending) {
    pending = null;
    refused(d.uuid);
  } else if (d.kind === "progress" && d.state in WAITING) {
    waiting(d.state);
  }
});

const capture = attachCapture(form, {
  mode: "online",
  user,
  context: () => verdictContext,
  onKept,
});
// A form the server sent back with its own refusals (posted without this script) is shown
// as it came; otherwise the draft, if the phone holds one.
const asIs = !document.querySelector("[data-form-errors]").hidden;
capture.open(bearing, null, { asIs, fresh: true }).then(() => {
  document.body.dataset.captureReady = "1";
});
