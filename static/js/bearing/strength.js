// Mirrors sitecheck/bearing/strength.py: masonry f_k, f_d and the concrete padstone's f_cd.
// One function per equation, named after its symbol. Units: N/mm² and mm.
//
// Python also remembers strengths per masonry and basis (masonry_strengths_cached) for the
// server's many bearings; the phone checks one at a time and works them out afresh.

import {
  BS_FK_TABLE,
  BS_UNIT_STRENGTHS,
  MORTAR_DESIGNATION,
  MORTAR_STRENGTH,
  gammaMBsFor,
  gammaMFor,
  isEc6,
  kValue,
} from "./basis.js";
import { InputError } from "./errors.js";
import { number } from "./format.js";
import { pyMin } from "./formulas.js";
import { givenStep, makeStep, makeStrengths } from "./trace.js";
import { concreteClassFck, wallTolerance } from "./validate.js";

// EN 772-1 Table A.1 shape factor δ by unit height (rows) and least horizontal dimension
// (columns) [M]; null where the table is blank. δ = 0.85 for 65 mm high, ~100 mm wide [S].
export const DELTA_WIDTHS = [50.0, 100.0, 150.0, 200.0, 250.0];
export const DELTA_TABLE = [
  [40.0, [0.8, 0.7, null, null, null]],
  [50.0, [0.85, 0.75, 0.7, null, null]],
  [65.0, [0.95, 0.85, 0.75, 0.7, 0.65]],
  [100.0, [1.15, 1.0, 0.9, 0.8, 0.75]],
  [150.0, [1.3, 1.2, 1.1, 1.0, 0.95]],
  [200.0, [1.45, 1.35, 1.25, 1.15, 1.1]],
  [250.0, [1.55, 1.45, 1.35, 1.25, 1.15]],
];
export const CONDITIONING_FACTOR = { "air-dried": 1.0, "water-soaked": 1.2 };

// Shape factor δ, EN 772-1 Annex A Table A.1, interpolated linearly both ways [M]. Beyond
// the last row or column the last value holds; below the first, or into a blank cell,
// there is no value and we refuse.
export function delta(unitHeight, unitWidth) {
  const h = pyMin(unitHeight, DELTA_TABLE[DELTA_TABLE.length - 1][0]);
  const w = pyMin(unitWidth, DELTA_WIDTHS[DELTA_WIDTHS.length - 1]);
  if (h < DELTA_TABLE[0][0] || w < DELTA_WIDTHS[0]) {
    throw new InputError(
      "masonry.unit_height",
      unitHeight,
      "a unit at least 40 mm high and 50 mm wide for EN 772-1 Table A.1; " +
        "otherwise give the normalised strength f_b",
      "not-covered",
    );
  }
  const i = bracket(
    DELTA_TABLE.map((r) => r[0]),
    h,
  );
  const j = bracket(DELTA_WIDTHS, w);
  const [h0, row0] = DELTA_TABLE[i];
  const [h1, row1] = DELTA_TABLE[i + 1];
  const w0 = DELTA_WIDTHS[j];
  const w1 = DELTA_WIDTHS[j + 1];
  const cells = [row0[j], row0[j + 1], row1[j], row1[j + 1]];
  if (cells.some((c) => c === null)) {
    throw new InputError(
      "masonry.unit_width",
      unitWidth,
      `a unit size inside EN 772-1 Table A.1 (a ${number(unitHeight)} mm high unit that is ` +
        `${number(unitWidth)} mm wide falls in a blank cell); give the normalised strength f_b`,
      "not-covered",
    );
  }
  const fh = (h - h0) / (h1 - h0);
  const fw = (w - w0) / (w1 - w0);
  const low = cells[0] + (cells[1] - cells[0]) * fw;
  const high = cells[2] + (cells[3] - cells[2]) * fw;
  return low + (high - low) * fh;
}

function bracket(points, x) {
  for (let i = points.length - 2; i >= 0; i--) if (x >= points[i]) return i;
  return 0;
}

// Normalised mean compressive strength f_b = δ · c · f_u (EN 772-1 Annex A) [S].
export function fB(f_u, deltaValue, conditioning) {
  return deltaValue * conditioning * f_u;
}

// f_k = K · f_b^0.7 · f_m^0.3, general-purpose mortar, EN 1996-1-1 eqn 3.1 [S].
export function fKEc6(K, fBValue, f_m) {
  return K * fBValue ** 0.7 * f_m ** 0.3;
}

// f_k = K · f_b^0.85 (or ^0.70 for clay Groups 2–4), thin-layer mortar, eqns 3.2–3.3 [M].
export function fKThinLayer(K, fBValue, exponent) {
  return K * fBValue ** exponent;
}

// f_k of standard-format brick masonry, BS 5628-1:1992 Table 2(a), linear between unit
// strengths [S for the table's shape; other cells M].
export function fKBs5628(unitStrength, designation) {
  const row = BS_FK_TABLE.find(([d]) => d === designation)[1];
  const xs = BS_UNIT_STRENGTHS;
  if (unitStrength <= xs[0]) return row[0];
  for (let i = 0; i < xs.length - 1; i++) {
    if (unitStrength <= xs[i + 1]) {
      const frac = (unitStrength - xs[i]) / (xs[i + 1] - xs[i]);
      return row[i] + (row[i + 1] - row[i]) * frac;
    }
  }
  return row[row.length - 1];
}

// Design compressive strength f_d = f_k / γ_M (EN 1996-1-1 2.4.1) [S].
export function fD(f_k, gamma_M) {
  return f_k / gamma_M;
}

// Concrete design strength f_cd = α_cc · f_ck / γ_c, EN 1992-1-1 eqn 3.15 [S].
export function fCd(f_ck, alpha_cc, gamma_c) {
  return (alpha_cc * f_ck) / gamma_c;
}

// f_k, γ_M, f_d and the padstone's f_cd, each as a step of the trace.
// t, the wall's thickness, tells whether it has a longitudinal joint where the input
// leaves that to be inferred.
export function masonryStrengths(mas, pad, basis, t = null) {
  const steps = [];
  const ec6 = isEc6(basis);
  let fk;
  if (mas.f_k != null) {
    fk = Number(mas.f_k);
    steps.push(
      givenStep(
        "Characteristic compressive strength",
        "f_k",
        fk,
        "N/mm²",
        "declared by the engineer",
      ),
    );
  } else if (ec6) {
    fk = fKFromUnitsEc6(mas, basis, steps, t);
  } else {
    const designation = MORTAR_DESIGNATION[mas.mortar];
    fk = fKBs5628(Number(mas.unit_strength), designation);
    steps.push(
      makeStep(
        "Characteristic compressive strength of brick masonry",
        "f_k",
        `Table 2(a), unit strength with mortar designation (${designation})`,
        [
          ["unit strength", mas.unit_strength, "N/mm²"],
          ["mortar", mas.mortar, ""],
        ],
        fk,
        "N/mm²",
        "BS 5628-1:1992 Table 2(a)",
        mas.unit_strength === 20 && designation === "iii" ? "S" : "M",
      ),
    );
  }

  let gm;
  if (mas.gamma_M != null) {
    gm = Number(mas.gamma_M);
    steps.push(
      givenStep(
        "Partial factor for masonry",
        ec6 ? "γ_M" : "γ_m",
        gm,
        "",
        "declared by the engineer",
      ),
    );
  } else if (ec6) {
    gm = gammaMFor(basis, mas.execution_class, mas.unit_category);
    if (gm === null) {
      throw new InputError(
        "masonry.execution_class",
        mas.execution_class,
        "an execution class with a partial factor in this code basis",
        "not-covered",
      );
    }
    steps.push(
      makeStep(
        "Partial factor for masonry in compression",
        "γ_M",
        `category ${mas.unit_category} units, execution class ${mas.execution_class}`,
        [],
        gm,
        "",
        "UK NA to EN 1996-1-1 Table NA.1",
        "M",
      ),
    );
  } else {
    gm = gammaMBsFor(basis, mas.manufacturing_control, mas.construction_control);
    if (gm === null) {
      throw new InputError(
        "masonry.manufacturing_control",
        mas.manufacturing_control,
        "a control level with a partial factor in this code basis",
        "not-covered",
      );
    }
    steps.push(
      makeStep(
        "Partial safety factor for material",
        "γ_m",
        `manufacturing control ${mas.manufacturing_control}, ` +
          `construction control ${mas.construction_control}`,
        [],
        gm,
        "",
        "BS 5628-1:1992 Table 4",
        "S",
      ),
    );
  }

  const fd = fD(fk, gm);
  if (ec6) {
    steps.push(
      makeStep(
        "Design compressive strength of the masonry",
        "f_d",
        "f_k / γ_M",
        [
          ["f_k", fk, "N/mm²"],
          ["γ_M", gm, ""],
        ],
        fd,
        "N/mm²",
        "EN 1996-1-1 2.4.1",
        "S",
      ),
    );
  } else {
    // BS 5628-1 has no f_d: its design strength is written f_k/γ_m throughout.
    steps.push(
      makeStep(
        "Design strength of the masonry",
        "f_k/γ_m",
        "f_k / γ_m",
        [
          ["f_k", fk, "N/mm²"],
          ["γ_m", gm, ""],
        ],
        fd,
        "N/mm²",
        "BS 5628-1:1992 clause 27",
        "P",
      ),
    );
  }

  let fcd = null;
  if (pad != null) {
    const fck = pad.f_ck != null ? Number(pad.f_ck) : concreteClassFck(pad.concrete);
    if (pad.reinforced) {
      fcd = fCd(fck, basis.alpha_cc, basis.gamma_c);
      steps.push(
        makeStep(
          "Design compressive strength of the padstone concrete (reinforced)",
          "f_cd",
          "α_cc · f_ck / γ_c",
          [
            ["α_cc", basis.alpha_cc, ""],
            ["f_ck", fck, "N/mm²"],
            ["γ_c", basis.gamma_c, ""],
          ],
          fcd,
          "N/mm²",
          "EN 1992-1-1 3.1.6 eqn 3.15",
          "S",
        ),
      );
    } else {
      // Plain concrete, as site padstones usually are: section 12 takes α_cc,pl.
      fcd = fCd(fck, basis.alpha_cc_pl, basis.gamma_c);
      steps.push(
        makeStep(
          "Design compressive strength of the padstone concrete (plain)",
          "f_cd,pl",
          "α_cc,pl · f_ck / γ_c",
          [
            ["α_cc,pl", basis.alpha_cc_pl, ""],
            ["f_ck", fck, "N/mm²"],
            ["γ_c", basis.gamma_c, ""],
          ],
          fcd,
          "N/mm²",
          "EN 1992-1-1 12.3.1 with eqn 3.15",
          "M",
        ),
      );
    }
  }
  return makeStrengths(fk, gm, fd, fcd, steps);
}

// strength.py's collar_joint: [whether the wall has a mortar joint parallel to its face,
// how that is known: "given", "inferred" (t ≥ 2 × unit width, give or take the wall's
// tolerance) or "unknown" (no unit width: none assumed)].
export function collarJoint(mas, t) {
  if (mas.collar_joint != null) return [Boolean(mas.collar_joint), "given"];
  if (t == null || mas.unit_width == null) return [false, "unknown"];
  return [t + wallTolerance(t) >= 2 * mas.unit_width, "inferred"];
}

const JOINT_WORDS = {
  "given|true": "× 0.8: the wall has a mortar joint parallel to its face (as given)",
  "given|false": "1: no mortar joint parallel to the wall's face (as given)",
  "inferred|true": "× 0.8: a wall at least two units wide (t ≥ 2 × unit width) has one",
  "inferred|false": "1: a wall less than two units wide has no such joint",
  "unknown|false":
    "1: the unit's width is not given, so none is assumed; say if the wall has a collar joint",
};

function fKFromUnitsEc6(mas, basis, steps, t) {
  const fu = Number(mas.unit_strength);
  let fb;
  if (mas.unit_strength_is_normalised) {
    fb = fu;
    steps.push(
      givenStep(
        "Normalised unit strength",
        "f_b",
        fb,
        "N/mm²",
        "EN 772-1 Annex A",
        "S",
      ),
    );
  } else {
    const d = delta(Number(mas.unit_height), Number(mas.unit_width));
    const c = CONDITIONING_FACTOR[mas.conditioning];
    fb = fB(fu, d, c);
    steps.push(
      makeStep(
        "Shape factor of the unit",
        "δ",
        "Table A.1 by height and least horizontal dimension",
        [
          ["height", mas.unit_height, "mm"],
          ["width", mas.unit_width, "mm"],
        ],
        d,
        "",
        "EN 772-1 Table A.1",
        "M",
      ),
    );
    steps.push(
      makeStep(
        "Normalised mean compressive strength",
        "f_b",
        "δ · c · f_u",
        [
          ["δ", d, ""],
          ["c", c, ""],
          ["f_u", fu, "N/mm²"],
        ],
        fb,
        "N/mm²",
        "EN 772-1 Annex A",
        "S",
      ),
    );
  }
  if (fb > basis.f_b_max) {
    throw new InputError(
      "masonry.unit_strength",
      mas.unit_strength,
      `a normalised strength f_b of at most ${number(basis.f_b_max)} N/mm² for EN 1996-1-1 ` +
        `eqn 3.1 (this unit gives ${number(fb)}); give f_k directly`,
      "not-covered",
    );
  }
  const thin = mas.mortar === "thin-layer";
  const kind = thin ? "thin-layer" : "general";
  let K = kValue(basis, mas.material, mas.group, kind);
  if (K === null) {
    throw new InputError(
      "masonry.group",
      mas.group,
      `a unit for which this code basis has a K value (${mas.material}, Group ` +
        `${mas.group}, ${kind} mortar has none); give f_k directly`,
      "not-covered",
    );
  }
  steps.push(
    makeStep(
      "Constant for the unit and mortar",
      "K",
      `${mas.material}, Group ${mas.group}, ${kind} mortar`,
      [],
      K,
      "",
      "EN 1996-1-1 Table 3.3 / UK NA",
      "M",
    ),
  );
  const [joint, how] = collarJoint(mas, t);
  const factor = joint ? basis.collar_joint_factor : 1.0;
  steps.push(
    makeStep(
      "Longitudinal (collar) mortar joint",
      "k_joint",
      JOINT_WORDS[`${how}|${joint}`],
      [
        ["t", t, "mm"],
        ["unit width", mas.unit_width ?? null, "mm"],
        ["joint", how, ""],
      ],
      factor,
      "",
      "EN 1996-1-1 3.6.1.2(1)",
      "M",
    ),
  );
  if (joint) {
    K *= factor;
    steps.push(
      makeStep(
        "Constant for a wall with a longitudinal joint",
        "K",
        "k_joint · K",
        [["k_joint", factor, ""]],
        K,
        "",
        "EN 1996-1-1 3.6.1.2(1)",
        "M",
      ),
    );
  }
  if (thin) {
    const exponent = mas.material === "clay" && mas.group > 1 ? 0.7 : 0.85;
    const fk = fKThinLayer(K, fb, exponent);
    steps.push(
      makeStep(
        "Characteristic compressive strength, thin-layer mortar",
        "f_k",
        `K · f_b^${number(exponent)}`,
        [
          ["K", K, ""],
          ["f_b", fb, "N/mm²"],
        ],
        fk,
        "N/mm²",
        "EN 1996-1-1 3.6.1.2 eqns 3.2–3.3",
        "M",
      ),
    );
    return fk;
  }
  const fmClass = MORTAR_STRENGTH[mas.mortar];
  const fm = pyMin(pyMin(fmClass, basis.f_m_max), 2 * fb);
  if (fm < fmClass) {
    steps.push(
      makeStep(
        "Mortar strength used, capped",
        "f_m",
        "min(f_m, 20, 2 f_b)",
        [
          ["f_m", fmClass, "N/mm²"],
          ["f_b", fb, "N/mm²"],
        ],
        fm,
        "N/mm²",
        "EN 1996-1-1 3.6.1.2",
        "M",
      ),
    );
  }
  const fk = fKEc6(K, fb, fm);
  steps.push(
    makeStep(
      "Characteristic compressive strength, general-purpose mortar",
      "f_k",
      "K · f_b^0.7 · f_m^0.3",
      [
        ["K", K, ""],
        ["f_b", fb, "N/mm²"],
        ["f_m", fm, "N/mm²"],
      ],
      fk,
      "N/mm²",
      "EN 1996-1-1 3.6.1.2 eqn 3.1",
      "S",
    ),
  );
  return fk;
}
