"""Material strengths: masonry f_k, f_d and the concrete padstone's f_cd.

One function per equation, named after its symbol. Units: N/mm² and mm.
"""

from __future__ import annotations

from dataclasses import fields
from operator import attrgetter

from .basis import BS_FK_TABLE, BS_UNIT_STRENGTHS, MORTAR_DESIGNATION, MORTAR_STRENGTH, CodeBasis
from .errors import InputError
from .format import number
from .inputs import Masonry, Padstone
from .trace import Step, Strengths, given_step
from .validate import concrete_class_fck, wall_tolerance

# EN 772-1 Table A.1 shape factor δ by unit height (rows) and least horizontal dimension
# (columns), for normalising a declared mean strength [M]; None where the table is blank.
# The methods note confirms δ = 0.85 for a 65 mm high unit about 100 mm wide [S].
DELTA_WIDTHS = (50.0, 100.0, 150.0, 200.0, 250.0)
DELTA_TABLE = (
    (40.0, (0.80, 0.70, None, None, None)),
    (50.0, (0.85, 0.75, 0.70, None, None)),
    (65.0, (0.95, 0.85, 0.75, 0.70, 0.65)),
    (100.0, (1.15, 1.00, 0.90, 0.80, 0.75)),
    (150.0, (1.30, 1.20, 1.10, 1.00, 0.95)),
    (200.0, (1.45, 1.35, 1.25, 1.15, 1.10)),
    (250.0, (1.55, 1.45, 1.35, 1.25, 1.15)),
)
CONDITIONING_FACTOR = {"air-dried": 1.0, "water-soaked": 1.2}


def delta(unit_height: float, unit_width: float) -> float:
    """Shape factor δ, EN 772-1 Annex A Table A.1, interpolated linearly in both
    directions [M]. Beyond the last row or column the last value holds (the table's
    '≥ 250' edges); below the first, or into a blank cell, there is no value and we refuse.
    """
    h = min(unit_height, DELTA_TABLE[-1][0])
    w = min(unit_width, DELTA_WIDTHS[-1])
    if h < DELTA_TABLE[0][0] or w < DELTA_WIDTHS[0]:
        raise InputError(
            "masonry.unit_height",
            unit_height,
            "a unit at least 40 mm high and 50 mm wide for EN 772-1 Table A.1; "
            "otherwise give the normalised strength f_b",
            "not-covered",
        )
    i = _bracket([r[0] for r in DELTA_TABLE], h)
    j = _bracket(list(DELTA_WIDTHS), w)
    h0, row0 = DELTA_TABLE[i]
    h1, row1 = DELTA_TABLE[i + 1]
    w0, w1 = DELTA_WIDTHS[j], DELTA_WIDTHS[j + 1]
    c00, c01, c10, c11 = row0[j], row0[j + 1], row1[j], row1[j + 1]
    if c00 is None or c01 is None or c10 is None or c11 is None:
        raise InputError(
            "masonry.unit_width",
            unit_width,
            f"a unit size inside EN 772-1 Table A.1 (a {number(unit_height)} mm high unit that is "
            f"{number(unit_width)} mm wide falls in a blank cell); give the normalised strength f_b",
            "not-covered",
        )
    fh = (h - h0) / (h1 - h0)
    fw = (w - w0) / (w1 - w0)
    low = c00 + (c01 - c00) * fw
    high = c10 + (c11 - c10) * fw
    return low + (high - low) * fh


def _bracket(points: list[float], x: float) -> int:
    for i in range(len(points) - 2, -1, -1):
        if x >= points[i]:
            return i
    return 0


def f_b(f_u: float, delta_value: float, conditioning: float) -> float:
    """Normalised mean compressive strength f_b = δ · c · f_u (EN 772-1 Annex A) [S]."""
    return delta_value * conditioning * f_u


def f_k_ec6(K: float, f_b_value: float, f_m: float) -> float:
    """f_k = K · f_b^0.7 · f_m^0.3, general-purpose mortar, EN 1996-1-1 eqn 3.1 [S]."""
    # A float to a float power is typed Any (it may be complex); f_b and f_m are positive.
    fk: float = K * f_b_value**0.7 * f_m**0.3
    return fk


def f_k_thin_layer(K: float, f_b_value: float, exponent: float) -> float:
    """f_k = K · f_b^0.85 (or ^0.70 for clay Groups 2–4), thin-layer mortar,
    EN 1996-1-1 eqns 3.2–3.3 [M]."""
    fk: float = K * f_b_value**exponent
    return fk


def f_k_bs5628(unit_strength: float, designation: str) -> float:
    """f_k of standard-format brick masonry, BS 5628-1:1992 Table 2(a), linear between
    unit strengths [S for the table's shape; cells other than 20/(iii) from memory, M]."""
    row = dict(BS_FK_TABLE)[designation]
    xs = BS_UNIT_STRENGTHS
    if unit_strength <= xs[0]:
        return row[0]
    for i in range(len(xs) - 1):
        if unit_strength <= xs[i + 1]:
            frac = (unit_strength - xs[i]) / (xs[i + 1] - xs[i])
            return row[i] + (row[i + 1] - row[i]) * frac
    return row[-1]


def f_d(f_k: float, gamma_M: float) -> float:
    """Design compressive strength f_d = f_k / γ_M (EN 1996-1-1 2.4.1) [S]."""
    return f_k / gamma_M


def f_cd(f_ck: float, alpha_cc: float, gamma_c: float) -> float:
    """Concrete design strength f_cd = α_cc · f_ck / γ_c, EN 1992-1-1 eqn 3.15 [S]."""
    return alpha_cc * f_ck / gamma_c


# One piece: f_k, γ_M, f_d and f_cd in the order the trace prints them, each branch one code's
# way; strength.js mirrors it line for line.
def masonry_strengths(
    mas: Masonry, pad: Padstone | None, basis: CodeBasis, t: float | None = None
) -> Strengths:
    """f_k, γ_M, f_d and the padstone's f_cd, each as a step of the trace. ``t``, the
    wall's thickness, tells whether it has a longitudinal joint where the input leaves
    that to be inferred."""
    steps: list[Step] = []
    ec6 = basis.is_ec6
    if mas.f_k is not None:
        fk = float(mas.f_k)
        steps.append(
            given_step(
                "Characteristic compressive strength",
                "f_k",
                fk,
                "N/mm²",
                "declared by the engineer",
            )
        )
    elif ec6:
        fk = _f_k_from_units_ec6(mas, basis, steps, t)
    else:
        designation = MORTAR_DESIGNATION[mas.mortar]
        assert mas.unit_strength is not None  # validation asks for it where f_k is not given
        fk = f_k_bs5628(float(mas.unit_strength), designation)
        steps.append(
            Step(
                "Characteristic compressive strength of brick masonry",
                "f_k",
                f"Table 2(a), unit strength with mortar designation ({designation})",
                (("unit strength", mas.unit_strength, "N/mm²"), ("mortar", mas.mortar, "")),
                fk,
                "N/mm²",
                "BS 5628-1:1992 Table 2(a)",
                "S" if (mas.unit_strength == 20 and designation == "iii") else "M",
            )
        )

    gm: float | None  # None where the basis has no factor for the input: refused below
    if mas.gamma_M is not None:
        gm = float(mas.gamma_M)
        steps.append(
            given_step(
                "Partial factor for masonry",
                "γ_M" if ec6 else "γ_m",
                gm,
                "",
                "declared by the engineer",
            )
        )
    elif ec6:
        gm = basis.gamma_M_for(mas.execution_class, mas.unit_category)
        if gm is None:
            raise InputError(
                "masonry.execution_class",
                mas.execution_class,
                "an execution class with a partial factor in this code basis",
                "not-covered",
            )
        steps.append(
            Step(
                "Partial factor for masonry in compression",
                "γ_M",
                f"category {mas.unit_category} units, execution class {mas.execution_class}",
                (),
                gm,
                "",
                "UK NA to EN 1996-1-1 Table NA.1",
                "M",
            )
        )
    else:
        gm = basis.gamma_m_for(mas.manufacturing_control, mas.construction_control)
        if gm is None:
            raise InputError(
                "masonry.manufacturing_control",
                mas.manufacturing_control,
                "a control level with a partial factor in this code basis",
                "not-covered",
            )
        steps.append(
            Step(
                "Partial safety factor for material",
                "γ_m",
                f"manufacturing control {mas.manufacturing_control}, "
                f"construction control {mas.construction_control}",
                (),
                gm,
                "",
                "BS 5628-1:1992 Table 4",
                "S",
            )
        )

    fd = f_d(fk, gm)
    if ec6:
        steps.append(
            Step(
                "Design compressive strength of the masonry",
                "f_d",
                "f_k / γ_M",
                (("f_k", fk, "N/mm²"), ("γ_M", gm, "")),
                fd,
                "N/mm²",
                "EN 1996-1-1 2.4.1",
                "S",
            )
        )
    else:
        # BS 5628-1 has no f_d: its design strength is written f_k/γ_m throughout.
        steps.append(
            Step(
                "Design strength of the masonry",
                "f_k/γ_m",
                "f_k / γ_m",
                (("f_k", fk, "N/mm²"), ("γ_m", gm, "")),
                fd,
                "N/mm²",
                "BS 5628-1:1992 clause 27",
                "P",
            )
        )

    fcd = None
    if pad is not None:
        fck = float(pad.f_ck) if pad.f_ck is not None else concrete_class_fck(pad.concrete)
        assert fck is not None  # validation refuses a class it cannot read with no f_ck
        if pad.reinforced:
            fcd = f_cd(fck, basis.alpha_cc, basis.gamma_c)
            steps.append(
                Step(
                    "Design compressive strength of the padstone concrete (reinforced)",
                    "f_cd",
                    "α_cc · f_ck / γ_c",
                    (
                        ("α_cc", basis.alpha_cc, ""),
                        ("f_ck", fck, "N/mm²"),
                        ("γ_c", basis.gamma_c, ""),
                    ),
                    fcd,
                    "N/mm²",
                    "EN 1992-1-1 3.1.6 eqn 3.15",
                    "S",
                )
            )
        else:
            # Plain concrete, as site padstones usually are: section 12 takes α_cc,pl.
            fcd = f_cd(fck, basis.alpha_cc_pl, basis.gamma_c)
            steps.append(
                Step(
                    "Design compressive strength of the padstone concrete (plain)",
                    "f_cd,pl",
                    "α_cc,pl · f_ck / γ_c",
                    (
                        ("α_cc,pl", basis.alpha_cc_pl, ""),
                        ("f_ck", fck, "N/mm²"),
                        ("γ_c", basis.gamma_c, ""),
                    ),
                    fcd,
                    "N/mm²",
                    "EN 1992-1-1 12.3.1 with eqn 3.15",
                    "M",
                )
            )
    return Strengths(fk, gm, fd, fcd, tuple(steps))


# Strengths already worked out; see masonry_strengths_cached. Bounded, and emptied when
# full: the masonries and concretes of one site are few.
_STRENGTHS: dict[tuple[object, ...], tuple[CodeBasis, Strengths]] = {}
_STRENGTHS_LIMIT = 4096
_MASONRY_VALUES = attrgetter(*(f.name for f in fields(Masonry)))


def masonry_strengths_cached(
    mas: Masonry, pad: Padstone | None, basis: CodeBasis, t: float | None = None
) -> Strengths:
    """:func:`masonry_strengths` for validated input, remembered: a site re-checks many
    bearings on the same masonry and concrete, and the result is immutable.

    The key holds each value with its type, because Python counts 20 == 20.0 and 1 == True
    while the trace prints them differently (and a basis table has no key for True). The
    basis is keyed by identity: hashing its tables costs more than the rest of the look-up,
    and the bases in use are a few long-lived objects. Each entry holds its basis, so its
    identity cannot pass to another object while the entry lives.
    """
    concrete, f_ck, reinforced = (
        (None, None, None) if pad is None else (pad.concrete, pad.f_ck, pad.reinforced)
    )
    values = _MASONRY_VALUES(mas)
    key = (
        id(basis),
        values,
        tuple(map(type, values)),
        concrete,
        type(concrete),
        f_ck,
        type(f_ck),
        reinforced,
        type(reinforced),
        # The wall's thickness shows only where EC6 works f_k from K (the collar joint's
        # step); elsewhere it would only split equal entries.
        *((t, type(t)) if basis.is_ec6 and mas.f_k is None else ()),
    )
    try:
        found = _STRENGTHS.get(key)
    except TypeError:  # an unhashable value: work it out, and let that say what is wrong
        return masonry_strengths(mas, pad, basis, t)
    if found is not None and found[0] is basis:
        return found[1]
    result = masonry_strengths(mas, pad, basis, t)
    if len(_STRENGTHS) >= _STRENGTHS_LIMIT:
        _STRENGTHS.clear()
    _STRENGTHS[key] = (basis, result)
    return result


def collar_joint(mas: Masonry, t: float | None) -> tuple[bool, str]:
    """Whether the wall has a mortar joint parallel to its face, and how that is known:
    "given"; "inferred" from a wall at least two units wide (t ≥ 2 × the unit's least
    horizontal dimension, give or take the wall's tolerance) [ours]; or "unknown" where the
    unit's width is not given, when none is assumed and the trace says so."""
    if mas.collar_joint is not None:
        return bool(mas.collar_joint), "given"
    if t is None or mas.unit_width is None:
        return False, "unknown"
    return t + wall_tolerance(t) >= 2 * mas.unit_width, "inferred"


# One piece: EN 1996-1-1 eqn 3.1 from the unit up (f_b, K, the mortar, the collar joint), step by
# step as the trace prints; strength.js mirrors it line for line.
def _f_k_from_units_ec6(
    mas: Masonry, basis: CodeBasis, steps: list[Step], t: float | None
) -> float:
    assert mas.unit_strength is not None  # validation asks for it where f_k is not given
    fu = float(mas.unit_strength)
    if mas.unit_strength_is_normalised:
        fb = fu
        steps.append(
            given_step(
                "Normalised unit strength",
                "f_b",
                fb,
                "N/mm²",
                "EN 772-1 Annex A",
                "S",
            )
        )
    else:
        # Validation asks for the unit's size where its strength is not normalised.
        assert mas.unit_height is not None and mas.unit_width is not None
        d = delta(float(mas.unit_height), float(mas.unit_width))
        c = CONDITIONING_FACTOR[mas.conditioning]
        fb = f_b(fu, d, c)
        steps.append(
            Step(
                "Shape factor of the unit",
                "δ",
                "Table A.1 by height and least horizontal dimension",
                (("height", mas.unit_height, "mm"), ("width", mas.unit_width, "mm")),
                d,
                "",
                "EN 772-1 Table A.1",
                "M",
            )
        )
        steps.append(
            Step(
                "Normalised mean compressive strength",
                "f_b",
                "δ · c · f_u",
                (("δ", d, ""), ("c", c, ""), ("f_u", fu, "N/mm²")),
                fb,
                "N/mm²",
                "EN 772-1 Annex A",
                "S",
            )
        )
    if fb > basis.f_b_max:
        raise InputError(
            "masonry.unit_strength",
            mas.unit_strength,
            f"a normalised strength f_b of at most {number(basis.f_b_max)} N/mm² for EN 1996-1-1 "
            f"eqn 3.1 (this unit gives {number(fb)}); give f_k directly",
            "not-covered",
        )
    thin = mas.mortar == "thin-layer"
    kind = "thin-layer" if thin else "general"
    K = basis.k_value(mas.material, mas.group, kind)
    if K is None:
        raise InputError(
            "masonry.group",
            mas.group,
            f"a unit for which this code basis has a K value ({mas.material}, Group "
            f"{mas.group}, {kind} mortar has none); give f_k directly",
            "not-covered",
        )
    steps.append(
        Step(
            "Constant for the unit and mortar",
            "K",
            f"{mas.material}, Group {mas.group}, {kind} mortar",
            (),
            K,
            "",
            "EN 1996-1-1 Table 3.3 / UK NA",
            "M",
        )
    )
    joint, how = collar_joint(mas, t)
    factor = basis.collar_joint_factor if joint else 1.0
    why = {
        ("given", True): "× 0.8: the wall has a mortar joint parallel to its face (as given)",
        ("given", False): "1: no mortar joint parallel to the wall's face (as given)",
        ("inferred", True): "× 0.8: a wall at least two units wide (t ≥ 2 × unit width) has one",
        ("inferred", False): "1: a wall less than two units wide has no such joint",
        ("unknown", False): "1: the unit's width is not given, so none is assumed; say if "
        "the wall has a collar joint",
    }[how, joint]
    steps.append(
        Step(
            "Longitudinal (collar) mortar joint",
            "k_joint",
            why,
            (("t", t, "mm"), ("unit width", mas.unit_width, "mm"), ("joint", how, "")),
            factor,
            "",
            "EN 1996-1-1 3.6.1.2(1)",
            "M",
        )
    )
    if joint:
        K = K * factor
        steps.append(
            Step(
                "Constant for a wall with a longitudinal joint",
                "K",
                "k_joint · K",
                (("k_joint", factor, ""),),
                K,
                "",
                "EN 1996-1-1 3.6.1.2(1)",
                "M",
            )
        )
    if thin:
        exponent = 0.70 if (mas.material == "clay" and mas.group > 1) else 0.85
        fk = f_k_thin_layer(K, fb, exponent)
        steps.append(
            Step(
                "Characteristic compressive strength, thin-layer mortar",
                "f_k",
                f"K · f_b^{number(exponent)}",
                (("K", K, ""), ("f_b", fb, "N/mm²")),
                fk,
                "N/mm²",
                "EN 1996-1-1 3.6.1.2 eqns 3.2–3.3",
                "M",
            )
        )
        return fk
    fm_class = MORTAR_STRENGTH[mas.mortar]
    fm = min(fm_class, basis.f_m_max, 2 * fb)
    if fm < fm_class:
        steps.append(
            Step(
                "Mortar strength used, capped",
                "f_m",
                "min(f_m, 20, 2 f_b)",
                (("f_m", fm_class, "N/mm²"), ("f_b", fb, "N/mm²")),
                fm,
                "N/mm²",
                "EN 1996-1-1 3.6.1.2",
                "M",
            )
        )
    fk = f_k_ec6(K, fb, fm)
    steps.append(
        Step(
            "Characteristic compressive strength, general-purpose mortar",
            "f_k",
            "K · f_b^0.7 · f_m^0.3",
            (("K", K, ""), ("f_b", fb, "N/mm²"), ("f_m", fm, "N/mm²")),
            fk,
            "N/mm²",
            "EN 1996-1-1 3.6.1.2 eqn 3.1",
            "S",
        )
    )
    return fk
