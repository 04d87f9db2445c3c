// Mirrors the review half of sitecheck/bearing/serial.py (measurements_from_dict,
// checklist_from_dict) and settings_from_dict of sitecheck/bearing/review.py: an as-built
// record's measured values, its checklist and a site's review settings read from plain
// objects, refusing unknown keys and wrong types with an InputError naming the field, in
// the same words as Python.
//
// Measurements and a checklist are plain objects holding every field of Python's
// Measurements and Checklist dataclasses, null where nothing was measured or looked at.
// Review settings are a plain object of the shape ReviewSettings.as_dict() writes.

import { InputError } from "./errors.js";
import { pyFloat } from "./validate.js";

// Measurements' and Checklist's fields in their dataclass order (review.py MEASUREMENT_FIELDS,
// CHECKLIST_FIELDS): the phone's one list, read by the form and the re-check alike.
export const MEASUREMENT_FIELDS = [
  "bearing_length",
  "flange_width",
  "offset_along",
  "offset_across",
  "padstone_present",
  "padstone_length",
  "padstone_width",
  "padstone_depth",
  "padstone_concrete",
  "padstone_reinforced",
  "padstone_position",
  "padstone_offset_across",
  "wall_thickness",
  "a1",
  "a2",
  "masonry_material",
  "masonry_group",
  "unit_strength",
  "mortar",
  "collar_joint",
];
export const CHECKLIST_FIELDS = ["bedded", "packing", "cracks", "cut_units", "level"];

// Field → type, where not a float (serial.py's _KINDS, the names a record can hold).
const KINDS = {
  padstone_concrete: "str",
  padstone_position: "str",
  masonry_material: "str",
  mortar: "str",
  masonry_group: "int",
  padstone_present: "bool",
  padstone_reinforced: "bool",
  collar_joint: "bool",
  bedded: "bool",
  cracks: "bool",
  cut_units: "bool",
  level: "bool",
};

// ReviewSettings' defaults (review.py), ours unless labelled.
export const DEFAULT_SETTINGS = Object.freeze({
  threshold: 0.9, // utilisation above which the engineer looks
  rise_margin: 0.1, // allowed rise of utilisation over the design's
  tol_bearing_length: 10.0,
  tol_flange_width: 5.0,
  tol_padstone: 10.0,
  tol_wall_thickness: 5.0, // ±5 mm or ±5 %, EN 1996-2 [M]
  tol_wall_thickness_ratio: 0.05,
  tol_end_distance: 25.0,
  tol_position: 15.0,
  max_packing: 10.0,
  required: Object.freeze([
    "bearing_length",
    "padstone_present",
    "wall_thickness",
    "masonry_group",
  ]),
  required_with_padstone: Object.freeze(["padstone_length", "padstone_width", "padstone_depth"]),
});

export function measurementsFromDict(data) {
  return build(MEASUREMENT_FIELDS, orEmpty(data), "measurements");
}

export function checklistFromDict(data) {
  return build(CHECKLIST_FIELDS, orEmpty(data), "checklist");
}

// review.py's settings_from_dict: every value read as Python's float() reads it, the
// required lists as lists. Python's float() raises a bare ValueError or TypeError (no field
// named) for a value it cannot read; here that is an InputError naming the setting, since
// the phone has no other way to say which one.
export function settingsFromDict(data) {
  const out = { ...DEFAULT_SETTINGS };
  for (const [key, value] of Object.entries(data)) {
    if (!Object.hasOwn(DEFAULT_SETTINGS, key)) {
      throw new InputError(`review.${key}`, value, "a known review setting", "unknown-field");
    }
    out[key] = key.startsWith("required") ? listOf(key, value) : pyFloatOf(key, value);
  }
  return out;
}

// Python's `data or {}`: every falsy value reads as no values at all.
function orEmpty(data) {
  return pyFalsy(data) ? {} : data;
}

function pyFalsy(value) {
  if (value === null || value === undefined || value === false || value === 0 || value === "") {
    return true;
  }
  if (Array.isArray(value)) return value.length === 0;
  return isPlainObject(value) && Object.keys(value).length === 0;
}

function isPlainObject(value) {
  return typeof value === "object" && value !== null && !Array.isArray(value);
}

// serial.py's _build for a dataclass whose fields all have defaults (None).
function build(names, data, prefix) {
  if (!isPlainObject(data)) {
    throw new InputError(prefix, data, "an object of named values", "bad-shape");
  }
  const known = new Set(names);
  const unknown = Object.keys(data).filter((name) => !known.has(name));
  if (unknown.length) {
    const name = unknown.sort(byCodePoint)[0];
    throw new InputError(
      `${prefix}.${name}`,
      data[name],
      `a known ${prefix} value`,
      "unknown-field",
    );
  }
  const out = Object.fromEntries(names.map((name) => [name, null]));
  for (const [name, value] of Object.entries(data)) {
    const kind = KINDS[name] ?? "float";
    const empty = value === null || value === undefined;
    out[name] = empty ? null : typed(`${prefix}.${name}`, value, kind);
  }
  return out;
}

// Python's sorted() orders text by code point; JavaScript's sort() by UTF-16 unit, which
// differs for characters beyond U+FFFF.
function byCodePoint(a, b) {
  const [x, y] = [Array.from(a), Array.from(b)];
  for (let i = 0; i < Math.min(x.length, y.length); i += 1) {
    const d = x[i].codePointAt(0) - y[i].codePointAt(0);
    if (d) return d;
  }
  return x.length - y.length;
}

// serial.py's _typed.
function typed(field, value, kind) {
  if (kind === "bool") {
    if (typeof value === "boolean") return value;
    throw new InputError(field, value, "true or false", "not-a-choice");
  }
  if (kind === "str") {
    if (typeof value === "string") return value;
    throw new InputError(field, value, "text", "not-text");
  }
  if (typeof value !== "number") {
    throw new InputError(field, value, "a number", "not-a-number");
  }
  if (kind === "int" && !Number.isInteger(value)) {
    throw new InputError(field, value, "a whole number", "not-whole");
  }
  return value;
}

// Python's float() of a setting: numbers, true/false (1.0/0.0) and numeric text.
function pyFloatOf(key, value) {
  if (typeof value === "number") return value;
  if (typeof value === "boolean") return value ? 1.0 : 0.0;
  const number = typeof value === "string" ? pyFloat(value) : null;
  if (number === null) {
    throw new InputError(`review.${key}`, value, "a number", "not-a-number");
  }
  return number;
}

// Python's tuple() of a setting's list: a list, or the characters of a text.
function listOf(key, value) {
  if (Array.isArray(value)) return [...value];
  if (typeof value === "string") return Array.from(value);
  throw new InputError(`review.${key}`, value, "a list of measured fields", "not-a-list");
}
