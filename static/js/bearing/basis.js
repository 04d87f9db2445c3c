// Mirrors sitecheck/bearing/basis.py: code bases, every national value and partial factor.
//
// A basis here is a plain object of exactly the shape CodeBasis.to_dict() writes (tables as
// {key: value}, bearing_type_factors as a list). No global "current code": the basis is
// passed to every call. Source labels as in basis.py: [S] seen, [P] partly seen, [M] from
// memory, [CP] common practice, [ours].

import { InputError } from "./errors.js";
import { number } from "./format.js";

export const EC6_UK = "EC6 + UK NA";
export const BS5628 = "BS 5628-1";
export const BASES = [EC6_UK, BS5628];

export function kKey(material, group, mortarKind) {
  return `${material}|${group}|${mortarKind}`;
}

// EN 1996-1-1 Table 3.3, recommended K for general-purpose mortar [M]; "material|group".
export const K_EN_GENERAL = {
  "clay|1": 0.55,
  "clay|2": 0.45,
  "clay|3": 0.35,
  "clay|4": 0.35,
  "calcium silicate|1": 0.55,
  "calcium silicate|2": 0.45,
  "aggregate concrete|1": 0.55,
  "aggregate concrete|2": 0.52,
  "aggregate concrete|3": 0.4,
  "aggregate concrete|4": 0.4,
  "autoclaved aerated concrete|1": 0.55,
  "manufactured stone|1": 0.45,
};
// EN 1996-1-1 Table 3.3, recommended K for thin-layer mortar [M].
export const K_EN_THIN = {
  "clay|1": 0.75,
  "clay|2": 0.7,
  "clay|3": 0.5,
  "calcium silicate|1": 0.8,
  "calcium silicate|2": 0.65,
  "aggregate concrete|1": 0.8,
  "aggregate concrete|2": 0.65,
  "aggregate concrete|3": 0.5,
  "autoclaved aerated concrete|1": 0.8,
  "manufactured stone|1": 0.75,
};
// The UK National Annex replaces Table 3.3; values recalled without the NA at hand [M]
// (see basis.py). The rest fall back to the EN recommendation.
export const K_UK_GENERAL = {
  ...K_EN_GENERAL,
  "clay|1": 0.5,
  "clay|2": 0.4,
  "calcium silicate|1": 0.5,
  "calcium silicate|2": 0.4,
};

function kTable(general, thin) {
  const rows = [];
  for (const [key, k] of Object.entries(general)) rows.push([`${key}|general`, k]);
  for (const [key, k] of Object.entries(thin)) rows.push([`${key}|thin-layer`, k]);
  rows.sort((a, b) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : a[1] - b[1]));
  return Object.fromEntries(rows);
}

// BS 5628-1:1992 Table 2(a): f_k (N/mm²) of standard-format brick masonry by unit strength
// and mortar designation [S for shape and 20/(iii) = 5.8; other cells M].
export const BS_UNIT_STRENGTHS = [5.0, 10.0, 15.0, 20.0, 27.5, 35.0, 50.0, 70.0, 100.0];
export const BS_FK_TABLE = [
  ["i", [2.5, 4.4, 6.0, 7.4, 9.2, 11.4, 15.0, 19.2, 24.0]],
  ["ii", [2.5, 4.2, 5.3, 6.4, 7.9, 9.4, 12.2, 15.1, 18.2]],
  ["iii", [2.5, 4.1, 5.0, 5.8, 7.1, 8.5, 10.6, 13.1, 15.5]],
  ["iv", [2.2, 3.5, 4.4, 5.2, 6.2, 7.3, 9.0, 10.8, 12.7]],
];
// Mortar classes and the old designations they replace [CP].
export const MORTAR_DESIGNATION = { M12: "i", M6: "ii", M4: "iii", M2: "iv" };
export const MORTAR_STRENGTH = { M2: 2.0, M4: 4.0, M6: 6.0, M12: 12.0 };

const TABLE_FIELDS = ["k_values", "gamma_M_ec6", "gamma_m_bs", "creep_lambda_c", "creep_phi_inf"];

// CodeBasis's fields and defaults, in its order (to_dict writes them so).
function defaults(name) {
  return {
    name,
    gamma_c: 1.5,
    alpha_cc: 0.85,
    alpha_cc_pl: 0.6,
    plain_partial_area_enhancement: false,
    plb_limit_factor: 3.0,
    padstone_spread_deg: 45.0,
    k_values: kTable(K_UK_GENERAL, K_EN_THIN),
    f_b_max: 75.0,
    f_m_max: 20.0,
    collar_joint_factor: 0.8,
    gamma_M_ec6: { "1|I": 2.3, "1|II": 2.6, "2|I": 2.7, "2|II": 3.0 },
    masonry_spread_deg: 60.0,
    beta_area_ratio_cap: 0.45,
    spreader_min_depth: 200.0,
    spreader_length_factor: 3.0,
    spreader_stress_factor: 1.5,
    spreader_route_for_groups_2_to_4: false,
    max_eccentricity_ratio: 0.25,
    k_E: 1000.0,
    e_mk_min_ratio: 0.05,
    e_init_divisor: 450.0,
    // Creep eccentricity e_k at mid-height, EN 1996-1-1 6.1.2.2, by unit material [M].
    creep_lambda_c: {
      "aggregate concrete": 15.0,
      "autoclaved aerated concrete": 15.0,
      "calcium silicate": 15.0,
      clay: 27.0,
      "manufactured stone": 15.0,
    },
    creep_phi_inf: {
      "aggregate concrete": 1.5,
      "autoclaved aerated concrete": 1.0,
      "calcium silicate": 1.5,
      clay: 1.0,
      "manufactured stone": 1.5,
    },
    gamma_m_bs: {
      "normal|normal": 3.5,
      "normal|special": 2.8,
      "special|normal": 3.1,
      "special|special": 2.5,
    },
    bearing_type_factors: [1.25, 1.5, 2.0],
    dispersion_depth_ratio: 0.4,
    bs_min_eccentricity_ratio: 0.05,
    slenderness_limit: 27.0,
    min_bearing_beam: 100.0,
    min_bearing_lintel: 150.0,
    inline_flange_allowance: 50.0,
    inline_padstone_min_length: 200.0,
    inline_web_tolerance: 10.0,
  };
}

const KNOWN = new Set(Object.keys(defaults(EC6_UK)));

export function isEc6(basis) {
  return basis.name === EC6_UK;
}

export function kValue(basis, material, group, mortarKind) {
  const key = kKey(material, group, mortarKind);
  return Object.hasOwn(basis.k_values, key) ? basis.k_values[key] : null;
}

// CodeBasis.gamma_M_for: EC6 γ_M by execution class and unit category.
export function gammaMFor(basis, executionClass, category) {
  const key = `${executionClass}|${category}`;
  return Object.hasOwn(basis.gamma_M_ec6, key) ? basis.gamma_M_ec6[key] : null;
}

// CodeBasis.creep_lambda_c_for and creep_phi_for: by unit material, null if the basis
// has none.
export function creepLambdaCFor(basis, material) {
  return Object.hasOwn(basis.creep_lambda_c, material) ? basis.creep_lambda_c[material] : null;
}

export function creepPhiFor(basis, material) {
  return Object.hasOwn(basis.creep_phi_inf, material) ? basis.creep_phi_inf[material] : null;
}

// CodeBasis.gamma_m_for (lower-case m, BS 5628-1 γ_m): by manufacturing and construction control.
export function gammaMBsFor(basis, manufacturing, construction) {
  const key = `${manufacturing}|${construction}`;
  return Object.hasOwn(basis.gamma_m_bs, key) ? basis.gamma_m_bs[key] : null;
}

// EN 1996-1-1 and EN 1992-1-1 with the UK National Annexes' values (as labelled).
export function ec6UkNa(overrides = {}) {
  return checked({ ...defaults(EC6_UK), ...coerce(overrides) });
}

// BS 5628-1 permissible local bearing with 45° dispersion, for existing buildings.
export function bs5628(overrides = {}) {
  return checked({ ...defaults(BS5628), masonry_spread_deg: 45.0, ...coerce(overrides) });
}

// CodeBasis.__post_init__: a basis is checked once, when it is made.
function checked(basis) {
  for (const problem of basisErrors(basis)) throw problem;
  return basis;
}

export function basisNamed(name, overrides = {}) {
  if (name === EC6_UK) return ec6UkNa(overrides);
  if (name === BS5628) return bs5628(overrides);
  throw new InputError("basis", name, `one of ${BASES.join(", ")}`, "bad-choice");
}

// Rebuild a basis saved with CodeBasis.to_dict (unknown keys are refused).
export function basisFromDict(data) {
  const { name = EC6_UK, ...rest } = data;
  return basisNamed(name, rest);
}

function coerce(overrides) {
  const out = {};
  for (const [key, value] of Object.entries(overrides)) {
    if (!KNOWN.has(key) || key === "name") {
      throw new InputError(`basis.${key}`, value, "a known code-basis value", "unknown-field");
    }
    // Numbers stay as given: a text or a NaN is the validation's to name.
    if (TABLE_FIELDS.includes(key) && value !== null && typeof value === "object" && !Array.isArray(value)) {
      const rows = Object.entries(value).sort((a, b) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0));
      out[key] = Object.fromEntries(rows.map(([k, v]) => [String(k), v]));
    } else if (key === "bearing_type_factors" && Array.isArray(value)) {
      out[key] = Array.from(value);
    } else {
      out[key] = value;
    }
  }
  return out;
}

function isNumber(value) {
  return typeof value === "number";
}

// Bounds of each value of a basis (basis.py SCALAR_BOUNDS, TABLE_BOUNDS) [ours].
export const SCALAR_BOUNDS = {
  gamma_c: [1.0, 3.0],
  alpha_cc: [0.5, 1.0],
  alpha_cc_pl: [0.3, 1.0],
  plb_limit_factor: [1.0, 5.0],
  padstone_spread_deg: [10.0, 80.0],
  f_b_max: [1.0, 200.0],
  f_m_max: [1.0, 50.0],
  collar_joint_factor: [0.5, 1.0],
  masonry_spread_deg: [10.0, 80.0],
  beta_area_ratio_cap: [0.05, 1.0],
  spreader_min_depth: [0.0, 2000.0],
  spreader_length_factor: [0.0, 10.0],
  spreader_stress_factor: [1.0, 3.0],
  max_eccentricity_ratio: [0.01, 0.5],
  k_E: [100.0, 5000.0],
  e_mk_min_ratio: [0.0, 0.5],
  e_init_divisor: [100.0, 2000.0],
  dispersion_depth_ratio: [0.1, 1.0],
  bs_min_eccentricity_ratio: [0.0, 0.5],
  slenderness_limit: [5.0, 60.0],
  min_bearing_beam: [0.0, 1000.0],
  min_bearing_lintel: [0.0, 1000.0],
  inline_flange_allowance: [0.0, 500.0],
  inline_padstone_min_length: [0.0, 3000.0],
  inline_web_tolerance: [0.0, 200.0],
};
export const TABLE_BOUNDS = {
  k_values: [0.1, 1.0],
  gamma_M_ec6: [1.0, 5.0],
  gamma_m_bs: [1.0, 5.0],
  bearing_type_factors: [1.0, 3.0],
  creep_lambda_c: [0.0, 60.0],
  creep_phi_inf: [0.0, 5.0],
};
export const FLAGS = ["spreader_route_for_groups_2_to_4", "plain_partial_area_enhancement"];

// basis_errors: every value that makes no physical sense, in the order of the fields.
export function* basisErrors(basis) {
  for (const name of Object.keys(defaults(EC6_UK))) {
    const value = basis[name];
    const field = `basis.${name}`;
    if (name === "name") {
      if (!BASES.includes(value)) {
        yield new InputError("basis", value, `one of ${BASES.join(", ")}`, "bad-choice");
      }
    } else if (FLAGS.includes(name)) {
      if (typeof value !== "boolean") {
        yield new InputError(field, value, "true or false", "not-a-choice");
      }
    } else if (Object.hasOwn(SCALAR_BOUNDS, name)) {
      yield* bounded(field, value, ...SCALAR_BOUNDS[name]);
    } else if (name === "bearing_type_factors") {
      if (!Array.isArray(value) || value.length !== 3) {
        yield new InputError(
          field,
          value,
          "three factors, for bearing types 1, 2 and 3",
          "bad-shape",
        );
        continue;
      }
      for (const [i, v] of value.entries()) {
        yield* bounded(`${field}.${i + 1}`, v, ...TABLE_BOUNDS[name]);
      }
    } else if (Object.hasOwn(TABLE_BOUNDS, name)) {
      if (value === null || typeof value !== "object" || Array.isArray(value)) {
        yield new InputError(field, value, "a table of named values", "bad-shape");
        continue;
      }
      const keys = Object.keys(value).sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
      for (const key of keys) yield* bounded(`${field}.${key}`, value[key], ...TABLE_BOUNDS[name]);
    }
  }
}

function* bounded(field, value, least, greatest) {
  if (!isNumber(value) || !Number.isFinite(value)) {
    yield new InputError(field, value, "a finite number", "not-a-number");
  } else if (!(least <= value && value <= greatest)) {
    yield new InputError(
      field,
      value,
      `${number(least)} to ${number(greatest)} for this code basis`,
      "out-of-range",
    );
  }
}

// Where each default comes from, for the screens and the site record.
export const SOURCES = {
  gamma_c: "1.5, EN 1992-1-1 Table 2.1N, persistent situations [S]",
  alpha_cc: "0.85, UK NA to EN 1992-1-1 (EN recommends 1.0) [S]",
  alpha_cc_pl: "0.6 for plain concrete, UK NA to EN 1992-1-1 12.3.1 (EN recommends 0.8) [M]",
  plain_partial_area_enhancement:
    "off: a plain padstone takes no √(A_c1/A_c0) enhancement, as nothing carries the " +
    "transverse tension EN 1992-1-1 6.7(4) asks reinforcement for [ours, cautious]",
  plb_limit_factor: "3.0, EN 1992-1-1 6.7 eqn 6.63 [S]",
  padstone_spread_deg: "45° dispersion through the padstone [CP]",
  k_values: "EN 1996-1-1 Table 3.3 / UK NA Table NA.4 [M]: confirm against the NA",
  f_b_max: "75 N/mm², EN 1996-1-1 3.6.1.2 [M]",
  f_m_max: "min(20, 2 f_b) N/mm², EN 1996-1-1 3.6.1.2 [M]",
  collar_joint_factor:
    "0.8 × K where the wall has a mortar joint parallel to its face, EN 1996-1-1 3.6.1.2 [M]",
  gamma_M_ec6: "UK NA to EN 1996-1-1 Table NA.1 [M]",
  masonry_spread_deg: "60° (EC6 6.1.3) [P] or 45° (BS 5628-1:1992) [P]",
  beta_area_ratio_cap: "A_b/A_ef ≤ 0.45, EN 1996-1-1 6.1.3 [M]",
  spreader_min_depth: "> 200 mm, EN 1996-1-1 6.1.3 [M]",
  spreader_length_factor: "> 3 × bearing length, EN 1996-1-1 6.1.3 [M]",
  spreader_stress_factor: "1.5 f_d, EN 1996-1-1 6.1.3 [M]",
  spreader_route_for_groups_2_to_4: "off: spreader route for Group 1 only [ours, cautious]",
  max_eccentricity_ratio: "t/4, EN 1996-1-1 6.1.3 [M]",
  k_E: "E = 1000 f_k, EN 1996-1-1 3.7.2 [M]",
  e_mk_min_ratio: "e_mk ≥ 0.05 t, EN 1996-1-1 6.1.2.2 [M]",
  e_init_divisor: "e_init = h_ef/450, EN 1996-1-1 5.5.1.1 [M]",
  creep_lambda_c:
    "e_k = 0 up to h_ef/t_ef = λ_c, EN 1996-1-1 6.1.2.2(2): 15 recommended; clay (like " +
    "natural stone) is not asked for e_k, so its λ_c is 27, the slenderness limit [M]",
  creep_phi_inf: "final creep coefficient φ_∞, EN 1996-1-1 Table 3.8 [M]",
  gamma_m_bs: "BS 5628-1:1992 Table 4 [S]",
  bearing_type_factors: "1.25 / 1.5 / 2.0, BS 5628-1:1992 clause 34 [P]",
  dispersion_depth_ratio: "0.4 h below the bearing, BS 5628-1:1992 clause 34 [P]",
  bs_min_eccentricity_ratio: "e_x ≥ 0.05 t, BS 5628-1:1992 Appendix B [M]",
  slenderness_limit: "h_ef/t_ef ≤ 27, EN 1996-1-1 5.5.1.4 and BS 5628-1:1992 clause 28 [M]",
  min_bearing_beam: "100 mm steel bearing, NHBC Standards 6.5.5 [S]",
  min_bearing_lintel: "150 mm lintel end bearing [CP]",
  inline_flange_allowance: "flange ≤ t + 50 mm, NHBC Standards 6.5.5 [S]",
  inline_padstone_min_length: "padstone ≥ 200 mm long, NHBC Standards 6.5.5 [S]",
  inline_web_tolerance: "web within 10 mm of the wall's centre line [ours]",
};
