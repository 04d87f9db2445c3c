// Mirrors sitecheck/bearing/review.py: compare what was built with what was designed, and
// say why the engineer must look.
//
// An inspector measures some values; the rest stay as designed. asBuiltInput merges them,
// the re-check runs on the result, and review lists the review reasons: each with the same
// stable code, severity ("blocks" or "advisory"), sentence and values as Python's, as the
// plain object ReviewReason.as_dict() writes. Inputs are plain objects of the shape
// input_to_dict writes, results the shape BearingResult.as_dict() writes (an unbounded
// utilisation is null there, and read back here as Infinity), measurements, checklist and
// settings as serial.js reads them.
//
// Thresholds and tolerances are site settings with defaults of ours, not code values.

import { BS5628 } from "./basis.js";
import { isSpreader } from "./checks.js";
import { InputError } from "./errors.js";
import { number, pyStr, utilisationText } from "./format.js";
import { DEFAULT_SETTINGS, MEASUREMENT_FIELDS } from "./serial.js";

export const BLOCKS = "blocks";
export const ADVISORY = "advisory";
const INFORMATIVE = "informative";

// A padstone built where none was designed starts from nothing but its defaults.
const NEW_PADSTONE = {
  length: 0.0,
  width: 0.0,
  depth: 0.0,
  concrete: "C25/30",
  f_ck: null,
  reinforced: false,
  position_across: null,
  offset_across: null,
};

function reason(code, severity, sentence, values = {}) {
  return { code, severity, sentence, values };
}

// The design with every measured value put in its place.
export function asBuiltInput(design, m) {
  const beam = measured(design.beam, [
    ["bearing_length", m.bearing_length],
    ["flange_width", m.flange_width],
    ["offset_along", m.offset_along],
    ["offset_across", m.offset_across],
  ]);

  let pad = design.padstone ?? null;
  if (m.padstone_present === false) {
    pad = null;
  } else if (
    m.padstone_present ||
    m.padstone_length != null ||
    m.padstone_width != null ||
    m.padstone_depth != null
  ) {
    pad = measured(pad ?? NEW_PADSTONE, [
      ["length", m.padstone_length],
      ["width", m.padstone_width],
      ["depth", m.padstone_depth],
      ["concrete", m.padstone_concrete || null],
      ["reinforced", m.padstone_reinforced],
      ...positionMeasured(m),
    ]);
    if (m.padstone_concrete && pad.f_ck != null) {
      // The class seen on site replaces a declared f_ck.
      pad = { ...pad, f_ck: null };
    }
  } else {
    if (m.padstone_concrete && pad !== null) {
      pad = { ...pad, concrete: m.padstone_concrete, f_ck: null };
    }
    if (pad !== null) {
      pad = measured(pad, [["reinforced", m.padstone_reinforced], ...positionMeasured(m)]);
    }
  }

  const wall = design.wall;
  let tEf = wall.effective_thickness ?? null;
  if (m.wall_thickness != null && tEf !== null) {
    // A measured leaf replaces the designed one; t_ef follows it in proportion.
    tEf = (tEf * m.wall_thickness) / wall.thickness;
  }
  const builtWall = measured(wall, [
    ["thickness", m.wall_thickness],
    ["effective_thickness", tEf],
    ["a1", m.a1],
    ["a2", m.a2],
  ]);

  // A declared f_k stays: it cannot be worked out again from what is seen on site.
  // The review says so when the units differ (masonry-unverified).
  const masonry = measured(design.masonry, [
    ["material", m.masonry_material],
    ["group", m.masonry_group],
    ["mortar", m.mortar],
    ["unit_strength", m.unit_strength],
    ["collar_joint", m.collar_joint],
  ]);
  return { ...design, beam, padstone: pad, wall: builtWall, masonry };
}

// `part` with each measured [name, value] in its place, null being not measured. Python
// keeps a value the design already holds; Object.is does the same here, and tells -0 from
// 0 as Python's review of the written value does.
function measured(part, values) {
  const out = { ...part };
  for (const [name, value] of values) {
    if (value === null || value === undefined) continue;
    if (value === CLEAR) {
      if (part[name] != null) out[name] = null;
      continue;
    }
    if (!Object.is(value, part[name])) out[name] = value;
  }
  return out;
}

// review.py's _position_measured: the padstone's position across the wall as measured; a
// position other than "offset" clears a designed offset.
const CLEAR = Symbol("clear");

function positionMeasured(m) {
  let position = m.padstone_position || null;
  const offset = m.padstone_offset_across ?? null;
  if (position === null && offset === null) return [];
  if (position === null) position = "offset";
  return [
    ["position_across", position],
    ["offset_across", position === "offset" ? offset : CLEAR],
  ];
}

export function missingMeasurements(design, m, s) {
  const names = [...s.required];
  const hasPad = m.padstone_present != null ? m.padstone_present : design.padstone != null;
  if (hasPad) names.push(...s.required_with_padstone);
  if (design.wall.a1 != null) names.push("a1");
  return names.filter((n) => measuredValue(m, n) === null);
}

// Python's getattr(m, n): a name that is no measurement is a fault in the settings.
function measuredValue(m, name) {
  if (!Object.hasOwn(m, name)) {
    throw new TypeError(`'Measurements' object has no attribute '${name}'`);
  }
  return m[name] ?? null;
}

// Measured field → [label, slug, +1 if a larger value is kinder to the bearing].
const DIMENSIONS = [
  ["bearing_length", "Bearing length", "bearing-length", 1],
  ["flange_width", "Flange width", "flange-width", 1],
  ["padstone_length", "Padstone length", "padstone-length", 1],
  ["padstone_width", "Padstone width", "padstone-width", 1],
  ["padstone_depth", "Padstone depth", "padstone-depth", 1],
  ["wall_thickness", "Wall thickness", "wall-thickness", 1],
  ["a1", "Distance to the wall's end (a1)", "end-distance", 1],
  ["a2", "Distance to the wall's other end (a2)", "far-end-distance", 1],
];

export const FIELD_LABELS = {
  ...Object.fromEntries(DIMENSIONS.map(([name, label]) => [name, label])),
  padstone_present: "Padstone present",
  padstone_reinforced: "Padstone reinforced",
  padstone_position: "Padstone's position across the wall",
  padstone_offset_across: "Padstone offset from the wall's centre line",
  masonry_group: "Unit group",
  masonry_material: "Unit material",
  mortar: "Mortar class",
  unit_strength: "Unit strength",
  collar_joint: "Collar joint in the wall",
};

// An utilisation as a result dict holds it: null is unbounded.
function util(u) {
  return u === null || u === undefined ? Infinity : u;
}

// Every reason the engineer should see this as-built record, most serious first.
export function review(
  design,
  designResult,
  m,
  checklist,
  asBuilt,
  result,
  basis,
  s = DEFAULT_SETTINGS,
) {
  let out = [];

  const missing = missingMeasurements(design, m, s);
  if (missing.length) {
    const labels = missing.map((n) => (FIELD_LABELS[n] ?? n).toLowerCase()).join(", ");
    out.push(reason("not-measured", BLOCKS, `Not measured: ${labels}.`, { fields: missing }));
  }

  for (const c of result.checks) {
    if (c.kind !== INFORMATIVE && !c.passed) {
      const u = util(c.utilisation);
      out.push(
        reason("check-fails", BLOCKS, `${c.title} fails as built (${utilisationPhrase(u)}).`, {
          check: c.code,
          utilisation: u,
        }),
      );
    }
  }
  const uBuilt = util(result.utilisation);
  const uDesign = util(designResult.utilisation);
  if (result.passed && uBuilt > s.threshold) {
    out.push(
      reason(
        "above-threshold",
        BLOCKS,
        `Utilisation ${utilisationText(uBuilt)} is above the site's review threshold ` +
          `${utilisationText(s.threshold)}.`,
        { utilisation: uBuilt, threshold: s.threshold },
      ),
    );
  }
  const rise = uBuilt - uDesign;
  if (rise > s.rise_margin) {
    out.push(
      reason(
        "utilisation-rise",
        BLOCKS,
        `Utilisation rose from ${utilisationText(uDesign)} as designed to ` +
          `${utilisationText(uBuilt)} as built, more than the allowed ` +
          `${utilisationText(s.rise_margin)}.`,
        { design: uDesign, as_built: uBuilt, margin: s.rise_margin },
      ),
    );
  }

  if (design.padstone != null && asBuilt.padstone == null) {
    out.push(
      reason(
        "padstone-missing",
        BLOCKS,
        "The designed padstone is not there: the beam bears directly on the masonry.",
      ),
    );
  } else if (design.padstone == null && asBuilt.padstone != null) {
    out.push(reason("padstone-added", ADVISORY, "A padstone was built where none was designed."));
  }

  if (design.masonry.group === 1 && asBuilt.masonry.group > 1) {
    out.push(
      reason(
        "hollow-units",
        BLOCKS,
        `Group ${pyStr(asBuilt.masonry.group)} units were built where Group 1 was designed: ` +
          "the enhancement β no longer applies and the load needs solid material to bear on.",
        { design_group: 1, as_built_group: asBuilt.masonry.group },
      ),
    );
  }
  out.push(...spreaderLost(design, asBuilt, basis));
  out.push(...dimensionReasons(design, asBuilt, s));
  out.push(...positionReasons(designResult, result, s));
  out.push(...materialReasons(design, designResult, asBuilt, result));
  out.push(...checklistReasons(checklist, s));
  out.push(...bearingTypeReasons(design, asBuilt, designResult, s));
  // Blocking reasons first, each kind in the order found.
  const advisory = out.filter((r) => r.severity !== BLOCKS);
  if (advisory.length) out = [...out.filter((r) => r.severity === BLOCKS), ...advisory];
  return out;
}

function utilisationPhrase(u) {
  return u === Infinity ? "no capacity" : `utilisation ${utilisationText(u)}`;
}

function spreaderLost(design, asBuilt, basis) {
  if (isSpreader(design, basis) && !isSpreader(asBuilt, basis)) {
    return [
      reason(
        "spreader-lost",
        BLOCKS,
        "The design's padstone counted as a spreader (design strength raised to 1.5 f_d); " +
          "as built it is too " +
          "shallow, too short or narrower than the wall to count as one.",
      ),
    ];
  }
  return [];
}

// Measured dimension → the review setting that is its tolerance (the wall's tolerance is the
// greater of a length and a share of its thickness).
const TOLERANCE_SETTING = {
  bearing_length: "tol_bearing_length",
  flange_width: "tol_flange_width",
  padstone_length: "tol_padstone",
  padstone_width: "tol_padstone",
  padstone_depth: "tol_padstone",
  a1: "tol_end_distance",
  a2: "tol_end_distance",
};

function dimensionReasons(design, asBuilt, s) {
  const out = [];
  const pairs = dimensionPairs(design, asBuilt);
  for (const [name, label, slug, kinder] of DIMENSIONS) {
    const [d, a] = pairs[name] ?? [null, null];
    if (d == null || a == null) continue;
    let tol;
    if (name === "wall_thickness") {
      const share = s.tol_wall_thickness_ratio * d;
      tol = share > s.tol_wall_thickness ? share : s.tol_wall_thickness; // Python's max()
    } else {
      tol = s[TOLERANCE_SETTING[name]];
    }
    const diff = a - d;
    if (Math.abs(diff) <= tol + 1e-9) continue;
    const worse = diff * kinder < 0;
    let word = diff < 0 ? "shorter" : "longer";
    if (["wall_thickness", "padstone_width", "flange_width"].includes(name)) {
      word = diff < 0 ? "narrower" : "wider";
    }
    if (name === "padstone_depth") word = diff < 0 ? "shallower" : "deeper";
    out.push(
      reason(
        `${slug}-off`,
        worse ? BLOCKS : ADVISORY,
        `${label} is ${number(a)} mm as built against ${number(d)} mm designed ` +
          `(${number(Math.abs(diff))} mm ${word}; tolerance ${number(tol)} mm).`,
        { design: d, as_built: a, tolerance: tol },
      ),
    );
  }
  return out;
}

function dimensionPairs(design, asBuilt) {
  const dp = design.padstone;
  const ap = asBuilt.padstone;
  const pairs = {
    bearing_length: [design.beam.bearing_length, asBuilt.beam.bearing_length],
    flange_width: [design.beam.flange_width, asBuilt.beam.flange_width],
    wall_thickness: [design.wall.thickness, asBuilt.wall.thickness],
    a1: [design.wall.a1, asBuilt.wall.a1],
    a2: [design.wall.a2, asBuilt.wall.a2],
  };
  if (dp != null && ap != null) {
    pairs.padstone_length = [dp.length, ap.length];
    pairs.padstone_width = [dp.width, ap.width];
    pairs.padstone_depth = [dp.depth, ap.depth];
  }
  return pairs;
}

// The reaction's position: along the support from its centre, across from the wall's centre
// line. Moving away from the centre beyond tolerance blocks; towards it advises.
function positionReasons(designResult, result, s) {
  const out = [];
  const d = designResult.spread;
  const a = result.spread;
  const alongD = d.reaction_x - d.support_length / 2;
  const alongA = a.reaction_x - a.support_length / 2;
  for (const [slug, label, dv, av] of [
    ["position-along", "The beam's position along the padstone", alongD, alongA],
    [
      "position-across",
      "The beam's position across the wall",
      d.eccentricity_across,
      a.eccentricity_across,
    ],
  ]) {
    if (Math.abs(av - dv) <= s.tol_position + 1e-9) continue;
    const worse = Math.abs(av) > Math.abs(dv);
    out.push(
      reason(
        `${slug}-off`,
        worse ? BLOCKS : ADVISORY,
        `${label} is ${number(av, true)} mm from the centre as built against ` +
          `${number(dv, true)} mm designed ` +
          `(tolerance ${number(s.tol_position)} mm).`,
        { design: dv, as_built: av, tolerance: s.tol_position },
      ),
    );
  }
  return out;
}

function describe(m) {
  const strength = m.unit_strength != null ? ` ${number(m.unit_strength)} N/mm²` : "";
  const joint = m.collar_joint ? ", with a collar joint" : "";
  return `${m.material} Group ${pyStr(m.group)}${strength} units in ${m.mortar} mortar${joint}`;
}

function materialReasons(design, designResult, asBuilt, result) {
  const out = [];
  const dm = design.masonry;
  const am = asBuilt.masonry;
  const changed = ["material", "group", "unit_strength", "mortar"].some(
    (k) => (dm[k] ?? null) !== (am[k] ?? null),
  );
  const dfk = designResult.strengths.f_k;
  const afk = result.strengths.f_k;
  const dfd = designResult.strengths.f_d;
  const afd = result.strengths.f_d;
  if (afd < dfd * (1 - 1e-9)) {
    out.push(
      reason(
        "masonry-weaker",
        BLOCKS,
        `The masonry is weaker than designed: ${describe(am)} ` +
          `(characteristic strength f_k ${number(afk)} N/mm²) ` +
          `against ${describe(dm)} (f_k ${number(dfk)} N/mm²).`,
        { design_f_k: dfk, as_built_f_k: afk },
      ),
    );
  } else if (changed && dm.f_k != null) {
    out.push(
      reason(
        "masonry-unverified",
        BLOCKS,
        `The masonry differs from the design (${describe(am)} against ${describe(dm)}), ` +
          `whose characteristic strength f_k of ${number(dfk)} N/mm² was declared: ` +
          "the re-check keeps it, so confirm it holds.",
        { design_f_k: dfk },
      ),
    );
  } else if (changed) {
    out.push(
      reason(
        "masonry-changed",
        ADVISORY,
        "The masonry differs from the design but is no weaker: " +
          `${describe(am)} against ${describe(dm)}.`,
        { design_f_k: dfk, as_built_f_k: afk },
      ),
    );
  }
  const dc = designResult.strengths.f_cd;
  const ac = result.strengths.f_cd;
  if (dc != null && ac != null && ac < dc * (1 - 1e-9)) {
    out.push(
      reason(
        "concrete-weaker",
        BLOCKS,
        "The padstone concrete is weaker than designed " +
          `(f_cd ${number(ac)} against ${number(dc)} N/mm²).`,
        { design_f_cd: dc, as_built_f_cd: ac },
      ),
    );
  }
  return out;
}

function checklistReasons(c, s) {
  const out = [];
  if (c.bedded === false) {
    out.push(reason("not-bedded", BLOCKS, "The padstone is not fully bedded on mortar."));
  }
  if (c.packing != null && c.packing > s.max_packing) {
    out.push(
      reason(
        "packing-thick",
        BLOCKS,
        `Packing under the beam is ${number(c.packing)} mm thick; ` +
          `more than ${number(s.max_packing)} mm needs the engineer.`,
        { packing: c.packing, limit: s.max_packing },
      ),
    );
  }
  if (c.cracks === true) {
    out.push(reason("cracks", BLOCKS, "There are cracks in the masonry near the bearing."));
  }
  if (c.cut_units === true) {
    out.push(reason("cut-units", BLOCKS, "There are cut or hollow units under the padstone."));
  }
  if (c.level === false) out.push(reason("not-level", BLOCKS, "The padstone is not level."));
  return out;
}

// BS 5628-1 bearing types 2 and 3 rest on the geometry of the bearing (its end distance,
// length and spreader). When that geometry changes beyond tolerance the type chosen at
// design may no longer hold; the engineer must confirm it.
function bearingTypeReasons(design, asBuilt, designResult, s) {
  if (designResult.basis !== BS5628 || design.bearing_type === 1) return [];
  const changed = [];
  const dp = design.padstone ?? null;
  const ap = asBuilt.padstone ?? null;
  if ((dp === null) !== (ap === null)) changed.push("padstone");
  if (Math.abs(design.beam.bearing_length - asBuilt.beam.bearing_length) > s.tol_bearing_length) {
    changed.push("bearing length");
  }
  const da1 = design.wall.a1 ?? null;
  const aa1 = asBuilt.wall.a1 ?? null;
  if (
    (da1 === null) !== (aa1 === null) ||
    (da1 !== null && Math.abs(da1 - aa1) > s.tol_end_distance)
  ) {
    changed.push("end distance");
  }
  if (
    dp !== null &&
    ap !== null &&
    (Math.abs(dp.length - ap.length) > s.tol_padstone ||
      Math.abs(dp.depth - ap.depth) > s.tol_padstone)
  ) {
    changed.push("padstone size");
  }
  if (!changed.length) return [];
  return [
    reason(
      "bearing-type-basis",
      BLOCKS,
      `Bearing type ${pyStr(design.bearing_type)} was chosen for the designed geometry; the ` +
        `${changed.join(", ")} changed, so confirm the type still applies.`,
      { bearing_type: design.bearing_type, changed },
    ),
  ];
}

export function blocking(reasons) {
  return reasons.filter((r) => r.severity === BLOCKS).length;
}

// Why a bearing could not be measured: a code of ours and the words the screens use.
export const UNMEASURABLE = [
  ["covered", "already covered up"],
  ["no-access", "no access to it"],
  ["unsafe", "not safe to reach"],
  ["other", "another reason, given in the notes"],
];

// The review of a record saying the bearing could not be measured: it goes to the engineer
// and blocks release, with whatever the checklist saw. A measured value on such a record is
// refused, naming it.
export function couldNotMeasure(why, m, checklist, s = DEFAULT_SETTINGS) {
  const found = UNMEASURABLE.find(([code]) => code === why);
  if (!found) {
    const codes = UNMEASURABLE.map(([code]) => code).join(", ");
    throw new InputError("why_not_measured", why, `one of: ${codes}`, "bad-choice");
  }
  for (const name of MEASUREMENT_FIELDS) {
    const value = m[name] ?? null;
    if (value !== null) {
      throw new InputError(
        `measurements.${name}`,
        value,
        "nothing measured on a bearing that could not be measured: clear the value, " +
          "or record the bearing as measured",
        "measured-but-not-measurable",
      );
    }
  }
  return [
    reason(
      "could-not-measure",
      BLOCKS,
      `Could not be measured (${found[1]}): nothing on site confirms this bearing as built.`,
      { why },
    ),
    ...checklistReasons(checklist, s),
  ];
}
