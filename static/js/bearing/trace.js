// Mirrors sitecheck/bearing/trace.py: what a re-check returns, checks made of steps, each
// step with its clause.
//
// Steps are built directly in the shape of Python's Step.as_dict(); checks keep an
// unbounded utilisation as Infinity while the re-check runs (the governing check is picked
// by it) and recheck.js writes it as null at the end, as Python's as_dict does.

export const STRENGTH = "strength";
export const RULE = "rule";
export const INFORMATIVE = "informative";

// Utilisation is compared with 1.0 after rounding noise is taken off, so a bearing
// designed exactly to its limit passes (pass means utilisation ≤ 1.0).
export const PASS_LIMIT = 1.0 + 1e-9;

// inputs: [[symbol, value, unit], ...]
export function makeStep(label, symbol, formula, inputs, value, unit, clause, source) {
  return { label, symbol, formula, inputs, value, unit, clause, source };
}

// A value the engineer gave in place of the one the method works out (trace.py given_step).
export function givenStep(label, symbol, value, unit, clause, source = "ours") {
  return makeStep(`${label}, as given`, symbol, "declared", [], value, unit, clause, source);
}

// JSON has no infinity: an unbounded utilisation travels as null.
export function finiteOrNone(x) {
  return Number.isFinite(x) ? x : null;
}

export function makeCheck(
  code,
  title,
  kind,
  demand,
  capacity,
  unit,
  clause,
  source,
  steps,
  notes = [],
) {
  // No capacity at all (e.g. no solid material under a load on hollow units) is an
  // unbounded utilisation.
  const utilisation = capacity > 0 ? demand / capacity : Infinity;
  return {
    code,
    title,
    kind,
    demand,
    capacity,
    unit,
    utilisation,
    passed: utilisation <= PASS_LIMIT,
    clause,
    source,
    steps: Array.from(steps),
    notes: Array.from(notes),
  };
}

// Check.as_dict(): the same object with an unbounded utilisation as null.
export function checkAsDict(check) {
  return { ...check, utilisation: finiteOrNone(check.utilisation) };
}

// The Spread dataclass's fields, in its order.
export const SPREAD_FIELDS = [
  "support_length",
  "support_width",
  "support_depth",
  "support_y0",
  "footprint_x0",
  "footprint_x1",
  "footprint_y0",
  "footprint_y1",
  "reaction_x",
  "reaction_y",
  "window_x0",
  "window_x1",
  "window_y0",
  "window_y1",
  "rigid",
  "distribution",
  "eccentricity",
  "sigma_max",
  "sigma_min",
  "contact_x0",
  "contact_x1",
  "a1_eff",
  "a2_eff",
  "eccentricity_across",
  "masonry_spread_deg",
  "spread_depth",
  "spread_length",
  "spread_x0",
  "spread_x1",
  "spread_reading",
];

// Strengths.as_dict(); f_cd is null with no padstone.
export function makeStrengths(f_k, gamma_M, f_d, f_cd, steps) {
  return { f_k, gamma_M, f_d, f_cd, steps };
}
