"""The equations, one function each, named after their symbols. N, mm, N/mm².

The checks in :mod:`.checks` call these and record each result as a step; tests hold
each one against its published form.
"""

from __future__ import annotations

import math


def F_Rdu(A_c0: float, A_c1: float, f_cd: float, limit_factor: float = 3.0) -> float:
    """Resistance of a partially loaded area, EN 1992-1-1 6.7 eqn 6.63 [S]:
    F_Rdu = A_c0 · f_cd · √(A_c1/A_c0) ≤ 3.0 · f_cd · A_c0.

    A_c0, A_c1: loaded and largest distribution areas, mm²; f_cd: N/mm². Returns N.
    """
    if A_c0 <= 0 or A_c1 < A_c0:
        raise ValueError(f"need A_c0 > 0 and A_c1 ≥ A_c0, got A_c0={A_c0}, A_c1={A_c1}")
    return min(A_c0 * f_cd * math.sqrt(A_c1 / A_c0), limit_factor * f_cd * A_c0)


def linear_pressure(P: float, B: float, L: float, e: float) -> tuple[str, float, float, float]:
    """Pressure under a rigid base B × L with the load P at e from its centre along L,
    no tension [S: eccentric footing formulas]:
    |e| ≤ L/6: σ = P/(B L) · (1 ± 6e/L); |e| > L/6: contact c = 3 (L/2 − |e|), σ_max = 2P/(B c).

    Returns (distribution, σ_max, σ_min, contact length) with distribution one of
    "uniform", "trapezoid", "triangle".
    """
    ae = abs(e)
    mean = P / (B * L)
    if ae <= L * 1e-9:
        return "uniform", mean, mean, L
    if ae <= L / 6:
        return "trapezoid", mean * (1 + 6 * ae / L), mean * (1 - 6 * ae / L), L
    c = 3 * (L / 2 - ae)
    return "triangle", 2 * P / (B * c), 0.0, c


def beta_ec6(
    a1: float | None, h_c: float, A_b: float, A_ef: float, area_ratio_cap: float = 0.45
) -> float:
    """Enhancement factor for concentrated loads, EN 1996-1-1 6.1.3 eqn 6.10 [P; limits M]:
    β = (1 + 0.3 a1/h_c)(1.5 − 1.1 A_b/A_ef), A_b/A_ef ≤ 0.45,
    1.0 ≤ β ≤ min(1.25 + a1/(2 h_c), 1.5).

    ``a1`` None is a wall that runs on, with no end or opening near: a1 → ∞, where both
    the formula and its upper limit grow past 1.5 (1.5 − 1.1 A_b/A_ef stays positive), so
    β = 1.5. β never falls as a1 grows: a wall that runs on is never worse than one with
    an end nearby [ours, the methods note's rule].
    """
    if a1 is None:
        return 1.5
    ratio = min(A_b / A_ef, area_ratio_cap)
    raw = (1 + 0.3 * a1 / h_c) * (1.5 - 1.1 * ratio)
    return min(max(raw, 1.0), min(1.25 + a1 / (2 * h_c), 1.5))


def beta_ec6_upper(a1: float | None, h_c: float) -> float:
    return 1.5 if a1 is None else min(1.25 + a1 / (2 * h_c), 1.5)


def phi_m(h_ef: float, t_ef: float, e_mk: float, t: float, k_E: float = 1000.0) -> float:
    """Capacity reduction factor at mid-height, EN 1996-1-1 Annex G eqn G.1 [M]:
    Φ_m = A1 · e^(−u²/2), A1 = 1 − 2 e_mk/t, u = (λ − 0.063)/(0.73 − 1.17 e_mk/t),
    λ = (h_ef/t_ef) √(f_k/E) with E = k_E · f_k, so λ = (h_ef/t_ef)/√k_E.
    u is not taken below 0: for a stocky wall the factor is A1 [ours].
    """
    lam = (h_ef / t_ef) / math.sqrt(k_E)
    a1 = 1 - 2 * e_mk / t
    u = max(0.0, (lam - 0.063) / (0.73 - 1.17 * e_mk / t))
    return max(0.0, a1 * math.exp(-u * u / 2))


def beta_bs5628(h_ef: float, t_ef: float, e_x: float, t: float) -> float:
    """Capacity reduction factor for slenderness and eccentricity, BS 5628-1:1992 Appendix B [M]:
    e_a = t[(1/2400)(h_ef/t_ef)² − 0.015], e_m = max(e_x, 0.6 e_x + e_a),
    β = 1.1 (1 − 2 e_m/t), not above 1.0.
    """
    sr = h_ef / t_ef
    e_a = t * (sr * sr / 2400 - 0.015)
    e_m = max(e_x, 0.6 * e_x + e_a)
    return max(0.0, min(1.0, 1.1 * (1 - 2 * e_m / t)))
