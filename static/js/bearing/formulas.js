// Mirrors sitecheck/bearing/formulas.py: the equations, one function each, named after
// their symbols. N, mm, N/mm². Keep each expression in Python's order of operations: the
// two engines must agree to the last bit wherever they can.

// Python's min/max of two numbers: the first unless the second is strictly less (greater).
export function pyMin(a, b) {
  return b < a ? b : a;
}
export function pyMax(a, b) {
  return b > a ? b : a;
}
export function pyMinOf(values) {
  let out = values[0];
  for (let i = 1; i < values.length; i++) if (values[i] < out) out = values[i];
  return out;
}

// math.radians: x times pi/180 (not (x times pi)/180, which can differ in the last bit).
const DEG = Math.PI / 180;
export function radians(deg) {
  return deg * DEG;
}

// Resistance of a partially loaded area, EN 1992-1-1 6.7 eqn 6.63 [S]:
// F_Rdu = A_c0 · f_cd · √(A_c1/A_c0) ≤ 3.0 · f_cd · A_c0. Areas mm², f_cd N/mm²; N.
export function F_Rdu(A_c0, A_c1, f_cd, limitFactor = 3.0) {
  if (A_c0 <= 0 || A_c1 < A_c0) {
    throw new RangeError(`need A_c0 > 0 and A_c1 ≥ A_c0, got A_c0=${A_c0}, A_c1=${A_c1}`);
  }
  return pyMin(A_c0 * f_cd * Math.sqrt(A_c1 / A_c0), limitFactor * f_cd * A_c0);
}

// Pressure under a rigid base B × L with the load P at e from its centre along L, no
// tension [S: eccentric footing formulas]. Returns [distribution, σ_max, σ_min, contact].
export function linearPressure(P, B, L, e) {
  const ae = Math.abs(e);
  const mean = P / (B * L);
  if (ae <= L * 1e-9) return ["uniform", mean, mean, L];
  if (ae <= L / 6) {
    return ["trapezoid", mean * (1 + (6 * ae) / L), mean * (1 - (6 * ae) / L), L];
  }
  const c = 3 * (L / 2 - ae);
  return ["triangle", (2 * P) / (B * c), 0.0, c];
}

// Enhancement factor for concentrated loads, EN 1996-1-1 6.1.3 eqn 6.10 [P; limits M].
// a1 null is a wall that runs on (a1 → ∞): β = 1.5, never less than with an end nearby.
export function betaEc6(a1, h_c, A_b, A_ef, areaRatioCap = 0.45) {
  if (a1 == null) return 1.5;
  const ratio = pyMin(A_b / A_ef, areaRatioCap);
  const raw = (1 + (0.3 * a1) / h_c) * (1.5 - 1.1 * ratio);
  return pyMin(pyMax(raw, 1.0), pyMin(1.25 + a1 / (2 * h_c), 1.5));
}

export function betaEc6Upper(a1, h_c) {
  if (a1 == null) return 1.5;
  return pyMin(1.25 + a1 / (2 * h_c), 1.5);
}

// Capacity reduction factor at mid-height, EN 1996-1-1 Annex G eqn G.1 [M]; u not taken
// below 0 [ours].
export function phiM(h_ef, t_ef, e_mk, t, k_E = 1000.0) {
  const lam = h_ef / t_ef / Math.sqrt(k_E);
  const a1 = 1 - (2 * e_mk) / t;
  const u = pyMax(0.0, (lam - 0.063) / (0.73 - (1.17 * e_mk) / t));
  return pyMax(0.0, a1 * Math.exp((-u * u) / 2));
}

// Capacity reduction factor for slenderness and eccentricity, BS 5628-1:1992 Appendix B [M].
export function betaBs5628(h_ef, t_ef, e_x, t) {
  const sr = h_ef / t_ef;
  const e_a = t * ((sr * sr) / 2400 - 0.015);
  const e_m = pyMax(e_x, 0.6 * e_x + e_a);
  return pyMax(0.0, pyMin(1.0, 1.1 * (1 - (2 * e_m) / t)));
}
