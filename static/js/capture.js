// The as-built form on the phone, online and offline alike: what is typed is kept as a
// draft from the first keystroke (with the photos chosen), the phone refuses what the server
// would refuse before anything is kept, and a record goes into the unsent outbox with its
// photos before it leaves. The online page (attachOnline, below) and the offline page
// (survey.js) give it the bearing and decide what follows.
//
// Never lose: the draft is deleted only in the transaction that puts the record into the
// outbox (outbox.js keep); a record the phone refuses stays a draft.

import { get, getAll, writeAll } from "./db.js";
import {
  coreSentence,
  designSentence,
  designedValue,
  fieldOf,
  labelOf,
  localTime,
  refusalSentence,
} from "./messages.js";
import { keep, unsentItems } from "./outbox.js";
import { shrink } from "./photos.js";
import { attachVerdict, readForm } from "./verdict.js";
import { basisFromDict, ec6UkNa } from "./bearing/basis.js";
import { withDefaults } from "./bearing/inputs.js";
import { recheckRecord } from "./bearing/record.js";
import { asBuiltInput, missingMeasurements } from "./bearing/review.js";
import { DEFAULT_SETTINGS, measurementsFromDict, settingsFromDict } from "./bearing/serial.js";
import { inputErrors } from "./bearing/validate.js";

export const MAX_PHOTOS = 8;
const NOTES_MAX = 4000;
// Fields of the form that are not the record's values.
const NOT_VALUES = new Set(["csrf_token", "record_uuid", "design_revision", "provisional", "photos"]);

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === "class") node.className = v;
    else node.setAttribute(k, v);
  }
  node.append(...children.filter((c) => c !== null && c !== undefined));
  return node;
}

export function draftKey(user, siteId, bearingId) {
  return `${user}|${siteId}|${bearingId}`;
}

// A date-time picker's value (local, no zone) for a moment, and back.
export function pickerValue(date = new Date()) {
  const p = (n) => String(n).padStart(2, "0");
  return `${date.getFullYear()}-${p(date.getMonth() + 1)}-${p(date.getDate())}T${p(date.getHours())}:${p(date.getMinutes())}`;
}

function pickerToUtc(value) {
  if (!/^\d{4}-\d\d-\d\dT\d\d:\d\d(:\d\d)?$/.test(value)) return null;
  const moment = new Date(value); // a zoneless date-time is read in the phone's own zone
  return Number.isNaN(moment.getTime()) ? null : moment.toISOString().replace(/\.\d+Z$/, "Z");
}

function zoneName() {
  const part = new Intl.DateTimeFormat("en-GB", { timeZoneName: "short" })
    .formatToParts(new Date()).find((p) => p.type === "timeZoneName");
  return part ? part.value : "local time";
}

function isoSeconds(date = new Date()) {
  return date.toISOString().replace(/\.\d+Z$/, "Z");
}

/**
 * Drive one as-built form. `options`:
 *   mode      "online" or "offline" (only the words differ here)
 *   context() the verdict's context for the bearing now open ({design, basis, settings, words})
 *   user      the person's id (drafts and records are theirs only)
 * Returns {open(bearing), close(), flush()}; `bearing` is {id, reference, revision, site_id,
 * site_name, design_input}. `onKept(item)` is called once a record is in the outbox.
 */
export function attachCapture(form, options) {
  const { context, user, onKept } = options;
  const panel = form.querySelector("[data-provisional-verdict]");
  const bar = form.querySelector("[data-verdict-bar]");
  const summary = form.closest("main").querySelector("[data-form-errors]");
  const draftLine = form.closest("main").querySelector("[data-draft-line]");
  const photoInput = form.elements.namedItem("photos");
  const photoList = form.querySelector("[data-photo-list]");
  let bearing = null;
  let photos = [];
  let saving = null; // the draft write in flight
  let adding = Promise.resolve(); // photos being made smaller and kept
  let again = false; // another write is wanted after it
  let opened = false;
  let opening = false;
  let busy = false;
  const touched = new Set(); // fields typed in since the form was last opened

  const recheck = attachVerdict(form, panel, () => (bearing ? context() : null), bar);

  // --- drafts ---------------------------------------------------------------------------------

  const key = () => draftKey(user, bearing.site_id, bearing.id);

  function values() {
    const out = {};
    for (const field of form.elements) {
      if (!field.name || NOT_VALUES.has(field.name) || field.type === "file") continue;
      if (field.type === "radio") {
        if (field.checked) out[field.name] = field.value;
        else if (!(field.name in out)) out[field.name] = "";
      } else if (field.type !== "submit" && field.type !== "button") {
        out[field.name] = field.value;
      }
    }
    return out;
  }

  function fill(vals) {
    for (const [name, value] of Object.entries(vals)) {
      const field = form.elements.namedItem(name);
      if (!field || NOT_VALUES.has(name)) continue;
      if (field instanceof RadioNodeList) field.value = value;
      else if (field.type !== "file") field.value = value;
    }
  }

  // One write at a time and the latest always written: a keystroke during a write is kept
  // by the write that follows it, so no keystroke is lost and none waits.
  function saveDraft() {
    if (!bearing) return Promise.resolve();
    if (saving) {
      again = true;
      return saving;
    }
    const draft = {
      key: key(),
      user,
      site_id: bearing.site_id,
      site_name: bearing.site_name,
      bearing_id: bearing.id,
      reference: bearing.reference,
      revision: bearing.revision,
      values: values(),
      photos,
      updated_at: isoSeconds(),
    };
    saving = writeAll([["drafts", draft]]).then(() => {
      showDraftLine(draft.updated_at, false);
      document.body.dataset.draftSaved = draft.updated_at + Math.random();
    }).catch((error) => {
      showDraftLine(null, false, error);
    }).finally(() => {
      saving = null;
      if (again) {
        again = false;
        saveDraft();
      }
    });
    return saving;
  }

  function showDraftLine(at, restored, error = null) {
    if (!draftLine) return;
    draftLine.hidden = false;
    draftLine.dataset.draft = error ? "failed" : "kept";
    if (error) {
      draftLine.textContent = error.name === "QuotaExceededError"
        ? "✗ This phone's storage for sitecheck is full: what you type is not being kept. Send the unsent records with signal."
        : "✗ What you type could not be kept on this phone; keep the record as soon as you can.";
      return;
    }
    draftLine.textContent = `${restored ? "Draft restored: kept on this phone" : "Draft kept on this phone"} · ${localTime(at, { seconds: true })}`;
  }

  // --- photos ---------------------------------------------------------------------------------

  function showPhotos() {
    const items = photos.map((p, n) => {
      const img = el("img", { alt: `Photo ${n + 1}`, width: "64", height: "48" });
      img.src = URL.createObjectURL(p.blob);
      img.addEventListener("load", () => URL.revokeObjectURL(img.src), { once: true });
      const remove = el("button", { type: "button", class: "remove", "data-remove-photo": p.uuid },
        "Remove", el("span", { class: "visually-hidden" }, ` photo ${n + 1}`));
      remove.addEventListener("click", () => {
        photos = photos.filter((x) => x.uuid !== p.uuid);
        showPhotos();
        sections();
        saveDraft();
      });
      return el("li", { "data-photo": p.uuid }, img,
        el("span", { class: "muted" }, `${Math.round(p.blob.size / 1024)} KB`), remove);
    });
    photoList.replaceChildren(...items);
    photoList.hidden = !items.length;
  }

  async function addPhotos() {
    const files = [...photoInput.files];
    photoInput.value = "";
    setError("photos", null);
    const room = MAX_PHOTOS - photos.length;
    if (files.length > room) {
      setError("photos", `Photos: at most ${MAX_PHOTOS} for one as-built record; ${files.length > room && room > 0 ? `only ${room} more fit` : "there is no room for more"}.`);
    }
    for (const file of files.slice(0, Math.max(0, room))) {
      photos.push(await shrink(file));
      showPhotos();
      sections();
      await saveDraft();
    }
  }

  // --- sections: done or to do ---------------------------------------------------------------

  function answered(name) {
    const field = form.elements.namedItem(name);
    if (!field) return false;
    return String(field.value ?? "").trim() !== "";
  }

  // Values typed in the measured sections before "could not measure" was chosen: not sent
  // with such a record, so the phone offers to clear them rather than drop them unseen.
  const outcomeBox = form.querySelector("#field-why_not_measured");
  const clearNote = el("p", { class: "notice", "data-clear-measured": "", hidden: "" });
  outcomeBox.append(clearNote);

  function measuredTyped() {
    return [...form.querySelectorAll("[data-measured-section] [data-field]")]
      .map((f) => f.dataset.field).filter(answered);
  }

  function offerClear(why) {
    const typedNames = why ? measuredTyped() : [];
    clearNote.hidden = !typedNames.length;
    if (!typedNames.length) return;
    const button = el("button", { type: "button" }, "Clear them");
    button.addEventListener("click", () => {
      for (const name of measuredTyped()) fill({ [name]: "" });
      form.dispatchEvent(new Event("input", { bubbles: true }));
    });
    clearNote.replaceChildren(
      `Values are typed in the measured sections (${typedNames.map(labelOf).join(", ")}). ` +
      "A bearing that could not be measured carries none: clear them, or choose “yes, measured”. ",
      button);
  }

  function sections() {
    const why = form.elements.namedItem("why_not_measured")?.value || "";
    form.classList.toggle("not-measurable", Boolean(why));
    offerClear(why);
    for (const section of form.querySelectorAll("[data-section]")) {
      const id = section.dataset.section;
      const names = [...section.querySelectorAll("[data-field]")].map((f) => f.dataset.field);
      const needed = names.filter((n) => {
        const tag = section.querySelector(`[data-needed-for="${n}"]`);
        return tag && !tag.hidden;
      });
      let state;
      if (id === "photos") state = photos.length ? "done" : "todo";
      else if (id === "notes") state = answered("notes") ? "done" : "optional";
      else if (needed.length) state = needed.every(answered) ? "done" : "todo";
      else state = names.some(answered) ? "done" : "todo";
      const skipped = Boolean(why) && section.hasAttribute("data-measured-section");
      const words = skipped ? "not measured"
        : { done: "✓ done", todo: "○ to do", optional: "optional" }[state];
      for (const node of [section.querySelector("[data-section-state]"),
        form.querySelector(`[data-nav-for="${id}"] [data-section-state]`)]) {
        if (!node) continue;
        node.textContent = words;
        node.dataset.state = skipped ? "skipped" : state;
      }
      section.dataset.state = skipped ? "skipped" : state;
      const navItem = form.querySelector(`[data-nav-for="${id}"]`)?.closest("li");
      if (navItem) navItem.hidden = skipped;
    }
  }

  // The needed marks for this bearing, as the review would call the fields "not measured".
  function markNeeded() {
    const ctx = context();
    if (!ctx) return;
    let names = [];
    try {
      const settings = ctx.settings && Object.keys(ctx.settings).length
        ? settingsFromDict(ctx.settings) : DEFAULT_SETTINGS;
      names = missingMeasurements(withDefaults(ctx.design), measurementsFromDict({}), settings);
    } catch (error) {
      return; // the server's marks stay
    }
    for (const tag of form.querySelectorAll("[data-needed-for]")) {
      tag.hidden = !names.includes(tag.dataset.neededFor);
    }
  }

  // --- refusals caught on the phone -----------------------------------------------------------

  function setError(name, message) {
    const slot = form.querySelector(`[data-error-slot="${name}"]`);
    const wrap = form.querySelector(`[data-field="${name}"]`);
    if (slot) {
      slot.replaceChildren(...(message ? [el("p", { class: "field-error", "data-error-for": name }, `✗ ${message}`)] : []));
      slot.hidden = !message;
    }
    if (wrap) wrap.classList.toggle("has-error", Boolean(message));
    const input = form.querySelector(`#${name}`) || form.querySelector(`[name="${name}"]`);
    if (input && input.type !== "radio") {
      input.setAttribute("aria-invalid", message ? "true" : "false");
      const described = (input.getAttribute("aria-describedby") || "").split(" ").filter((d) => d && d !== `${name}-error`);
      if (message) described.push(`${name}-error`);
      input.setAttribute("aria-describedby", described.join(" "));
    }
  }

  function clearErrors() {
    for (const slot of form.querySelectorAll("[data-error-slot]")) setError(slot.dataset.errorSlot, null);
    if (summary) {
      summary.hidden = true;
      summary.replaceChildren();
    }
  }

  function designedText(name) {
    return form.querySelector(`[data-designed-for="${name}"]`)?.textContent.replace(/^designed: /, "") || "";
  }

  function typed(name) {
    const field = form.elements.namedItem(name);
    return field && "value" in field ? field.value : "";
  }

  // What the server would refuse, in the order the form shows the fields: [field, sentence].
  function problems() {
    const out = [];
    const { measurements, checklist, unreadable, why } = readForm(form);
    // The one reader's refusals (bearing/typed.js), in the server's form's words; the
    // packing's bounds are among its rules.
    for (const u of unreadable) out.push([u.name, u.refusal.sentence(labelOf(u.name))]);
    const notes = typed("notes");
    if (notes.length > NOTES_MAX) {
      out.push(["notes", `Notes: at most ${NOTES_MAX} characters; these are ${notes.length}. Shorten them, or add a photo of a sketch instead.`]);
    }
    if (why === "other" && !notes.trim()) {
      out.push(["notes", "Notes: you chose another reason why it could not be measured; say what it is here."]);
    }
    if (!pickerToUtc(typed("measured_at"))) {
      out.push(["measured_at", "Measured at: choose the date and time you measured with the picker."]);
    }
    if (photos.length > MAX_PHOTOS) {
      out.push(["photos", `Photos: at most ${MAX_PHOTOS} for one as-built record; remove ${photos.length - MAX_PHOTOS}.`]);
    }
    // The core's own refusals, every one of them, as the server's form lists them.
    const ctx = context();
    if (ctx) {
      for (const error of coreErrors(ctx, measurements, checklist, why)) {
        const name = fieldOf(error.field);
        if (name === "why_not_measured") out.push([name, `Could you measure it: expected ${error.expected}.`]);
        else if (name) {
          const kept = designedValue(ctx.design, name) === null ? "" : designedText(name);
          out.push([name, coreSentence(name, error, typed(name), kept)]);
        }
        else out.push([null, designSentence(error)]);
      }
    }
    return out;
  }

  function coreErrors(ctx, measurements, checklist, why) {
    const basis = ctx.basis ? basisFromDict(ctx.basis) : ec6UkNa();
    if (!why) {
      try {
        const built = asBuiltInput(withDefaults(ctx.design), measurementsFromDict(measurements));
        const found = inputErrors(built, basis);
        if (found.length) return found;
      } catch (error) {
        if (error && error.asDict) return [error.asDict()];
        throw error;
      }
    }
    const outcome = recheckRecord(ctx.design, measurements, checklist, ctx.basis, ctx.settings, why);
    return outcome.error ? [outcome.error] : [];
  }

  function showProblems(found) {
    clearErrors();
    const seen = new Set();
    const lines = [];
    for (const [name, message] of found) {
      const field = name && form.querySelector(`[data-field="${name}"]`);
      const visible = field && !field.closest("[hidden]") && field.offsetParent !== null;
      if (visible && !seen.has(name)) {
        seen.add(name);
        setError(name, message);
        lines.push(el("li", {}, el("a", { href: `#${name}-error` }, message)));
      } else {
        lines.push(el("li", {}, message));
      }
    }
    summary.replaceChildren(
      el("p", {}, el("strong", {}, "Nothing was kept yet."),
        " Put right what is marked and try again; what you typed stays here as a draft."),
      el("ul", {}, ...lines));
    summary.hidden = false;
    const first = found.map(([n]) => n && form.querySelector(`[data-field="${n}"]`))
      .find((f) => f && f.offsetParent !== null);
    const target = first || summary;
    target.scrollIntoView({ block: "center" });
    (first?.querySelector("input:not([type=hidden]), select, textarea") || summary).focus({ preventScroll: true });
  }

  // --- keeping the record ---------------------------------------------------------------------

  async function submit(event) {
    event.preventDefault();
    if (busy || !bearing) return;
    busy = true;
    try {
      await adding; // a photo still being made smaller is part of this record
    } finally {
      busy = false;
    }
    const found = problems();
    if (found.length) {
      showProblems(found);
      await saveDraft();
      return;
    }
    clearErrors();
    busy = true;
    const button = form.querySelector("button[type=submit]");
    button.disabled = true;
    try {
      if (saving) await saving;
      pendingWork = false; // the record carries what is typed now; the draft goes with it
      const { measurements, checklist, why } = readForm(form);
      const uuid = crypto.randomUUID();
      const record = {
        uuid,
        site_id: bearing.site_id,
        bearing_id: bearing.id,
        design_revision: bearing.revision,
        measured_at: pickerToUtc(typed("measured_at")),
        measurements,
        checklist,
        notes: typed("notes"),
        provisional: provisional(),
      };
      if (why) record.why_not_measured = why;
      const item = {
        uuid,
        user,
        site_id: bearing.site_id,
        site_name: bearing.site_name,
        bearing_id: bearing.id,
        reference: bearing.reference,
        record,
        photos,
        values: values(), // the form as typed, to fill it again if the server refuses
      };
      await keep(item, { draftKey: key() });
      if (draftLine) draftLine.hidden = true;
      if (onKept) await onKept(item);
    } catch (error) {
      summary.replaceChildren(el("p", {}, el("strong", {}, "Nothing was kept: "),
        error && error.name === "QuotaExceededError"
          ? "this phone's storage for sitecheck is full. Send the unsent records with signal, then try again."
          : "the phone could not store it. Try again; what you typed is still here."));
      summary.hidden = false;
      summary.focus();
    } finally {
      busy = false;
      button.disabled = false;
    }
  }

  function provisional() {
    try {
      return JSON.parse(form.elements.namedItem("provisional").value || "null");
    } catch {
      return null;
    }
  }

  // --- opening and closing --------------------------------------------------------------------

  /** Open the form for a bearing: its draft if the phone holds one, else a fresh record
   * measured now. `start` fills it from other values (a refused record to record again). */
  async function open(b, start = null, { asIs = false, fresh = false } = {}) {
    bearing = b;
    photos = [];
    touched.clear();
    opening = true;
    let draft = null;
    const when = form.elements.namedItem("measured_at");
    const hint = form.querySelector("[data-zone-hint]");
    if (hint) {
      hint.textContent = "Set to when this form was opened, in this phone's time " +
        `(${zoneName()}). Change it only if you measured at another time.`;
    }
    if (asIs && /^\d{4}-\d\d-\d\dT\d\d:\d\d/.test(when.value)) {
      // The server wrote it in UTC for a page with no script; the picker is in local time.
      when.value = pickerValue(new Date(`${when.value.slice(0, 16)}:00Z`));
    }
    if (!asIs) {
      if (!fresh) form.reset(); // a page just served is fresh: nothing typed may be wiped
      clearErrors();
      if (draftLine) draftLine.hidden = true;
      markNeeded();
      try {
        draft = await get("drafts", key());
      } catch (error) {
        draft = null; // no IndexedDB: the form still works, with nothing kept
      }
      if (draft && !start) {
        // What was typed while the draft was being read stays as typed.
        fill(Object.fromEntries(Object.entries(draft.values).filter(([n]) => !touched.has(n))));
        photos = draft.photos || [];
        showDraftLine(draft.updated_at, true);
      } else {
        if (!touched.has("measured_at")) when.value = pickerValue();
        if (start) {
          fill(start.values || {});
          photos = start.photos || [];
        }
      }
    }
    showPhotos();
    sections();
    recheck();
    opened = true;
    opening = false;
    if (start || touched.size) await saveDraft();
    return draft;
  }

  function close() {
    bearing = null;
    opened = false;
  }

  // The verdict is drawn first (attachVerdict's own listener); the sections' marks and the
  // draft's write follow once that frame is painted, so a keystroke shows its verdict at
  // once and is on the phone a few milliseconds later.
  let pendingWork = false;
  const afterPaint = () => {
    if (pendingWork) return;
    pendingWork = true;
    const run = () => {
      if (!pendingWork) return;
      pendingWork = false;
      if (!bearing) return;
      sections();
      saveDraft();
    };
    requestAnimationFrame(() => setTimeout(run, 0));
    setTimeout(run, 250); // a page in the background gets no frames
  };
  const onInput = (event) => {
    if (event.target.name) touched.add(event.target.name);
    if (opening || !opened || !bearing) return;
    if (event.target === photoInput) return;
    afterPaint();
  };
  form.addEventListener("input", onInput);
  form.addEventListener("change", (event) => {
    if (event.target === photoInput) adding = adding.then(addPhotos);
    else onInput(event);
  });
  form.addEventListener("submit", submit);
  // A phone closing the tab or going to another app: whatever is pending is written now.
  document.addEventListener("visibilitychange", () => {
    if (document.visibilityState === "hidden" && opened) flush();
  });
  window.addEventListener("pagehide", () => {
    if (opened) flush();
  });

  function flush() {
    if (pendingWork && bearing) {
      pendingWork = false;
      sections();
      saveDraft();
    }
    return saving || Promise.resolve();
  }

  return { open, close, flush, current: () => bearing };
}

/** The drafts this phone holds for a person, by bearing id. */
export async function draftsOf(user, siteId) {
  const all = await getAll("drafts");
  return new Map(all.filter((d) => String(d.user) === String(user) && d.site_id === siteId)
    .map((d) => [d.bearing_id, d]));
}

// --- the online as-built form ----------------------------------------------------------------
// The online as-built form with JavaScript: the record goes through the phone's outbox like
// any record made offline (kept with its photos before it leaves), and the server's answer
// is shown as without JavaScript: its re-check page. No signal, a server that cannot be
// reached, a log-in that ran out: the record waits in unsent and the page says so, with the
// next bearing to measure. Without JavaScript the form posts as it always did.

if (document.querySelector("form[data-capture=online]")) attachOnline();

function attachOnline() {
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
}
