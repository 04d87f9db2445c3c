// Mirrors sitecheck/bearing/geometry.py: where the load sits and how it spreads through the
// padstone to the masonry. Layouts and pressures are plain objects with the Python named
// tuples' field names.

import { ACROSS } from "./inputs.js";
import { linearPressure, pyMax, pyMin, radians } from "./formulas.js";
import { makeStep } from "./trace.js";

// Layout: the support and the footprint in the support's frame (x along from the a1 end,
// y across from the support's near edge), and the reaction's position.
export function layout(inp) {
  const beam = inp.beam;
  return footprintLayout(
    beam,
    inp.padstone ?? null,
    inp.wall.thickness,
    beam.offset_along ?? null,
    beam.offset_across ?? null,
    beam.reaction_at,
  );
}

// The layout of `beam` on `pad` (or on the bare wall of thickness t) with the position and
// reaction given here rather than the beam's own.
// geometry.py's padstone_y0: the near edge of the part of the padstone over the wall, from
// the wall's near face, where its position across the wall puts it.
export function padstoneY0(pad, width, t, across) {
  const room = t - width;
  const position = pad.position_across || (across ? "near-face" : "centred");
  if (position === "near-face") return 0.0;
  if (position === "far-face") return room;
  if (position === "offset") return pyMin(pyMax(room / 2 + pad.offset_across, 0.0), room);
  return room / 2;
}

export function footprintLayout(beam, pad, t, offsetAlong, offsetAcross, reactionAt) {
  const across = beam.orientation === ACROSS;
  const footAlong = across ? beam.flange_width : beam.bearing_length;
  let footAcross = across ? beam.bearing_length : beam.flange_width;
  let length;
  let width;
  let depth;
  let y0InWall;
  if (pad != null) {
    // Within the wall's tolerance a padstone may stand proud; only what is over the wall
    // bears on it.
    length = pad.length;
    width = pyMin(pad.width, t);
    depth = pad.depth;
    footAcross = pyMin(footAcross, width); // an in-line flange may overhang the padstone
    y0InWall = padstoneY0(pad, width, t, across);
  } else {
    length = footAlong;
    width = t;
    depth = 0.0;
    y0InWall = 0.0;
  }
  let cx;
  if (offsetAlong != null && pad != null) cx = length / 2 + offsetAlong;
  else if (across || pad == null) cx = length / 2;
  else cx = footAlong / 2; // in line: flush with the padstone's end facing the span
  let cy;
  if (offsetAcross != null) cy = width / 2 + offsetAcross;
  else if (across) cy = footAcross / 2; // across: flush with the near face
  else cy = width / 2;
  let x0 = cx - footAlong / 2;
  let x1 = cx + footAlong / 2;
  let y0 = cy - footAcross / 2;
  let y1 = cy + footAcross / 2;
  // Measurement rounding may put an edge a fraction outside; validation allowed 0.5 mm.
  x0 = pyMax(x0, 0.0);
  x1 = pyMin(x1, length);
  y0 = pyMax(y0, 0.0);
  y1 = pyMin(y1, width);
  if (reactionAt === "near-third") {
    // A flexible end bears hardest on its near edge: the reaction uniform over the near
    // two thirds of the bearing length.
    if (across) y1 = y0 + ((y1 - y0) * 2) / 3;
    else x1 = x0 + ((x1 - x0) * 2) / 3;
  }
  const rx = (x0 + x1) / 2;
  const ry = (y0 + y1) / 2;
  return {
    has_padstone: pad != null,
    length,
    width,
    depth,
    y0_in_wall: y0InWall,
    x0,
    x1,
    y0,
    y1,
    reaction_x: rx,
    reaction_y: ry,
    eccentricity_across: y0InWall + ry - t / 2,
  };
}

// Pressure under the support on the masonry, linear along the wall.
export class Pressure {
  constructor(wx0, wx1, wy0, wy1, rigid, distribution, e, smax, smin, cx0, cx1) {
    this.window_x0 = wx0;
    this.window_x1 = wx1;
    this.window_y0 = wy0;
    this.window_y1 = wy1;
    this.rigid = rigid;
    this.distribution = distribution;
    this.eccentricity = e;
    this.sigma_max = smax;
    this.sigma_min = smin;
    this.contact_x0 = cx0;
    this.contact_x1 = cx1;
  }

  get width() {
    return this.window_y1 - this.window_y0;
  }

  get contact_length() {
    return this.contact_x1 - this.contact_x0;
  }

  get area() {
    return this.width * this.contact_length;
  }
}

// Dispersion through the padstone and the pressure it puts on the masonry (see
// geometry.py's pressure_under for the model): 45° through the depth cut by the padstone's
// ends, rigid where the spread reaches both ends, linear along the wall about the window's
// centre, uniform across it.
export function pressureUnder(lay, reaction, basis, steps) {
  const spread = lay.depth * Math.tan(radians(basis.padstone_spread_deg));
  const wx0 = pyMax(0.0, lay.x0 - spread);
  const wx1 = pyMin(lay.length, lay.x1 + spread);
  const wy0 = pyMax(0.0, lay.y0 - spread);
  const wy1 = pyMin(lay.width, lay.y1 + spread);
  const rigid = lay.has_padstone && wx0 <= 1e-9 && wx1 >= lay.length - 1e-9;
  const L = wx1 - wx0;
  const W = wy1 - wy0;
  let e = lay.reaction_x - (wx0 + wx1) / 2;
  const [kind, smax, smin, contact] = linearPressure(reaction, W, L, e);
  const ae = Math.abs(e);
  if (kind === "uniform") e = 0.0;
  let cx0;
  let cx1;
  if (kind === "triangle") {
    if (e < 0) {
      cx0 = wx0;
      cx1 = wx0 + contact;
    } else {
      cx0 = wx1 - contact;
      cx1 = wx1;
    }
  } else {
    cx0 = wx0;
    cx1 = wx1;
  }
  if (lay.has_padstone) {
    steps.push(
      makeStep(
        "Load spread through the padstone, each side",
        "s",
        "h_p · tan(45°)",
        [["h_p", lay.depth, "mm"]],
        spread,
        "mm",
        "45° dispersion",
        "CP",
      ),
    );
  }
  steps.push(
    makeStep(
      "Loaded length on the masonry" + (rigid ? " (padstone acts as rigid)" : ""),
      "L_w",
      "min(support end, footprint + s) − max(support end, footprint − s)",
      [
        ["footprint", lay.x1 - lay.x0, "mm"],
        ["support length", lay.length, "mm"],
      ],
      L,
      "mm",
      "45° dispersion",
      "CP",
    ),
  );
  steps.push(
    makeStep(
      "Loaded width on the masonry",
      "W",
      "dispersed width, cut at the support's edges",
      [["support width", lay.width, "mm"]],
      W,
      "mm",
      "45° dispersion",
      "CP",
    ),
  );
  steps.push(
    makeStep(
      "Eccentricity of the reaction along the loaded length",
      "e",
      "x_reaction − centre of L_w",
      [["x_reaction", lay.reaction_x, "mm"]],
      e,
      "mm",
      "statics",
      "S",
    ),
  );
  const forces = [
    ["N", reaction, "N"],
    ["W", W, "mm"],
    ["L_w", L, "mm"],
    ["e", ae, "mm"],
  ];
  if (kind === "triangle") {
    steps.push(
      makeStep(
        "Peak pressure, triangular (e > L_w/6)",
        "σ_max",
        "2 N / (W · 3 (L_w/2 − e))",
        forces,
        smax,
        "N/mm²",
        "eccentric footing, no tension",
        "S",
      ),
    );
  } else {
    steps.push(
      makeStep(
        "Peak pressure, " + (kind === "uniform" ? "uniform" : "trapezoidal (e ≤ L_w/6)"),
        "σ_max",
        "N / (W · L_w) · (1 + 6 e / L_w)",
        forces,
        smax,
        "N/mm²",
        "eccentric footing",
        "S",
      ),
    );
  }
  return new Pressure(wx0, wx1, wy0, wy1, rigid, kind, e, smax, smin, cx0, cx1);
}

export const WHOLE_WINDOW = "whole-window reading";
export const CONTACT_LENGTH = "contact-length reading";

// geometry.py's readings: the loaded length on the masonry, read each way the codes leave
// open. One reading ({name: "", ...}) where the whole window is in contact; under a
// triangle the whole window and the contact length at the loaded end. Each is
// {name, x0, x1, e1, e2, length}, e1 and e2 the wall's end distances from its ends.
export function readings(lay, pres, a1, a2) {
  const reading = (name, x0, x1) => ({
    name,
    x0,
    x1,
    e1: a1 == null ? null : a1 + x0,
    e2: a2 == null ? null : a2 + (lay.length - x1),
    length: x1 - x0,
  });
  if (pres.distribution !== "triangle") {
    return [reading("", pres.window_x0, pres.window_x1)];
  }
  return [
    reading(WHOLE_WINDOW, pres.window_x0, pres.window_x1),
    reading(CONTACT_LENGTH, pres.contact_x0, pres.contact_x1),
  ];
}

// The [utilisation, reading, ...] with the higher utilisation; on a tie the first.
export function worse(candidates) {
  let best = candidates[0];
  for (const candidate of candidates.slice(1)) {
    if (candidate[0] > best[0]) best = candidate;
  }
  return best;
}

// A loaded length plus a spread on each side, each cut by the wall's end.
export function spreadLength(loaded, e1, e2, eachSide) {
  const left = e1 == null ? eachSide : pyMin(e1, eachSide);
  const right = e2 == null ? eachSide : pyMin(e2, eachSide);
  return loaded + left + right;
}
