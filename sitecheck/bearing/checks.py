"""The checks of one bearing. Each returns a :class:`Check` with its steps and clause."""

from __future__ import annotations

import math

from .basis import CodeBasis
from .errors import InputError
from .format import number, utilisation
from .formulas import F_Rdu, beta_bs5628, beta_ec6, beta_ec6_upper, phi_m
from .geometry import Layout, Pressure, Reading, readings, spread_length, worse
from .inputs import ACROSS, IN_LINE, BearingInput, Masonry, Wall, wall_heights
from .trace import RULE, STRENGTH, Check, Step, Strengths, given_step, make_check, make_step

TAN60 = math.tan(math.radians(60.0))


# ---------------------------------------------------------------- rules of the trade


def min_bearing(inp: BearingInput, basis: CodeBasis) -> Check:
    lintel = inp.beam.member == "lintel"
    need = basis.min_bearing_lintel if lintel else basis.min_bearing_beam
    have = inp.beam.bearing_length
    title = "Minimum lintel end bearing" if lintel else "Minimum steel bearing"
    step = make_step(
        title,
        "l_b,min",
        "rule of the trade",
        (("l_b", have, "mm"),),
        need,
        "mm",
        "common practice" if lintel else "NHBC Standards 6.5.5",
        "CP" if lintel else "S",
    )
    return make_check(
        "min-bearing",
        title,
        RULE,
        need,
        have,
        "mm",
        step.clause,
        step.source,
        [step],
    )


# One piece: the in-line bearing's rules, one after another as the trace lists them; mirrored line
# for line in checks.js.
def inline_rules(inp: BearingInput, lay: Layout, basis: CodeBasis) -> list[Check]:
    """A beam in line with the wall: flange no wider than t + 50, padstone at least 200
    long, web over the wall's centre (NHBC Standards 6.5.5 [S]; the centring tolerance is
    ours)."""
    t = inp.wall.thickness
    b = inp.beam.flange_width
    limit = t + basis.inline_flange_allowance
    out = [
        make_check(
            "inline-flange",
            "Flange width of a beam in line with the wall",
            RULE,
            b,
            limit,
            "mm",
            "NHBC Standards 6.5.5",
            "S",
            [
                make_step(
                    "Widest flange on the wall",
                    "b_max",
                    "t + 50",
                    (("t", t, "mm"), ("b_f", b, "mm")),
                    limit,
                    "mm",
                    "NHBC Standards 6.5.5",
                    "S",
                )
            ],
        )
    ]
    if inp.padstone is not None:
        need = basis.inline_padstone_min_length
        out.append(
            make_check(
                "inline-padstone-length",
                "Padstone length under a beam in line with the wall",
                RULE,
                need,
                inp.padstone.length,
                "mm",
                "NHBC Standards 6.5.5",
                "S",
                [
                    make_step(
                        "Shortest padstone",
                        "L_min",
                        "rule of the trade",
                        (("L_p", inp.padstone.length, "mm"),),
                        need,
                        "mm",
                        "NHBC Standards 6.5.5",
                        "S",
                    )
                ],
            )
        )
    off = abs(lay.eccentricity_across)
    tol = basis.inline_web_tolerance
    out.append(
        make_check(
            "inline-web-centre",
            "Web over the wall's centre line",
            RULE,
            off,
            tol,
            "mm",
            "NHBC Standards 6.5.5",
            "S",
            [
                make_step(
                    "Web off the wall's centre line",
                    "e_y",
                    "|y_reaction − t/2|",
                    (("tolerance", tol, "mm"),),
                    off,
                    "mm",
                    "NHBC Standards 6.5.5 (tolerance ours)",
                    "ours",
                )
            ],
        )
    )
    return out


# ---------------------------------------------------------------- concrete padstone


# One piece: the padstone's local bearing (EN 1992-1-1 6.7 and section 12) in the order its trace
# prints; checks.js mirrors it line for line, so a split is made in both languages or not at all.
def padstone_bearing(inp: BearingInput, lay: Layout, st: Strengths, basis: CodeBasis) -> Check:
    """Flange on the padstone: partially loaded area, EN 1992-1-1 6.7 eqn 6.63 [S].

    F_Rdu = A_c0 · f_cd · √(A_c1/A_c0) ≤ 3.0 · f_cd · A_c0, with A_c1 the largest area
    similar to A_c0 and concentric with it that fits in the padstone, its sides no more
    than 3 × and no more than the depth beyond A_c0's. A beam bearing from one face leaves
    no room for a concentric enlargement, so F_Rdu = A_c0 · f_cd: we keep that honest
    answer rather than relax the similarity rule.

    A plain padstone (f_cd from α_cc,pl) takes no enhancement either unless the code basis
    allows it: 6.7(4) asks for reinforcement to carry the transverse tension the spread
    sets up, and plain concrete has none [ours, the cautious reading].
    """
    # Checked only where there is a padstone, which then has an f_cd.
    assert inp.padstone is not None and st.f_cd is not None
    b1 = lay.x1 - lay.x0
    d1 = lay.y1 - lay.y0
    a_c0 = b1 * d1
    cx, cy = lay.reaction_x, lay.reaction_y
    h = lay.depth
    k_limits = (
        basis.plb_limit_factor,
        1 + h / b1,
        1 + h / d1,
        2 * min(cx, lay.length - cx) / b1,
        2 * min(cy, lay.width - cy) / d1,
    )
    k_fits = max(1.0, min(k_limits))
    plain = not inp.padstone.reinforced
    k = 1.0 if plain and not basis.plain_partial_area_enhancement else k_fits
    a_c1 = k * k * a_c0
    fcd = st.f_cd
    fcd_symbol = "f_cd,pl" if plain else "f_cd"
    f_rdu = F_Rdu(a_c0, a_c1, fcd, basis.plb_limit_factor)
    n = inp.load.reaction
    steps = [
        make_step(
            "Loaded area under the flange",
            "A_c0",
            "b_1 · d_1",
            (("b_1", b1, "mm"), ("d_1", d1, "mm")),
            a_c0,
            "mm²",
            "EN 1992-1-1 6.7(2)",
            "S",
        ),
        make_step(
            "Scale of the largest similar, concentric area in the padstone",
            "k",
            "min(3, 1 + h/b_1, 1 + h/d_1, room along, room across), ≥ 1",
            (("h", h, "mm"), ("room along", k_limits[3], ""), ("room across", k_limits[4], "")),
            k_fits,
            "",
            "EN 1992-1-1 6.7(3), Figure 6.29",
            "S",
        ),
    ]
    if plain:
        steps.append(
            make_step(
                "Scale taken for plain concrete",
                "k",
                "1 (no reinforcement for the transverse tension)"
                if k == 1.0 and k_fits > 1.0 + 1e-12
                else "as it fits",
                (
                    (
                        "allowed by the code basis",
                        "yes" if basis.plain_partial_area_enhancement else "no",
                        "",
                    ),
                ),
                k,
                "",
                "EN 1992-1-1 6.7(4)",
                "ours",
            )
        )
    steps += [
        make_step(
            "Largest distribution area",
            "A_c1",
            "k² · A_c0",
            (("k", k, ""),),
            a_c1,
            "mm²",
            "EN 1992-1-1 6.7(3)",
            "S",
        ),
        make_step(
            "Resistance of the padstone under the flange",
            "F_Rdu",
            "A_c0 · f_cd · √(A_c1/A_c0) ≤ 3.0 · f_cd · A_c0",
            (("A_c0", a_c0, "mm²"), (fcd_symbol, fcd, "N/mm²"), ("A_c1", a_c1, "mm²")),
            f_rdu,
            "N",
            "EN 1992-1-1 6.7 eqn 6.63",
            "S",
        ),
    ]
    notes = []
    if k_fits <= 1.0 + 1e-12:
        notes.append(
            "No concentric enlargement fits in the padstone (the flange bears from its edge), "
            "so no enhancement is taken: F_Rdu = A_c0 · f_cd."
        )
    elif k == 1.0:
        notes.append(
            "The padstone is plain concrete: no enhancement is taken (F_Rdu = A_c0 · f_cd,pl), "
            "as EN 1992-1-1 6.7(4) asks for reinforcement to carry the transverse tension. "
            "The site's code basis may allow it (plain_partial_area_enhancement)."
        )
    if plain:
        notes.append(
            "Plain (unreinforced) padstone, as site padstones usually are unless the design "
            "says reinforced: f_cd,pl = α_cc,pl · f_ck / γ_c (EN 1992-1-1 section 12)."
        )
    return make_check(
        "padstone-bearing",
        "Flange bearing on the concrete padstone",
        STRENGTH,
        n,
        f_rdu,
        "N",
        "EN 1992-1-1 6.7",
        "S",
        steps,
        notes,
    )


# ---------------------------------------------------------------- EC6


def ec6_masonry_bearing(
    inp: BearingInput,
    lay: Layout,
    pres: Pressure,
    st: Strengths,
    basis: CodeBasis,
    steps: list[Step],
    code: str = "masonry-bearing",
    title: str = "Masonry under the concentrated load",
    kind: str = STRENGTH,
) -> Check:
    """EN 1996-1-1 6.1.3: σ under the load ≤ β · f_d (eqns 6.9–6.10) [P; details M].

    β = (1 + 0.3 a1/h_c)(1.5 − 1.1 A_b/A_ef), 1.0 ≤ β ≤ min(1.25 + a1/(2 h_c), 1.5), with
    A_b/A_ef not above 0.45 and A_ef = l_efm · t, l_efm spreading at 60° down to h_c/2.
    β = 1.0 for Group 2–4 units or shell bedding. Through a stiff spreader (width t, depth
    > 200 mm, length > 3 × the bearing length) σ ≤ 1.5 f_d instead. The peak of the linear
    pressure is compared, so an end bearing is not averaged away. Under a triangle of
    pressure β is worked on both readings of the loaded length and the lower kept
    (:func:`~.geometry.readings`).
    """
    wall = inp.wall
    return ec6_bearing_on_readings(
        inp.masonry,
        wall,
        readings(lay, pres, wall.a1, wall.a2),
        pres,
        st,
        basis,
        steps,
        spreader=spreader_conditions(inp, basis),
        on_padstone=inp.padstone is not None,
        code=code,
        title=title,
        kind=kind,
    )


def _named(label: str, reading: Reading) -> str:
    return f"{label}, {reading.name}" if reading.name else label


def _governing_reading_note(what: str, worked: list[tuple[float, Reading]], chosen: Reading) -> str:
    shown = "; ".join(f"{r.name} {utilisation(u)}" for u, r in worked)
    head = (
        "Under the triangle of pressure the codes do not say which loaded length to take: "
        f"{what} was worked on both (utilisation: {shown})"
    )
    if all(u == worked[0][0] for u, _ in worked):
        return f"{head}; both give the same (the wall's end cuts the spread of each alike)."
    return f"{head} and the {chosen.name}, with the higher utilisation, governs."


def l_efm_of(reading: Reading, h_c: float, basis: CodeBasis) -> float:
    """Effective length at mid-height: the loaded length spread at 60° (EC6) down to
    h_c/2 on each side, each side cut by the wall's end, EN 1996-1-1 6.1.3 Figure 6.2 [P]."""
    s60 = (h_c / 2) / math.tan(math.radians(basis.masonry_spread_deg))
    return spread_length(reading.length, reading.e1, reading.e2, s60)


# One piece: EC6's local bearing worked under both readings, in the order its trace prints;
# checks.js mirrors it line for line, so a split is made in both languages or not at all.
def ec6_bearing_on_readings(
    mas: Masonry,
    wall: Wall,
    reads: tuple[Reading, ...],
    pres: Pressure,
    st: Strengths,
    basis: CodeBasis,
    steps: list[Step],
    *,
    spreader: str | None,
    on_padstone: bool,
    code: str,
    title: str,
    kind: str,
) -> Check:
    """:func:`ec6_masonry_bearing` once the readings of the loaded length and the spreader
    (its description, or None) are known; ``on_padstone`` says whether a padstone carries
    the load. The direct-bearing check places the beam straight on the masonry this way
    without building an input for it."""
    t, h_c = wall.thickness, wall.height_to_bearing
    width = pres.width
    enhanced = mas.group == 1 and not mas.shell_bedded
    spreader_allowed = spreader is not None and (enhanced or basis.spreader_route_for_groups_2_to_4)
    notes: list[str] = []
    worked: list[tuple[float, Reading]] = []
    factors: dict[Reading, tuple[float, str, float]] = {}
    runs_on = False
    for r in reads:
        a_b = width * r.length
        l_efm = l_efm_of(r, h_c, basis)
        a_ef = l_efm * t
        steps.append(
            make_step(
                _named("Loaded area on the masonry", r),
                "A_b",
                "W · loaded length",
                (("W", width, "mm"), ("loaded length", r.length, "mm")),
                a_b,
                "mm²",
                "EN 1996-1-1 6.1.3",
                "P",
            )
        )
        steps.append(
            make_step(
                _named("Effective length at mid-height of the wall below", r),
                "l_efm",
                "loaded length + 2 × (h_c/2)/tan 60°, each side cut by a1, a2",
                (("h_c", h_c, "mm"), ("a1", r.e1, "mm"), ("a2", r.e2, "mm")),
                l_efm,
                "mm",
                "EN 1996-1-1 6.1.3, Figure 6.2",
                "P",
            )
        )
        # The nearer end of the wall, if any.
        if r.e1 is None:
            near = r.e2
        elif r.e2 is None:
            near = r.e1
        else:
            near = min(r.e1, r.e2)
        if enhanced:
            beta = _ec6_beta_steps(r, near, h_c, a_b, a_ef, basis, steps)
            runs_on = runs_on or near is None
        else:
            beta = 1.0
        factor, route = beta, "β"
        if spreader_allowed and basis.spreader_stress_factor > factor:
            factor, route = basis.spreader_stress_factor, "spreader"
        factors[r] = (factor, route, a_b)
        worked.append((pres.sigma_max / (factor * st.f_d), r))
    if not enhanced:
        why = "shell-bedded" if mas.shell_bedded else f"Group {mas.group} units"
        steps.append(
            make_step(
                f"No enhancement for {why}", "β", "1.0", (), 1.0, "", "EN 1996-1-1 6.1.3(2)", "M"
            )
        )
    _, chosen = worse(worked)
    factor, route, a_b = factors[chosen]
    if len(reads) > 1:
        steps.append(
            make_step(
                "Factor kept: the lower of the two readings (the higher utilisation)",
                "β" if route == "β" else "factor",
                "min(whole window, contact length)",
                tuple((r.name, factors[r][0], "") for r in reads),
                factor,
                "",
                "EN 1996-1-1 6.1.3",
                "ours",
            )
        )
        notes.append(_governing_reading_note("β", worked, chosen))
    if runs_on:
        notes.append(
            "The wall runs on both ways (no end or opening near): a1 → ∞, so β takes its "
            "upper limit, 1.5, never less than the same wall with an end nearby."
        )
    if spreader_allowed:
        if route == "spreader":
            notes.append(f"The padstone is a spreader ({spreader}): σ ≤ 1.5 f_d applies.")
    elif on_padstone:
        notes.append(
            "The padstone is not a spreader in the sense of EN 1996-1-1 6.1.3 (width t, depth > 200 mm, length > 3 × bearing), so the 1.5 f_d route does not apply."
        )
    cap = factor * st.f_d
    steps.append(
        make_step(
            "Design strength under the load",
            "β · f_d" if route == "β" else "1.5 · f_d",
            "β · f_d" if route == "β" else "1.5 f_d beneath a spreader",
            (("factor", factor, ""), ("f_d", st.f_d, "N/mm²")),
            cap,
            "N/mm²",
            "EN 1996-1-1 6.1.3",
            "P",
        )
    )
    steps.append(
        make_step(
            "Resistance to the concentrated load if uniform",
            "N_Rdc",
            "factor · A_b · f_d",
            (("A_b", a_b, "mm²"),),
            cap * a_b,
            "N",
            "EN 1996-1-1 6.1.3 eqn 6.9",
            "P",
        )
    )
    return make_check(
        code, title, kind, pres.sigma_max, cap, "N/mm²", "EN 1996-1-1 6.1.3", "P", steps, notes
    )


def _ec6_beta_steps(
    r: Reading,
    near: float | None,
    h_c: float,
    a_b: float,
    a_ef: float,
    basis: CodeBasis,
    steps: list[Step],
) -> float:
    """β of one reading, each step of it in the trace."""
    ratio_raw = a_b / a_ef
    ratio = min(ratio_raw, basis.beta_area_ratio_cap)
    beta = beta_ec6(near, h_c, a_b, a_ef, basis.beta_area_ratio_cap)
    steps.append(
        make_step(
            _named("Area ratio, capped", r),
            "A_b/A_ef",
            "min(A_b / (l_efm · t), 0.45)",
            (("A_b", a_b, "mm²"), ("A_ef", a_ef, "mm²"), ("uncapped", ratio_raw, "")),
            ratio,
            "",
            "EN 1996-1-1 6.1.3(3)",
            "M",
        )
    )
    if near is None:
        # No end near: a1 → ∞. The formula and its upper limit both pass 1.5, so β is
        # 1.5: a wall that runs on is never worse than one with an end nearby.
        steps.append(
            make_step(
                _named("Enhancement factor, the wall running on both ways", r),
                "β",
                "a1 → ∞: min(1.25 + a1/(2 h_c), 1.5) = 1.5",
                (("h_c", h_c, "mm"), ("A_b/A_ef", ratio, "")),
                beta,
                "",
                "EN 1996-1-1 6.1.3(3)",
                "M",
            )
        )
        return beta
    steps.append(
        make_step(
            _named("Enhancement factor for concentrated loads", r),
            "β",
            "(1 + 0.3 a1/h_c)(1.5 − 1.1 A_b/A_ef)",
            (("a1", near, "mm"), ("h_c", h_c, "mm"), ("A_b/A_ef", ratio, "")),
            (1 + 0.3 * near / h_c) * (1.5 - 1.1 * ratio),
            "",
            "EN 1996-1-1 6.1.3 eqn 6.10",
            "P",
        )
    )
    steps.append(
        make_step(
            _named("β within its limits", r),
            "β",
            "1.0 ≤ β ≤ min(1.25 + a1/(2 h_c), 1.5)",
            (("upper", beta_ec6_upper(near, h_c), ""),),
            beta,
            "",
            "EN 1996-1-1 6.1.3(3)",
            "M",
        )
    )
    return beta


def spreader_conditions(inp: BearingInput, basis: CodeBasis) -> str | None:
    """The description of a padstone that counts as a spreader, or None."""
    pad = inp.padstone
    if pad is None or not is_spreader(inp, basis):
        return None
    bearing_along = _bearing_along(inp)
    return (
        f"width t, depth {number(pad.depth)} > {number(basis.spreader_min_depth)} mm, "
        f"length {number(pad.length)} > {number(basis.spreader_length_factor)} × "
        f"{number(bearing_along)} mm"
    )


def is_spreader(inp: BearingInput, basis: CodeBasis) -> bool:
    """Whether the padstone counts as a spreader in the sense of EN 1996-1-1 6.1.3: width
    t, depth > 200 mm, length > 3 × the bearing length (see :func:`spreader_conditions`)."""
    pad = inp.padstone
    return (
        pad is not None
        and pad.width >= inp.wall.thickness - 0.5
        and pad.depth > basis.spreader_min_depth
        and pad.length > basis.spreader_length_factor * _bearing_along(inp)
    )


def _bearing_along(inp: BearingInput) -> float:
    beam = inp.beam
    return beam.flange_width if beam.orientation == ACROSS else beam.bearing_length


def ec6_eccentricity(inp: BearingInput, lay: Layout, basis: CodeBasis) -> Check:
    """Eccentricity of the load from the wall's centre line ≤ t/4, EN 1996-1-1 6.1.3 [M]."""
    t = inp.wall.thickness
    e = abs(lay.eccentricity_across)
    limit = basis.max_eccentricity_ratio * t
    step = make_step(
        "Eccentricity of the reaction from the wall's centre line",
        "e",
        "|y_reaction − t/2|",
        (("t", t, "mm"), ("limit t/4", limit, "mm")),
        e,
        "mm",
        "EN 1996-1-1 6.1.3(5)",
        "M",
    )
    return make_check(
        "eccentricity",
        "Eccentricity across the wall",
        STRENGTH,
        e,
        limit,
        "mm",
        "EN 1996-1-1 6.1.3",
        "M",
        [step],
    )


def ec6_solid_material(inp: BearingInput, lay: Layout, basis: CodeBasis) -> Check:
    """On Group 2–4 units the load must bear on solid material (the padstone) as long as
    the bearing plus a 60° spread to its base on each side; one side only at an end
    bearing, EN 1996-1-1 6.1.3 [M]. Utilisation per side is (l/2 + needed)/(l/2 + room)."""
    pad = inp.padstone
    bearing = lay.x1 - lay.x0
    if pad is None:
        step = make_step(
            "Solid material under the bearing",
            "L_solid",
            "none: the beam sits on hollow units",
            (),
            0.0,
            "mm",
            "EN 1996-1-1 6.1.3",
            "M",
        )
        return make_check(
            "solid-material",
            "Solid material under the load",
            STRENGTH,
            bearing,
            0.0,
            "mm",
            "EN 1996-1-1 6.1.3",
            "M",
            [step],
            ["Group 2–4 units: the load needs a padstone or other solid material to bear on."],
        )
    need = pad.depth / math.tan(math.radians(basis.masonry_spread_deg))
    room_1, room_2 = lay.x0, lay.length - lay.x1
    wall = inp.wall
    sides = []
    if not (wall.a1 is not None and wall.a1 <= 0.5):
        sides.append(room_1)
    if not (wall.a2 is not None and wall.a2 <= 0.5):
        sides.append(room_2)
    worst = min(sides) if sides else need
    demand = bearing / 2 + need
    capacity = bearing / 2 + worst
    steps = [
        make_step(
            "Spread needed on each side within the padstone",
            "s_60",
            "h_p / tan 60°",
            (("h_p", pad.depth, "mm"),),
            need,
            "mm",
            "EN 1996-1-1 6.1.3",
            "M",
        ),
        make_step(
            "Least room beside the bearing (end-bearing side exempt)",
            "s",
            "min(x_0, L_p − x_1)",
            (("x_0", room_1, "mm"), ("L_p − x_1", room_2, "mm")),
            worst,
            "mm",
            "EN 1996-1-1 6.1.3",
            "M",
        ),
    ]
    return make_check(
        "solid-material",
        "Solid material under the load",
        STRENGTH,
        demand,
        capacity,
        "mm",
        "EN 1996-1-1 6.1.3",
        "M",
        steps,
    )


# One piece: the mid-height check (EN 1996-1-1 6.1.2.2, Annex G) step by step in the order its
# trace prints; checks.js mirrors it line for line, so a split is made in both languages or not at
# all.
def ec6_mid_height(
    inp: BearingInput, lay: Layout, pres: Pressure, st: Strengths, basis: CodeBasis
) -> tuple[Check, Reading, float]:
    """At mid-height below the bearing: N_Ed/l_efm + other load ≤ Φ_m · t · f_d, EN 1996-1-1
    6.1.2 with Φ_m from Annex G [M]: Φ_m = A1 e^(−u²/2), A1 = 1 − 2 e_mk/t,
    u = (λ − 0.063)/(0.73 − 1.17 e_mk/t), λ = (h_ef/t_ef)·√(f_k/E), E = 1000 f_k.
    e_mk defaults to max(0.05 t, e_m + e_k) with e_m = |e|/2 + h_ef/450: half the top
    eccentricity at mid-height of a pinned wall [CP] plus the initial eccentricity, and the
    creep eccentricity e_k = 0.002 φ_∞ (h_ef/t_ef) √(t e_m) (eqn 6.8) above the slenderness
    λ_c, zero up to it (6.1.2.2(2), λ_c and φ_∞ by unit material from the code basis, [M]).
    Under a triangle of pressure l_efm
    is worked on both readings of the loaded length and the shorter (the higher
    utilisation) kept. Returns the check, the reading that governs and its l_efm."""
    wall = inp.wall
    t = wall.thickness
    h, h_ef, t_ef = wall_heights(wall)
    steps: list[Step] = []
    if inp.e_mk is not None:
        e_mk = float(inp.e_mk)
        steps.append(
            given_step(
                "Eccentricity at mid-height",
                "e_mk",
                e_mk,
                "mm",
                "EN 1996-1-1 6.1.2.2",
            )
        )
    else:
        e_init = h_ef / basis.e_init_divisor
        e_m = abs(lay.eccentricity_across) / 2 + e_init
        steps.append(
            make_step(
                "Eccentricity from the load at mid-height",
                "e_m",
                "|e|/2 + h_ef/450",
                (("e", lay.eccentricity_across, "mm"), ("h_ef", h_ef, "mm")),
                e_m,
                "mm",
                "EN 1996-1-1 6.1.2.2, 5.5.1.1",
                "M",
            )
        )
        e_k = _creep_eccentricity(inp.masonry.material, h_ef, t_ef, t, e_m, basis, steps)
        e_mk = max(basis.e_mk_min_ratio * t, e_m + e_k)
        steps.append(
            make_step(
                "Eccentricity at mid-height",
                "e_mk",
                "max(0.05 t, e_m + e_k)",
                (("t", t, "mm"), ("e_m", e_m, "mm"), ("e_k", e_k, "mm")),
                e_mk,
                "mm",
                "EN 1996-1-1 6.1.2.2 eqn 6.6",
                "M",
            )
        )
    if inp.phi_m is not None:
        phi = float(inp.phi_m)
        steps.append(
            given_step(
                "Capacity reduction factor",
                "Φ_m",
                phi,
                "",
                "EN 1996-1-1 6.1.2.2",
            )
        )
    else:
        lam = (h_ef / t_ef) / math.sqrt(basis.k_E)
        a1 = 1 - 2 * e_mk / t
        u = max(0.0, (lam - 0.063) / (0.73 - 1.17 * e_mk / t))
        phi = phi_m(h_ef, t_ef, e_mk, t, basis.k_E)
        steps.append(
            make_step(
                "Slenderness parameter",
                "λ",
                "(h_ef/t_ef) · √(f_k/E), E = 1000 f_k",
                (("h_ef", h_ef, "mm"), ("t_ef", t_ef, "mm")),
                lam,
                "",
                "EN 1996-1-1 Annex G",
                "M",
            )
        )
        steps.append(
            make_step(
                "Capacity reduction factor at mid-height",
                "Φ_m",
                "A1 · e^(−u²/2)",
                (("A1", a1, ""), ("u", u, "")),
                phi,
                "",
                "EN 1996-1-1 Annex G eqn G.1",
                "M",
            )
        )
    n = inp.load.reaction
    q = inp.load.wall_load
    capacity = phi * t * st.f_d
    worked: list[tuple[float, Reading]] = []
    lengths: dict[Reading, float] = {}
    for r in readings(lay, pres, wall.a1, wall.a2):
        l_efm = lengths[r] = l_efm_of(r, wall.height_to_bearing, basis)
        demand = n / l_efm + q
        steps.append(
            make_step(
                _named("Effective length at mid-height", r),
                "l_efm",
                "loaded length + 2 × (h_c/2)/tan 60°, each side cut by a1, a2",
                (
                    ("loaded length", r.length, "mm"),
                    ("h_c", wall.height_to_bearing, "mm"),
                    ("a1", r.e1, "mm"),
                    ("a2", r.e2, "mm"),
                ),
                l_efm,
                "mm",
                "EN 1996-1-1 6.1.3, Figure 6.2",
                "P",
            )
        )
        steps.append(
            make_step(
                _named("Load per length at mid-height", r),
                "n_Ed",
                "N_Ed / l_efm + other load",
                (("N_Ed", n, "N"), ("l_efm", l_efm, "mm"), ("q", q, "N/mm")),
                demand,
                "N/mm",
                "EN 1996-1-1 6.1.3(4)",
                "P",
            )
        )
        worked.append((demand, r))
    demand, chosen = worse(worked)
    notes = []
    if len(worked) > 1:
        steps.append(
            make_step(
                "Load per length kept: the higher of the two readings",
                "n_Ed",
                "max(whole window, contact length)",
                tuple((r.name, d, "N/mm") for d, r in worked),
                demand,
                "N/mm",
                "EN 1996-1-1 6.1.3(4)",
                "ours",
            )
        )
        notes.append(
            _governing_reading_note(
                "l_efm",
                [(d / capacity if capacity > 0 else math.inf, r) for d, r in worked],
                chosen,
            )
        )
    steps.append(
        make_step(
            "Resistance per length at mid-height",
            "n_Rd",
            "Φ_m · t · f_d",
            (("Φ_m", phi, ""), ("t", t, "mm"), ("f_d", st.f_d, "N/mm²")),
            capacity,
            "N/mm",
            "EN 1996-1-1 6.1.2 eqn 6.2",
            "P",
        )
    )
    check = make_check(
        "mid-height",
        "Wall at mid-height below the bearing",
        STRENGTH,
        demand,
        capacity,
        "N/mm",
        "EN 1996-1-1 6.1.2",
        "M",
        steps,
        notes,
    )
    return check, chosen, lengths[chosen]


def _creep_eccentricity(
    material: str,
    h_ef: float,
    t_ef: float,
    t: float,
    e_m: float,
    basis: CodeBasis,
    steps: list[Step],
) -> float:
    """e_k, EN 1996-1-1 6.1.2.2 eqn 6.8 [M]: 0.002 φ_∞ (h_ef/t_ef) √(t e_m) above the unit
    material's λ_c, zero up to it, each step in the trace."""
    lam_c = basis.creep_lambda_c_for(material)
    phi_inf = basis.creep_phi_for(material)
    if lam_c is None or phi_inf is None:
        raise InputError(
            "masonry.material",
            material,
            "a unit material for which this code basis has a creep coefficient and λ_c",
            "not-covered",
        )
    sr = h_ef / t_ef
    if sr <= lam_c:
        steps.append(
            make_step(
                "Creep eccentricity, none up to λ_c",
                "e_k",
                f"0: h_ef/t_ef ≤ λ_c for {material} units",
                (("h_ef/t_ef", sr, ""), ("λ_c", lam_c, "")),
                0.0,
                "mm",
                "EN 1996-1-1 6.1.2.2(2)",
                "M",
            )
        )
        return 0.0
    e_k = 0.002 * phi_inf * sr * math.sqrt(t * e_m)
    steps.append(
        make_step(
            "Creep eccentricity",
            "e_k",
            "0.002 φ_∞ (h_ef/t_ef) √(t e_m)",
            (("φ_∞", phi_inf, ""), ("h_ef/t_ef", sr, ""), ("λ_c", lam_c, ""), ("t", t, "mm")),
            e_k,
            "mm",
            "EN 1996-1-1 6.1.2.2 eqn 6.8",
            "M",
        )
    )
    return e_k


def slenderness(inp: BearingInput, basis: CodeBasis) -> Check:
    wall = inp.wall
    h, h_ef, t_ef = wall_heights(wall)
    sr = h_ef / t_ef
    clause = "EN 1996-1-1 5.5.1.4" if basis.is_ec6 else "BS 5628-1:1992 clause 28"
    step = make_step(
        "Slenderness ratio",
        "h_ef/t_ef",
        "h_ef / t_ef",
        (("h_ef", h_ef, "mm"), ("t_ef", t_ef, "mm")),
        sr,
        "",
        clause,
        "M",
    )
    return make_check(
        "slenderness",
        "Slenderness of the wall",
        RULE,
        sr,
        basis.slenderness_limit,
        "",
        clause,
        "M",
        [step],
    )


# ---------------------------------------------------------------- BS 5628-1


def bs_masonry_bearing(
    inp: BearingInput,
    pres: Pressure,
    st: Strengths,
    basis: CodeBasis,
    steps: list[Step],
    code: str = "masonry-bearing",
    title: str = "Local bearing on the masonry",
    kind: str = STRENGTH,
) -> Check:
    """BS 5628-1:1992 clause 34: local stress ≤ k · f_k/γ_m, k = 1.25, 1.5 or 2.0 for bearing
    types 1, 2 and 3 [P]. The type is the engineer's choice; the peak of the linear
    pressure is compared (for type 3 that is the elastic distribution the clause asks for;
    for types 1 and 2 it is the cautious reading where the load is off-centre [ours])."""
    bt = inp.bearing_type
    k = basis.bearing_type_factors[bt - 1]
    cap = k * st.f_k / st.gamma_M
    steps.append(
        make_step(
            f"Local design bearing strength, type {bt}",
            "k · f_k/γ_m",
            "k · f_k / γ_m",
            (("k", k, ""), ("f_k", st.f_k, "N/mm²"), ("γ_m", st.gamma_M, "")),
            cap,
            "N/mm²",
            "BS 5628-1:1992 clause 34",
            "P",
        )
    )
    return make_check(
        code, title, kind, pres.sigma_max, cap, "N/mm²", "BS 5628-1:1992 clause 34", "P", steps
    )


# One piece: BS 5628-1's load at 0.4 h, both readings, in the order its trace prints; checks.js
# mirrors it line for line, so a split is made in both languages or not at all.
def bs_dispersion(
    inp: BearingInput, lay: Layout, pres: Pressure, st: Strengths, basis: CodeBasis
) -> tuple[Check, Reading, float]:
    """At 0.4 h below the bearing, the load dispersed at 45° from the bearing's edges plus
    the other load ≤ β · f_k/γ_m per length of wall, BS 5628-1:1992 clause 34 [P]; β from
    Annex B, β = 1.1(1 − 2 e_m/t), e_m = max(e_x, 0.6 e_x + e_a),
    e_a = t[(1/2400)(h_ef/t_ef)² − 0.015] [M]. Under a triangle of pressure the dispersion
    starts from both readings of the loaded length and the shorter (the higher utilisation)
    is kept. Returns the check, the reading that governs and its dispersed length."""
    wall = inp.wall
    t = wall.thickness
    h, h_ef, t_ef = wall_heights(wall)
    depth = basis.dispersion_depth_ratio * h
    each = depth * math.tan(math.radians(basis.masonry_spread_deg))
    steps = [
        make_step(
            "Depth of the check below the bearing",
            "0.4 h",
            "0.4 · h",
            (("h", h, "mm"),),
            depth,
            "mm",
            "BS 5628-1:1992 clause 34",
            "P",
        )
    ]
    lengths: dict[Reading, float] = {}
    reads = readings(lay, pres, wall.a1, wall.a2)
    for r in reads:
        l_d = lengths[r] = spread_length(r.length, r.e1, r.e2, each)
        steps.append(
            make_step(
                _named("Length the load has spread over at that depth", r),
                "l_d",
                "loaded length + 2 × 0.4 h · tan 45°, each side cut by a1, a2",
                (("loaded length", r.length, "mm"), ("a1", r.e1, "mm"), ("a2", r.e2, "mm")),
                l_d,
                "mm",
                "BS 5628-1:1992 clause 34",
                "P",
            )
        )
    if inp.beta_s is not None:
        beta = float(inp.beta_s)
        steps.append(
            given_step(
                "Capacity reduction factor",
                "β",
                beta,
                "",
                "BS 5628-1:1992 Table 7",
            )
        )
    else:
        e_x = max(basis.bs_min_eccentricity_ratio * t, abs(lay.eccentricity_across))
        sr = h_ef / t_ef
        e_a = t * (sr * sr / 2400 - 0.015)
        e_m = max(e_x, 0.6 * e_x + e_a)
        beta = beta_bs5628(h_ef, t_ef, e_x, t)
        steps.append(
            make_step(
                "Eccentricity at the top of the wall",
                "e_x",
                "max(0.05 t, |e|)",
                (("t", t, "mm"), ("e", lay.eccentricity_across, "mm")),
                e_x,
                "mm",
                "BS 5628-1:1992 Appendix B",
                "M",
            )
        )
        steps.append(
            make_step(
                "Capacity reduction factor",
                "β",
                "1.1 (1 − 2 e_m/t) ≤ 1.0",
                (("e_m", e_m, "mm"), ("e_a", e_a, "mm"), ("h_ef/t_ef", sr, "")),
                beta,
                "",
                "BS 5628-1:1992 Appendix B",
                "M",
            )
        )
    n, q = inp.load.reaction, inp.load.wall_load
    capacity = beta * t * st.f_k / st.gamma_M
    worked: list[tuple[float, Reading]] = []
    for r in reads:
        demand = n / lengths[r] + q
        steps.append(
            make_step(
                _named("Load per length at 0.4 h", r),
                "n",
                "N / l_d + other load",
                (("N", n, "N"), ("l_d", lengths[r], "mm"), ("q", q, "N/mm")),
                demand,
                "N/mm",
                "BS 5628-1:1992 clause 34",
                "P",
            )
        )
        worked.append((demand, r))
    demand, chosen = worse(worked)
    notes = []
    if len(worked) > 1:
        steps.append(
            make_step(
                "Load per length kept: the higher of the two readings",
                "n",
                "max(whole window, contact length)",
                tuple((r.name, d, "N/mm") for d, r in worked),
                demand,
                "N/mm",
                "BS 5628-1:1992 clause 34",
                "ours",
            )
        )
        notes.append(
            _governing_reading_note(
                "the dispersion",
                [(d / capacity if capacity > 0 else math.inf, r) for d, r in worked],
                chosen,
            )
        )
    steps.append(
        make_step(
            "Resistance per length",
            "β t f_k/γ_m",
            "β · t · f_k / γ_m",
            (("β", beta, ""), ("t", t, "mm"), ("f_k", st.f_k, "N/mm²"), ("γ_m", st.gamma_M, "")),
            capacity,
            "N/mm",
            "BS 5628-1:1992 clause 32",
            "P",
        )
    )
    check = make_check(
        "dispersion",
        "Wall at 0.4 h below the bearing",
        STRENGTH,
        demand,
        capacity,
        "N/mm",
        "BS 5628-1:1992 clause 34",
        "P",
        steps,
        notes,
    )
    return check, chosen, lengths[chosen]


ORIENTATION_TITLES = {ACROSS: "across the wall", IN_LINE: "in line with the wall"}
