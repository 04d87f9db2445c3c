// The survey list, online and offline: the same order (sitecheck/web/inspect.py survey_order),
// the same search, and what this phone holds for each bearing (a draft, a record waiting in
// unsent). Online it works on the server's list; the offline page uses its functions.

import { getAll } from "./db.js";

const RANK = { "awaiting survey": 0, remedial: 1 };
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

// The server's matches(): every word of the search in the reference or the location.
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
  attachSearch(form.querySelector("[data-survey-search]"), cards,
    form.querySelector("[data-search-count]"));
  // Searching needs no trip to the server with the script on.
  form.addEventListener("submit", (event) => event.preventDefault());
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
