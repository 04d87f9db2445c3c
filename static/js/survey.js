// The survey list, online and offline: the same order (sitecheck/web/inspect.py survey_order),
// the same search, and what this phone holds for each bearing (a draft, a record waiting in
// unsent). Online it works on the server's list; on the offline page (below) on the site pack.

import { attachCapture } from "./capture.js";
import { get, getAll } from "./db.js";
import { localTime, refusalSentence } from "./messages.js";
import { refusedItems, unsentItems } from "./outbox.js";
import { age, designOf } from "./unsent.js";
import { serverAgrees, utilisationText } from "./verdict.js";

const RANK = { "awaiting survey": 0, remedial: 1 };
const SHOWN_AT_ONCE = 100; // cards the offline list draws before "Show more"
const OTHER_RANK = 2;
const DESIGN_FAILS_RANK = 3;

// The server's survey_rank: to measure first, then the rest, and last a failing design.
// (The site pack says whether the design passes as design.passed.)
export function rank(bearing) {
  if (!(bearing.design_passed ?? bearing.design?.passed)) return DESIGN_FAILS_RANK;
  return RANK[bearing.state] ?? OTHER_RANK;
}

export const toMeasure = (bearing) => rank(bearing) < OTHER_RANK;

// In survey order again after a state changed: rank, then the server's order by reference.
export function surveyOrder(bearings) {
  return [...bearings].sort((a, b) => rank(a) - rank(b) || a.order - b.order);
}

// The server's search (sitecheck/store/survey.py): every word of the search in the reference
// or the location.
export function matches(text, query) {
  const haystack = String(text).toLowerCase();
  return String(query).toLowerCase().split(/\s+/).filter(Boolean).every((w) => haystack.includes(w));
}

/** Filter `cards` (each with data-search-text) as the search box is typed in. */
export function attachSearch(input, cards, countNode) {
  const apply = () => {
    const query = input.value.trim();
    let shown = 0;
    const all = cards();
    for (const card of all) {
      const hit = matches(card.dataset.searchText || "", query);
      card.hidden = !hit;
      if (hit) shown += 1;
    }
    if (countNode) {
      countNode.textContent = query
        ? `${shown} of ${all.length} bearings match “${query}”.`
        : "";
    }
  };
  input.addEventListener("input", apply);
  apply();
  return apply;
}

/** What this phone holds for each bearing of a site: {drafts: Set, unsent: Set} of ids. */
export async function phoneHolds(siteId, user) {
  const [drafts, unsent] = await Promise.all([getAll("drafts"), getAll("outbox")]);
  const mine = (i) => i.site_id === siteId && String(i.user) === String(user);
  return {
    drafts: new Set(drafts.filter(mine).map((d) => d.bearing_id)),
    unsent: new Set(unsent.filter(mine).map((i) => i.bearing_id)),
  };
}

export function marksText(id, holds) {
  const marks = [];
  if (holds.unsent.has(id)) marks.push("⇡ record kept on this phone, waiting to be sent");
  if (holds.drafts.has(id)) marks.push("✎ draft on this phone");
  return marks.join(" · ");
}

// The online survey list.
const list = document.querySelector("[data-survey-list]");
if (list) {
  const form = document.querySelector("[data-survey-form]");
  const cards = () => [...list.querySelectorAll("li[data-bearing]")];
  if (list.dataset.wholeList === "yes") {
    // Every bearing is on this page: searching needs no trip to the server. A longer list
    // is shown a page at a time, and its search goes to the server, which has them all.
    attachSearch(form.querySelector("[data-survey-search]"), cards,
      form.querySelector("[data-search-count]"));
    form.addEventListener("submit", (event) => event.preventDefault());
  }
  const siteId = document.querySelector("[data-keep-site]")?.dataset.keepSite;
  const showMarks = async () => {
    let holds;
    try {
      holds = await phoneHolds(siteId, document.body.dataset.user);
    } catch (error) {
      return;
    }
    for (const card of cards()) {
      const node = card.querySelector("[data-phone-marks]");
      const text = marksText(card.dataset.bearing, holds);
      node.textContent = text;
      node.hidden = !text;
    }
  };
  showMarks();
  window.addEventListener("sitecheck:outbox", showMarks);
}

// --- the offline page of one site -----------------------------------------------------------
// The offline page of one site: the survey list from the kept site pack (in survey order,
// with search and each bearing's state as last heard), the as-built form (capture.js: drafts,
// refusals caught here, the outbox), and the confirmed, unsent and refused lists.

if (document.querySelector("[data-offline-site]")) offlinePage();

function offlinePage() {
  const root = document.querySelector("[data-offline-site]");
  const siteId = root.dataset.offlineSite;
  const form = root.querySelector("[data-offline-form]");
  const listSection = root.querySelector("[data-pack-list]");
  const lists = root.querySelectorAll("[data-lists], [data-confirmed-section]");
  const BADGES = JSON.parse(root.dataset.stateBadges || "{}");
  const user = document.body.dataset.user;
  const status = root.querySelector("[data-pack-age]");
  const offer = root.querySelector("[data-next-offer]");

  let pack = null;
  let bearing = null;

  const capture = attachCapture(form, {
    mode: "offline",
    user,
    context: () => (bearing && pack && pack.site.mirror
      ? { design: designOf(pack, bearing).input, ...pack.site.mirror }
      : null),
    onKept,
  });

  function el(tag, attrs = {}, ...children) {
    const node = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs)) {
      if (k === "class") node.className = v;
      else node.setAttribute(k, v);
    }
    node.append(...children.filter((c) => c !== null && c !== undefined));
    return node;
  }

  // A state as symbol and words, never colour alone, from the online pages' own table.
  function badge(state) {
    const b = BADGES[state] || { symbol: "•", label: state || "state not known", css_class: "" };
    return el("span", { class: `state ${b.css_class}`.trim(), "data-state": state || "" },
      el("span", { "aria-hidden": "true" }, b.symbol), ` ${b.label}`);
  }

  async function load() {
    pack = await get("packs", siteId);
    if (!pack) {
      status.textContent = "This site is not kept on this phone. With signal, open the survey list and tap “Keep for offline”.";
      return;
    }
    status.textContent = `Site pack downloaded ${age(pack.generated_at)} (${pack.bearings.length} bearings). ` +
      "Design values as of then; states as last heard from the server.";
    await showList();
    document.body.dataset.packReady = "1";
  }

  // The whole site is searched, in survey order, but only so many cards are drawn at once:
  // a phone draws ten thousand of them slowly, and nobody scrolls that far.
  const searchBox = root.querySelector("[data-survey-search]");
  const countNode = root.querySelector("[data-search-count]");
  let drawn = SHOWN_AT_ONCE;
  let drawing = 0;

  async function showList() {
    const list = root.querySelector("[data-pack-bearings]");
    const mine = ++drawing;
    let holds = { drafts: new Set(), unsent: new Set() };
    try {
      holds = await phoneHolds(siteId, user);
    } catch (error) {
      /* no IndexedDB */
    }
    // Typing starts a drawing per letter: only the one for the latest search is shown.
    if (mine !== drawing) return;
    const query = searchBox.value.trim();
    const ordered = surveyOrder(pack.bearings);
    const found = query ? ordered.filter((b) => matches(`${b.reference} ${b.location || ""}`, query)) : ordered;
    const items = found.slice(0, drawn).map((b) => {
      const marks = marksText(b.id, holds);
      const passes = designOf(pack, b).passed;
      const actions = el("div", { class: "bearing-actions" });
      if (passes) {
        const button = el("button", { type: "button", class: "primary big", "data-record-bearing": b.id },
          "Record as built", el("span", { class: "visually-hidden" }, ` for ${b.reference}`));
        button.addEventListener("click", () => openForm(b));
        actions.append(button);
      }
      return el("li", {
        class: "card bearing-card", "data-bearing": b.id, "data-state": b.state,
        "data-search-text": `${b.reference} ${b.location || ""}`,
      },
      el("div", { class: "bearing-head" }, el("strong", { class: "reference" }, b.reference), badge(b.state)),
      b.location ? el("p", { class: "location" }, b.location) : null,
      marks ? el("p", { class: "phone-marks" }, marks) : null,
      passes ? null : el("p", { class: "muted", "data-not-for-survey": "" }, "✗ Design being revised: not for survey yet."),
      actions);
    });
    if (found.length > drawn) {
      const more = el("button", { type: "button", "data-show-more": "" },
        `Show ${Math.min(SHOWN_AT_ONCE, found.length - drawn)} more of ${found.length - drawn}`);
      more.addEventListener("click", () => {
        drawn += SHOWN_AT_ONCE;
        showList();
      });
      items.push(el("li", { class: "card show-more" }, more));
    }
    list.replaceChildren(...items);
    countNode.textContent = query
      ? `${found.length} of ${ordered.length} bearings match “${query}”.`
      : found.length > drawn ? `${found.length} bearings in survey order: search to find one.` : "";
  }

  searchBox.addEventListener("input", () => {
    drawn = SHOWN_AT_ONCE;
    if (pack) showList();
  });

  function bearingInfo(b) {
    return { id: b.id, reference: b.reference, revision: b.revision, site_id: siteId, site_name: pack.site.name };
  }

  // What the engineer asked for on this bearing (measure again, remedial work), from the
  // site pack, so the inspector reads it in the basement as they would online.
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

  async function openForm(b, start = null) {
    bearing = b;
    form.querySelector("[data-form-title]").textContent = `As-built record: ${b.reference}`;
    form.querySelector("[data-form-location]").textContent = b.location || "";
    form.querySelector("[data-form-state]").replaceChildren("State as last heard: ", badge(b.state));
    const design = designOf(pack, b);
    form.querySelector("[data-form-design-fails]").hidden = Boolean(design.passed);
    showEngineerWords(b.engineer_words);
    for (const p of form.querySelectorAll("[data-designed-for]")) {
      const text = design.designed[p.dataset.designedFor];
      p.textContent = text ? `designed: ${text}` : "";
    }
    for (const old of form.querySelectorAll("[data-again-notice]")) old.remove();
    offer.hidden = true;
    await capture.open(bearingInfo(b), start);
    listSection.hidden = true;
    for (const section of lists) section.hidden = true;
    form.hidden = false;
    form.querySelector("[data-form-title]").scrollIntoView();
    document.body.dataset.formOpen = b.id;
  }

  function closeForm() {
    form.hidden = true;
    listSection.hidden = false;
    for (const section of lists) section.hidden = section.hasAttribute("data-confirmed-section") && !section.querySelector("li");
    capture.close();
    bearing = null;
    delete document.body.dataset.formOpen;
  }

  // After a record is kept: back to the list, offering the next bearing to measure in survey
  // order (one with nothing waiting on this phone).
  async function onKept(item) {
    const reference = bearing.reference;
    const after = bearing;
    closeForm();
    status.textContent = `${reference} kept in unsent.`;
    await showLists();
    let waiting = new Set();
    try {
      waiting = (await phoneHolds(siteId, user)).unsent;
    } catch (error) {
      /* no IndexedDB */
    }
    const ordered = surveyOrder(pack.bearings);
    const here = ordered.findIndex((b) => b.id === after.id);
    const next = [...ordered.slice(here + 1), ...ordered.slice(0, Math.max(0, here))]
      .find((b) => toMeasure(b) && !waiting.has(b.id));
    if (next) {
      const button = el("button", { type: "button", class: "primary big", "data-next": next.id },
        `Next to measure: ${next.reference} →`);
      button.addEventListener("click", () => openForm(next));
      offer.replaceChildren(el("span", {}, `✓ ${reference} kept in unsent. `), button);
    } else {
      offer.replaceChildren(`✓ ${reference} kept in unsent. Every bearing to measure has a record or one waiting.`);
    }
    offer.hidden = false;
    await showList();
    offer.scrollIntoView({ block: "nearest" });
    document.body.dataset.lastKept = item.uuid;
  }

  // "Record again" from the refused list: the form for the same bearing, filled with what was
  // measured, to be checked, put right and kept anew. The refused item stays on its list.
  async function recordAgain(uuid) {
    const item = await get("refused", uuid);
    const b = item && item.record && pack.bearings.find((x) => x.id === item.bearing_id);
    if (!b) {
      status.textContent = "That refused record is not for a bearing in this site pack; record it from the list.";
      return;
    }
    await openForm(b, { values: item.values || valuesOf(item.record), photos: [] });
    const notice = el("p", { class: "notice", role: "note", "data-again-notice": item.uuid },
      el("strong", {}, "Filled from a refused record"),
      ` (measured ${localTime(item.record.measured_at)}). ${refusalSentence(item)} Check each value, ` +
      "put right what was refused, then keep it. Photos are not copied: add them again.");
    form.querySelector("[data-form-errors]").before(notice);
  }

  // A record's values as the form's fields hold them (older refused items kept no form values).
  function valuesOf(record) {
    const out = {};
    for (const [name, value] of Object.entries({ ...record.measurements, ...record.checklist })) {
      out[name] = value === true ? "yes" : value === false ? "no" : String(value);
    }
    out.notes = record.notes || "";
    return out;
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
    const link = el("a", { class: "tap", href: answer.url }, "the server's re-check");
    section.querySelector("[data-confirmed-list]").prepend(el("li",
      { class: "card", "data-confirmed": answer.uuid, "data-agrees": String(agrees) },
      el("strong", {}, reference), ` · server: ${word}, utilisation ${utilisationText(answer.utilisation)}`,
      el("span", { class: "muted" }, note), " · ", link));
    if (form.hidden) section.hidden = false;
  }

  function describeItem(item) {
    const photos = item.photos.length ? ` · ${item.photos.length} photo(s) waiting` : "";
    return `${item.reference} · measured ${localTime(item.record.measured_at)}${photos}`;
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
    rl.replaceChildren(...refused.map((item) => {
      const again = el("button", { type: "button", "data-record-again": item.uuid }, "Record again from these values");
      again.addEventListener("click", () => recordAgain(item.uuid));
      return el("li", { class: "card refused-item", "data-refused-item": item.uuid },
        el("strong", {}, `✗ ${item.reference}${item.kind === "photo" ? " (a photo)" : ""}`),
        el("p", { class: "refused-reason" }, refusalSentence(item)),
        item.kind === "photo" ? null : again);
    }));
    if (!refused.length) rl.append(el("li", { class: "card muted" }, "Nothing refused."));
  }

  form.querySelector("[data-form-cancel]").addEventListener("click", async () => {
    await capture.flush();
    closeForm();
    await showList();
  });
  window.addEventListener("sitecheck:outbox", async (event) => {
    if (event.detail && event.detail.kind === "sent") {
      showConfirmed(event.detail);
      const fresh = await get("packs", siteId); // its states as the server just said
      if (fresh) pack = fresh;
      if (form.hidden) await showList();
    }
    showLists();
  });

  load().then(async () => {
    await showLists();
    if (!pack) return;
    const hash = new URLSearchParams(window.location.hash.slice(1));
    // "Record as built" tapped with no signal: the worker gave this page for the bearing's own
    // address, so its form opens at once.
    const path = window.location.pathname.match(/\/bearings\/([^/]+)\/record$/);
    const wanted = hash.get("bearing") || (path && decodeURIComponent(path[1]));
    if (hash.get("again")) await recordAgain(hash.get("again"));
    else if (wanted) {
      const b = pack.bearings.find((x) => x.id === wanted);
      if (b) await openForm(b);
    }
    document.body.dataset.offlineReady = "1";
  });
}
