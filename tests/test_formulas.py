"""Each equation against its published form, table or a reference library.

Labels beside each expected value say where it comes from: the standard and clause, a
published check value, the reference library, or "from memory" where the table was not at
hand (those values are also parameters the engineer can change).
"""

from __future__ import annotations

import math

import pytest
from structuralcodes.codes import ec2_2004

from sitecheck.bearing import InputError, Masonry, Padstone, bs5628, ec6_uk_na
from sitecheck.bearing.formulas import F_Rdu, beta_bs5628, beta_ec6, linear_pressure, phi_m
from sitecheck.bearing.strength import delta, f_cd, f_k_bs5628, f_k_ec6, masonry_strengths

# ---------------------------------------------------------------- concrete


@pytest.mark.parametrize("f_ck", [20, 25, 30, 35, 40, 50])
@pytest.mark.parametrize("alpha_cc", [0.85, 1.0])
def test_f_cd_matches_structuralcodes(f_ck, alpha_cc):
    # Reference library: structuralcodes codes.ec2_2004.fcd, EN 1992-1-1 eqn 3.15.
    assert f_cd(f_ck, alpha_cc, 1.5) == pytest.approx(ec2_2004.fcd(f_ck, alpha_cc, 1.5), rel=1e-12)


def test_f_cd_uk_value_for_c25_30():
    # EN 1992-1-1 eqn 3.15 with the UK NA's alpha_cc = 0.85 and gamma_c = 1.5 (Table 2.1N):
    # 0.85 × 25 / 1.5 = 14.1667 N/mm², worked by hand.
    assert f_cd(25, 0.85, 1.5) == pytest.approx(14.16667, rel=1e-5)


@pytest.mark.parametrize("alpha_cc_pl", [0.6, 0.8])
def test_plain_concrete_f_cd_is_eqn_3_15_with_alpha_cc_pl(alpha_cc_pl):
    """EN 1992-1-1 12.3.1: plain concrete takes α_cc,pl in eqn 3.15; 0.8 recommended,
    0.6 in the UK NA (both from memory). C25/30: 0.6 × 25/1.5 = 10.0 and 0.8 × 25/1.5
    = 13.333 N/mm² by hand; the reference library's fcd gives the same with that α."""
    pad = Padstone(length=440.0, width=215.0, depth=140.0)  # plain, the default
    s = masonry_strengths(Masonry(f_k=4.0), pad, ec6_uk_na(alpha_cc_pl=alpha_cc_pl))
    assert s.f_cd == pytest.approx(alpha_cc_pl * 25 / 1.5, rel=1e-12)
    assert s.f_cd == pytest.approx(ec2_2004.fcd(25, alpha_cc_pl, 1.5), rel=1e-12)
    assert s.steps[-1].symbol == "f_cd,pl" and s.steps[-1].source == "M"


def test_plain_is_the_default_and_the_uk_alpha_cc_pl_is_a_visible_basis_value():
    from sitecheck.bearing import SOURCES

    assert Padstone(length=440.0, width=215.0, depth=140.0).reinforced is False
    assert ec6_uk_na().alpha_cc_pl == 0.6  # UK NA, from memory
    assert "[M]" in SOURCES["alpha_cc_pl"] and "0.8" in SOURCES["alpha_cc_pl"]


def test_partially_loaded_area_published_check_value():
    # EN 1992-1-1 eqn 6.63: A_c0 = 300 mm², A_c1 = 400 mm², f_cd = 30 N/mm² → 10 392.3 N
    # (a reference library's published unit test of eqn 6.63, recomputed by hand).
    assert F_Rdu(300.0, 400.0, 30.0) == pytest.approx(10_392.3, abs=0.05)


def test_partially_loaded_area_is_capped_at_three_f_cd_a_c0():
    # EN 1992-1-1 eqn 6.63 upper limit: F_Rdu ≤ 3.0 f_cd A_c0. With A_c1 = 16 A_c0 the
    # square-root term would give 4 f_cd A_c0; the cap gives 3 × 30 × 300 = 27 000 N.
    assert F_Rdu(300.0, 4800.0, 30.0) == pytest.approx(27_000.0)


def test_partially_loaded_area_refuses_impossible_areas():
    with pytest.raises(ValueError):
        F_Rdu(0.0, 100.0, 30.0)
    with pytest.raises(ValueError):
        F_Rdu(300.0, 200.0, 30.0)


# ---------------------------------------------------------------- pressure under a base


def test_linear_pressure_central_load_is_uniform():
    # Eccentric footing formulas (course notes on eccentric footings): e = 0 → σ = P/(B L).
    kind, smax, smin, c = linear_pressure(100_000.0, 200.0, 500.0, 0.0)
    assert kind == "uniform"
    assert smax == pytest.approx(1.0) and smin == pytest.approx(1.0) and c == 500.0


def test_linear_pressure_at_the_middle_third_edge():
    # e = L/6: σ_max = P/(B L)(1 + 1) = 2 P/(B L), σ_min = 0 (eccentric footing formulas).
    kind, smax, smin, c = linear_pressure(100_000.0, 200.0, 600.0, 100.0)
    assert kind == "trapezoid"
    assert smax == pytest.approx(2 * 100_000 / (200 * 600))
    assert smin == pytest.approx(0.0, abs=1e-12)
    assert c == 600.0


def test_linear_pressure_inside_the_middle_third():
    # e = 50 < L/6 = 100: σ = P/(B L)(1 ± 6e/L) = 0.8333 × (1 ± 0.5) (eccentric footing formulas).
    kind, smax, smin, _ = linear_pressure(100_000.0, 200.0, 600.0, -50.0)
    assert kind == "trapezoid"
    assert smax == pytest.approx(100_000 / 120_000 * 1.5)
    assert smin == pytest.approx(100_000 / 120_000 * 0.5)


def test_linear_pressure_beyond_the_middle_third_is_a_triangle():
    # e > L/6: contact c = 3 (L/2 − e), σ_max = 2P/(B c) (eccentric footing formulas).
    # L = 600, e = 200 → c = 3 × 100 = 300 mm, σ_max = 200 000/(200 × 300) = 3.333 N/mm².
    kind, smax, smin, c = linear_pressure(100_000.0, 200.0, 600.0, 200.0)
    assert kind == "triangle"
    assert c == pytest.approx(300.0)
    assert smax == pytest.approx(3.3333333)
    assert smin == 0.0


# ---------------------------------------------------------------- EC6 enhancement β


def test_beta_at_a_wall_end_is_capped_at_1_25():
    # EN 1996-1-1 6.1.3: β ≤ 1.25 + a1/(2 h_c); a1 = 0 → 1.25 (methods note §7(d), from memory).
    # A small area ratio would give 1.5 − 1.1 × 0.05 = 1.445 uncapped.
    assert beta_ec6(0.0, 2400.0, 5_000.0, 100_000.0) == pytest.approx(1.25)


def test_beta_far_from_an_end_is_capped_at_1_5():
    # a1/h_c ≥ 0.5: upper limit min(1.25 + 0.25, 1.5) = 1.5 (EN 1996-1-1 6.1.3, from memory).
    # Raw: (1 + 0.3 × 0.5)(1.5 − 1.1 × 0.05) = 1.15 × 1.445 = 1.66 → 1.5.
    assert beta_ec6(1200.0, 2400.0, 5_000.0, 100_000.0) == pytest.approx(1.5)


def test_beta_area_ratio_is_capped_at_0_45():
    # EN 1996-1-1 6.1.3: A_b/A_ef not taken above 0.45 (from memory). With a1 = 0 and a
    # ratio of 0.8, β = 1.5 − 1.1 × 0.45 = 1.005, not 1.5 − 0.88 = 0.62 → lower limit 1.0.
    assert beta_ec6(0.0, 2400.0, 80_000.0, 100_000.0) == pytest.approx(1.005)
    # The lower bound 1.0 cannot bind once the ratio is capped (methods note §8).
    assert beta_ec6(0.0, 2400.0, 100_000.0, 100_000.0) > 1.0


def test_beta_for_a_wall_that_runs_on_is_never_below_a_wall_with_an_end_near():
    """A bearing low on a wall (h_c = 600 mm) with the area ratio at its cap, 0.45. By hand,
    EN 1996-1-1 eqn 6.10 with its limits (from memory):
    an opening 1200 mm away: (1 + 0.3 × 1200/600)(1.5 − 1.1 × 0.45) = 1.6 × 1.005 = 1.608,
    capped at min(1.25 + 1200/1200, 1.5) = 1.5;
    the same wall running on, read as a1 = h_c (the old reading):
    (1 + 0.3)(1.005) = 1.3065, worse than with the opening. A wall that runs on has
    a1 → ∞ and takes the upper limit, 1.5 (methods note §8)."""
    with_opening = beta_ec6(1200.0, 600.0, 45_000.0, 100_000.0)
    assert with_opening == pytest.approx(1.5)
    running_on = beta_ec6(None, 600.0, 45_000.0, 100_000.0)
    assert running_on == pytest.approx(1.5) and running_on >= with_opening
    assert beta_ec6(600.0, 600.0, 45_000.0, 100_000.0) == pytest.approx(1.3065)


def test_beta_formula_between_its_limits():
    # EN 1996-1-1 eqn 6.10 by hand: a1 = 240, h_c = 2400, ratio 0.3:
    # (1 + 0.3 × 0.1)(1.5 − 0.33) = 1.03 × 1.17 = 1.2051; upper = 1.25 + 0.05 = 1.30.
    assert beta_ec6(240.0, 2400.0, 30_000.0, 100_000.0) == pytest.approx(1.2051)


# ---------------------------------------------------------------- mid-height factors


def test_phi_m_by_hand():
    # EN 1996-1-1 Annex G eqn G.1 (from memory), by hand: h_ef/t_ef = 15, e_mk = 0.05 t,
    # E = 1000 f_k: λ = 15/√1000 = 0.474342; u = (0.474342 − 0.063)/(0.73 − 0.0585) = 0.612572;
    # A1 = 0.9; Φ = 0.9 · exp(−0.187622) = 0.9 × 0.828927 = 0.746035.
    t = 200.0
    assert phi_m(3000.0, t, 0.05 * t, t) == pytest.approx(0.746035, abs=2e-6)


def test_phi_m_stocky_wall_is_a1():
    # u not taken below zero [ours]: a wall with λ < 0.063 keeps Φ = A1 = 1 − 2 e_mk/t.
    assert phi_m(300.0, 215.0, 10.75, 215.0) == pytest.approx(0.9)


@pytest.mark.parametrize(
    ("sr", "table"),
    # BS 5628-1 Table 7, capacity reduction factor for e_x ≤ 0.05 t (from memory).
    [
        (12, 0.93),
        (14, 0.89),
        (16, 0.83),
        (18, 0.77),
        (20, 0.70),
        (22, 0.62),
        (26, 0.45),
        (27, 0.40),
    ],
)
def test_beta_bs5628_matches_table_7(sr, table):
    t = 215.0
    assert beta_bs5628(sr * t, t, 0.05 * t, t) == pytest.approx(table, abs=0.01)


def test_beta_bs5628_never_exceeds_one():
    # BS 5628-1 Table 7 reads 1.00 for stocky walls (from memory); the Annex B formula gives
    # 0.99 at h_ef/t_ef = 6 with e_x = 0.05 t and 1.1 with no eccentricity, capped at 1.0.
    assert beta_bs5628(6 * 215.0, 215.0, 0.0, 215.0) == 1.0
    assert beta_bs5628(6 * 215.0, 215.0, 0.05 * 215, 215.0) == pytest.approx(0.99)


# ---------------------------------------------------------------- masonry strength


@pytest.mark.parametrize(
    ("unit", "designation", "f_k", "source"),
    [
        (20.0, "iii", 5.8, "S"),  # BS 5628-1:1992 Table 2(a), confirmed in a reproduction
        (10.0, "i", 4.4, "M"),  # same table, from memory
        (35.0, "ii", 9.4, "M"),
        (5.0, "iv", 2.2, "M"),
        (100.0, "i", 24.0, "M"),
    ],
)
def test_bs5628_table_2a(unit, designation, f_k, source):
    assert f_k_bs5628(unit, designation) == pytest.approx(f_k)


def test_bs5628_table_2a_interpolates_between_unit_strengths():
    # Linear interpolation between columns (BS 5628-1, from memory): 23.75 N/mm² in (iii)
    # lies half way between 20 (5.8) and 27.5 (7.1) → 6.45.
    assert f_k_bs5628(23.75, "iii") == pytest.approx(6.45)


@pytest.mark.parametrize(
    ("manufacturing", "construction", "gamma"),
    # BS 5628-1:1992 Table 4 (reproduced, per the methods note).
    [
        ("special", "special", 2.5),
        ("special", "normal", 3.1),
        ("normal", "special", 2.8),
        ("normal", "normal", 3.5),
    ],
)
def test_bs5628_partial_factors_table_4(manufacturing, construction, gamma):
    m = Masonry(f_k=5.0, manufacturing_control=manufacturing, construction_control=construction)
    assert masonry_strengths(m, None, bs5628()).gamma_M == gamma


@pytest.mark.parametrize(
    ("execution_class", "category", "gamma"),
    # UK NA to EN 1996-1-1 Table NA.1, compression (from memory; a basis parameter).
    [(1, "I", 2.3), (1, "II", 2.6), (2, "I", 2.7), (2, "II", 3.0)],
)
def test_ec6_partial_factors_uk_na(execution_class, category, gamma):
    m = Masonry(f_k=5.0, execution_class=execution_class, unit_category=category)
    assert masonry_strengths(m, None, ec6_uk_na()).gamma_M == gamma


def test_shape_factor_for_a_standard_brick():
    """A 65 mm high, 102.5 mm wide brick falls between two cells of EN 772-1 Table A.1
    (from memory): 65 high × 100 wide → 0.85 (the value the methods note saw quoted for a
    standard brick) and 65 high × 150 wide → 0.75. Linear interpolation between them
    (EN 772-1 Annex A allows it, from memory) gives, by hand,
    0.85 + (0.75 − 0.85) × (102.5 − 100)/(150 − 100) = 0.85 − 0.005 = 0.845."""
    assert delta(65.0, 100.0) == pytest.approx(0.85)
    assert delta(65.0, 150.0) == pytest.approx(0.75)
    assert delta(65.0, 102.5) == pytest.approx(0.845, abs=1e-12)


def test_shape_factor_table_cells():
    # EN 772-1 Table A.1 cells (from memory): 100 × 100 → 1.00; 200 high × 100 wide → 1.35;
    # ≥ 250 both ways → 1.15.
    assert delta(100.0, 100.0) == pytest.approx(1.0)
    assert delta(200.0, 100.0) == pytest.approx(1.35)
    assert delta(300.0, 300.0) == pytest.approx(1.15)


def test_shape_factor_blank_cell_is_refused():
    with pytest.raises(InputError) as e:
        delta(40.0, 200.0)
    assert e.value.field == "masonry.unit_width" and e.value.code == "not-covered"


def test_ec6_eqn_3_1_by_hand():
    # EN 1996-1-1 eqn 3.1: f_k = K f_b^0.7 f_m^0.3; K = 0.55, f_b = 10, f_m = 4 →
    # 0.55 × 5.011872 × 1.515717 = 4.17808 N/mm² (by hand).
    assert f_k_ec6(0.55, 10.0, 4.0) == pytest.approx(4.17808, rel=1e-5)


def test_ec6_units_route_normalises_and_caps_mortar():
    # f_b = δ · c · f_u (EN 772-1 Annex A): a 100 × 100 unit (δ = 1.0, from memory),
    # water-soaked (c = 1.2, seen), f_u = 4 → f_b = 4.8; M12 mortar capped at
    # f_m ≤ 2 f_b = 9.6 (EN 1996-1-1 3.6.1.2, from memory); K = 0.55 aggregate concrete Group 1.
    m = Masonry(
        material="aggregate concrete",
        group=1,
        unit_strength=4.0,
        unit_height=100.0,
        unit_width=100.0,
        conditioning="water-soaked",
        mortar="M12",
    )
    s = masonry_strengths(m, None, ec6_uk_na())
    assert s.f_k == pytest.approx(0.55 * 4.8**0.7 * 9.6**0.3)
    assert s.f_d == pytest.approx(s.f_k / 2.7)
    assert any(step.symbol == "f_m" and step.value == pytest.approx(9.6) for step in s.steps)


def test_uk_na_k_value_for_clay_group_1_is_a_visible_parameter():
    # Methods note: the UK NA gives K = 0.50 for clay Group 1 (from memory); a site can override it.
    basis = ec6_uk_na()
    assert basis.k_value("clay", 1, "general") == 0.50
    changed = ec6_uk_na(k_values={**dict(basis.k_values), "clay|1|general": 0.45})
    assert changed.k_value("clay", 1, "general") == 0.45


def test_normalised_strength_above_75_is_refused():
    m = Masonry(material="clay", group=1, unit_strength=80.0, unit_strength_is_normalised=True)
    with pytest.raises(InputError) as e:
        masonry_strengths(m, None, ec6_uk_na())
    assert e.value.field == "masonry.unit_strength" and "75" in e.value.expected


def test_thin_layer_exponent():
    # EN 1996-1-1 eqn 3.2 (from memory): f_k = K f_b^0.85 for Group 1 units in thin-layer
    # mortar; K = 0.80 for autoclaved aerated concrete (EN recommended, from memory).
    m = Masonry(
        material="autoclaved aerated concrete",
        group=1,
        unit_strength=3.6,
        unit_strength_is_normalised=True,
        mortar="thin-layer",
    )
    assert masonry_strengths(m, None, ec6_uk_na()).f_k == pytest.approx(0.80 * 3.6**0.85)
    assert math.isclose(0.80 * 3.6**0.85, 2.37, rel_tol=0.01)


# ---------------------------------------------------------------- longitudinal (collar) joint


_BRICK = dict(
    material="clay", group=1, unit_strength=20.0, unit_height=65.0, unit_width=102.5, mortar="M4"
)


def _joint_step(strengths):
    return next(s for s in strengths.steps if s.symbol == "k_joint")


def test_a_one_brick_wall_takes_0_8_k_for_its_collar_joint():
    """EN 1996-1-1 3.6.1.2(1) (from memory): K × 0.8 where the wall has a mortar joint
    parallel to its face. Inferred for a 215 mm wall of 102.5 mm wide bricks (two units
    wide). By hand: f_b = δ f_u = 0.845 × 20 = 16.9; K = 0.50 (UK NA clay Group 1, from
    memory) → 0.40; f_k = 0.40 × 16.9^0.7 × 4^0.3 = 0.40 × 7.2364 × 1.51572 = 4.3874 N/mm²,
    0.8 of the 5.4842 of a half-brick wall."""
    one_brick = masonry_strengths(Masonry(**_BRICK), None, ec6_uk_na(), 215.0)
    half_brick = masonry_strengths(Masonry(**_BRICK), None, ec6_uk_na(), 102.5)
    assert one_brick.f_k == pytest.approx(4.3874, rel=1e-4)
    assert half_brick.f_k == pytest.approx(5.4842, rel=1e-4)
    assert one_brick.f_k == pytest.approx(0.8 * half_brick.f_k, rel=1e-12)
    assert _joint_step(one_brick).value == 0.8 and "inferred" in str(_joint_step(one_brick).inputs)
    assert _joint_step(half_brick).value == 1.0


def test_the_collar_joint_given_overrides_the_inference_and_unknown_assumes_none():
    given_no = Masonry(**_BRICK, collar_joint=False)
    assert _joint_step(masonry_strengths(given_no, None, ec6_uk_na(), 215.0)).value == 1.0
    given_yes = Masonry(**_BRICK, collar_joint=True)
    assert _joint_step(masonry_strengths(given_yes, None, ec6_uk_na(), 102.5)).value == 0.8
    # A normalised strength with no unit size: the width is unknown, none is assumed, and
    # the trace says so and how to say otherwise.
    block = Masonry(unit_strength=10.0, unit_strength_is_normalised=True)
    step = _joint_step(masonry_strengths(block, None, ec6_uk_na(), 215.0))
    assert step.value == 1.0 and "not given" in step.formula
    # A declared f_k is not worked from K: no joint step at all.
    declared = masonry_strengths(Masonry(f_k=4.0), None, ec6_uk_na(), 215.0)
    assert not any(s.symbol == "k_joint" for s in declared.steps)
