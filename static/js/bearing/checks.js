// Mirrors sitecheck/bearing/checks.py: the checks of one bearing. Each returns a check
// object with its steps and clause (see trace.js).

import { creepLambdaCFor, creepPhiFor, isEc6 } from "./basis.js";
import { InputError } from "./errors.js";
import { number, utilisationText } from "./format.js";
import {
  F_Rdu,
  betaBs5628,
  betaEc6,
  betaEc6Upper,
  phiM,
  pyMax,
  pyMin,
  pyMinOf,
  radians,
} from "./formulas.js";
import { readings, spreadLength, worse } from "./geometry.js";
import { ACROSS, IN_LINE, wallHeights } from "./inputs.js";
import { RULE, STRENGTH, givenStep, makeCheck, makeStep } from "./trace.js";

export const TAN60 = Math.tan(radians(60.0));

// ---------------------------------------------------------------- rules of the trade

export function minBearing(inp, basis) {
  const lintel = inp.beam.member === "lintel";
  const need = lintel ? basis.min_bearing_lintel : basis.min_bearing_beam;
  const have = inp.beam.bearing_length;
  const title = lintel ? "Minimum lintel end bearing" : "Minimum steel bearing";
  const step = makeStep(
    title,
    "l_b,min",
    "rule of the trade",
    [["l_b", have, "mm"]],
    need,
    "mm",
    lintel ? "common practice" : "NHBC Standards 6.5.5",
    lintel ? "CP" : "S",
  );
  return makeCheck("min-bearing", title, RULE, need, have, "mm", step.clause, step.source, [
    step,
  ]);
}

// A beam in line with the wall: flange no wider than t + 50, padstone at least 200 long,
// web over the wall's centre (NHBC Standards 6.5.5 [S]; the centring tolerance is ours).
export function inlineRules(inp, lay, basis) {
  const t = inp.wall.thickness;
  const b = inp.beam.flange_width;
  const limit = t + basis.inline_flange_allowance;
  const out = [
    makeCheck(
      "inline-flange",
      "Flange width of a beam in line with the wall",
      RULE,
      b,
      limit,
      "mm",
      "NHBC Standards 6.5.5",
      "S",
      [
        makeStep(
          "Widest flange on the wall",
          "b_max",
          "t + 50",
          [
            ["t", t, "mm"],
            ["b_f", b, "mm"],
          ],
          limit,
          "mm",
          "NHBC Standards 6.5.5",
          "S",
        ),
      ],
    ),
  ];
  if (inp.padstone != null) {
    const need = basis.inline_padstone_min_length;
    out.push(
      makeCheck(
        "inline-padstone-length",
        "Padstone length under a beam in line with the wall",
        RULE,
        need,
        inp.padstone.length,
        "mm",
        "NHBC Standards 6.5.5",
        "S",
        [
          makeStep(
            "Shortest padstone",
            "L_min",
            "rule of the trade",
            [["L_p", inp.padstone.length, "mm"]],
            need,
            "mm",
            "NHBC Standards 6.5.5",
            "S",
          ),
        ],
      ),
    );
  }
  const off = Math.abs(lay.eccentricity_across);
  const tol = basis.inline_web_tolerance;
  out.push(
    makeCheck(
      "inline-web-centre",
      "Web over the wall's centre line",
      RULE,
      off,
      tol,
      "mm",
      "NHBC Standards 6.5.5",
      "S",
      [
        makeStep(
          "Web off the wall's centre line",
          "e_y",
          "|y_reaction − t/2|",
          [["tolerance", tol, "mm"]],
          off,
          "mm",
          "NHBC Standards 6.5.5 (tolerance ours)",
          "ours",
        ),
      ],
    ),
  );
  return out;
}

// ---------------------------------------------------------------- concrete padstone

// Flange on the padstone: partially loaded area, EN 1992-1-1 6.7 eqn 6.63 [S], with A_c1
// the largest similar, concentric area that fits (see checks.py's padstone_bearing).
export function padstoneBearing(inp, lay, st, basis) {
  const b1 = lay.x1 - lay.x0;
  const d1 = lay.y1 - lay.y0;
  const aC0 = b1 * d1;
  const cx = lay.reaction_x;
  const cy = lay.reaction_y;
  const h = lay.depth;
  const kLimits = [
    basis.plb_limit_factor,
    1 + h / b1,
    1 + h / d1,
    (2 * pyMin(cx, lay.length - cx)) / b1,
    (2 * pyMin(cy, lay.width - cy)) / d1,
  ];
  const kFits = pyMax(1.0, pyMinOf(kLimits));
  // A plain padstone takes no enhancement unless the code basis allows it (checks.py).
  const plain = !inp.padstone.reinforced;
  const k = plain && !basis.plain_partial_area_enhancement ? 1.0 : kFits;
  const aC1 = k * k * aC0;
  const fcd = st.f_cd;
  const fcdSymbol = plain ? "f_cd,pl" : "f_cd";
  const fRdu = F_Rdu(aC0, aC1, fcd, basis.plb_limit_factor);
  const n = inp.load.reaction;
  const steps = [
    makeStep(
      "Loaded area under the flange",
      "A_c0",
      "b_1 · d_1",
      [
        ["b_1", b1, "mm"],
        ["d_1", d1, "mm"],
      ],
      aC0,
      "mm²",
      "EN 1992-1-1 6.7(2)",
      "S",
    ),
    makeStep(
      "Scale of the largest similar, concentric area in the padstone",
      "k",
      "min(3, 1 + h/b_1, 1 + h/d_1, room along, room across), ≥ 1",
      [
        ["h", h, "mm"],
        ["room along", kLimits[3], ""],
        ["room across", kLimits[4], ""],
      ],
      kFits,
      "",
      "EN 1992-1-1 6.7(3), Figure 6.29",
      "S",
    ),
  ];
  if (plain) {
    steps.push(
      makeStep(
        "Scale taken for plain concrete",
        "k",
        k === 1.0 && kFits > 1.0 + 1e-12
          ? "1 (no reinforcement for the transverse tension)"
          : "as it fits",
        [["allowed by the code basis", basis.plain_partial_area_enhancement ? "yes" : "no", ""]],
        k,
        "",
        "EN 1992-1-1 6.7(4)",
        "ours",
      ),
    );
  }
  steps.push(
    makeStep(
      "Largest distribution area",
      "A_c1",
      "k² · A_c0",
      [["k", k, ""]],
      aC1,
      "mm²",
      "EN 1992-1-1 6.7(3)",
      "S",
    ),
    makeStep(
      "Resistance of the padstone under the flange",
      "F_Rdu",
      "A_c0 · f_cd · √(A_c1/A_c0) ≤ 3.0 · f_cd · A_c0",
      [
        ["A_c0", aC0, "mm²"],
        [fcdSymbol, fcd, "N/mm²"],
        ["A_c1", aC1, "mm²"],
      ],
      fRdu,
      "N",
      "EN 1992-1-1 6.7 eqn 6.63",
      "S",
    ),
  );
  const notes = [];
  if (kFits <= 1.0 + 1e-12) {
    notes.push(
      "No concentric enlargement fits in the padstone (the flange bears from its edge), " +
        "so no enhancement is taken: F_Rdu = A_c0 · f_cd.",
    );
  } else if (k === 1.0) {
    notes.push(
      "The padstone is plain concrete: no enhancement is taken (F_Rdu = A_c0 · f_cd,pl), " +
        "as EN 1992-1-1 6.7(4) asks for reinforcement to carry the transverse tension. " +
        "The site's code basis may allow it (plain_partial_area_enhancement).",
    );
  }
  if (plain) {
    notes.push(
      "Plain (unreinforced) padstone, as site padstones usually are unless the design " +
        "says reinforced: f_cd,pl = α_cc,pl · f_ck / γ_c (EN 1992-1-1 section 12).",
    );
  }
  return makeCheck(
    "padstone-bearing",
    "Flange bearing on the concrete padstone",
    STRENGTH,
    n,
    fRdu,
    "N",
    "EN 1992-1-1 6.7",
    "S",
    steps,
    notes,
  );
}

// ---------------------------------------------------------------- EC6

// EN 1996-1-1 6.1.3: σ under the load ≤ β · f_d (eqns 6.9–6.10) [P; details M]; see
// checks.py's ec6_masonry_bearing. Returns the check.
export function ec6MasonryBearing(
  inp,
  lay,
  pres,
  st,
  basis,
  steps,
  code = "masonry-bearing",
  title = "Masonry under the concentrated load",
  kind = STRENGTH,
) {
  const wall = inp.wall;
  return ec6BearingOnReadings(
    inp.masonry,
    wall,
    readings(lay, pres, wall.a1, wall.a2),
    pres,
    st,
    basis,
    steps,
    {
      spreader: spreaderConditions(inp, basis),
      onPadstone: inp.padstone != null,
      code,
      title,
      kind,
    },
  );
}

function named(label, reading) {
  return reading.name ? `${label}, ${reading.name}` : label;
}

function governingReadingNote(what, worked, chosen) {
  const shown = worked.map(([u, r]) => `${r.name} ${utilisationText(u)}`).join("; ");
  const head =
    "Under the triangle of pressure the codes do not say which loaded length to take: " +
    `${what} was worked on both (utilisation: ${shown})`;
  if (worked.every(([u]) => u === worked[0][0])) {
    return `${head}; both give the same (the wall's end cuts the spread of each alike).`;
  }
  return `${head} and the ${chosen.name}, with the higher utilisation, governs.`;
}

// l_efm: the loaded length spread at 60° down to h_c/2 each side, cut by the wall's ends.
export function lEfmOf(reading, h_c, basis) {
  const s60 = h_c / 2 / Math.tan(radians(basis.masonry_spread_deg));
  return spreadLength(reading.length, reading.e1, reading.e2, s60);
}

// ec6MasonryBearing once the readings of the loaded length and the spreader (its
// description, or null) are known. Returns the check.
export function ec6BearingOnReadings(
  mas,
  wall,
  reads,
  pres,
  st,
  basis,
  steps,
  { spreader, onPadstone, code, title, kind },
) {
  const t = wall.thickness;
  const h_c = wall.height_to_bearing;
  const width = pres.width;
  const enhanced = mas.group === 1 && !mas.shell_bedded;
  const spreaderAllowed =
    spreader != null && (enhanced || basis.spreader_route_for_groups_2_to_4);
  const notes = [];
  const worked = [];
  const factors = [];
  let runsOn = false;
  for (const r of reads) {
    const aB = width * r.length;
    const lEfm = lEfmOf(r, h_c, basis);
    const aEf = lEfm * t;
    steps.push(
      makeStep(
        named("Loaded area on the masonry", r),
        "A_b",
        "W · loaded length",
        [
          ["W", width, "mm"],
          ["loaded length", r.length, "mm"],
        ],
        aB,
        "mm²",
        "EN 1996-1-1 6.1.3",
        "P",
      ),
    );
    steps.push(
      makeStep(
        named("Effective length at mid-height of the wall below", r),
        "l_efm",
        "loaded length + 2 × (h_c/2)/tan 60°, each side cut by a1, a2",
        [
          ["h_c", h_c, "mm"],
          ["a1", r.e1, "mm"],
          ["a2", r.e2, "mm"],
        ],
        lEfm,
        "mm",
        "EN 1996-1-1 6.1.3, Figure 6.2",
        "P",
      ),
    );
    // The nearer end of the wall, if any.
    let near;
    if (r.e1 == null) near = r.e2;
    else if (r.e2 == null) near = r.e1;
    else near = pyMin(r.e1, r.e2);
    let beta;
    if (enhanced) {
      beta = ec6BetaSteps(r, near, h_c, aB, aEf, basis, steps);
      runsOn = runsOn || near == null;
    } else {
      beta = 1.0;
    }
    let factor = beta;
    let route = "β";
    if (spreaderAllowed && basis.spreader_stress_factor > factor) {
      factor = basis.spreader_stress_factor;
      route = "spreader";
    }
    factors.push([factor, route, aB]);
    worked.push([pres.sigma_max / (factor * st.f_d), r, factors.length - 1]);
  }
  if (!enhanced) {
    const why = mas.shell_bedded ? "shell-bedded" : `Group ${mas.group} units`;
    steps.push(
      makeStep(`No enhancement for ${why}`, "β", "1.0", [], 1.0, "", "EN 1996-1-1 6.1.3(2)", "M"),
    );
  }
  const [, chosen, index] = worse(worked);
  const [factor, route, aB] = factors[index];
  if (reads.length > 1) {
    steps.push(
      makeStep(
        "Factor kept: the lower of the two readings (the higher utilisation)",
        route === "β" ? "β" : "factor",
        "min(whole window, contact length)",
        reads.map((r, i) => [r.name, factors[i][0], ""]),
        factor,
        "",
        "EN 1996-1-1 6.1.3",
        "ours",
      ),
    );
    notes.push(governingReadingNote("β", worked, chosen));
  }
  if (runsOn) {
    notes.push(
      "The wall runs on both ways (no end or opening near): a1 → ∞, so β takes its " +
        "upper limit, 1.5, never less than the same wall with an end nearby.",
    );
  }
  if (spreaderAllowed) {
    if (route === "spreader") {
      notes.push(`The padstone is a spreader (${spreader}): σ ≤ 1.5 f_d applies.`);
    }
  } else if (onPadstone) {
    notes.push(
      "The padstone is not a spreader in the sense of EN 1996-1-1 6.1.3 " +
        "(width t, depth > 200 mm, length > 3 × bearing), so the 1.5 f_d route does not apply.",
    );
  }
  const cap = factor * st.f_d;
  steps.push(
    makeStep(
      "Design strength under the load",
      route === "β" ? "β · f_d" : "1.5 · f_d",
      route === "β" ? "β · f_d" : "1.5 f_d beneath a spreader",
      [
        ["factor", factor, ""],
        ["f_d", st.f_d, "N/mm²"],
      ],
      cap,
      "N/mm²",
      "EN 1996-1-1 6.1.3",
      "P",
    ),
  );
  steps.push(
    makeStep(
      "Resistance to the concentrated load if uniform",
      "N_Rdc",
      "factor · A_b · f_d",
      [["A_b", aB, "mm²"]],
      cap * aB,
      "N",
      "EN 1996-1-1 6.1.3 eqn 6.9",
      "P",
    ),
  );
  return makeCheck(
    code,
    title,
    kind,
    pres.sigma_max,
    cap,
    "N/mm²",
    "EN 1996-1-1 6.1.3",
    "P",
    steps,
    notes,
  );
}

// β of one reading, each step of it in the trace (checks.py's _ec6_beta_steps).
function ec6BetaSteps(r, near, h_c, aB, aEf, basis, steps) {
  const ratioRaw = aB / aEf;
  const ratio = pyMin(ratioRaw, basis.beta_area_ratio_cap);
  const beta = betaEc6(near, h_c, aB, aEf, basis.beta_area_ratio_cap);
  steps.push(
    makeStep(
      named("Area ratio, capped", r),
      "A_b/A_ef",
      "min(A_b / (l_efm · t), 0.45)",
      [
        ["A_b", aB, "mm²"],
        ["A_ef", aEf, "mm²"],
        ["uncapped", ratioRaw, ""],
      ],
      ratio,
      "",
      "EN 1996-1-1 6.1.3(3)",
      "M",
    ),
  );
  if (near == null) {
    // No end near: a1 → ∞, so β is 1.5 (checks.py).
    steps.push(
      makeStep(
        named("Enhancement factor, the wall running on both ways", r),
        "β",
        "a1 → ∞: min(1.25 + a1/(2 h_c), 1.5) = 1.5",
        [
          ["h_c", h_c, "mm"],
          ["A_b/A_ef", ratio, ""],
        ],
        beta,
        "",
        "EN 1996-1-1 6.1.3(3)",
        "M",
      ),
    );
    return beta;
  }
  steps.push(
    makeStep(
      named("Enhancement factor for concentrated loads", r),
      "β",
      "(1 + 0.3 a1/h_c)(1.5 − 1.1 A_b/A_ef)",
      [
        ["a1", near, "mm"],
        ["h_c", h_c, "mm"],
        ["A_b/A_ef", ratio, ""],
      ],
      (1 + (0.3 * near) / h_c) * (1.5 - 1.1 * ratio),
      "",
      "EN 1996-1-1 6.1.3 eqn 6.10",
      "P",
    ),
  );
  steps.push(
    makeStep(
      named("β within its limits", r),
      "β",
      "1.0 ≤ β ≤ min(1.25 + a1/(2 h_c), 1.5)",
      [["upper", betaEc6Upper(near, h_c), ""]],
      beta,
      "",
      "EN 1996-1-1 6.1.3(3)",
      "M",
    ),
  );
  return beta;
}

// The description of a padstone that counts as a spreader, or null.
export function spreaderConditions(inp, basis) {
  if (!isSpreader(inp, basis)) return null;
  const pad = inp.padstone;
  const bearingAlong = bearingAlongOf(inp);
  return (
    `width t, depth ${number(pad.depth)} > ${number(basis.spreader_min_depth)} mm, ` +
    `length ${number(pad.length)} > ` +
    `${number(basis.spreader_length_factor)} × ${number(bearingAlong)} mm`
  );
}

// Whether the padstone counts as a spreader in the sense of EN 1996-1-1 6.1.3: width t,
// depth > 200 mm, length > 3 × the bearing length.
export function isSpreader(inp, basis) {
  const pad = inp.padstone;
  return (
    pad != null &&
    pad.width >= inp.wall.thickness - 0.5 &&
    pad.depth > basis.spreader_min_depth &&
    pad.length > basis.spreader_length_factor * bearingAlongOf(inp)
  );
}

function bearingAlongOf(inp) {
  const beam = inp.beam;
  return beam.orientation === ACROSS ? beam.flange_width : beam.bearing_length;
}

// Eccentricity of the load from the wall's centre line ≤ t/4, EN 1996-1-1 6.1.3 [M].
export function ec6Eccentricity(inp, lay, basis) {
  const t = inp.wall.thickness;
  const e = Math.abs(lay.eccentricity_across);
  const limit = basis.max_eccentricity_ratio * t;
  const step = makeStep(
    "Eccentricity of the reaction from the wall's centre line",
    "e",
    "|y_reaction − t/2|",
    [
      ["t", t, "mm"],
      ["limit t/4", limit, "mm"],
    ],
    e,
    "mm",
    "EN 1996-1-1 6.1.3(5)",
    "M",
  );
  return makeCheck(
    "eccentricity",
    "Eccentricity across the wall",
    STRENGTH,
    e,
    limit,
    "mm",
    "EN 1996-1-1 6.1.3",
    "M",
    [step],
  );
}

// On Group 2–4 units the load must bear on solid material (the padstone) as long as the
// bearing plus a 60° spread to its base on each side; one side only at an end bearing,
// EN 1996-1-1 6.1.3 [M].
export function ec6SolidMaterial(inp, lay, basis) {
  const pad = inp.padstone;
  const bearing = lay.x1 - lay.x0;
  if (pad == null) {
    const step = makeStep(
      "Solid material under the bearing",
      "L_solid",
      "none: the beam sits on hollow units",
      [],
      0.0,
      "mm",
      "EN 1996-1-1 6.1.3",
      "M",
    );
    return makeCheck(
      "solid-material",
      "Solid material under the load",
      STRENGTH,
      bearing,
      0.0,
      "mm",
      "EN 1996-1-1 6.1.3",
      "M",
      [step],
      ["Group 2–4 units: the load needs a padstone or other solid material to bear on."],
    );
  }
  const need = pad.depth / Math.tan(radians(basis.masonry_spread_deg));
  const room1 = lay.x0;
  const room2 = lay.length - lay.x1;
  const wall = inp.wall;
  const sides = [];
  if (!(wall.a1 != null && wall.a1 <= 0.5)) sides.push(room1);
  if (!(wall.a2 != null && wall.a2 <= 0.5)) sides.push(room2);
  const worst = sides.length ? pyMinOf(sides) : need;
  const demand = bearing / 2 + need;
  const capacity = bearing / 2 + worst;
  const steps = [
    makeStep(
      "Spread needed on each side within the padstone",
      "s_60",
      "h_p / tan 60°",
      [["h_p", pad.depth, "mm"]],
      need,
      "mm",
      "EN 1996-1-1 6.1.3",
      "M",
    ),
    makeStep(
      "Least room beside the bearing (end-bearing side exempt)",
      "s",
      "min(x_0, L_p − x_1)",
      [
        ["x_0", room1, "mm"],
        ["L_p − x_1", room2, "mm"],
      ],
      worst,
      "mm",
      "EN 1996-1-1 6.1.3",
      "M",
    ),
  ];
  return makeCheck(
    "solid-material",
    "Solid material under the load",
    STRENGTH,
    demand,
    capacity,
    "mm",
    "EN 1996-1-1 6.1.3",
    "M",
    steps,
  );
}

// At mid-height below the bearing: N_Ed/l_efm + other load ≤ Φ_m · t · f_d, EN 1996-1-1
// 6.1.2 with Φ_m from Annex G [M]; e_mk defaults to max(0.05 t, |e|/2 + h_ef/450).
// EN 1996-1-1 6.1.2 at mid-height; see checks.py's ec6_mid_height. Returns
// [check, the reading that governs, its l_efm].
export function ec6MidHeight(inp, lay, pres, st, basis) {
  const wall = inp.wall;
  const t = wall.thickness;
  const [h, h_ef, t_ef] = wallHeights(wall);
  const steps = [];
  let e_mk;
  if (inp.e_mk != null) {
    e_mk = Number(inp.e_mk);
    steps.push(
      givenStep(
        "Eccentricity at mid-height",
        "e_mk",
        e_mk,
        "mm",
        "EN 1996-1-1 6.1.2.2",
      ),
    );
  } else {
    const eInit = h_ef / basis.e_init_divisor;
    const e_m = Math.abs(lay.eccentricity_across) / 2 + eInit;
    steps.push(
      makeStep(
        "Eccentricity from the load at mid-height",
        "e_m",
        "|e|/2 + h_ef/450",
        [
          ["e", lay.eccentricity_across, "mm"],
          ["h_ef", h_ef, "mm"],
        ],
        e_m,
        "mm",
        "EN 1996-1-1 6.1.2.2, 5.5.1.1",
        "M",
      ),
    );
    const e_k = creepEccentricity(inp.masonry.material, h_ef, t_ef, t, e_m, basis, steps);
    e_mk = pyMax(basis.e_mk_min_ratio * t, e_m + e_k);
    steps.push(
      makeStep(
        "Eccentricity at mid-height",
        "e_mk",
        "max(0.05 t, e_m + e_k)",
        [
          ["t", t, "mm"],
          ["e_m", e_m, "mm"],
          ["e_k", e_k, "mm"],
        ],
        e_mk,
        "mm",
        "EN 1996-1-1 6.1.2.2 eqn 6.6",
        "M",
      ),
    );
  }
  let phi;
  if (inp.phi_m != null) {
    phi = Number(inp.phi_m);
    steps.push(
      givenStep(
        "Capacity reduction factor",
        "Φ_m",
        phi,
        "",
        "EN 1996-1-1 6.1.2.2",
      ),
    );
  } else {
    const lam = h_ef / t_ef / Math.sqrt(basis.k_E);
    const a1 = 1 - (2 * e_mk) / t;
    const u = pyMax(0.0, (lam - 0.063) / (0.73 - (1.17 * e_mk) / t));
    phi = phiM(h_ef, t_ef, e_mk, t, basis.k_E);
    steps.push(
      makeStep(
        "Slenderness parameter",
        "λ",
        "(h_ef/t_ef) · √(f_k/E), E = 1000 f_k",
        [
          ["h_ef", h_ef, "mm"],
          ["t_ef", t_ef, "mm"],
        ],
        lam,
        "",
        "EN 1996-1-1 Annex G",
        "M",
      ),
    );
    steps.push(
      makeStep(
        "Capacity reduction factor at mid-height",
        "Φ_m",
        "A1 · e^(−u²/2)",
        [
          ["A1", a1, ""],
          ["u", u, ""],
        ],
        phi,
        "",
        "EN 1996-1-1 Annex G eqn G.1",
        "M",
      ),
    );
  }
  const n = inp.load.reaction;
  const q = inp.load.wall_load;
  const capacity = phi * t * st.f_d;
  const worked = [];
  const lengths = [];
  for (const r of readings(lay, pres, wall.a1, wall.a2)) {
    const lEfm = lEfmOf(r, wall.height_to_bearing, basis);
    lengths.push(lEfm);
    const d = n / lEfm + q;
    steps.push(
      makeStep(
        named("Effective length at mid-height", r),
        "l_efm",
        "loaded length + 2 × (h_c/2)/tan 60°, each side cut by a1, a2",
        [
          ["loaded length", r.length, "mm"],
          ["h_c", wall.height_to_bearing, "mm"],
          ["a1", r.e1, "mm"],
          ["a2", r.e2, "mm"],
        ],
        lEfm,
        "mm",
        "EN 1996-1-1 6.1.3, Figure 6.2",
        "P",
      ),
    );
    steps.push(
      makeStep(
        named("Load per length at mid-height", r),
        "n_Ed",
        "N_Ed / l_efm + other load",
        [
          ["N_Ed", n, "N"],
          ["l_efm", lEfm, "mm"],
          ["q", q, "N/mm"],
        ],
        d,
        "N/mm",
        "EN 1996-1-1 6.1.3(4)",
        "P",
      ),
    );
    worked.push([d, r, lengths.length - 1]);
  }
  const [demand, chosen, index] = worse(worked);
  const notes = [];
  if (worked.length > 1) {
    steps.push(
      makeStep(
        "Load per length kept: the higher of the two readings",
        "n_Ed",
        "max(whole window, contact length)",
        worked.map(([d, r]) => [r.name, d, "N/mm"]),
        demand,
        "N/mm",
        "EN 1996-1-1 6.1.3(4)",
        "ours",
      ),
    );
    notes.push(
      governingReadingNote(
        "l_efm",
        worked.map(([d, r]) => [capacity > 0 ? d / capacity : Infinity, r]),
        chosen,
      ),
    );
  }
  steps.push(
    makeStep(
      "Resistance per length at mid-height",
      "n_Rd",
      "Φ_m · t · f_d",
      [
        ["Φ_m", phi, ""],
        ["t", t, "mm"],
        ["f_d", st.f_d, "N/mm²"],
      ],
      capacity,
      "N/mm",
      "EN 1996-1-1 6.1.2 eqn 6.2",
      "P",
    ),
  );
  const check = makeCheck(
    "mid-height",
    "Wall at mid-height below the bearing",
    STRENGTH,
    demand,
    capacity,
    "N/mm",
    "EN 1996-1-1 6.1.2",
    "M",
    steps,
    notes,
  );
  return [check, chosen, lengths[index]];
}

// e_k, EN 1996-1-1 6.1.2.2 eqn 6.8 [M]: none up to the unit material's λ_c (checks.py).
function creepEccentricity(material, h_ef, t_ef, t, e_m, basis, steps) {
  const lamC = creepLambdaCFor(basis, material);
  const phiInf = creepPhiFor(basis, material);
  if (lamC === null || phiInf === null) {
    throw new InputError(
      "masonry.material",
      material,
      "a unit material for which this code basis has a creep coefficient and λ_c",
      "not-covered",
    );
  }
  const sr = h_ef / t_ef;
  if (sr <= lamC) {
    steps.push(
      makeStep(
        "Creep eccentricity, none up to λ_c",
        "e_k",
        `0: h_ef/t_ef ≤ λ_c for ${material} units`,
        [
          ["h_ef/t_ef", sr, ""],
          ["λ_c", lamC, ""],
        ],
        0.0,
        "mm",
        "EN 1996-1-1 6.1.2.2(2)",
        "M",
      ),
    );
    return 0.0;
  }
  const e_k = 0.002 * phiInf * sr * Math.sqrt(t * e_m);
  steps.push(
    makeStep(
      "Creep eccentricity",
      "e_k",
      "0.002 φ_∞ (h_ef/t_ef) √(t e_m)",
      [
        ["φ_∞", phiInf, ""],
        ["h_ef/t_ef", sr, ""],
        ["λ_c", lamC, ""],
        ["t", t, "mm"],
      ],
      e_k,
      "mm",
      "EN 1996-1-1 6.1.2.2 eqn 6.8",
      "M",
    ),
  );
  return e_k;
}

export function slenderness(inp, basis) {
  const wall = inp.wall;
  const [h, h_ef, t_ef] = wallHeights(wall);
  const sr = h_ef / t_ef;
  const clause = isEc6(basis) ? "EN 1996-1-1 5.5.1.4" : "BS 5628-1:1992 clause 28";
  const step = makeStep(
    "Slenderness ratio",
    "h_ef/t_ef",
    "h_ef / t_ef",
    [
      ["h_ef", h_ef, "mm"],
      ["t_ef", t_ef, "mm"],
    ],
    sr,
    "",
    clause,
    "M",
  );
  return makeCheck(
    "slenderness",
    "Slenderness of the wall",
    RULE,
    sr,
    basis.slenderness_limit,
    "",
    clause,
    "M",
    [step],
  );
}

// ---------------------------------------------------------------- BS 5628-1

// BS 5628-1:1992 clause 34: local stress ≤ k · f_k/γ_m, k = 1.25, 1.5 or 2.0 for bearing types
// 1, 2 and 3 [P]; the peak of the linear pressure is compared.
export function bsMasonryBearing(
  inp,
  pres,
  st,
  basis,
  steps,
  code = "masonry-bearing",
  title = "Local bearing on the masonry",
  kind = STRENGTH,
) {
  const bt = inp.bearing_type;
  const k = basis.bearing_type_factors[bt - 1];
  const cap = (k * st.f_k) / st.gamma_M;
  steps.push(
    makeStep(
      `Local design bearing strength, type ${bt}`,
      "k · f_k/γ_m",
      "k · f_k / γ_m",
      [
        ["k", k, ""],
        ["f_k", st.f_k, "N/mm²"],
        ["γ_m", st.gamma_M, ""],
      ],
      cap,
      "N/mm²",
      "BS 5628-1:1992 clause 34",
      "P",
    ),
  );
  return makeCheck(
    code,
    title,
    kind,
    pres.sigma_max,
    cap,
    "N/mm²",
    "BS 5628-1:1992 clause 34",
    "P",
    steps,
  );
}

// At 0.4 h below the bearing, the load dispersed at 45° plus the other load ≤ β · f_k/γ_m
// per length of wall, BS 5628-1:1992 clause 34 [P]; β from Annex B [M]. Returns [check, l_d].
export function bsDispersion(inp, lay, pres, st, basis) {
  const wall = inp.wall;
  const t = wall.thickness;
  const [h, h_ef, t_ef] = wallHeights(wall);
  const depth = basis.dispersion_depth_ratio * h;
  const each = depth * Math.tan(radians(basis.masonry_spread_deg));
  const steps = [
    makeStep(
      "Depth of the check below the bearing",
      "0.4 h",
      "0.4 · h",
      [["h", h, "mm"]],
      depth,
      "mm",
      "BS 5628-1:1992 clause 34",
      "P",
    ),
  ];
  const reads = readings(lay, pres, wall.a1, wall.a2);
  const lengths = reads.map((r) => spreadLength(r.length, r.e1, r.e2, each));
  reads.forEach((r, i) => {
    steps.push(
      makeStep(
        named("Length the load has spread over at that depth", r),
        "l_d",
        "loaded length + 2 × 0.4 h · tan 45°, each side cut by a1, a2",
        [
          ["loaded length", r.length, "mm"],
          ["a1", r.e1, "mm"],
          ["a2", r.e2, "mm"],
        ],
        lengths[i],
        "mm",
        "BS 5628-1:1992 clause 34",
        "P",
      ),
    );
  });
  let beta;
  if (inp.beta_s != null) {
    beta = Number(inp.beta_s);
    steps.push(
      givenStep(
        "Capacity reduction factor",
        "β",
        beta,
        "",
        "BS 5628-1:1992 Table 7",
      ),
    );
  } else {
    const e_x = pyMax(basis.bs_min_eccentricity_ratio * t, Math.abs(lay.eccentricity_across));
    const sr = h_ef / t_ef;
    const e_a = t * ((sr * sr) / 2400 - 0.015);
    const e_m = pyMax(e_x, 0.6 * e_x + e_a);
    beta = betaBs5628(h_ef, t_ef, e_x, t);
    steps.push(
      makeStep(
        "Eccentricity at the top of the wall",
        "e_x",
        "max(0.05 t, |e|)",
        [
          ["t", t, "mm"],
          ["e", lay.eccentricity_across, "mm"],
        ],
        e_x,
        "mm",
        "BS 5628-1:1992 Appendix B",
        "M",
      ),
    );
    steps.push(
      makeStep(
        "Capacity reduction factor",
        "β",
        "1.1 (1 − 2 e_m/t) ≤ 1.0",
        [
          ["e_m", e_m, "mm"],
          ["e_a", e_a, "mm"],
          ["h_ef/t_ef", sr, ""],
        ],
        beta,
        "",
        "BS 5628-1:1992 Appendix B",
        "M",
      ),
    );
  }
  const n = inp.load.reaction;
  const q = inp.load.wall_load;
  const capacity = (beta * t * st.f_k) / st.gamma_M;
  const worked = [];
  reads.forEach((r, i) => {
    const d = n / lengths[i] + q;
    steps.push(
      makeStep(
        named("Load per length at 0.4 h", r),
        "n",
        "N / l_d + other load",
        [
          ["N", n, "N"],
          ["l_d", lengths[i], "mm"],
          ["q", q, "N/mm"],
        ],
        d,
        "N/mm",
        "BS 5628-1:1992 clause 34",
        "P",
      ),
    );
    worked.push([d, r, i]);
  });
  const [demand, chosen, index] = worse(worked);
  const notes = [];
  if (worked.length > 1) {
    steps.push(
      makeStep(
        "Load per length kept: the higher of the two readings",
        "n",
        "max(whole window, contact length)",
        worked.map(([d, r]) => [r.name, d, "N/mm"]),
        demand,
        "N/mm",
        "BS 5628-1:1992 clause 34",
        "ours",
      ),
    );
    notes.push(
      governingReadingNote(
        "the dispersion",
        worked.map(([d, r]) => [capacity > 0 ? d / capacity : Infinity, r]),
        chosen,
      ),
    );
  }
  steps.push(
    makeStep(
      "Resistance per length",
      "β t f_k/γ_m",
      "β · t · f_k / γ_m",
      [
        ["β", beta, ""],
        ["t", t, "mm"],
        ["f_k", st.f_k, "N/mm²"],
        ["γ_m", st.gamma_M, ""],
      ],
      capacity,
      "N/mm",
      "BS 5628-1:1992 clause 32",
      "P",
    ),
  );
  const check = makeCheck(
    "dispersion",
    "Wall at 0.4 h below the bearing",
    STRENGTH,
    demand,
    capacity,
    "N/mm",
    "BS 5628-1:1992 clause 34",
    "P",
    steps,
    notes,
  );
  return [check, chosen, lengths[index]];
}

export const ORIENTATION_TITLES = {
  [ACROSS]: "across the wall",
  [IN_LINE]: "in line with the wall",
};
