// Plain sentences for what the core or the server refuses, for the inspector's screens:
// the field's label, the value typed and what is expected. Never an HTTP status, an
// internal field name (padstone.length) or a reason code (check-fails).
//
// The words come from the server, written into each page that needs them (the as-built
// form, the offline page, the refused list) as JSON by sitecheck/web/record_form.py
// phone_words(): the labels and units of the form's fields, the core's field paths that
// each field answers for, and the words for why a bearing could not be measured. So the
// labels have one source, the server's form.

import { formatG } from "./bearing/format.js";

let WORDS = null;

// The page's words (read once from <script type="application/json" id="phone-words">).
export function phoneWords() {
  if (!WORDS) {
    const node = document.getElementById("phone-words");
    WORDS = node ? JSON.parse(node.textContent) : { labels: {}, paths: {}, design: {}, why: {} };
  }
  return WORDS;
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
  if (typeof value === "number") return `${formatG(value)}${unit ? ` ${unit}` : ""}`;
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
