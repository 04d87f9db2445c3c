"""Code bases: the method and every national value and partial factor it uses.

No global "current code": a basis is a value passed to every check, so two sites on one
server can use different ones. Source labels follow the project's methods note:
[S] seen in a named public source, [P] partly seen, [M] from memory (not confirmed here),
[CP] common practice, [ours] a documented choice of this project. Every [M] value that
sets a pass/fail limit is a field here, shown to the engineer and overridable per site.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field, fields, replace
from typing import Any, TypeGuard

from .errors import InputError
from .format import number

EC6_UK = "EC6 + UK NA"
BS5628 = "BS 5628-1"
BASES = (EC6_UK, BS5628)


def _k_key(material: str, group: int, mortar_kind: str) -> str:
    return f"{material}|{group}|{mortar_kind}"


# EN 1996-1-1 Table 3.3, recommended K for general-purpose mortar [M].
_K_EN_GENERAL = {
    ("clay", 1): 0.55,
    ("clay", 2): 0.45,
    ("clay", 3): 0.35,
    ("clay", 4): 0.35,
    ("calcium silicate", 1): 0.55,
    ("calcium silicate", 2): 0.45,
    ("aggregate concrete", 1): 0.55,
    ("aggregate concrete", 2): 0.52,
    ("aggregate concrete", 3): 0.40,
    ("aggregate concrete", 4): 0.40,
    ("autoclaved aerated concrete", 1): 0.55,
    ("manufactured stone", 1): 0.45,
}
# EN 1996-1-1 Table 3.3, recommended K for thin-layer mortar [M].
_K_EN_THIN = {
    ("clay", 1): 0.75,
    ("clay", 2): 0.70,
    ("clay", 3): 0.50,
    ("calcium silicate", 1): 0.80,
    ("calcium silicate", 2): 0.65,
    ("aggregate concrete", 1): 0.80,
    ("aggregate concrete", 2): 0.65,
    ("aggregate concrete", 3): 0.50,
    ("autoclaved aerated concrete", 1): 0.80,
    ("manufactured stone", 1): 0.75,
}
# The UK National Annex replaces Table 3.3. Values recalled without the NA at hand [M]:
# clay Group 1 0.50 (named in the methods note), clay and calcium silicate Group 2 0.40,
# calcium silicate Group 1 0.50. The rest fall back to the EN recommendation, and the
# screens say so: confirm them against the NA in force before relying on them.
_K_UK_GENERAL = {
    **_K_EN_GENERAL,
    ("clay", 1): 0.50,
    ("clay", 2): 0.40,
    ("calcium silicate", 1): 0.50,
    ("calcium silicate", 2): 0.40,
}


def _k_table(
    general: dict[tuple[str, int], float], thin: dict[tuple[str, int], float]
) -> tuple[tuple[str, float], ...]:
    rows = [(_k_key(m, g, "general"), k) for (m, g), k in general.items()]
    rows += [(_k_key(m, g, "thin-layer"), k) for (m, g), k in thin.items()]
    return tuple(sorted(rows))


# BS 5628-1:1992 Table 2(a): f_k (N/mm²) of standard-format brick masonry by unit strength
# and mortar designation. Shape from a reproduction of the table [S]; 20 N/mm² in (iii)
# = 5.8 confirmed [S]; the other cells transcribed from memory [M].
BS_UNIT_STRENGTHS = (5.0, 10.0, 15.0, 20.0, 27.5, 35.0, 50.0, 70.0, 100.0)
BS_FK_TABLE = (
    ("i", (2.5, 4.4, 6.0, 7.4, 9.2, 11.4, 15.0, 19.2, 24.0)),
    ("ii", (2.5, 4.2, 5.3, 6.4, 7.9, 9.4, 12.2, 15.1, 18.2)),
    ("iii", (2.5, 4.1, 5.0, 5.8, 7.1, 8.5, 10.6, 13.1, 15.5)),
    ("iv", (2.2, 3.5, 4.4, 5.2, 6.2, 7.3, 9.0, 10.8, 12.7)),
)
# Mortar classes and the old designations they replace [CP].
MORTAR_DESIGNATION = {"M12": "i", "M6": "ii", "M4": "iii", "M2": "iv"}
MORTAR_STRENGTH = {"M2": 2.0, "M4": 4.0, "M6": 6.0, "M12": 12.0}


@dataclass(frozen=True, slots=True)
class CodeBasis:
    """One code basis with its values. Build one with :func:`ec6_uk_na` or :func:`bs5628`."""

    name: str
    # Concrete padstone, EN 1992-1-1 3.1.6 and 6.7.
    gamma_c: float = 1.5
    alpha_cc: float = 0.85
    # Plain (unreinforced) padstones, EN 1992-1-1 section 12.
    alpha_cc_pl: float = 0.6
    plain_partial_area_enhancement: bool = False
    plb_limit_factor: float = 3.0
    padstone_spread_deg: float = 45.0
    # EC6 masonry strength.
    k_values: tuple[tuple[str, float], ...] = field(
        default_factory=lambda: _k_table(_K_UK_GENERAL, _K_EN_THIN)
    )
    f_b_max: float = 75.0
    f_m_max: float = 20.0
    collar_joint_factor: float = 0.8
    gamma_M_ec6: tuple[tuple[str, float], ...] = (
        ("1|I", 2.3),
        ("1|II", 2.6),
        ("2|I", 2.7),
        ("2|II", 3.0),
    )
    # EC6 6.1.3 concentrated loads.
    masonry_spread_deg: float = 60.0
    beta_area_ratio_cap: float = 0.45
    spreader_min_depth: float = 200.0
    spreader_length_factor: float = 3.0
    spreader_stress_factor: float = 1.5
    spreader_route_for_groups_2_to_4: bool = False
    max_eccentricity_ratio: float = 0.25
    # EC6 6.1.2 and Annex G at mid-height.
    k_E: float = 1000.0
    e_mk_min_ratio: float = 0.05
    e_init_divisor: float = 450.0
    # Creep eccentricity e_k at mid-height, EN 1996-1-1 6.1.2.2, by unit material: none up
    # to the slenderness λ_c, φ_∞ the final creep coefficient above it.
    creep_lambda_c: tuple[tuple[str, float], ...] = (
        ("aggregate concrete", 15.0),
        ("autoclaved aerated concrete", 15.0),
        ("calcium silicate", 15.0),
        ("clay", 27.0),
        ("manufactured stone", 15.0),
    )
    creep_phi_inf: tuple[tuple[str, float], ...] = (
        ("aggregate concrete", 1.5),
        ("autoclaved aerated concrete", 1.0),
        ("calcium silicate", 1.5),
        ("clay", 1.0),
        ("manufactured stone", 1.5),
    )
    # BS 5628-1 local bearing and dispersion.
    gamma_m_bs: tuple[tuple[str, float], ...] = (
        ("special|special", 2.5),
        ("special|normal", 3.1),
        ("normal|special", 2.8),
        ("normal|normal", 3.5),
    )
    bearing_type_factors: tuple[float, float, float] = (1.25, 1.5, 2.0)
    dispersion_depth_ratio: float = 0.4
    bs_min_eccentricity_ratio: float = 0.05
    # Both bases.
    slenderness_limit: float = 27.0
    # Rules of the trade.
    min_bearing_beam: float = 100.0
    min_bearing_lintel: float = 150.0
    inline_flange_allowance: float = 50.0
    inline_padstone_min_length: float = 200.0
    inline_web_tolerance: float = 10.0

    def __post_init__(self) -> None:
        # A basis is checked once, when it is made: every check then trusts it. A γ_c of
        # 0 or an α_cc that is not a number would otherwise reach a formula.
        for problem in basis_errors(self):
            raise problem

    @property
    def is_ec6(self) -> bool:
        return self.name == EC6_UK

    def k_value(self, material: str, group: int, mortar_kind: str) -> float | None:
        key = _k_key(material, group, mortar_kind)
        for k, v in self.k_values:
            if k == key:
                return v
        return None

    def gamma_M_for(self, execution_class: int, category: str) -> float | None:
        return dict(self.gamma_M_ec6).get(f"{execution_class}|{category}")

    def creep_lambda_c_for(self, material: str) -> float | None:
        return dict(self.creep_lambda_c).get(material)

    def creep_phi_for(self, material: str) -> float | None:
        return dict(self.creep_phi_inf).get(material)

    def gamma_m_for(self, manufacturing: str, construction: str) -> float | None:
        return dict(self.gamma_m_bs).get(f"{manufacturing}|{construction}")

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for f in fields(self):
            v = getattr(self, f.name)
            out[f.name] = dict(v) if f.name in _TABLE_FIELDS else v
        out["bearing_type_factors"] = list(self.bearing_type_factors)
        return out


_TABLE_FIELDS = ("k_values", "gamma_M_ec6", "gamma_m_bs", "creep_lambda_c", "creep_phi_inf")


def ec6_uk_na(**overrides: Any) -> CodeBasis:
    """EN 1996-1-1 and EN 1992-1-1 with the UK National Annexes' values (as labelled)."""
    return replace(CodeBasis(name=EC6_UK), **_coerce(overrides))


def bs5628(**overrides: Any) -> CodeBasis:
    """BS 5628-1 permissible local bearing with 45° dispersion, for existing buildings."""
    base = CodeBasis(name=BS5628, masonry_spread_deg=45.0)
    return replace(base, **_coerce(overrides))


def basis_named(name: str, **overrides: Any) -> CodeBasis:
    if name == EC6_UK:
        return ec6_uk_na(**overrides)
    if name == BS5628:
        return bs5628(**overrides)
    raise InputError("basis", name, f"one of {', '.join(BASES)}", "bad-choice")


def basis_from_dict(data: Mapping[str, Any]) -> CodeBasis:
    """Rebuild a basis saved with :meth:`CodeBasis.to_dict` (unknown keys are refused)."""
    data = dict(data)
    name = data.pop("name", EC6_UK)
    return basis_named(name, **data)


def _coerce(overrides: dict[str, Any]) -> dict[str, Any]:
    """Tables given as dicts become the basis's sorted tuples; numbers stay as given (a
    text or a NaN is the validation's to name, not a float() call's to crash on)."""
    known = {f.name for f in fields(CodeBasis)}
    out = {}
    for key, value in overrides.items():
        if key not in known or key == "name":
            raise InputError(f"basis.{key}", value, "a known code-basis value", "unknown-field")
        if key in _TABLE_FIELDS and isinstance(value, dict):
            value = tuple(sorted((str(k), _as_float(v)) for k, v in value.items()))
        elif key == "bearing_type_factors" and isinstance(value, (list, tuple)):
            value = tuple(_as_float(v) for v in value)
        out[key] = value
    return out


def _is_number(value: object) -> TypeGuard[float]:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _as_float(value: object) -> object:
    return float(value) if _is_number(value) else value


# Bounds of each value of a basis: generous, so that any value a standard or national
# annex could give fits, and narrow enough to refuse the non-physical (a partial factor of
# 0, a spread of 0°) and slips (a percentage typed as a ratio) [ours]. The settings form
# applies the same bounds, so a site's stored basis always reads back.
SCALAR_BOUNDS: dict[str, tuple[float, float]] = {
    "gamma_c": (1.0, 3.0),
    "alpha_cc": (0.5, 1.0),
    "alpha_cc_pl": (0.3, 1.0),
    "plb_limit_factor": (1.0, 5.0),
    "padstone_spread_deg": (10.0, 80.0),
    "f_b_max": (1.0, 200.0),
    "f_m_max": (1.0, 50.0),
    "collar_joint_factor": (0.5, 1.0),
    "masonry_spread_deg": (10.0, 80.0),
    "beta_area_ratio_cap": (0.05, 1.0),
    "spreader_min_depth": (0.0, 2000.0),
    "spreader_length_factor": (0.0, 10.0),
    "spreader_stress_factor": (1.0, 3.0),
    "max_eccentricity_ratio": (0.01, 0.5),
    "k_E": (100.0, 5000.0),
    "e_mk_min_ratio": (0.0, 0.5),
    "e_init_divisor": (100.0, 2000.0),
    "dispersion_depth_ratio": (0.1, 1.0),
    "bs_min_eccentricity_ratio": (0.0, 0.5),
    "slenderness_limit": (5.0, 60.0),
    "min_bearing_beam": (0.0, 1000.0),
    "min_bearing_lintel": (0.0, 1000.0),
    "inline_flange_allowance": (0.0, 500.0),
    "inline_padstone_min_length": (0.0, 3000.0),
    "inline_web_tolerance": (0.0, 200.0),
}
TABLE_BOUNDS: dict[str, tuple[float, float]] = {
    "k_values": (0.1, 1.0),
    "gamma_M_ec6": (1.0, 5.0),
    "gamma_m_bs": (1.0, 5.0),
    "bearing_type_factors": (1.0, 3.0),
    "creep_lambda_c": (0.0, 60.0),
    "creep_phi_inf": (0.0, 5.0),
}
FLAGS = ("spreader_route_for_groups_2_to_4", "plain_partial_area_enhancement")


def basis_errors(basis: CodeBasis) -> Iterator[InputError]:
    """Every value of ``basis`` that makes no physical sense, in the order of its fields,
    each an :class:`InputError` naming ``basis.<field>``."""
    for f in fields(CodeBasis):
        name, value = f.name, getattr(basis, f.name)
        field = f"basis.{name}"
        if name == "name":
            if value not in BASES:
                yield InputError("basis", value, f"one of {', '.join(BASES)}", "bad-choice")
        elif name in FLAGS:
            if not isinstance(value, bool):
                yield InputError(field, value, "true or false", "not-a-choice")
        elif name in SCALAR_BOUNDS:
            yield from _bounded(field, value, *SCALAR_BOUNDS[name])
        elif name == "bearing_type_factors":
            if not isinstance(value, tuple) or len(value) != 3:
                yield InputError(
                    field, value, "three factors, for bearing types 1, 2 and 3", "bad-shape"
                )
                continue
            for i, v in enumerate(value, start=1):
                yield from _bounded(f"{field}.{i}", v, *TABLE_BOUNDS[name])
        elif name in TABLE_BOUNDS:
            if not isinstance(value, tuple) or not all(
                isinstance(row, tuple) and len(row) == 2 and isinstance(row[0], str)
                for row in value
            ):
                yield InputError(field, value, "a table of named values", "bad-shape")
                continue
            for key, v in value:
                yield from _bounded(f"{field}.{key}", v, *TABLE_BOUNDS[name])


def _bounded(field: str, value: object, least: float, greatest: float) -> Iterator[InputError]:
    if not _is_number(value) or value != value or value in (math.inf, -math.inf):
        yield InputError(field, value, "a finite number", "not-a-number")
    elif not least <= value <= greatest:
        yield InputError(
            field,
            value,
            f"{number(least)} to {number(greatest)} for this code basis",
            "out-of-range",
        )


# Where each default comes from, for the screens and the site record.
SOURCES: dict[str, str] = {
    "gamma_c": "1.5, EN 1992-1-1 Table 2.1N, persistent situations [S]",
    "alpha_cc": "0.85, UK NA to EN 1992-1-1 (EN recommends 1.0) [S]",
    "alpha_cc_pl": "0.6 for plain concrete, UK NA to EN 1992-1-1 12.3.1 (EN recommends 0.8) [M]",
    "plain_partial_area_enhancement": (
        "off: a plain padstone takes no √(A_c1/A_c0) enhancement, as nothing carries the "
        "transverse tension EN 1992-1-1 6.7(4) asks reinforcement for [ours, cautious]"
    ),
    "plb_limit_factor": "3.0, EN 1992-1-1 6.7 eqn 6.63 [S]",
    "padstone_spread_deg": "45° dispersion through the padstone [CP]",
    "k_values": "EN 1996-1-1 Table 3.3 / UK NA Table NA.4 [M]: confirm against the NA",
    "f_b_max": "75 N/mm², EN 1996-1-1 3.6.1.2 [M]",
    "f_m_max": "min(20, 2 f_b) N/mm², EN 1996-1-1 3.6.1.2 [M]",
    "collar_joint_factor": (
        "0.8 × K where the wall has a mortar joint parallel to its face, EN 1996-1-1 3.6.1.2 [M]"
    ),
    "gamma_M_ec6": "UK NA to EN 1996-1-1 Table NA.1 [M]",
    "masonry_spread_deg": "60° (EC6 6.1.3) [P] or 45° (BS 5628-1:1992) [P]",
    "beta_area_ratio_cap": "A_b/A_ef ≤ 0.45, EN 1996-1-1 6.1.3 [M]",
    "spreader_min_depth": "> 200 mm, EN 1996-1-1 6.1.3 [M]",
    "spreader_length_factor": "> 3 × bearing length, EN 1996-1-1 6.1.3 [M]",
    "spreader_stress_factor": "1.5 f_d, EN 1996-1-1 6.1.3 [M]",
    "spreader_route_for_groups_2_to_4": "off: spreader route for Group 1 only [ours, cautious]",
    "max_eccentricity_ratio": "t/4, EN 1996-1-1 6.1.3 [M]",
    "k_E": "E = 1000 f_k, EN 1996-1-1 3.7.2 [M]",
    "e_mk_min_ratio": "e_mk ≥ 0.05 t, EN 1996-1-1 6.1.2.2 [M]",
    "e_init_divisor": "e_init = h_ef/450, EN 1996-1-1 5.5.1.1 [M]",
    "creep_lambda_c": (
        "e_k = 0 up to h_ef/t_ef = λ_c, EN 1996-1-1 6.1.2.2(2): 15 recommended; clay (like "
        "natural stone) is not asked for e_k, so its λ_c is 27, the slenderness limit [M]"
    ),
    "creep_phi_inf": "final creep coefficient φ_∞, EN 1996-1-1 Table 3.8 [M]",
    "gamma_m_bs": "BS 5628-1:1992 Table 4 [S]",
    "bearing_type_factors": "1.25 / 1.5 / 2.0, BS 5628-1:1992 clause 34 [P]",
    "dispersion_depth_ratio": "0.4 h below the bearing, BS 5628-1:1992 clause 34 [P]",
    "bs_min_eccentricity_ratio": "e_x ≥ 0.05 t, BS 5628-1:1992 Appendix B [M]",
    "slenderness_limit": "h_ef/t_ef ≤ 27, EN 1996-1-1 5.5.1.4 and BS 5628-1:1992 clause 28 [M]",
    "min_bearing_beam": "100 mm steel bearing, NHBC Standards 6.5.5 [S]",
    "min_bearing_lintel": "150 mm lintel end bearing [CP]",
    "inline_flange_allowance": "flange ≤ t + 50 mm, NHBC Standards 6.5.5 [S]",
    "inline_padstone_min_length": "padstone ≥ 200 mm long, NHBC Standards 6.5.5 [S]",
    "inline_web_tolerance": "web within 10 mm of the wall's centre line [ours]",
}
