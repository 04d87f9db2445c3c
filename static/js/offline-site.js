// The offline page of one site: its bearings from the kept site pack, the as-built form with
// the online form's field names, and the unsent and refused lists.

import { get } from "./db.js";
import { keep, refusedItems, unsentItems } from "./outbox.js";
import { shrink } from "./photos.js";
import { age } from "./unsent.js";
import { attachVerdict, readForm, serverAgrees, utilisationText } from "./verdict.js";

const root = document.querySelector("[data-offline-site]");
const siteId = root.dataset.offlineSite;
const form = root.querySelector("[data-offline-form]");
const listSection = root.querySelector("[data-pack-list]");
const BADGES = JSON.parse(root.dataset.stateBadges || "{}");

let pack = null;
let bearing = null;
// The phone's re-check of the open form: the bearing's design with the site's basis and
// review settings, as the server will check it.
const recheckNow = attachVerdict(
  form,
  form.querySelector("[data-provisional-verdict]"),
  () => (bearing && pack && pack.site.mirror
    ? { design: bearing.design_input, ...pack.site.mirror }
    : null),
  form.querySelector("[data-verdict-bar]"),
);

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === "class") node.className = v;
    else node.setAttribute(k, v);
  }
  node.append(...children);
  return node;
}

function isoSeconds(date = new Date()) {
  return date.toISOString().replace(/\.\d+Z$/, "Z");
}

// A state as symbol and words, never colour alone, from the online pages' own table.
function badge(state) {
  const b = BADGES[state] || { symbol: "•", label: state || "state not known", css_class: "" };
  return el("span", { class: `state ${b.css_class}`.trim(), "data-state": state || "" },
    el("span", { "aria-hidden": "true" }, b.symbol), ` ${b.label}`);
}

async function load() {
  pack = await get("packs", siteId);
  const status = root.querySelector("[data-pack-age]");
  const list = root.querySelector("[data-pack-bearings]");
  list.replaceChildren();
  if (!pack) {
    status.textContent = "This site is not kept on this phone. With signal, open the survey list and tap “Keep for offline”.";
    return;
  }
  status.textContent = `Site pack downloaded ${age(pack.generated_at)} (${pack.bearings.length} bearings). Design values and states as of then.`;
  for (const b of pack.bearings) {
    const button = el("button", { type: "button", class: "primary big", "data-record-bearing": b.id },
      "Record as built", el("span", { class: "visually-hidden" }, ` for ${b.reference}`));
    button.addEventListener("click", () => openForm(b));
    list.append(el("li", { class: "card bearing-card", "data-bearing": b.id },
      el("div", { class: "bearing-head" }, el("strong", { class: "reference" }, b.reference),
        badge(b.state)),
      el("p", { class: "location" }, b.location || ""),
      el("div", { class: "bearing-actions" }, button)));
  }
  document.body.dataset.packReady = "1";
}

function openForm(b) {
  bearing = b;
  form.reset();
  for (const old of form.querySelectorAll("[data-again-notice]")) old.remove();
  clearErrors();
  form.querySelector("[data-form-title]").textContent = `As-built record: ${b.reference}`;
  form.querySelector("[data-form-location]").textContent = b.location || "";
  showEngineerWords(b.engineer_words);
  for (const p of form.querySelectorAll("[data-designed-for]")) {
    const text = b.designed[p.dataset.designedFor];
    p.textContent = text ? `designed: ${text}` : "";
  }
  form.elements.measured_at.value = isoSeconds();
  form.elements.provisional.value = "";
  recheckNow();
  listSection.hidden = true;
  form.hidden = false;
  form.querySelector("h2").scrollIntoView();
}

// What the engineer asked for on this bearing (measure again, remedial work), from the site
// pack, so the inspector reads it in the basement as they would online.
function showEngineerWords(words) {
  const box = form.querySelector("[data-engineer-words]");
  box.hidden = !words;
  if (!words) return;
  box.dataset.kind = words.kind;
  box.querySelector("[data-engineer-words-title]").textContent = `${words.title}: the engineer's words`;
  box.querySelector("[data-engineer-words-text]").textContent = words.text;
  box.querySelector("[data-engineer-words-by]").textContent =
    `${words.by}, ${words.at.slice(0, 16).replace("T", " ")} UTC (as of the site pack)`;
}

// "Record again" from the refused list: the form for the same bearing, filled with what was
// measured, to be checked, put right and kept anew. The refused item stays on its list.
async function recordAgain(uuid) {
  const item = await get("refused", uuid);
  const b = item && item.record && pack.bearings.find((x) => x.id === item.bearing_id);
  const status = root.querySelector("[data-pack-age]");
  if (!b) {
    status.textContent = "That refused record is not for a bearing in this site pack; record it from the list.";
    return;
  }
  openForm(b);
  const values = { ...item.record.measurements, ...item.record.checklist };
  for (const [name, value] of Object.entries(values)) {
    const field = form.elements[name];
    if (!field) continue;
    if (field instanceof RadioNodeList) field.value = value === true ? "yes" : value === false ? "no" : "";
    else field.value = String(value);
  }
  form.elements.notes.value = item.record.notes || "";
  recheckNow();
  const notice = el("p", { class: "notice", role: "note", "data-again-notice": item.uuid },
    el("strong", {}, "Filled from a refused record"),
    ` (measured ${item.record.measured_at}; refused: ${item.reason}). Check each value and put ` +
    "right what the server refused, then keep it. Photos are not copied: add them again.");
  form.querySelector("[data-form-errors]").before(notice);
  form.elements.measured_at.value = item.record.measured_at;
}

function closeForm() {
  form.hidden = true;
  listSection.hidden = false;
  bearing = null;
}

function clearErrors() {
  for (const p of form.querySelectorAll("[data-error-for]")) {
    p.hidden = true;
    p.textContent = "";
  }
  const summary = form.querySelector("[data-form-errors]");
  summary.hidden = true;
  summary.replaceChildren();
}

async function save(event) {
  event.preventDefault();
  clearErrors();
  // The same reading of typed text as the online form and the verdict above it.
  const { measurements, checklist, unreadable } = readForm(form);
  const errors = unreadable.map(({ name, message }) =>
    [name, `${form.elements[name].dataset.label}: ${message}.`]);
  const measuredAt = form.elements.measured_at.value.trim();
  if (Number.isNaN(Date.parse(measuredAt)) || !/(Z|[+-]\d\d:\d\d)$/.test(measuredAt)) {
    errors.push(["measured_at", "Measured at: write it like 2026-05-04T10:30:00Z (with Z or an offset)."]);
  }
  if (errors.length) {
    const summary = form.querySelector("[data-form-errors]");
    summary.append(el("p", {}, el("strong", {}, "Nothing was kept."), " Put right what is marked and keep it again."));
    for (const [name, message] of errors) {
      const p = form.querySelector(`[data-error-for="${name}"]`);
      if (p) { p.textContent = `✗ ${message}`; p.hidden = false; }
      summary.append(el("p", {}, message));
    }
    summary.hidden = false;
    summary.focus();
    return;
  }
  const submit = form.querySelector("button[type=submit]");
  submit.disabled = true;
  try {
    const photos = [];
    for (const file of form.elements.photos.files) photos.push(await shrink(file));
    const uuid = crypto.randomUUID();
    await keep({
      uuid,
      user: document.body.dataset.user,
      site_id: siteId,
      site_name: pack.site.name,
      bearing_id: bearing.id,
      reference: bearing.reference,
      record: {
        uuid,
        site_id: siteId,
        bearing_id: bearing.id,
        design_revision: bearing.revision,
        measured_at: measuredAt,
        measurements,
        checklist,
        notes: form.elements.notes.value,
        provisional: readProvisional(),
      },
      photos,
    });
    const reference = bearing.reference;
    closeForm();
    root.querySelector("[data-pack-age]").textContent = `${reference} kept in unsent.`;
  } catch (error) {
    const summary = form.querySelector("[data-form-errors]");
    summary.replaceChildren(el("p", {}, el("strong", {}, "Nothing was kept: "),
      error && error.name === "QuotaExceededError"
        ? "this phone's storage for sitecheck is full. Send the unsent records with signal, then try again."
        : `the phone could not store it (${error && error.message}).`));
    summary.hidden = false;
    summary.focus();
  } finally {
    submit.disabled = false;
  }
}

function readProvisional() {
  try {
    return JSON.parse(form.elements.provisional.value || "null");
  } catch {
    return null;
  }
}

// The server's answer to each record sent from this page, beside what the phone showed.
function showConfirmed({ reference, answer, provisional }) {
  if (!answer) return;
  const section = root.querySelector("[data-confirmed-section]");
  const ok = answer.passed && !answer.reasons.some((r) => r.severity === "blocks");
  const word = ok ? "✓ within design" : !answer.passed ? "✗ fails as built" : "? needs the engineer";
  const agrees = serverAgrees(provisional, answer);
  const note = agrees === null ? ""
    : agrees ? " · as the phone showed"
      : " · the phone showed something else: the server's answer counts, and it has been told";
  const link = el("a", { href: answer.url }, "the server's re-check");
  section.querySelector("[data-confirmed-list]").prepend(el("li",
    { class: "card", "data-confirmed": answer.uuid, "data-agrees": String(agrees) },
    el("strong", {}, reference), ` · server: ${word}, utilisation ${utilisationText(answer.utilisation)}`,
    el("span", { class: "muted" }, note), " · ", link));
  section.hidden = false;
}

function describeItem(item) {
  const photos = item.photos.length ? ` · ${item.photos.length} photo(s) waiting` : "";
  return `${item.reference} · measured ${item.record.measured_at}${photos}`;
}

async function showLists() {
  const unsent = (await unsentItems()).filter((i) => i.site_id === siteId);
  const ul = root.querySelector("[data-unsent-list]");
  ul.replaceChildren(...unsent.map((item) =>
    el("li", { class: "card", "data-unsent-item": item.uuid }, describeItem(item),
      item.attempts ? el("span", { class: "muted" }, ` · tried ${item.attempts} time(s)`) : "")));
  if (!unsent.length) ul.append(el("li", { class: "card muted" }, "Nothing unsent for this site."));
  const refused = (await refusedItems()).filter((i) => i.site_id === siteId);
  const rl = root.querySelector("[data-refused-list]");
  rl.replaceChildren(...refused.map((item) =>
    el("li", { class: "card refused-item", "data-refused-item": item.uuid },
      el("strong", {}, `${item.reference}${item.kind === "photo" ? " (a photo)" : ""}`),
      el("span", {}, `${item.status}: ${item.reason}`))));
  if (!refused.length) rl.append(el("li", { class: "card muted" }, "Nothing refused."));
}

form.addEventListener("submit", save);
form.querySelector("[data-form-cancel]").addEventListener("click", closeForm);
window.addEventListener("sitecheck:outbox", (event) => {
  if (event.detail && event.detail.kind === "sent") showConfirmed(event.detail);
  showLists();
});
load().then(() => {
  const again = new URLSearchParams(window.location.hash.slice(1)).get("again");
  if (again && pack) recordAgain(again);
  return showLists();
});
