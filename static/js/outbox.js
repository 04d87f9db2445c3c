// The unsent outbox: what the phone keeps until the server has acknowledged it, item by item.
//
// The one rule: an item (or one of its photos) leaves the outbox only on its own 200/201, or
// by moving, in the same transaction, to the refused list where the person can see it.
// No answer or a 5xx keeps it and tries again later; a stale token is renewed and retried.

import { count, get, getAll, outboxInOrder, putIfPresent, writeAll } from "./db.js";

const RETRY_FIRST_MS = 5000;
const RETRY_MOST_MS = 5 * 60 * 1000;

let running = null;
let retryTimer = null;
let sequence = 0;

function announce(detail) {
  window.dispatchEvent(new CustomEvent("sitecheck:outbox", { detail }));
}

export async function counts() {
  return { unsent: await count("outbox"), refused: await count("refused") };
}

export const unsentItems = () => outboxInOrder();
export const refusedItems = () => getAll("refused");

// Keep a new record. Resolves once IndexedDB has committed it; throws (e.g. QuotaExceededError)
// with nothing half kept, since the record and its photos are one value in one transaction.
// The draft it was typed in (`draftKey`) is deleted in that same transaction: the values are
// in the draft or in the outbox, never in neither.
export async function keep(item, { draftKey = null } = {}) {
  item.created = Date.now() * 1000 + (sequence++ % 1000); // keeps the order of quick saves
  item.record_sent = false;
  item.attempts = 0;
  const changes = [["outbox", item]];
  if (draftKey) changes.push(["drafts", null, draftKey]);
  await writeAll(changes);
  document.body.dataset.lastSaved = item.uuid;
  announce({ kind: "saved", uuid: item.uuid });
  if (navigator.onLine) sync("saved");
}

export function sync(why = "start") {
  if (!running) {
    running = oneSenderAtATime(() => run(why)).finally(() => {
      running = null;
    });
  }
  return running;
}

// Every tab of the app hears "online" at the same moment and would send the same outbox:
// the server stores each item once either way, but a phone on one bar of signal should not
// upload every photo twice. Web Locks let one tab send while the others wait, then find the
// outbox empty. Without them (older browsers) the tabs race, and the server's idempotency and
// the conditional writes below keep the outcome right.
function oneSenderAtATime(task) {
  if (navigator.locks && navigator.locks.request) {
    return navigator.locks.request("sitecheck-outbox", () => task());
  }
  return task();
}

async function freshToken() {
  const response = await fetch("/api/csrf", { cache: "no-store", credentials: "same-origin" });
  if (!response.ok) throw new Error(`csrf ${response.status}`);
  return response.json(); // {token, user}
}

function progress(text, state) {
  document.body.dataset.syncState = state;
  announce({ kind: "progress", text, state });
}

async function run(why) {
  if (!navigator.onLine) {
    progress("No signal: unsent records wait on this phone.", "offline");
    return;
  }
  const all = await outboxInOrder();
  if (!all.length) {
    progress("", "idle");
    return;
  }
  let session;
  try {
    session = await freshToken();
  } catch (error) {
    return later(null, "The server cannot be reached; trying again soon.");
  }
  if (!session.user) {
    progress("Log in to send the unsent records.", "login");
    return;
  }
  // Records are sent only in the session of the person who made them.
  const items = all.filter((item) => String(item.user) === String(session.user));
  let n = 0;
  let refused = 0;
  for (const listed of items) {
    n += 1;
    // Read again: another sender may have sent or refused it since the list was read.
    const item = await get("outbox", listed.uuid);
    if (!item) continue;
    progress(`Sending ${n} of ${items.length}: ${item.reference}…`, "sending");
    let outcome = await sendItem(item, session.token);
    if (outcome === "csrf") {
      try {
        session = await freshToken();
      } catch (error) {
        return later(item, "The server cannot be reached; trying again soon.");
      }
      outcome = await sendItem(item, session.token);
      if (outcome === "csrf") outcome = "retry";
    }
    if (outcome === "login") {
      progress("Log in again to send the unsent records.", "login");
      return;
    }
    if (outcome === "refused") refused += 1;
    if (outcome === "retry") {
      // Stop here so later records are not sent ahead of this one.
      return later(item, `${item.reference} could not be sent yet; trying again soon.`);
    }
  }
  const left = await count("outbox");
  const refusedText = refused ? ` ${refused} refused: see the refused list.` : "";
  progress(`${left ? `${left} unsent (another person's, or waiting).` : "All sent."}${refusedText}`, "idle");
  if (why !== "retry") clearTimeout(retryTimer);
}

async function later(item, text) {
  let attempts = 1;
  if (item) {
    item.attempts = (item.attempts || 0) + 1;
    item.last_try = new Date().toISOString();
    attempts = item.attempts;
    await putIfPresent("outbox", item, item.uuid);
  }
  const wait = Math.min(RETRY_MOST_MS, RETRY_FIRST_MS * 2 ** (attempts - 1));
  clearTimeout(retryTimer);
  retryTimer = setTimeout(() => sync("retry"), wait);
  progress(text, "waiting");
}

// What a status means for the item: sent, retry (keep), csrf (renew token), login, refused.
function meaning(status, body) {
  if (status === 200 || status === 201) return "sent";
  if (status === 400 && body && body.reason === "csrf") return "csrf";
  if (status === 401) return "login";
  if (status >= 500 || status === 408 || status === 429) return "retry";
  return "refused";
}

async function answer(response) {
  try {
    return await response.json();
  } catch (error) {
    return null;
  }
}

async function sendItem(item, token) {
  if (!item.record_sent) {
    let response;
    try {
      response = await fetch("/api/records", {
        method: "POST",
        credentials: "same-origin",
        headers: { "Content-Type": "application/json", "X-CSRFToken": token },
        body: JSON.stringify(item.record),
      });
    } catch (error) {
      return "retry";
    }
    const body = await answer(response);
    const outcome = meaning(response.status, body);
    if (outcome === "refused") {
      await refuse(item, response.status, body);
      return "refused";
    }
    if (outcome !== "sent") return outcome;
    item.record_sent = true;
    item.answer = body;
    await putIfPresent("outbox", item, item.uuid);
    announce({ kind: "record-sent", uuid: item.uuid });
  }
  for (const photo of [...item.photos]) {
    const form = new FormData();
    form.append("photo_uuid", photo.uuid);
    if (photo.captured_at) form.append("captured_at", photo.captured_at);
    form.append("photo", photo.blob, photo.name || `${photo.uuid}.jpg`);
    let response;
    try {
      response = await fetch(`/api/records/${item.uuid}/photos`, {
        method: "POST",
        credentials: "same-origin",
        headers: { "X-CSRFToken": token },
        body: form,
      });
    } catch (error) {
      return "retry";
    }
    const body = await answer(response);
    const outcome = meaning(response.status, body);
    if (outcome !== "sent" && outcome !== "refused") return outcome;
    item.photos = item.photos.filter((p) => p.uuid !== photo.uuid);
    const changes = [["outbox", item, item.uuid, { ifPresent: true }]];
    if (outcome === "refused") {
      changes.push(["refused", refusal(item, response.status, body, { kind: "photo", photo, uuid: photo.uuid })]);
    }
    await writeAll(changes);
    if (outcome === "refused") announce({ kind: "refused", uuid: photo.uuid });
  }
  await writeAll([["outbox", null, item.uuid]]);
  document.body.dataset.lastSent = item.uuid;
  await noteState(item);
  announce({
    kind: "sent",
    uuid: item.uuid,
    answer: item.answer,
    reference: item.reference,
    provisional: item.record.provisional ?? null,
  });
  return "sent";
}

// The bearing's state as the server last said it, in the kept site pack: the survey list
// shows it with no signal. Only ever later news: a pack downloaded after the answer wins.
async function noteState(item) {
  const answer = item.answer;
  if (!answer || !answer.state) return;
  try {
    const pack = await get("packs", item.site_id);
    const bearing = pack && pack.bearings.find((b) => b.id === item.bearing_id);
    if (!bearing) return;
    bearing.state = answer.state;
    bearing.last_answer = { uuid: answer.uuid, url: answer.url, at: new Date().toISOString() };
    await putIfPresent("packs", pack, item.site_id);
  } catch (error) {
    console.warn("sitecheck: the site pack could not be brought up to date:", error);
  }
}

// What is kept of a refusal: the server's whole answer (its sentence, the field and what it
// expected), from which the phone words it for the person (messages.js); the status only
// to tell kinds of refusal apart, never to show.
function refusal(item, status, body, extra = {}) {
  return {
    ...item,
    kind: "record",
    status,
    answer: body && typeof body === "object" ? body : null,
    reason: (body && body.error) || "",
    code: (body && (body.code || body.field)) || "",
    refused_at: new Date().toISOString(),
    ...extra,
  };
}

async function refuse(item, status, body) {
  await writeAll([
    ["refused", refusal(item, status, body)],
    ["outbox", null, item.uuid],
  ]);
  announce({ kind: "refused", uuid: item.uuid });
}
