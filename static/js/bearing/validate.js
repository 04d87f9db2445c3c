// Mirrors sitecheck/bearing/validate.py: refuse inputs that make no physical sense before
// any formula sees them. Each problem names the field, the value and what was expected,
// in the same order and words as Python's input_errors.
//
// Python's validate() first tries a fast path that only ever agrees with the full walk;
// here the walk is a generator that validate() stops at the first problem, which is fast
// enough for one bearing per keystroke, so there is no separate fast path to keep in step.

import { BS5628, MORTAR_DESIGNATION } from "./basis.js";
import { InputError } from "./errors.js";
import { number } from "./format.js";
import { NumberRefused, readNumber } from "./typed.js";
import {
  ACROSS,
  CONDITIONING,
  CONTROL_LEVELS,
  MATERIALS,
  MEMBERS,
  MORTARS,
  ORIENTATIONS,
  PADSTONE_POSITIONS,
  REACTION_POSITIONS,
} from "./inputs.js";

// Lengths in mm: [least, greatest]. A value below a tenth of the least, but positive, is
// probably metres.
export const LENGTHS = {
  "beam.flange_width": [30.0, 1000.0],
  "beam.bearing_length": [20.0, 1000.0],
  "padstone.length": [50.0, 3000.0],
  "padstone.width": [50.0, 1000.0],
  "padstone.depth": [40.0, 1000.0],
  "wall.thickness": [50.0, 1000.0],
  "wall.height_to_bearing": [100.0, 30000.0],
  "wall.clear_height": [100.0, 30000.0],
  "wall.effective_height": [100.0, 60000.0],
  "wall.effective_thickness": [50.0, 1000.0],
};
const GEOMETRY_TOLERANCE = 0.5; // mm: measurement rounding at the edges of the support

// How much a padstone may stand proud of a wall measured on site: ±5 mm or ±5 % of the
// thickness (EN 1996-2 tolerance, from memory). Only the part over the wall bears.
export function wallTolerance(t) {
  const share = 0.05 * t;
  return share > 5.0 ? share : 5.0; // Python's max(5.0, 0.05 t)
}

// Throw the first InputError found, or return.
export function validate(inp, basis) {
  for (const problem of inputErrorsIter(inp, basis)) throw problem;
}

// Every problem with an input, in the order the form shows the fields, as plain objects
// {field, value, expected, code} equal to Python's [e.as_dict() for e in input_errors(...)].
export function inputErrors(inp, basis) {
  return Array.from(inputErrorsIter(inp, basis), (e) => e.asDict());
}

// The same problems as InputError objects (each with its message).
export function* inputErrorsIter(inp, basis) {
  const { load, beam, wall } = inp;
  const pad = inp.padstone ?? null;

  if (!isNumber(load.reaction) || load.reaction <= 0) {
    yield new InputError("load.reaction", load.reaction, "a positive end reaction", "not-positive");
  } else if (load.reaction > 5e6) {
    yield new InputError(
      "load.reaction",
      load.reaction,
      "at most 5000 kN for one bearing",
      "out-of-range",
    );
  }
  if (!isNumber(load.wall_load) || !(0 <= load.wall_load && load.wall_load <= 2000)) {
    yield new InputError(
      "load.wall_load",
      load.wall_load,
      "0 to 2000 kN/m of other load",
      "out-of-range",
    );
  }

  const lengths = [
    ["beam.flange_width", beam.flange_width],
    ["beam.bearing_length", beam.bearing_length],
    ["wall.thickness", wall.thickness],
    ["wall.height_to_bearing", wall.height_to_bearing],
    ["wall.clear_height", wall.clear_height],
    ["wall.effective_height", wall.effective_height],
    ["wall.effective_thickness", wall.effective_thickness],
  ];
  if (pad !== null) {
    lengths.push(["padstone.length", pad.length]);
    lengths.push(["padstone.width", pad.width]);
    lengths.push(["padstone.depth", pad.depth]);
  }
  let badLengths = false;
  for (const [name, value] of lengths) {
    if (value == null && OPTIONAL_LENGTHS.has(name)) continue;
    const problem = lengthProblem(name, value);
    if (problem) {
      badLengths = true;
      yield problem;
    }
  }

  if (!ORIENTATIONS.includes(beam.orientation)) {
    yield choice("beam.orientation", beam.orientation, ORIENTATIONS);
  }
  if (!MEMBERS.includes(beam.member)) yield choice("beam.member", beam.member, MEMBERS);
  if (!REACTION_POSITIONS.includes(beam.reaction_at)) {
    yield choice("beam.reaction_at", beam.reaction_at, REACTION_POSITIONS);
  }

  for (const [name, value] of [
    ["wall.a1", wall.a1],
    ["wall.a2", wall.a2],
  ]) {
    if (value == null) continue;
    if (!isNumber(value)) {
      yield new InputError(name, value, "a distance in mm", "not-a-number");
    } else if (value < 0) {
      yield new InputError(
        name,
        value,
        "0 or more: a negative distance puts the bearing beyond the wall's end",
        "beyond-wall",
      );
    } else if (value > 100_000) {
      yield new InputError(
        name,
        value,
        "at most 100 m; leave it empty for a wall that runs on",
        "out-of-range",
      );
    }
  }
  for (const [name, value] of [
    ["beam.offset_along", beam.offset_along],
    ["beam.offset_across", beam.offset_across],
  ]) {
    if (value != null && (!isNumber(value) || Math.abs(value) > 2000)) {
      yield new InputError(name, value, "an offset within ±2000 mm", "out-of-range");
    }
  }

  yield* masonryErrors(inp, basis);

  if (pad !== null) {
    if (pad.f_ck != null) {
      if (!isNumber(pad.f_ck) || !(8 <= pad.f_ck && pad.f_ck <= 90)) {
        yield new InputError("padstone.f_ck", pad.f_ck, "8 to 90 N/mm²", "out-of-range");
      }
    } else if (concreteClassFck(pad.concrete) === null) {
      yield new InputError(
        "padstone.concrete",
        pad.concrete,
        "a concrete class such as C25/30, or a declared f_ck",
        "bad-choice",
      );
    }
    if (typeof pad.reinforced !== "boolean") {
      yield new InputError(
        "padstone.reinforced",
        pad.reinforced,
        "true (reinforced) or false (plain concrete)",
        "not-a-choice",
      );
    }
    const position = pad.position_across ?? null;
    const offset = pad.offset_across ?? null;
    if (position !== null && !PADSTONE_POSITIONS.includes(position)) {
      yield choice("padstone.position_across", position, PADSTONE_POSITIONS);
    } else if (position === "offset" && offset === null) {
      yield new InputError(
        "padstone.offset_across",
        null,
        "the padstone's centre from the wall's centre line, mm, for an offset position",
        "missing",
      );
    } else if (offset !== null && position !== "offset") {
      yield new InputError(
        "padstone.offset_across",
        offset,
        "empty unless the padstone's position across the wall is offset",
        "not-needed",
      );
    } else if (offset !== null && (!isNumber(offset) || Math.abs(offset) > 2000)) {
      yield new InputError(
        "padstone.offset_across",
        offset,
        "an offset within ±2000 mm",
        "out-of-range",
      );
    }
  }

  if (![1, 2, 3].includes(inp.bearing_type)) {
    yield new InputError(
      "bearing_type",
      inp.bearing_type,
      "BS 5628-1 bearing type 1, 2 or 3",
      "bad-choice",
    );
  }
  if (inp.e_mk != null) {
    const t = wall.thickness;
    const half = isNumber(t) && 0 < t && t < Infinity ? t / 2 : null;
    if (!isNumber(inp.e_mk) || !(0 <= inp.e_mk && inp.e_mk < (half === null ? Infinity : half))) {
      // At e_mk = t/2 the factor 1 − 2 e_mk/t is 0: the wall has no capacity left.
      yield new InputError(
        "e_mk",
        inp.e_mk,
        half === null
          ? "a finite eccentricity of 0 mm or more"
          : `0 mm or more and less than half the wall's thickness (${number(half)} mm)`,
        "out-of-range",
      );
    }
  }
  for (const [name, value] of [
    ["phi_m", inp.phi_m],
    ["beta_s", inp.beta_s],
  ]) {
    if (value != null && (!isNumber(value) || !(0 < value && value <= 1))) {
      yield new InputError(name, value, "a factor above 0 and at most 1", "out-of-range");
    }
  }

  // The geometry rules do arithmetic on the offsets: one that is not a number has been
  // reported above.
  const badOffsets = [beam.offset_along, beam.offset_across].some(
    (v) => v != null && !isNumber(v),
  );
  if (badLengths || badOffsets || !ORIENTATIONS.includes(beam.orientation)) return;
  yield* geometryErrors(inp);
}

const OPTIONAL_LENGTHS = new Set([
  "wall.clear_height",
  "wall.effective_height",
  "wall.effective_thickness",
]);

function* geometryErrors(inp) {
  const { beam, wall } = inp;
  const pad = inp.padstone ?? null;
  const across = beam.orientation === ACROSS;
  const footAlong = across ? beam.flange_width : beam.bearing_length;
  let footAcross = across ? beam.bearing_length : beam.flange_width;
  const t = wall.thickness;
  const tol = GEOMETRY_TOLERANCE;
  let supLen;
  let supWid;

  if (pad !== null) {
    if (pad.width > t + wallTolerance(t)) {
      yield new InputError(
        "padstone.width",
        pad.width,
        `no wider than the wall (${number(t)} mm, ` +
          `give or take ${number(wallTolerance(t))} mm); ` +
          "a padstone overhanging the wall is not covered",
        "wider-than-wall",
      );
      return;
    }
    const spanRoom = across ? pad.width : pad.length;
    if (beam.bearing_length > spanRoom + tol) {
      yield new InputError(
        "beam.bearing_length",
        beam.bearing_length,
        `no longer than the padstone it sits on (${number(spanRoom)} mm)`,
        "longer-than-padstone",
      );
      return;
    }
    // Across the wall the flange must sit wholly on the padstone; in line it may overhang
    // the padstone's sides and only the part over the padstone bears.
    if (across && beam.flange_width > pad.length + tol) {
      yield new InputError(
        "beam.flange_width",
        beam.flange_width,
        `no wider than the padstone under it (${number(pad.length)} mm)`,
        "off-padstone",
      );
      return;
    }
    if (!across) footAcross = pyMin(footAcross, pad.width);
    supLen = pad.length;
    supWid = pad.width;
  } else {
    if (!across && beam.flange_width > t + tol) {
      yield new InputError(
        "beam.flange_width",
        beam.flange_width,
        `no wider than the wall (${number(t)} mm) for a beam in line with it and no padstone`,
        "wider-than-wall",
      );
      return;
    }
    if (across && beam.bearing_length > t + tol) {
      yield new InputError(
        "beam.bearing_length",
        beam.bearing_length,
        `no longer than the wall is thick (${number(t)} mm)`,
        "longer-than-wall",
      );
      return;
    }
    supLen = footAlong;
    supWid = t;
  }

  if (pad !== null && pad.position_across === "offset" && isNumber(pad.offset_across)) {
    const room = pyMax(0.0, (t - pyMin(pad.width, t)) / 2);
    if (Math.abs(pad.offset_across) > room + tol) {
      yield new InputError(
        "padstone.offset_across",
        pad.offset_across,
        `within ±${number(room)} mm so the padstone stays on the wall`,
        "off-wall",
      );
    }
  }
  if (beam.offset_along != null && pad !== null) {
    const room = (supLen - footAlong) / 2;
    if (Math.abs(beam.offset_along) > room + tol) {
      yield new InputError(
        "beam.offset_along",
        beam.offset_along,
        `within ±${number(room)} mm so the flange stays wholly on the padstone`,
        "off-padstone",
      );
    }
  }
  if (beam.offset_across != null) {
    const room = (supWid - footAcross) / 2;
    if (Math.abs(beam.offset_across) > room + tol) {
      const what = pad !== null ? "padstone" : "wall";
      yield new InputError(
        "beam.offset_across",
        beam.offset_across,
        `within ±${number(room)} mm so the flange stays wholly on the ${what}`,
        pad !== null ? "off-padstone" : "off-wall",
      );
    }
  }
}

function* masonryErrors(inp, basis) {
  const mas = inp.masonry;
  if (!MATERIALS.includes(mas.material)) {
    yield choice("masonry.material", mas.material, MATERIALS);
  }
  if (![1, 2, 3, 4].includes(mas.group)) {
    yield new InputError("masonry.group", mas.group, "a whole number 1 to 4", "bad-choice");
  }
  if (!MORTARS.includes(mas.mortar)) yield choice("masonry.mortar", mas.mortar, MORTARS);
  if (!CONDITIONING.includes(mas.conditioning)) {
    yield choice("masonry.conditioning", mas.conditioning, CONDITIONING);
  }
  if (!["I", "II"].includes(mas.unit_category)) {
    yield new InputError(
      "masonry.unit_category",
      mas.unit_category,
      "category I or II",
      "bad-choice",
    );
  }
  if (![1, 2].includes(mas.execution_class)) {
    yield new InputError(
      "masonry.execution_class",
      mas.execution_class,
      "execution class 1 or 2",
      "bad-choice",
    );
  }
  for (const [name, value] of [
    ["masonry.manufacturing_control", mas.manufacturing_control],
    ["masonry.construction_control", mas.construction_control],
  ]) {
    if (!CONTROL_LEVELS.includes(value)) yield choice(name, value, CONTROL_LEVELS);
  }
  if (mas.collar_joint != null && typeof mas.collar_joint !== "boolean") {
    yield new InputError(
      "masonry.collar_joint",
      mas.collar_joint,
      "true (a mortar joint parallel to the wall's face), false, or empty to infer it",
      "not-a-choice",
    );
  }
  const gM = mas.gamma_M;
  if (gM != null && (!isNumber(gM) || !(1.0 <= gM && gM <= 5.0))) {
    yield new InputError(
      "masonry.gamma_M",
      mas.gamma_M,
      "a partial factor from 1.0 to 5.0",
      "out-of-range",
    );
  }

  if (mas.f_k != null) {
    if (!isNumber(mas.f_k) || !(0.5 <= mas.f_k && mas.f_k <= 40)) {
      yield new InputError("masonry.f_k", mas.f_k, "0.5 to 40 N/mm²", "out-of-range");
    }
    return;
  }
  if (mas.unit_strength == null) {
    yield new InputError(
      "masonry.unit_strength",
      null,
      "the unit's compressive strength, or f_k given directly",
      "missing",
    );
    return;
  }
  if (!isNumber(mas.unit_strength) || !(1.0 <= mas.unit_strength && mas.unit_strength <= 150)) {
    yield new InputError(
      "masonry.unit_strength",
      mas.unit_strength,
      "1 to 150 N/mm²",
      "out-of-range",
    );
    return;
  }
  if (basis.name === BS5628) {
    if (!Object.hasOwn(MORTAR_DESIGNATION, mas.mortar)) {
      yield new InputError(
        "masonry.mortar",
        mas.mortar,
        "M2, M4, M6 or M12 for BS 5628-1:1992 Table 2(a); give f_k for thin-layer mortar",
        "not-covered",
      );
    }
    if (mas.unit_strength_is_normalised) {
      yield new InputError(
        "masonry.unit_strength_is_normalised",
        true,
        "the unit's mean strength for BS 5628-1:1992 Table 2(a), not a normalised one",
        "not-covered",
      );
    }
    if (mas.unit_height != null && mas.unit_height > 112.5) {
      yield new InputError(
        "masonry.unit_height",
        mas.unit_height,
        "a brick (at most 112.5 mm high) for BS 5628-1:1992 Table 2(a); for blocks give f_k",
        "not-covered",
      );
    }
    if (!(5.0 <= mas.unit_strength && mas.unit_strength <= 100.0)) {
      yield new InputError(
        "masonry.unit_strength",
        mas.unit_strength,
        "5 to 100 N/mm², the range of BS 5628-1:1992 Table 2(a)",
        "not-covered",
      );
    }
    return;
  }
  if (!mas.unit_strength_is_normalised) {
    for (const [name, value] of [
      ["masonry.unit_height", mas.unit_height],
      ["masonry.unit_width", mas.unit_width],
    ]) {
      if (value == null) {
        yield new InputError(
          name,
          null,
          "the unit's size, to normalise its strength (or give f_b or f_k)",
          "missing",
        );
      } else {
        const problem = lengthProblem(name, value, [30.0, 1000.0]);
        if (problem) yield problem;
      }
    }
  }
}

const CLASS_CACHE = new Map();

// f_ck of a class written as "C25/30" (EN 206 notation), else null.
export function concreteClassFck(concrete) {
  if (typeof concrete !== "string") return null;
  let found = CLASS_CACHE.get(concrete);
  if (found === undefined) {
    found = classFck(concrete);
    if (CLASS_CACHE.size >= 256) CLASS_CACHE.clear();
    CLASS_CACHE.set(concrete, found);
  }
  return found;
}

function classFck(concrete) {
  if (!concrete.toUpperCase().startsWith("C") || !concrete.includes("/")) return null;
  const rest = concrete.slice(1);
  const cut = rest.indexOf("/");
  // The class's figures are typed numbers like any other: the one reader's rules.
  let fCk;
  let fCube;
  try {
    fCk = readNumber(rest.slice(0, cut));
    fCube = readNumber(rest.slice(cut + 1));
  } catch (error) {
    if (error instanceof NumberRefused) return null;
    throw error;
  }
  if (fCk === null || fCube === null) return null;
  if (!(8 <= fCk && fCk <= 90) || fCube < fCk) return null;
  return fCk;
}

// Python's float() of text, or null where it would raise ValueError: surrounding white
// space, a sign, digits with single underscores between them, a point, an exponent, or
// inf / infinity / nan (Python also reads non-ASCII digits). For settings stored as text
// (serial.js), not for anything typed: typed numbers go through typed.js.
const FLOAT_TEXT =
  /^[+-]?(?:(?:\d(?:_?\d)*)(?:\.(?:\d(?:_?\d)*)?)?|\.\d(?:_?\d)*)(?:[eE][+-]?\d(?:_?\d)*)?$/;
const SPECIAL_TEXT = /^[+-]?(?:inf|infinity|nan)$/i;

export function pyFloat(text) {
  const s = text.trim();
  if (FLOAT_TEXT.test(s)) return Number(s.replaceAll("_", ""));
  if (SPECIAL_TEXT.test(s)) {
    if (/nan/i.test(s)) return NaN;
    return s.startsWith("-") ? -Infinity : Infinity;
  }
  return null;
}

// Python's _is_number: an int or float, not a bool, not NaN.
export function isNumber(value) {
  return typeof value === "number" && !Number.isNaN(value);
}

function lengthProblem(name, value, bounds = null) {
  const [least, greatest] = bounds ?? LENGTHS[name];
  if (value == null) {
    return new InputError(
      name,
      null,
      `a length of ${number(least)} to ${number(greatest)} mm`,
      "missing",
    );
  }
  if (!isNumber(value)) {
    return new InputError(
      name,
      value,
      `a length in mm, ${number(least)} to ${number(greatest)}`,
      "not-a-number",
    );
  }
  if (value <= 0) {
    return new InputError(
      name,
      value,
      `a positive length, ${number(least)} to ${number(greatest)} mm`,
      "not-positive",
    );
  }
  if (value < least / 10 || (value < least && value < 10)) {
    return new InputError(
      name,
      value,
      `millimetres (${number(least)} to ${number(greatest)} mm); ` +
        `${number(value)} looks like metres: ` +
        `did you mean ${number(value * 1000)} mm?`,
      "looks-like-metres",
    );
  }
  if (!(least <= value && value <= greatest)) {
    return new InputError(
      name,
      value,
      `${number(least)} to ${number(greatest)} mm`,
      "out-of-range",
    );
  }
  return null;
}

function choice(name, value, choices) {
  return new InputError(name, value, `one of: ${choices.join(", ")}`, "bad-choice");
}

// Python's min(a, b) for numbers: the first unless the second is strictly less.
function pyMin(a, b) {
  return b < a ? b : a;
}

// Python's max(a, b) for numbers: the first unless the second is strictly greater.
function pyMax(a, b) {
  return b > a ? b : a;
}
