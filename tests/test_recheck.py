"""Whole re-checks against hand calculations written out step by step.

The hand calculations are ours, made with the published formulas named beside each step
(no published worked example of these checks was found: see the methods note §7). Every
figure is worked here with plain arithmetic, independently of the code under test.
"""

from __future__ import annotations

import json
import math
from dataclasses import replace

import pytest

from kit.bearing_inputs import across_on_padstone, brick_in_line_end
from sitecheck.bearing import (
    IN_LINE,
    Beam,
    BearingInput,
    Load,
    Masonry,
    Padstone,
    Wall,
    bs5628,
    check_bearing,
    ec6_uk_na,
)


def test_hand_calculation_ec6_beam_across_wall_on_padstone():
    """EC6 + UK NA. 60 kN, 133 mm flange bearing 150 mm on a 440 × 215 × 140 C25/30
    padstone, 215 mm aggregate concrete Group 1 wall, f_b = 10 (normalised), M4,
    h_c = 2400, a1 = 300, wall running on beyond a2."""
    r = check_bearing(across_on_padstone(), ec6_uk_na())

    # Masonry strength. EN 1996-1-1 eqn 3.1 with K = 0.55 (Table 3.3, from memory):
    f_k = 0.55 * 10**0.7 * 4**0.3  # = 4.17808
    gamma_M = 2.7  # UK NA Table NA.1, class 2, category I (from memory)
    f_d = f_k / gamma_M  # = 1.54744
    assert r.strengths.f_k == pytest.approx(f_k)
    assert r.strengths.f_d == pytest.approx(f_d)

    # Footprint: 133 along, centred on the 440 padstone → x = 153.5 … 286.5;
    # 150 across, flush with the near face → y = 0 … 150.
    # Spread 45° through 140 mm (common practice): x = 13.5 … 426.5 → L_w = 413 (does not
    # reach the ends: not rigid); y = 0 … min(215, 290) → W = 215.
    L_w, W = 413.0, 215.0
    sigma = 60_000 / (W * L_w)  # uniform, reaction central along: 0.675714 N/mm²
    assert r.spread.rigid is False and r.spread.distribution == "uniform"
    assert r.spread.sigma_max == pytest.approx(sigma)

    # EC6 6.1.3: a1 to the loaded area = 300 + 13.5; l_efm spreads 60° to h_c/2 each side.
    a1 = 313.5
    s60 = 1200 / math.tan(math.radians(60))  # 692.82
    l_efm = L_w + min(a1, s60) + s60  # 1419.32
    A_b, A_ef = W * L_w, l_efm * 215
    ratio = A_b / A_ef  # 0.29098, below the 0.45 cap
    beta = (1 + 0.3 * a1 / 2400) * (1.5 - 1.1 * ratio)  # 1.22616
    assert beta < min(1.25 + a1 / 4800, 1.5)
    bearing = r.check("masonry-bearing")
    assert bearing.capacity == pytest.approx(beta * f_d)  # 1.89740 N/mm²
    assert bearing.utilisation == pytest.approx(sigma / (beta * f_d))  # 0.35612
    assert bearing.utilisation == pytest.approx(0.35612, abs=5e-5)

    # EN 1992-1-1 6.7: A_c0 = 133 × 150; the flange bears from the padstone's edge, so no
    # similar concentric area is larger. The padstone is plain (the default): section 12
    # takes α_cc,pl = 0.6 (UK NA, from memory), f_cd,pl = 0.6 × 25/1.5 = 10.0 N/mm²;
    # F_Rdu = A_c0 · f_cd,pl = 19 950 × 10.0 = 199 500 N.
    pad = r.check("padstone-bearing")
    assert pad.capacity == pytest.approx(19_950 * 0.6 * 25 / 1.5)
    assert pad.utilisation == pytest.approx(60_000 / 199_500)

    # Eccentricity across: reaction at 75 from the near face, wall centre at 107.5:
    # e = 32.5 ≤ t/4 = 53.75 (EN 1996-1-1 6.1.3, from memory) → 0.6047.
    ecc = r.check("eccentricity")
    assert ecc.demand == pytest.approx(32.5) and ecc.capacity == pytest.approx(53.75)

    # Mid-height (EN 1996-1-1 6.1.2, Annex G, from memory): e_mk = max(10.75, 16.25 + 2400/450)
    # = 21.5833; λ = (2400/215)/√1000 = 0.352998; A1 = 1 − 2 × 21.5833/215 = 0.799225;
    # u = (0.352998 − 0.063)/(0.73 − 1.17 × 21.5833/215) = 0.473435; Φ = A1 e^(−u²/2).
    e_mk = 16.25 + 2400 / 450
    lam = (2400 / 215) / math.sqrt(1000)
    A1 = 1 - 2 * e_mk / 215
    u = (lam - 0.063) / (0.73 - 1.17 * e_mk / 215)
    phi = A1 * math.exp(-u * u / 2)
    assert phi == pytest.approx(0.71449, abs=5e-5)
    mid = r.check("mid-height")
    assert mid.demand == pytest.approx(60_000 / l_efm)  # 42.274 N/mm
    assert mid.capacity == pytest.approx(phi * 215 * f_d)

    # The governing strength check is the eccentricity; the bearing passes.
    assert r.governing == "eccentricity"
    assert r.utilisation == pytest.approx(32.5 / 53.75)
    assert r.passed

    # Without the padstone the 133 × 150 flange would put 3.01 N/mm² on the masonry: the
    # informative check shows the padstone is needed. It never governs.
    direct = r.check("direct-bearing")
    assert direct.kind == "informative" and not direct.passed
    assert direct.demand == pytest.approx(60_000 / (133 * 150))


def test_hand_calculation_bs5628_in_line_end_bearing_type_3():
    """BS 5628-1. 35 kN, 146 mm flange bearing 150 mm in line with a 215 mm brick wall at
    its end (a1 = 0), on a 440 × 215 × 215 padstone; 20 N/mm² bricks in M4, type 3."""
    r = check_bearing(brick_in_line_end(), bs5628())

    f_k = 5.8  # BS 5628-1:1992 Table 2(a), 20 N/mm² units, designation (iii) (seen)
    gamma_m = 3.5  # Table 4, normal/normal (seen)
    assert r.strengths.f_k == f_k and r.strengths.gamma_M == gamma_m

    # Footprint x = 0 … 150 (against the padstone's end at the opening). Spread 215 mm at
    # 45°: window x = 0 … 365, not reaching the far end. The reaction at 75 is 107.5 from
    # the window's centre, beyond L_w/6 = 60.8: a triangle over c = 3 (182.5 − 107.5) = 225.
    assert r.spread.distribution == "triangle"
    assert r.spread.contact_x1 - r.spread.contact_x0 == pytest.approx(225.0)
    sigma_max = 2 * 35_000 / (215 * 225)  # 1.44703 N/mm²

    # Local bearing, type 3: 2.0 × 5.8/3.5 = 3.31429 N/mm² (BS 5628-1 clause 34).
    bearing = r.check("masonry-bearing")
    assert bearing.demand == pytest.approx(sigma_max)
    assert bearing.capacity == pytest.approx(2.0 * f_k / gamma_m)
    assert bearing.utilisation == pytest.approx(0.43661, abs=5e-5)

    # At 0.4 h = 1080 mm the load has spread 1080 mm on the far side only (a1 = 0):
    # l_d = 225 + 1080 = 1305 mm → 26.820 N/mm. β (Annex B, from memory): h_ef/t_ef = 12.558,
    # e_a = 215 (12.558²/2400 − 0.015) = 10.903, e_m = 0.6 × 10.75 + 10.903 = 17.353,
    # β = 1.1 (1 − 2 × 17.353/215) = 0.92244.
    sr = 2700 / 215
    e_a = 215 * (sr**2 / 2400 - 0.015)
    beta = 1.1 * (1 - 2 * (0.6 * 10.75 + e_a) / 215)
    assert beta == pytest.approx(0.92244, abs=5e-5)
    disp = r.check("dispersion")
    assert disp.demand == pytest.approx(35_000 / 1305)
    assert disp.capacity == pytest.approx(beta * 215 * f_k / gamma_m)

    # Rules of the trade for a beam in line with the wall (NHBC Standards 6.5.5, seen):
    # flange 146 ≤ 215 + 50; padstone 440 ≥ 200; web over the centre line.
    assert r.check("inline-flange").utilisation == pytest.approx(146 / 265)
    assert r.check("inline-padstone-length").utilisation == pytest.approx(200 / 440)
    assert r.check("inline-web-centre").demand == pytest.approx(0.0)

    assert r.governing == "masonry-bearing" and r.passed


def test_group_2_units_get_no_enhancement_and_need_solid_material():
    # EN 1996-1-1 6.1.3 (from memory): β = 1.0 for Group 2–4 units, and the load must bear
    # on solid material as long as the bearing plus a 60° spread each side.
    inp = across_on_padstone(
        masonry=Masonry(
            material="aggregate concrete",
            group=2,
            unit_strength=10.0,
            unit_strength_is_normalised=True,
        )
    )
    r = check_bearing(inp, ec6_uk_na())
    bearing = r.check("masonry-bearing")
    assert bearing.capacity == pytest.approx(r.strengths.f_d)
    solid = r.check("solid-material")
    # Needed each side: 140/tan 60° = 80.83 mm; room each side (440 − 133)/2 = 153.5 mm.
    assert solid.demand == pytest.approx(133 / 2 + 140 / math.tan(math.radians(60)))
    assert solid.capacity == pytest.approx(133 / 2 + 153.5)
    assert solid.passed


def test_group_2_units_with_no_padstone_fail_the_solid_material_rule():
    inp = across_on_padstone(
        padstone=None,
        load=Load(5_000.0),
        masonry=Masonry(
            material="aggregate concrete",
            group=2,
            unit_strength=10.0,
            unit_strength_is_normalised=True,
        ),
    )
    r = check_bearing(inp, ec6_uk_na())
    solid = r.check("solid-material")
    assert not solid.passed and solid.utilisation == math.inf
    assert not r.passed and r.governing == "solid-material"
    assert r.as_dict()["utilisation"] is None  # JSON has no infinity


def test_spreader_route_applies_to_a_deep_long_full_width_padstone():
    # EN 1996-1-1 6.1.3 (from memory): width t, depth > 200, length > 3 × bearing → 1.5 f_d.
    inp = across_on_padstone(padstone=Padstone(length=440.0, width=215.0, depth=215.0))
    r = check_bearing(inp, ec6_uk_na())
    assert r.check("masonry-bearing").capacity == pytest.approx(1.5 * r.strengths.f_d)
    # 200 mm deep is not "greater than 200 mm".
    shallow = check_bearing(
        across_on_padstone(padstone=Padstone(length=440.0, width=215.0, depth=200.0)), ec6_uk_na()
    )
    assert shallow.check("masonry-bearing").capacity < 1.5 * shallow.strengths.f_d


def test_rigid_padstone_with_off_centre_beam_gives_a_trapezoid():
    # Footprint offset 40 mm along a 440 × 215 × 215 padstone: the 45° spread reaches both
    # ends (rigid); e = 40 ≤ 440/6 → σ = N/(B L)(1 + 6e/L) (eccentric footing formulas).
    inp = across_on_padstone(
        beam=Beam(flange_width=133.0, bearing_length=150.0, offset_along=40.0),
        padstone=Padstone(length=440.0, width=215.0, depth=215.0),
    )
    r = check_bearing(inp, ec6_uk_na())
    assert r.spread.rigid and r.spread.distribution == "trapezoid"
    assert r.spread.sigma_max == pytest.approx(60_000 / (215 * 440) * (1 + 6 * 40 / 440))


def test_near_third_reaction_moves_the_load_towards_the_face():
    # A flexible end: reaction at l_b/3 from the near face (ours, methods note §8): 50 mm,
    # so e across = 107.5 − 50 = 57.5 mm > t/4 = 53.75 mm.
    inp = across_on_padstone(
        beam=Beam(flange_width=133.0, bearing_length=150.0, reaction_at="near-third")
    )
    r = check_bearing(inp, ec6_uk_na())
    assert r.check("eccentricity").demand == pytest.approx(57.5)
    assert not r.check("eccentricity").passed
    assert any("two thirds" in n for n in r.notes)


def test_min_bearing_rules():
    # NHBC Standards 6.5.5 (seen): 100 mm steel bearing; lintels 150 mm (common practice).
    short = check_bearing(
        across_on_padstone(beam=Beam(flange_width=133.0, bearing_length=90.0)), ec6_uk_na()
    )
    assert not short.check("min-bearing").passed and not short.passed
    # The worst failing check governs: here the short bearing also moves the reaction out
    # to 107.5 − 45 = 62.5 mm > t/4, 1.16 against the rule's 100/90 = 1.11.
    assert short.governing == "eccentricity"
    lintel = across_on_padstone(
        padstone=None,
        load=Load(5_000.0),
        beam=Beam(flange_width=100.0, bearing_length=140.0, member="lintel", orientation="in-line"),
        wall=Wall(thickness=100.0, height_to_bearing=2100.0, a1=0.0),
    )
    assert check_bearing(lintel, ec6_uk_na()).check("min-bearing").capacity == 140.0
    assert check_bearing(lintel, ec6_uk_na()).check("min-bearing").demand == 150.0


def test_in_line_flange_may_overhang_the_padstone_within_the_trade_rule():
    # NHBC 6.5.5: flange ≤ t + 50. A 146 mm flange on a 100 mm leaf: allowed, the rule
    # passes (146 ≤ 150); only the 100 mm over the padstone bears.
    inp = brick_in_line_end(
        wall=Wall(thickness=100.0, height_to_bearing=2400.0, a1=0.0),
        padstone=Padstone(length=440.0, width=100.0, depth=215.0),
        masonry=Masonry(f_k=4.0),
    )
    r = check_bearing(inp, bs5628())
    assert r.check("inline-flange").passed
    assert r.spread.footprint_y1 - r.spread.footprint_y0 == pytest.approx(100.0)
    wider = replace(inp, beam=replace(inp.beam, flange_width=160.0))
    assert not check_bearing(wider, bs5628()).check("inline-flange").passed


def test_two_code_bases_give_different_answers_for_the_same_geometry():
    # Expected, not a bug: EC6 spreads at 60° with β, BS 5628 at 45° with k (methods note §4).
    inp = across_on_padstone(masonry=Masonry(f_k=4.0))
    ec6 = check_bearing(inp, ec6_uk_na())
    bs = check_bearing(inp, bs5628())
    assert ec6.check("masonry-bearing").capacity != bs.check("masonry-bearing").capacity
    assert ec6.spread.masonry_spread_deg == 60.0 and bs.spread.masonry_spread_deg == 45.0
    assert {c.code for c in ec6.checks} - {c.code for c in bs.checks} == {
        "eccentricity",
        "mid-height",
    }


def test_result_serialises_to_json_with_every_step_and_clause():
    r = check_bearing(across_on_padstone(), ec6_uk_na())
    data = json.loads(json.dumps(r.as_dict()))
    assert data["governing"] == "eccentricity"
    for check in data["checks"]:
        assert check["clause"] and check["steps"]
        for step in check["steps"]:
            assert step["clause"] and step["source"] in {"S", "P", "M", "CP", "ours"}
    assert data["spread"]["distribution"] == "uniform"
    assert data["strengths"]["steps"][-1]["symbol"] == "f_cd,pl"  # plain, the default


def test_site_overrides_reach_the_checks():
    # A site that sets alpha_cc = 1.0 (EN recommended value) gets f_cd = 25/1.5 for a
    # reinforced padstone (EN 1992-1-1 eqn 3.15).
    reinforced = replace(across_on_padstone().padstone, reinforced=True)
    r = check_bearing(across_on_padstone(padstone=reinforced), ec6_uk_na(alpha_cc=1.0))
    assert r.strengths.f_cd == pytest.approx(25 / 1.5)
    # And α_cc,pl = 0.8 (EN recommended, from memory) gives 0.8 × 25/1.5 for a plain one.
    r = check_bearing(across_on_padstone(), ec6_uk_na(alpha_cc_pl=0.8))
    assert r.strengths.f_cd == pytest.approx(0.8 * 25 / 1.5)
    # A site that turns the trade minimum bearing to 160 mm fails a 150 mm bearing.
    assert not check_bearing(across_on_padstone(), ec6_uk_na(min_bearing_beam=160.0)).passed


# ---------------------------------------------------------------- both readings under a triangle


def _end_bearing(**changes) -> BearingInput:
    """Invented sizes: a 150 mm flange bearing 150 mm in line with a 215 mm wall, flush
    with the span end of a 300 × 215 × 215 padstone at the very end of the wall (a1 = 0;
    the wall runs on the other way)."""
    inp = BearingInput(
        load=Load(reaction=58_000.0),
        beam=Beam(flange_width=150.0, bearing_length=150.0, orientation=IN_LINE),
        wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=0.0),
        masonry=Masonry(material="aggregate concrete", group=1, f_k=5.0, gamma_M=2.5),
        padstone=Padstone(length=300.0, width=215.0, depth=215.0),
    )
    return replace(inp, **changes)


def test_end_bearing_where_the_whole_window_governs_beta():
    """EC6 local check (EN 1996-1-1 6.1.3, eqn 6.10 and its limits from memory), by hand.

    Spread through the padstone at 45°: 215 mm each side of the 0–150 footprint reaches
    both ends of the 300 mm padstone, so it acts as rigid: window 0–300, W = 215.
    Reaction at x = 75: e = 75 − 150 = −75, beyond L/6 = 50, a triangle with contact
    c = 3 (150 − 75) = 225 mm at the loaded end; σ_max = 2N/(W c) = 116 000/48 375
    = 2.39793 N/mm². f_d = f_k/γ_M = 5.0/2.5 = 2.0. s = (h_c/2)/tan 60° = 692.820 mm.

    Whole window: A_b = 215 × 300 = 64 500; l_efm = 300 + 0 (a1 = 0) + 692.820 = 992.820;
    A_b/A_ef = 64 500/(992.820 × 215) = 0.302169; β = (1 + 0)(1.5 − 1.1 × 0.302169)
    = 1.167614 (≤ 1.25 + 0); utilisation 2.39793/(1.167614 × 2.0) = 1.02685.
    Contact length: A_b = 215 × 225 = 48 375; l_efm = 225 + 692.820 = 917.820;
    A_b/A_ef = 0.245146; β = 1.230339; utilisation 0.97450.

    The contact length alone would pass the bearing; the whole window fails it and
    governs (methods note §8: the higher utilisation)."""
    r = check_bearing(_end_bearing(), ec6_uk_na())
    assert r.spread.distribution == "triangle" and r.spread.rigid
    c = r.check("masonry-bearing")
    steps = {s.label: s.value for s in c.steps}
    assert steps["β within its limits, whole-window reading"] == pytest.approx(1.167614, rel=1e-6)
    assert steps["β within its limits, contact-length reading"] == pytest.approx(1.230339, rel=1e-6)
    assert c.utilisation == pytest.approx(1.02685, rel=1e-5) and not c.passed
    assert r.governing == "masonry-bearing" and not r.passed
    note = " ".join(c.notes)
    assert "whole-window reading 1.03; contact-length reading 0.97" in note
    assert "the whole-window reading, with the higher utilisation, governs" in note

    # At mid-height the contact length is the shorter spread, so it governs there:
    # n = 58 000/917.820 = 63.193 N/mm against 58 000/992.820 = 58.419 N/mm.
    m = r.check("mid-height")
    assert m.demand == pytest.approx(63.1932, rel=1e-5)
    assert "the contact-length reading, with the higher utilisation, governs" in " ".join(m.notes)
    assert r.spread.spread_reading == "contact-length reading"
    assert r.spread.spread_length == pytest.approx(917.820, rel=1e-6)


def test_end_bearing_where_the_contact_length_governs_the_dispersion():
    """BS 5628-1 clause 34 at 0.4 h (dispersion at 45°), by hand, on the same end bearing
    with 60 kN, 166 kN/m of other load on the wall, f_k/γ_m = 7.0/3.5 = 2.0 and a declared
    β = 0.5. Depth 0.4 × 2400 = 960 mm, so 960 mm of spread on the side that runs on and
    none at the wall's end (a1 = 0).

    Whole window: l_d = 300 + 960 = 1260; n = 60 000/1260 + 166 = 213.619 N/mm;
    capacity β t f_k/γ_m = 0.5 × 215 × 2.0 = 215 N/mm: utilisation 0.99358.
    Contact length: l_d = 225 + 960 = 1185; n = 50.633 + 166 = 216.633: utilisation 1.00760.

    The whole window alone would pass; the contact length fails and governs. The local
    bearing is 2N/(W c) = 2.48062 N/mm² against type 3, 2.0 × 2.0 = 4.0: 0.62016."""
    inp = _end_bearing(
        load=Load(reaction=60_000.0, wall_load=166.0),
        masonry=Masonry(material="clay", group=1, f_k=7.0, gamma_M=3.5),
        bearing_type=3,
        beta_s=0.5,
    )
    r = check_bearing(inp, bs5628())
    d = r.check("dispersion")
    steps = {s.label: s.value for s in d.steps}
    assert steps["Length the load has spread over at that depth, whole-window reading"] == 1260.0
    assert steps["Length the load has spread over at that depth, contact-length reading"] == 1185.0
    assert d.utilisation == pytest.approx(1.00760, rel=1e-5) and not d.passed
    assert r.check("masonry-bearing").utilisation == pytest.approx(0.62016, rel=1e-5)
    assert r.governing == "dispersion" and not r.passed
    assert "whole-window reading 0.99; contact-length reading 1.01" in " ".join(d.notes)
    assert r.spread.spread_reading == "contact-length reading"


def test_a_uniform_or_trapezoid_pressure_has_one_reading():
    r = check_bearing(across_on_padstone(), ec6_uk_na())
    assert r.spread.distribution != "triangle" and r.spread.spread_reading == ""
    labels = [s.label for s in r.check("masonry-bearing").steps]
    assert not any("reading" in label for label in labels)


# ---------------------------------------------------------------- plain and reinforced padstones


def _centred_in_line(**pad_changes):
    """A 146 mm flange bearing 150 mm, in line and centred on a 440 × 215 × 215 C25/30
    padstone: a concentric load, so a larger similar area fits (EN 1992-1-1 6.7(3))."""
    pad = Padstone(length=440.0, width=215.0, depth=215.0, **pad_changes)
    return across_on_padstone(
        beam=Beam(flange_width=146.0, bearing_length=150.0, orientation=IN_LINE, offset_along=0.0),
        padstone=pad,
    )


def test_a_plain_padstone_takes_alpha_cc_pl_and_no_enhancement_unless_the_basis_allows():
    """By hand, EN 1992-1-1 6.7 eqn 6.63: A_c0 = 150 × 146 = 21 900 mm². The largest similar
    area is set by the room across, k = 2 × 107.5/146 = 1.47260 (below 3, 1 + 215/150 and
    1 + 215/146).
    Reinforced: f_cd = 0.85 × 25/1.5 = 14.1667; F_Rdu = 21 900 × 14.1667 × 1.47260
    = 456 875 N.
    Plain (section 12, α_cc,pl = 0.6, UK NA from memory): f_cd,pl = 10.0; no enhancement, as
    6.7(4) asks for reinforcement for the transverse tension: 21 900 × 10.0 = 219 000 N.
    Plain with the site allowing the enhancement: 219 000 × 1.47260 = 322 500 N."""
    basis = ec6_uk_na()
    reinforced = check_bearing(_centred_in_line(reinforced=True), basis).check("padstone-bearing")
    plain = check_bearing(_centred_in_line(), basis).check("padstone-bearing")
    allowed = check_bearing(
        _centred_in_line(), ec6_uk_na(plain_partial_area_enhancement=True)
    ).check("padstone-bearing")
    assert reinforced.capacity == pytest.approx(456_875.0, rel=1e-9)
    assert plain.capacity == pytest.approx(219_000.0, rel=1e-9)
    assert allowed.capacity == pytest.approx(322_500.0, rel=1e-9)
    assert any("plain concrete: no enhancement" in n for n in plain.notes)
    taken = {s.label: s for s in plain.steps}["Scale taken for plain concrete"]
    assert taken.value == 1.0 and taken.clause == "EN 1992-1-1 6.7(4)"


def test_a_design_stored_with_the_retired_precast_input_still_reads():
    from sitecheck.bearing.serial import input_from_dict, input_to_dict

    data = input_to_dict(across_on_padstone())
    data["padstone"].pop("reinforced")
    data["padstone"]["precast"] = False  # as designs were stored before
    inp = input_from_dict(data)
    assert inp.padstone.reinforced is False and inp == across_on_padstone()


def test_a_reinforced_design_built_plain_is_weaker_concrete_for_the_engineer():
    from sitecheck.bearing.review import Checklist, Measurements, as_built_input, review

    design = _centred_in_line(reinforced=True)
    basis = ec6_uk_na()
    m = Measurements(padstone_reinforced=False)
    built = as_built_input(design, m)
    assert built.padstone.reinforced is False
    result = check_bearing(built, basis)
    reasons = review(design, check_bearing(design, basis), m, Checklist(), built, result, basis)
    weaker = next(r for r in reasons if r.code == "concrete-weaker")
    # f_cd 0.85 × 25/1.5 = 14.17 designed, f_cd,pl 0.6 × 25/1.5 = 10 as built.
    assert "f_cd 10 against 14.17 N/mm²" in weaker.sentence


# ---------------------------------------------------------------- creep eccentricity at mid-height


def _slender(material: str):
    """A 100 mm wall, 2400 mm to the bearing (h_ef/t_ef = 24), the beam bearing 90 mm on a
    100 mm wide padstone from the near face."""
    base = across_on_padstone()
    return replace(
        base,
        wall=replace(base.wall, thickness=100.0),
        padstone=replace(base.padstone, width=100.0),
        beam=replace(base.beam, bearing_length=90.0),
        masonry=replace(base.masonry, material=material),
    )


def test_creep_adds_to_the_mid_height_eccentricity_above_lambda_c():
    """EN 1996-1-1 6.1.2.2 (eqns 6.6 and 6.8, λ_c = 15 and φ_∞ = 1.5 for aggregate concrete,
    all from memory), by hand: the reaction sits 45 mm from the near face, 5 mm off the
    centre line; e_m = 5/2 + 2400/450 = 7.8333 mm. h_ef/t_ef = 24 > 15, so
    e_k = 0.002 × 1.5 × 24 × √(100 × 7.8333) = 0.072 × 27.9881 = 2.0151 mm and
    e_mk = max(0.05 × 100, 7.8333 + 2.0151) = 9.8485 mm."""
    steps = {
        s.symbol: s
        for s in check_bearing(_slender("aggregate concrete"), ec6_uk_na())
        .check("mid-height")
        .steps
    }
    assert steps["e_m"].value == pytest.approx(7.83333, rel=1e-5)
    assert steps["e_k"].value == pytest.approx(2.01514, rel=1e-5)
    assert steps["e_mk"].value == pytest.approx(9.84848, rel=1e-5)


def test_clay_units_take_no_creep_eccentricity_within_the_slenderness_limit():
    # Clay: λ_c is the slenderness limit 27 (from memory), so at 24 e_k = 0 and the trace
    # says why; e_mk = e_m = 7.8333 mm.
    steps = {
        s.symbol: s for s in check_bearing(_slender("clay"), ec6_uk_na()).check("mid-height").steps
    }
    assert steps["e_k"].value == 0.0 and "λ_c" in steps["e_k"].formula
    assert steps["e_mk"].value == pytest.approx(7.83333, rel=1e-5)


# ---------------------------------------------------------------- a padstone narrower than the wall


@pytest.mark.parametrize(
    "position, offset, y0, e",
    [
        (None, None, 0.0, 57.5),
        ("near-face", None, 0.0, 57.5),
        ("centred", None, 37.5, 20.0),
        ("far-face", None, 75.0, 17.5),
        ("offset", 20.0, 57.5, 0.0),
    ],
)
def test_where_a_narrow_padstone_sits_across_the_wall_moves_the_load(position, offset, y0, e):
    """A 140 mm padstone in a 215 mm wall under a beam across it bearing 100 mm from the
    padstone's near edge. By hand: the padstone's near edge y0 from the wall's near face is
    0 (near face), (215 − 140)/2 = 37.5 (centred), 75 (far face) or 37.5 + 20 (offset +20);
    the reaction sits at y0 + 50, so e = |y0 + 50 − 107.5| against t/4 = 53.75
    (EN 1996-1-1 6.1.3, from memory): 57.5 fails at the near face, the others pass."""
    base = across_on_padstone()
    inp = replace(
        base,
        beam=replace(base.beam, bearing_length=100.0),
        padstone=replace(
            base.padstone, width=140.0, position_across=position, offset_across=offset
        ),
    )
    r = check_bearing(inp, ec6_uk_na())
    assert r.spread.support_y0 == pytest.approx(y0)
    ecc = r.check("eccentricity")
    assert ecc.demand == pytest.approx(e) and ecc.passed == (e <= 53.75)


def test_bs5628_traces_write_f_k_over_gamma_m_and_cite_one_edition():
    """BS 5628-1 has no f_d or γ_M: its design strength is f_k/γ_m, γ_m from Table 4 of the
    1992 edition (the edition whose tables are coded here). No step of a BS 5628 re-check
    may say f_d or γ_M, and every BS clause names that edition."""
    r = check_bearing(brick_in_line_end(), bs5628())
    steps = [*r.strengths.steps, *(s for c in r.checks for s in c.steps)]
    written = " ".join(
        f"{s.symbol} {s.formula} " + " ".join(str(i[0]) for i in s.inputs) for s in steps
    )
    assert "f_d" not in written and "γ_M" not in written
    assert any(s.symbol == "f_k/γ_m" for s in r.strengths.steps)
    clauses = {s.clause for s in steps} | {c.clause for c in r.checks}
    bs = {c for c in clauses if "BS 5628" in c}
    assert bs and all(c.startswith("BS 5628-1:1992 ") for c in bs), bs
