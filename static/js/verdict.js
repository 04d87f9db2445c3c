// The provisional verdict beside the as-built form: the phone's mirror of the core re-checks
// the bearing as each value is typed, with or without signal. The server's re-check stays
// the authority: what is shown here is marked provisional, and the verdict it showed is
// sent with the record so the server can report any difference as an event.
//
// attachVerdict(form, panel, context) works on any form whose fields carry the as-built
// record's names (the online form and the offline site page both do); context holds the
// bearing's design input, the site's code basis and review settings.

import { basisFromDict, ec6UkNa } from "./bearing/basis.js";
import { quantity, utilisationText } from "./bearing/format.js";
import { recheckRecord } from "./bearing/record.js";
import { remedy } from "./bearing/remedy.js";
import { CHECKLIST_FIELDS, MEASUREMENT_FIELDS } from "./bearing/serial.js";
import { SYMBOL_WORDS } from "/phone-words.js";
import { NumberRefused, readNumber } from "./bearing/typed.js";
import { coreSentence, designSentence, designedValue, fieldOf, phoneWords } from "./messages.js";

const TRI_STATE = new Set([
  "padstone_present", "padstone_reinforced", "collar_joint", "bedded", "cracks", "cut_units",
  "level",
]);
const TEXT = new Set(["padstone_concrete", "padstone_position", "masonry_material", "mortar"]);
/** A typed number by the one reader's rules (bearing/typed.js, the twin of the server's
 * bearing/typed.py), worded as the server's form words it: {value} (null when empty), or
 * {value: null, refusal} with the reader's NumberRefused. */
export function readTyped(name, raw) {
  const words = phoneWords().labels[name] || {};
  const [least, greatest] = words.bounds || [null, null];
  try {
    const value = readNumber(raw, { unit: words.unit || "", least, greatest, example: words.example || null });
    return { value };
  } catch (error) {
    if (error instanceof NumberRefused) return { value: null, refusal: error };
    throw error;
  }
}

function valueOf(form, name) {
  const field = form.elements.namedItem(name);
  if (!field) return "";
  // A RadioNodeList's value is the checked radio's, "" when none is.
  return field.value ?? "";
}

/** The measurements and checklist the form holds now, as the server would read them, the
 * fields whose text the reader refused (left out, as the server leaves them out), and why the
 * bearing could not be measured (null when it was). */
export function readForm(form) {
  const why = valueOf(form, "why_not_measured") || null;
  const measurements = {};
  const checklist = {};
  const unreadable = [];
  const put = (target, name) => {
    const raw = valueOf(form, name);
    if (TRI_STATE.has(name)) {
      if (raw === "yes") target[name] = true;
      else if (raw === "no") target[name] = false;
    } else if (name === "masonry_group") {
      if (raw) target[name] = Number.parseInt(raw, 10);
    } else if (TEXT.has(name)) {
      const text = String(raw).trim();
      if (text) target[name] = text;
    } else {
      const parsed = readTyped(name, raw);
      if (parsed.refusal) unreadable.push({ name, refusal: parsed.refusal });
      else if (parsed.value !== null) target[name] = parsed.value;
    }
  };
  // Read even when the bearing could not be measured: the core refuses a measured value on
  // such a record, and the phone says so rather than drop what was typed.
  for (const name of MEASUREMENT_FIELDS) put(measurements, name);
  for (const name of CHECKLIST_FIELDS) put(checklist, name);
  return { measurements, checklist, unreadable, why };
}

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === "class") node.className = v;
    else node.setAttribute(k, v);
  }
  node.append(...children.filter((c) => c !== null && c !== undefined));
  return node;
}

// Numbers in the trace go through the core's one formatter (bearing/format.js), so the
// phone shows the digits and units the server's pages show.
export { utilisationText };

function checkTitle(result, code) {
  const found = result.checks.find((c) => c.code === code);
  return found ? found.title : code;
}

// A symbol beside plain words (sitecheck/web/symbols.py words_for): the glossary's, else
// the label of the step that works it out.
function wordsFor(symbol, steps, words = SYMBOL_WORDS) {
  if (words && words[symbol]) return words[symbol];
  const step = steps.find((s) => s.symbol === symbol);
  return step ? String(step.label).toLowerCase() : "";
}

function stepsTable(steps, words) {
  const body = el("tbody");
  for (const s of steps) {
    const inputs = s.inputs.length
      ? el("span", { class: "muted" }, s.inputs
        .map(([sym, v, unit]) => {
          const w = wordsFor(sym, steps, words);
          return `${w ? `${w} ` : ""}${sym} = ${quantity(v, unit)}`;
        })
        .join("; "))
      : null;
    body.append(el("tr", {},
      el("td", { class: "title" }, s.label),
      el("td", { "data-label": "Worked out" }, el("code", {}, `${s.symbol} = ${s.formula}`), inputs ? el("br") : null, inputs),
      el("td", { class: "num", "data-label": "Value" }, el("strong", {}, quantity(s.value, s.unit))),
      el("td", { class: "clause", "data-label": "Clause" }, `${s.clause} [${s.source}]`)));
  }
  return el("div", { class: "scroll" }, el("table", { class: "steps stacks" }, body));
}

/** The full calculation, as the server's pages show it, for showing the contractor why.
 * Built when first opened: dozens of table rows on every keystroke would cost a slow phone
 * more than the re-check itself. */
export function traceDetails(result, open = false, words = SYMBOL_WORDS) {
  const details = el("details", { class: "trace", "data-phone-trace": "" },
    el("summary", {}, el("span", {}, `Full calculation (${result.basis})`)));
  let filled = false;
  const fill = () => {
    if (filled || !details.open) return;
    filled = true;
    for (const note of result.notes) details.append(el("p", { class: "muted" }, note));
    details.append(el("h3", {}, "Materials"), stepsTable(result.strengths.steps, words));
    for (const c of result.checks) {
      details.append(el("h3", {}, `${c.title} — ${utilisationText(c.utilisation)} ${c.passed ? "✓" : "✗"}`));
      for (const note of c.notes) details.append(el("p", { class: "muted" }, note));
      details.append(stepsTable(c.steps, words));
    }
    details.append(el("p", { class: "muted" },
      "Source labels: S seen in a published source · P partly seen · M from memory, confirm " +
      "against the standard · CP common practice · ours: a choice of this tool."));
  };
  details.addEventListener("toggle", fill);
  if (open) {
    details.open = true;
    fill();
  }
  return details;
}

/** The smallest standard padstone and the shortest bearing that would pass, in the words of
 * Remedy.describe() (sitecheck/bearing/remedy.py): a hint for the conversation on site, not
 * an instruction (that is the engineer's). */
export function remedyText(outcome, basis) {
  return remedy(outcome.as_built, basis ? basisFromDict(basis) : ec6UkNa()).words;
}

function reasonList(reasons) {
  if (!reasons.length) return el("p", { class: "muted" }, "No review reasons.");
  return el("ul", { class: "reasons" }, ...reasons.map((r) => el("li",
    { class: r.severity, "data-code": r.code },
    el("strong", {}, r.severity === "blocks" ? "Blocks release:" : "Note:"),
    ` ${r.sentence}`)));
}

/** What the mirror says about the form's values now: the outcome object the panel shows
 * and the verdict sent with the record. Pure apart from the clock. */
export function provisionalOutcome(context, measurements, checklist, why = null) {
  const started = performance.now();
  const outcome = recheckRecord(
    context.design, measurements, checklist, context.basis, context.settings, why,
  );
  return { outcome, ms: performance.now() - started };
}

export function verdictOf(outcome) {
  if (!outcome.result) return null;
  const result = outcome.result;
  return {
    engine: "phone mirror",
    passed: result.passed,
    governing: result.governing,
    utilisation: result.utilisation,
    reasons: outcome.reasons.map((r) => r.code),
    blocking: outcome.blocking,
  };
}

// The bar is the one live region (role=status): it is read out when the verdict changes,
// not on every key, and the panel below it is redrawn silently.
function setBar(bar, text, verdict) {
  if (bar.textContent !== text) bar.textContent = text;
  bar.dataset.verdict = verdict;
  bar.hidden = false;
}

// The verdict in one word, with a symbol: "fails" and "needs the engineer" differ in
// colour, symbol and word; before anything is measured it is neutral.
export function verdictKind(outcome, nothingYet = false, why = null) {
  if (outcome.error) return "cannot";
  if (why) return "unmeasured";
  if (nothingYet) return "none";
  if (!outcome.result.passed) return "fails";
  return outcome.blocking ? "review" : "pass";
}

const BAR_WORDS = {
  none: "○ not measured yet",
  pass: "✓ within design",
  review: "? needs the engineer",
  fails: "✗ fails as built",
  cannot: "✗ cannot re-check yet (see below)",
  unmeasured: "? could not measure: goes to the engineer",
};

function renderBar(bar, outcome, kind) {
  if (!bar) return;
  const tail = ["pass", "review", "fails"].includes(kind)
    ? ` · utilisation ${utilisationText(outcome.result.utilisation)}` : "";
  setBar(bar, `Provisional: ${BAR_WORDS[kind]}${tail}`, kind);
}

// The core's refusal in the inspector's words: the field's label, the value typed, what is
// expected (messages.js), never the core's path.
function refusalText(form, error, design) {
  const name = fieldOf(error.field);
  if (!name) return designSentence(error);
  const field = form && form.elements.namedItem(name);
  const typed = field && "value" in field ? field.value : "";
  const designed = designedValue(design, name) === null ? ""
    : form?.querySelector(`[data-designed-for="${name}"]`)?.textContent.replace(/^designed: /, "") || "";
  return coreSentence(name, error, typed, designed);
}

function render(panel, outcome, unreadable, ms, ctx, kind, form) {
  const traceWasOpen = Boolean(panel.querySelector("[data-phone-trace]")?.open);
  const parts = [el("p", { class: "provisional-label" },
    el("strong", {}, "Provisional"),
    " — worked out on this phone from the values above; the server's re-check confirms it when the record is sent.")];
  if (kind === "none") {
    parts.push(el("p", { class: "verdict none", "data-verdict": "none" },
      "○ Not measured yet: the verdict appears as you type the values you measure."));
  } else if (kind === "unmeasured") {
    parts.push(el("p", { class: "verdict review", "data-verdict": "unmeasured" },
      "? Could not measure: the record goes to the engineer, who decides what happens next."));
    parts.push(el("h3", {}, "Review reasons"), reasonList(outcome.reasons));
  } else if (outcome.error) {
    parts.push(el("p", { class: "verdict fails", "data-verdict": "cannot" },
      `✗ Cannot re-check yet: ${refusalText(form, outcome.error, ctx.design)}`));
  } else {
    const result = outcome.result;
    const word = { pass: "✓ Within design", review: "? Needs the engineer", fails: "✗ Fails as built" }[kind];
    parts.push(el("p", { class: `verdict ${kind}`, "data-verdict": kind },
      `${word} — governing: ${checkTitle(result, result.governing)}, utilisation ${utilisationText(result.utilisation)}`));
    if (!result.passed) {
      parts.push(el("p", { class: "remedy-hint", "data-remedy-hint": "" },
        el("strong", {}, "What would pass: "), remedyText(outcome, ctx.basis),
        ". The engineer decides what is done."));
    }
    parts.push(el("h3", {}, "Review reasons"), reasonList(outcome.reasons));
    parts.push(traceDetails(result, traceWasOpen));
  }
  for (const u of unreadable) {
    parts.push(el("p", { class: "field-error" },
      `✗ ${u.refusal.sentence(u.label)} Left out of this verdict until it is put right.`));
  }
  panel.replaceChildren(...parts);
  panel.dataset.ms = ms.toFixed(2);
}

/** Re-check on every change of the form and keep the panel and the hidden verdict field
 * up to date. `context` is the object or a function returning it (null: nothing to check
 * yet). Returns a function that runs it now (for a form filled or reset by code). */
export function attachVerdict(form, panel, context, bar = null) {
  const hidden = form.elements.namedItem("provisional");
  const labels = {};
  for (const label of form.querySelectorAll("[data-label]")) {
    const name = label.closest("[data-field]")?.dataset.field;
    if (name && !labels[name]) labels[name] = label.dataset.label;
  }
  let last = null;
  const update = (event) => {
    const { measurements, checklist, unreadable, why } = readForm(form);
    // A field's change event follows its input events when it loses focus; re-drawing the
    // same verdict then would swap the panel under a finger tapping it.
    const key = JSON.stringify([measurements, checklist, unreadable, why]);
    if (event && key === last) return null;
    last = key;
    const ctx = typeof context === "function" ? context() : context;
    if (!ctx) return null;
    let outcome;
    let ms = 0;
    try {
      ({ outcome, ms } = provisionalOutcome(ctx, measurements, checklist, why));
    } catch (error) {
      // A fault in the mirror must never stop the inspector recording: say so and carry on.
      console.error("sitecheck: the phone's re-check failed:", error);
      panel.replaceChildren(el("p", { class: "muted" },
        "The phone could not work out a verdict for these values; the server will when the record is sent."));
      if (hidden) hidden.value = JSON.stringify({ engine: "phone mirror", failed: String(error).slice(0, 200) });
      return null;
    }
    const nothingYet = !unreadable.length && !Object.keys(measurements).length &&
      !Object.keys(checklist).length;
    const kind = verdictKind(outcome, nothingYet, why);
    render(panel, outcome, unreadable.map((u) => ({ ...u, label: labels[u.name] || phoneWords().labels[u.name]?.label || "A value" })), ms,
      ctx, kind, form);
    renderBar(bar, outcome, kind);
    const verdict = verdictOf(outcome);
    if (hidden) hidden.value = verdict ? JSON.stringify(verdict) : "";
    panel.dataset.verdictReady = "1";
    return { outcome, verdict, ms };
  };
  form.addEventListener("input", update);
  form.addEventListener("change", update);
  update();
  return update;
}

// Reasons only the server can give (it knows the current design revision and its own
// clock); the phone's verdict is not expected to hold them.
const SERVER_ONLY = new Set(["older-design-revision", "clock-ahead"]);

/** Whether the server's answer to a sent record says what the phone showed: the same
 * verdict, the same reasons (bar the server's own) and the same utilisation to 1e-6. */
export function serverAgrees(provisional, answer) {
  if (!provisional || !answer) return null;
  const codes = answer.reasons.map((r) => r.code).filter((c) => !SERVER_ONLY.has(c));
  const u = answer.utilisation;
  const p = provisional.utilisation;
  const sameU = u === null || p === null || p === undefined
    ? u === p || (u === null && p === undefined)
    : Math.abs(u - p) <= 1e-6 * Math.max(1, Math.abs(u));
  return provisional.passed === answer.passed && sameU &&
    JSON.stringify(codes) === JSON.stringify(provisional.reasons);
}


