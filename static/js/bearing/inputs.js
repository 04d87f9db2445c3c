// Mirrors sitecheck/bearing/inputs.py: the choices a bearing input may take, and its defaults.
//
// An input is a plain object of exactly the shape sitecheck.bearing.serial.input_to_dict
// writes: {load, beam, wall, masonry, padstone (or null), bearing_type, e_mk, phi_m, beta_s},
// N, mm and N/mm². The geometry convention is in inputs.py's docstring.

export const ACROSS = "across";
export const IN_LINE = "in-line";
export const ORIENTATIONS = [ACROSS, IN_LINE];

export const MEMBERS = ["beam", "lintel"];
export const REACTION_POSITIONS = ["centroid", "near-third"];

export const MATERIALS = [
  "clay",
  "calcium silicate",
  "aggregate concrete",
  "autoclaved aerated concrete",
  "manufactured stone",
];
export const MORTARS = ["M2", "M4", "M6", "M12", "thin-layer"];
export const CONDITIONING = ["air-dried", "water-soaked"];
export const CONTROL_LEVELS = ["normal", "special"];
export const PADSTONE_POSITIONS = ["near-face", "centred", "far-face", "offset"];

// The dataclasses' defaults; a field with no default is absent here.
export const DEFAULTS = {
  load: { wall_load: 0.0 },
  beam: {
    orientation: ACROSS,
    member: "beam",
    offset_along: null,
    offset_across: null,
    reaction_at: "centroid",
  },
  padstone: {
    concrete: "C25/30",
    f_ck: null,
    reinforced: false,
    position_across: null,
    offset_across: null,
  },
  wall: {
    a1: null,
    a2: null,
    clear_height: null,
    effective_height: null,
    effective_thickness: null,
  },
  masonry: {
    material: "aggregate concrete",
    group: 1,
    unit_strength: null,
    unit_strength_is_normalised: false,
    unit_height: null,
    unit_width: null,
    conditioning: "air-dried",
    mortar: "M4",
    f_k: null,
    shell_bedded: false,
    collar_joint: null,
    unit_category: "I",
    execution_class: 2,
    manufacturing_control: "normal",
    construction_control: "normal",
    gamma_M: null,
  },
  top: { padstone: null, bearing_type: 1, e_mk: null, phi_m: null, beta_s: null },
};

// A full input from one that leaves defaulted fields out, as the dataclasses fill them.
// checkBearing and inputErrors expect the full shape; forms can build it with this.
export function withDefaults(input) {
  const part = (name) => ({ ...DEFAULTS[name], ...input[name] });
  const out = { ...DEFAULTS.top, ...input };
  for (const name of ["load", "beam", "wall", "masonry"]) out[name] = part(name);
  out.padstone = input.padstone == null ? null : part("padstone");
  return out;
}

// h, h_ef and t_ef, each defaulted as the Wall says (inputs.py wall_heights): h to h_c,
// h_ef to h, t_ef to t.
export function wallHeights(wall) {
  const h = wall.clear_height || wall.height_to_bearing;
  return [h, wall.effective_height || h, wall.effective_thickness || wall.thickness];
}
