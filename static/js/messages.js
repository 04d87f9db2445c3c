// Plain sentences for what the core or the server refuses, for the inspector's screens:
// the field's label, the value typed and what is expected. Never an HTTP status, an
// internal field name (padstone.length) or a reason code (check-fails).
//
// The words come from the server, as the module /phone-words.js that it writes from
// sitecheck/web/record_form.py phone_words() and the service worker keeps with the shell:
// the labels and units of the form's fields, the core's field paths that each field answers
// for, and the words for why a bearing could not be measured. So the labels have one
// source, the server's form.

import { PHONE_WORDS } from "/phone-words.js";
import { quantity } from "./bearing/format.js";

export function phoneWords() {
  return PHONE_WORDS;
}

// The form field a core complaint is about ("padstone.length" -> "padstone_length"), or null.
export function fieldOf(path) {
  return phoneWords().paths[path] ?? null;
}

export function labelOf(name) {
  const known = phoneWords().labels[name];
  return known ? known.label : null;
}

function shown(value, name) {
  const unit = phoneWords().labels[name]?.unit || "";
  // The one formatter, as the server's core_message writes it (record_form.py).
  if (typeof value === "number") return quantity(value, unit);
  return `“${String(value).slice(0, 40)}”`;
}

/** The designed value of a field, or null where the design has none (record_form.py
 * designed_value): a padstone's sizes when no padstone was designed are none. */
export function designedValue(design, name) {
  if (!design) return null;
  if (name === "padstone_present") return design.padstone != null;
  const at = phoneWords().designed_at?.[name];
  if (!at) return null;
  return (design[at[0]] || {})[at[1]] ?? null;
}

/** The sentence for one core complaint about a form field, as the server's form words it
 * (sitecheck/web/record_form.py core_message): `typed` is the text in the field, `designed`
 * the designed value's words beside it ("" where the design has none to keep). */
export function coreSentence(name, error, typed, designed) {
  const label = labelOf(name) || "A value";
  if (String(typed ?? "").trim() !== "") {
    const value = typeof error.value === "number" ? error.value : String(typed).trim();
    return `${label}: ${shown(value, name)} is not accepted; expected ${error.expected}.`;
  }
  if (!designed) {
    return `${label}: needed here, and the design has no value to keep; measure it. Expected ${error.expected}.`;
  }
  return `${label}: the designed ${designed} (kept, as nothing was typed) does not fit the other ` +
    `measured values; expected ${error.expected}.`;
}

/** A complaint about the design itself (no field of the form answers for it). */
export function designSentence(error) {
  const words = phoneWords().design[error.field] || "a value of the design";
  return `The design itself cannot be re-checked (${words}: expected ${error.expected}). ` +
    "Nothing was kept; tell the site's engineer.";
}

// Every internal name a screen must not show: the core's paths, the form's field names.
function internalNames() {
  const w = phoneWords();
  return [...Object.keys(w.paths), ...Object.keys(w.labels)].sort((a, b) => b.length - a.length);
}

// The server's own sentence with any internal name put in words, or null if it still holds
// something that is not for the inspector's eyes.
function plain(text) {
  if (typeof text !== "string" || !text.trim()) return null;
  let out = text.trim();
  for (const name of internalNames()) {
    if (!out.includes(name)) continue;
    const field = fieldOf(name) || name;
    out = out.replaceAll(name, labelOf(field) || phoneWords().design[name] || "a value");
  }
  return /\b\d{3}\b:|[a-z]+_[a-z_]+|\b[a-z]+\.[a-z_]+\b/.test(out) ? null : out;
}

const AGAIN = "Record again from these values once it is put right, or show this to the site's engineer.";

/** Why the server refused a kept record or photo, in words for the inspector: the refused
 * list and the online form show this. `item` is the refused list's entry. */
export function refusalSentence(item) {
  const body = item.answer || {};
  const code = body.code || item.code || "";
  const status = item.status;
  const path = body.field || "";
  const name = fieldOf(path) || (phoneWords().labels[path] ? path : null);
  if (item.kind === "photo") {
    return plain(body.error) ||
      "The server could not use this photo. Take it again, or send it to the engineer another way.";
  }
  if (code === "same-id-other-values" && plain(body.error)) return plain(body.error);
  if (status === 409 || code === "uuid-in-use") {
    return "The server already holds another record under this record's id, so this one was not " +
      "stored. Record it again from these values: it gets a new id.";
  }
  if (status === 413) {
    return "The record and its photos were too large for the server. Record it again with fewer photos.";
  }
  if (name && body.expected) {
    const measured = { ...(item.record?.measurements || {}), ...(item.record?.checklist || {}) };
    const typed = measured[name];
    const value = typed === undefined || typed === null ? "" : typed;
    return coreSentence(name, { expected: body.expected, value }, value, "");
  }
  if (path && body.expected && phoneWords().design[path]) return designSentence(body);
  return plain(body.error) ||
    `The server would not take this record as it is (perhaps it was made by an older version of this app). ${AGAIN}`;
}

/** Why the could-not-measure choice was refused, or what it means, in words. */
export function whyWords(code) {
  return phoneWords().why[code] || "";
}

// --- times, in the phone's own time and zone ------------------------------------------------
//
// The server stores and sends UTC and writes it in each page as
// <time datetime="..." data-local>…UTC</time>; this puts it in the phone's zone, with the
// zone's name, so no one has to work out what "UTC" means on site.

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
