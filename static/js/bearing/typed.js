// Mirrors sitecheck/bearing/typed.py: the one reader of numbers as people type them. The
// rules, and why, are in the Python module's docstring; tests/vectors/typed-numbers.json
// holds the two to the same readings and the same words.

import { number } from "./format.js";

// Written out: Python's and JavaScript's ideas of white space differ.
const S = "[ \\t\\n\\r\\f\\v\\u00a0\\u202f]";
const EDGES = new RegExp(`^${S}+|${S}+$`, "g");
const INSIDE = new RegExp(S, "g");
const PLAIN = /^[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$/;
const GROUPED = /^[+-]?[0-9]{1,3}(?:,[0-9]{3})+\.[0-9]*(?:[eE][+-]?[0-9]+)?$/;
const NOT_FINITE = /^[+-]?(?:inf|infinity|nan)$/i;
const EITHER_WAY = /^[+-]?[0-9]{1,3},[0-9]{3}$/;
const UNIT_AFTER = new RegExp(`^(.*?)${S}*(mm|cm|kN/m|kN|N/mm²|N/mm2|N/mm|MPa|m|N|°|deg)$`, "is");
const SAME_UNIT = { "n/mm2": "n/mm²", mpa: "n/mm²", deg: "°" };
const OTHER_DIGIT = /(?![0-9])\p{Nd}/u;

export const EXAMPLES = { mm: "215", kN: "62", "kN/m": "20", "N/mm²": "7.3", "°": "45" };
const DEFAULT_EXAMPLE = "0.85";
const SHOWN_TEXT = 40;
const EITHER =
  "(a comma could be a decimal comma or a thousands separator, so it is read neither way)";

export class NumberRefused extends Error {
  constructor(typed, code, problem, expected) {
    super("");
    this.name = "NumberRefused";
    this.typed = typed;
    this.code = code;
    this.problem = problem;
    this.expected = expected;
    this.message = this.sentence();
  }

  sentence(label = null) {
    const head = label ? `${label}: ` : "";
    return `${head}“${shown(this.typed)}” ${this.problem}; expected ${this.expected}.`;
  }

  asDict(label = null) {
    return { code: this.code, expected: this.expected, sentence: this.sentence(label) };
  }
}

// Typed text as a message repeats it: its first 40 characters (code points, as Python counts).
export function shown(text) {
  const chars = Array.from(text);
  return chars.length <= SHOWN_TEXT ? text : `${chars.slice(0, SHOWN_TEXT).join("")}…`;
}

export function trimmed(text) {
  return text.replace(EDGES, "");
}

export function numberText(text) {
  if (GROUPED.test(text)) return text.replaceAll(",", "");
  return PLAIN.test(text) ? text : null;
}

export function readNumber(text, { unit = "", least = null, greatest = null, example = null, shift = 0 } = {}) {
  if (text === null || text === undefined) return null;
  const typed = trimmed(String(text));
  if (!typed) return null;
  const words = new Words(unit, least, greatest, example);
  const plain = numberText(typed);
  if (plain === null) throw refusal(typed, typed, words);
  let value = Number(plain);
  if (!Number.isFinite(value)) throw words.notFinite(typed);
  if ((least !== null && value < least) || (greatest !== null && value > greatest)) {
    throw words.outOfRange(typed);
  }
  if (shift) {
    const [mantissa, exponent = "0"] = plain.toLowerCase().split("e");
    value = Number(`${mantissa}e${Number.parseInt(exponent, 10) + shift}`);
  }
  return value;
}

class Words {
  constructor(unit, least, greatest, example) {
    this.unit = unit;
    this.inUnit = unit ? ` in ${unit}` : "";
    this.least = least;
    this.greatest = greatest;
    this.example = example || EXAMPLES[unit] || DEFAULT_EXAMPLE;
  }

  notFinite(typed) {
    if (this.least !== null || this.greatest !== null) return this.outOfRange(typed);
    return new NumberRefused(typed, "not-finite", "is not a finite number",
      `a finite number${this.inUnit}, e.g. ${this.example}`);
  }

  outOfRange(typed) {
    const after = this.unit ? ` ${this.unit}` : "";
    let expected;
    if (this.least !== null && this.greatest !== null) {
      expected = `a number from ${number(this.least)} to ${number(this.greatest)}${after}`;
    } else if (this.least !== null) {
      expected = `a number of at least ${number(this.least)}${after}`;
    } else {
      expected = `a number of at most ${number(this.greatest)}${after}`;
    }
    return new NumberRefused(typed, "out-of-range", "is out of range", expected);
  }
}

function refusal(typed, text, words) {
  const inUnit = words.inUnit;
  if (NOT_FINITE.test(text)) return words.notFinite(typed);
  if (OTHER_DIGIT.test(text)) {
    return new NumberRefused(typed, "digits", "has digits other than 0 to 9",
      `a number${inUnit} written with the digits 0 to 9`);
  }
  const unitTyped = UNIT_AFTER.exec(text);
  if (unitTyped && trimmed(unitTyped[1])) {
    const head = trimmed(unitTyped[1]);
    if (numberText(head) === null) return refusal(typed, head, words);
    return unitRefusal(typed, head, unitTyped[2], words);
  }
  if (text.includes("_") && numberText(text.replaceAll("_", "")) !== null) {
    return new NumberRefused(typed, "underscore", "has an underscore",
      `a number${inUnit} without underscores: write ${text.replaceAll("_", "")}`);
  }
  const spaceless = text.replace(INSIDE, "");
  if (spaceless !== text && numberText(spaceless) !== null) {
    return new NumberRefused(typed, "space", "has a space inside it",
      `a number${inUnit} without spaces: write ${spaceless}`);
  }
  if (text.includes(",")) {
    const found = commaRefusal(typed, text, inUnit);
    if (found) return found;
  }
  return new NumberRefused(typed, "not-a-number", "is not a number",
    `a number${inUnit}, e.g. ${words.example}`);
}

function commaRefusal(typed, text, inUnit) {
  if (text.split(",").length === 2 && !text.includes(".")) {
    if (EITHER_WAY.test(text)) {
      const sign = "+-".includes(text[0]) ? text[0] : "";
      const [whole, thousands] = text.replace(/^[+-]+/, "").split(",");
      return new NumberRefused(typed, "comma-either-way", "has a comma",
        `a number${inUnit} without the comma or with a decimal point: write ` +
        `${sign}${whole}${thousands} or ${sign}${whole}.${thousands} ${EITHER}`);
    }
    const pointed = text.replace(",", ".");
    if (numberText(pointed) !== null) {
      return new NumberRefused(typed, "decimal-comma", "has a comma",
        `a number${inUnit} with a decimal point: write ${pointed} ${EITHER}`);
    }
  }
  if (numberText(text.replaceAll(",", "")) !== null) {
    return new NumberRefused(typed, "commas", "has commas",
      `a number${inUnit} with a point for the decimal and commas, if any, only between ` +
      "groups of three digits before it, e.g. 1,234.5 or 1234.5");
  }
  return null;
}

function unitRefusal(typed, head, unitTyped, words) {
  const same = (unit) => {
    const low = unit.toLowerCase();
    return SAME_UNIT[low] ?? low;
  };
  let expected;
  if (!words.unit) expected = `a number without a unit: write ${head}`;
  else if (same(unitTyped) === same(words.unit)) {
    expected = `a number in ${words.unit}, without the unit: write ${head}`;
  } else {
    expected = `a number in ${words.unit}, without a unit (this value is in ${words.unit}, not ${unitTyped})`;
  }
  return new NumberRefused(typed, "unit", "has a unit", expected);
}
