// Mirrors sitecheck/bearing/recheck.py: run every check of one bearing on one code basis.

import * as C from "./checks.js";
import { isEc6 } from "./basis.js";
import { number } from "./format.js";
import { footprintLayout, layout, pressureUnder, readings } from "./geometry.js";
import { IN_LINE, wallHeights } from "./inputs.js";
import { masonryStrengths } from "./strength.js";
import { INFORMATIVE, SPREAD_FIELDS, STRENGTH, checkAsDict, finiteOrNone } from "./trace.js";
import { validate } from "./validate.js";

// Re-check one bearing: `inp` shaped as input_to_dict writes it, `basis` as
// CodeBasis.to_dict (basisFromDict builds one). Returns a plain object equal to Python's
// check_bearing(...).as_dict(); throws InputError for input that makes no physical sense
// or that no coded formula covers.
export function checkBearing(inp, basis) {
  validate(inp, basis);
  const pad = inp.padstone ?? null;
  const strengths = masonryStrengths(inp.masonry, pad, basis, inp.wall.thickness);
  const lay = layout(inp);
  const checks = [C.minBearing(inp, basis)];
  if (inp.beam.orientation === IN_LINE) checks.push(...C.inlineRules(inp, lay, basis));
  if (pad !== null) checks.push(C.padstoneBearing(inp, lay, strengths, basis));

  const steps = [];
  const pres = pressureUnder(lay, inp.load.reaction, basis, steps);
  const wall = inp.wall;
  const ec6 = isEc6(basis);
  // The spread the drawings show is the one the wall below is checked with, on the
  // reading that governs (recheck.py).
  let spreadLen;
  let spreadDepth;
  let spreadReading;
  if (ec6) {
    checks.push(C.ec6MasonryBearing(inp, lay, pres, strengths, basis, steps));
    checks.push(C.ec6Eccentricity(inp, lay, basis));
    if (inp.masonry.group !== 1) checks.push(C.ec6SolidMaterial(inp, lay, basis));
    let midHeight;
    [midHeight, spreadReading, spreadLen] = C.ec6MidHeight(inp, lay, pres, strengths, basis);
    checks.push(midHeight);
    spreadDepth = wall.height_to_bearing / 2;
  } else {
    checks.push(C.bsMasonryBearing(inp, pres, strengths, basis, steps));
    let dispersion;
    [dispersion, spreadReading, spreadLen] = C.bsDispersion(inp, lay, pres, strengths, basis);
    checks.push(dispersion);
    const [h] = wallHeights(wall);
    spreadDepth = basis.dispersion_depth_ratio * h;
  }
  checks.push(C.slenderness(inp, basis));
  const notes = assumptionNotes(inp);
  if (pad !== null) {
    const [direct, note] = directBearing(inp, lay, strengths, basis);
    if (direct !== null) checks.push(direct);
    if (note) notes.push(note);
  }

  const [governing, passed] = governingOf(checks);
  const values = [
    lay.length,
    lay.width,
    lay.depth,
    lay.y0_in_wall,
    lay.x0,
    lay.x1,
    lay.y0,
    lay.y1,
    lay.reaction_x,
    lay.reaction_y,
    pres.window_x0,
    pres.window_x1,
    pres.window_y0,
    pres.window_y1,
    pres.rigid,
    pres.distribution,
    pres.eccentricity,
    pres.sigma_max,
    pres.sigma_min,
    pres.contact_x0,
    pres.contact_x1,
    spreadReading.e1,
    spreadReading.e2,
    lay.eccentricity_across,
    basis.masonry_spread_deg,
    spreadDepth,
    spreadLen,
    spreadReading.x0,
    spreadReading.x1,
    spreadReading.name,
  ];
  const spread = {};
  SPREAD_FIELDS.forEach((name, i) => {
    spread[name] = values[i];
  });
  return {
    basis: basis.name,
    governing: governing.code,
    utilisation: finiteOrNone(governing.utilisation),
    passed,
    checks: checks.map(checkAsDict),
    strengths,
    spread,
    notes,
  };
}

// The check that decides, and whether the bearing passes (no check fails, leaving aside
// the informative ones): the worst failing check, else the most utilised strength check.
function governingOf(checks) {
  const failing = checks.filter((c) => c.kind !== INFORMATIVE && !c.passed);
  const pool = failing.length ? failing : checks.filter((c) => c.kind === STRENGTH);
  let worst = pool[0];
  for (const c of pool) if (c.utilisation > worst.utilisation) worst = c;
  return [worst, failing.length === 0];
}

function assumptionNotes(inp) {
  const wall = inp.wall;
  const under = inp.padstone != null ? "the padstone's underside" : "the beam's underside";
  // Said every time: the seating level typed by mistake moves the result (recheck.py).
  const notes = [
    `h_c = ${number(wall.height_to_bearing)} mm, from the wall's base to ${under} (not ` +
      "to where the beam sits on the padstone).",
  ];
  if (wall.clear_height == null) {
    notes.push("Clear height h taken as the height to the bearing h_c.");
  }
  if (wall.effective_height == null) {
    notes.push("Effective height h_ef taken as the clear height (ρ = 1.0, cautious).");
  }
  if (wall.a1 == null && wall.a2 == null) {
    notes.push("The wall is taken to run on both ways from the bearing (no end near).");
  }
  if (inp.beam.reaction_at === "near-third") {
    notes.push("Flexible beam end: the reaction is taken over the near two thirds of the bearing.");
  }
  return notes;
}

// The masonry check as if the beam sat on the masonry with no padstone: does the bearing
// need its padstone at all? Informative only; it never governs. `lay` is the bearing's own
// layout on its padstone. Returns [check or null, note or null].
function directBearing(inp, lay, strengths, basis) {
  const { beam, wall } = inp;
  if (beam.orientation === IN_LINE && beam.flange_width > wall.thickness) {
    return [null, "Without the padstone the flange would overhang the wall."];
  }
  // Where the flange sits, with the reaction at its centroid.
  const nominal =
    beam.reaction_at === "centroid"
      ? lay
      : footprintLayout(
          beam,
          inp.padstone,
          wall.thickness,
          beam.offset_along ?? null,
          beam.offset_across ?? null,
          "centroid",
        );
  const a1 = wall.a1 == null ? null : wall.a1 + nominal.x0;
  const a2 = wall.a2 == null ? null : wall.a2 + (nominal.length - nominal.x1);
  const acrossOffset =
    nominal.y0_in_wall + (nominal.y0 + nominal.y1) / 2 - wall.thickness / 2;
  // The same flange in the same place straight on the masonry, with the wall's ends
  // measured from that footprint.
  const bareLay = footprintLayout(beam, null, wall.thickness, null, acrossOffset, beam.reaction_at);
  const steps = [];
  const pres = pressureUnder(bareLay, inp.load.reaction, basis, steps);
  const title = "Masonry directly under the beam, without the padstone";
  let check;
  if (isEc6(basis)) {
    check = C.ec6BearingOnReadings(inp.masonry, wall, readings(bareLay, pres, a1, a2), pres, strengths, basis, steps, {
      spreader: null,
      onPadstone: false,
      code: "direct-bearing",
      title,
      kind: INFORMATIVE,
    });
  } else {
    // The local bearing check reads only the bearing type from the input.
    check = C.bsMasonryBearing(
      inp,
      pres,
      strengths,
      basis,
      steps,
      "direct-bearing",
      title,
      INFORMATIVE,
    );
  }
  let note = null;
  if (inp.masonry.group !== 1) {
    note = "On Group 2–4 units a padstone (solid material) is needed whatever the stress.";
  }
  return [check, note];
}
