// Mirrors sitecheck/bearing/remedy.py: for a bearing that fails, the smallest standard
// padstone that passes, and the shortest bearing length that passes. A hint for the
// engineer, never an instruction.
//
// remedy() returns the plain object Remedy.as_dict() writes; smallestPadstone and
// shortestBearing return [value, utilisation] pairs as Python's tuples, [null, null] when
// nothing passes.

import { InputError } from "./errors.js";
import { number, utilisationText } from "./format.js";
import { layout, padstoneY0 } from "./geometry.js";
import { ACROSS } from "./inputs.js";
import { checkBearing } from "./recheck.js";

// Common precast padstone sizes, L × B × h in mm (merchant listings [P], [CP]).
export const STANDARD_PADSTONES = [
  [215.0, 140.0, 100.0],
  [440.0, 215.0, 100.0],
  [440.0, 215.0, 140.0],
  [440.0, 215.0, 215.0],
];
export const STANDARD_CLASSES = ["C20/25", "C25/30", "C30/37", "C40/50"];

export function remedy(
  inp,
  basis,
  sizes = STANDARD_PADSTONES,
  classes = STANDARD_CLASSES,
  step = 5.0,
) {
  // An offset typed in that says what leaving it empty says gets the same hint (remedy.py).
  inp = asBuiltIn(inp);
  const [pad, padU] = smallestPadstone(inp, basis, sizes, classes);
  const [length, lengthU] = shortestBearing(inp, basis, step);
  const hint = {
    padstone:
      pad === null
        ? null
        : { length: pad.length, width: pad.width, depth: pad.depth, concrete: pad.concrete },
    padstone_utilisation: padU,
    bearing_length: length,
    bearing_utilisation: lengthU,
  };
  return { ...hint, words: describe(hint) };
}

// Remedy.describe(): the hint in words, as the CLI, the review page and the phone show it.
export function describe(hint) {
  const parts = [];
  if (hint.padstone) {
    const p = hint.padstone;
    parts.push(
      `a ${number(p.length)} x ${number(p.width)} x ${number(p.depth)} mm ${p.concrete} ` +
        `padstone passes (util. ${utilisationText(hint.padstone_utilisation)})`,
    );
  }
  if (hint.bearing_length !== null) {
    parts.push(
      `a bearing of ${number(hint.bearing_length)} mm passes ` +
        `(util. ${utilisationText(hint.bearing_utilisation)})`,
    );
  }
  return parts.join("; or ") || "no standard padstone or longer bearing passes: redesign";
}

// remedy.py's default_offsets: [along (null with no padstone), across] where none is given.
export function defaultOffsets(inp) {
  const beam = inp.beam;
  const pad = inp.padstone ?? null;
  const t = inp.wall.thickness;
  const across = beam.orientation === ACROSS;
  const footAlong = across ? beam.flange_width : beam.bearing_length;
  let footAcross = across ? beam.bearing_length : beam.flange_width;
  const width = pad === null ? t : pyMin(pad.width, t);
  let along;
  if (pad === null) {
    along = null;
  } else {
    along = across ? 0.0 : (footAlong - pad.length) / 2;
    footAcross = pyMin(footAcross, width);
  }
  return [along, across ? (footAcross - width) / 2 : 0.0];
}

// remedy.py's as_built_in: each beam offset that equals the default left out.
export function asBuiltIn(inp) {
  const beam = inp.beam;
  const givenAlong = beam.offset_along ?? null;
  const givenAcross = beam.offset_across ?? null;
  if (givenAlong === null && givenAcross === null) return inp;
  const [dAlong, dAcross] = defaultOffsets(inp);
  let along = givenAlong;
  let acrossOff = givenAcross;
  if (along !== null && (dAlong === null || Math.abs(along - dAlong) <= 1e-9)) along = null;
  if (acrossOff !== null && Math.abs(acrossOff - dAcross) <= 1e-9) acrossOff = null;
  if (along === givenAlong && acrossOff === givenAcross) return inp;
  return { ...inp, beam: { ...beam, offset_along: along, offset_across: acrossOff } };
}

// Python's min(a, b) for numbers.
function pyMin(a, b) {
  return b < a ? b : a;
}

// itertools.permutations of three, in its order.
function permutations([a, b, c]) {
  return [
    [a, b, c],
    [a, c, b],
    [b, a, c],
    [b, c, a],
    [c, a, b],
    [c, b, a],
  ];
}

// Each standard size in every way it can be laid whose width fits the wall and that holds
// the beam's footprint; smallest volume first, then shallowest.
function placements(inp, sizes) {
  const t = inp.wall.thickness;
  const beam = inp.beam;
  const across = beam.orientation === ACROSS;
  const footAlong = across ? beam.flange_width : beam.bearing_length;
  const footAcross = across ? beam.bearing_length : beam.flange_width;
  const seen = new Map();
  for (const size of sizes) {
    for (const [L, B, h] of permutations(size)) {
      const key = `${L}|${B}|${h}`;
      if (B > t || L < footAlong || B < footAcross || seen.has(key)) continue;
      seen.set(key, [L, B, h]);
    }
  }
  const order = (d) => [d[0] * d[1] * d[2], d[2], d[0]];
  return [...seen.values()].sort((p, q) => {
    const [x, y] = [order(p), order(q)];
    for (let i = 0; i < x.length; i += 1) if (x[i] !== y[i]) return x[i] < y[i] ? -1 : 1;
    return 0;
  });
}

// The bearing with a new padstone placed as the old one was: centred under a beam across the
// wall, against the span end for a beam in line with it. null if it will not fit between the
// wall's ends.
function withPadstone(inp, L, B, h, concrete) {
  const wall = inp.wall;
  const old = layout(inp);
  const a1Old = wall.a1 ?? null;
  const a2Old = wall.a2 ?? null;
  let a1;
  let a2;
  if (inp.beam.orientation === ACROSS) {
    const grow = (L - old.length) / 2 + (old.length / 2 - (old.x0 + old.x1) / 2);
    const shrinkFar = L - old.length - grow;
    a1 = a1Old === null ? null : a1Old - grow;
    a2 = a2Old === null ? null : a2Old - shrinkFar;
  } else {
    a1 = inp.padstone != null ? a1Old : a1Old === null ? null : a1Old + old.x0;
    a2 = a2Old === null ? null : a2Old - (L - old.length);
  }
  if ((a1 !== null && a1 < 0) || (a2 !== null && a2 < 0)) return null;
  // Laid where the old one lay across the wall; a bare bearing's takes the default.
  const oldPad = inp.padstone ?? null;
  const pad = {
    length: L,
    width: B,
    depth: h,
    concrete,
    f_ck: null,
    reinforced: false,
    position_across: oldPad === null ? null : (oldPad.position_across ?? null),
    offset_across: oldPad === null ? null : (oldPad.offset_across ?? null),
  };
  let beam = { ...inp.beam, offset_along: null };
  if (beam.offset_across != null) {
    // A beam placed off its default stays where it is in the wall.
    const t = wall.thickness;
    const yAbs = old.y0_in_wall + old.width / 2 + beam.offset_across;
    const width = pyMin(B, t);
    const y0 = padstoneY0(pad, width, t, inp.beam.orientation === ACROSS);
    beam = { ...beam, offset_across: yAbs - (y0 + width / 2) };
  }
  return { ...inp, padstone: pad, beam, wall: { ...wall, a1, a2 } };
}

// A re-check, or null where the core refuses the candidate (as Python skips an InputError).
function passingUtilisation(candidate, basis) {
  let result;
  try {
    result = checkBearing(candidate, basis);
  } catch (error) {
    if (error instanceof InputError) return null;
    throw error;
  }
  return result.passed ? result.utilisation : null;
}

export function smallestPadstone(
  inp,
  basis,
  sizes = STANDARD_PADSTONES,
  classes = STANDARD_CLASSES,
) {
  for (const [L, B, h] of placements(inp, sizes)) {
    for (const concrete of classes) {
      const candidate = withPadstone(inp, L, B, h, concrete);
      if (candidate === null) continue;
      const u = passingUtilisation(candidate, basis);
      if (u !== null) return [candidate.padstone, u];
    }
  }
  return [null, null];
}

// The beam bearing `length`, its near edge where it was (remedy.py's _lengthened).
function lengthened(beam, pad, length) {
  const grow = length - beam.bearing_length;
  if (beam.orientation === ACROSS && beam.offset_across != null) {
    return { ...beam, bearing_length: length, offset_across: beam.offset_across + grow / 2 };
  }
  if (beam.orientation !== ACROSS && beam.offset_along != null && pad !== null) {
    return { ...beam, bearing_length: length, offset_along: beam.offset_along + grow / 2 };
  }
  return { ...beam, bearing_length: length };
}

// The shortest bearing, from the present one up in `step` mm, that passes.
export function shortestBearing(inp, basis, step = 5.0) {
  const beam = inp.beam;
  const pad = inp.padstone ?? null;
  let room;
  if (pad !== null) room = beam.orientation === ACROSS ? pad.width : pad.length;
  else room = beam.orientation === ACROSS ? inp.wall.thickness : 1000.0;
  // A remedy lengthens the bearing: start from what is there (or the trade's minimum).
  // Shorter bearings can pass only through a step in the rules (a padstone becoming a
  // spreader once it is over 3 × the bearing long), which is no advice to give on site.
  const least = beam.member === "lintel" ? basis.min_bearing_lintel : basis.min_bearing_beam;
  let length = beam.bearing_length > least ? beam.bearing_length : least; // Python's max()
  while (length <= room + 1e-9) {
    const candidate = { ...inp, beam: lengthened(beam, pad, length) };
    const u = passingUtilisation(candidate, basis);
    if (u !== null) return [length, u];
    length += step;
  }
  return [null, null];
}
