"""The shared test vectors that hold the browser's mirror of the core equal to Python.

``build_vectors()`` makes every case from a fixed seed and the core itself; the committed
``tests/vectors/bearing-vectors.json.gz`` must equal it (a test says so), and the browser
replays each case through ``static/js/bearing/`` and compares. Format 1:

* ``check``: ``{"id", "basis": CodeBasis.to_dict(), "input": input_to_dict(...),
  "expect": check_bearing(...).as_dict()}`` for inputs the core accepts.
* ``errors``: ``{"id", "basis", "input", "expect", "raises"}`` for inputs it refuses:
  ``expect`` is ``[e.as_dict() for e in input_errors(...)]`` (or the one error
  ``basis_from_dict`` raises for a refused basis), ``raises`` the ``as_dict()`` of the
  error ``check_bearing`` raises, which for an input that only a formula refuses (a unit
  with no K value, say) is not among ``expect``.
* ``review``, ``remedy``: from :mod:`devtools.vectors_review`.

Inputs are invented, seeded and varied; they are for holding two engines equal, not
reference values. Each input goes through ``input_from_dict`` first, so it has the types
the server would give it. Not a part of the core: it may call it, and nothing else.
"""

from __future__ import annotations

import argparse
import gzip
import json
import random
import sys
from collections.abc import Callable
from pathlib import Path

from devtools.vectors_review import remedy_vectors, review_vectors
from sitecheck.bearing import (
    ACROSS,
    IN_LINE,
    InputError,
    basis_from_dict,
    check_bearing,
    input_errors,
)
from sitecheck.bearing.basis import bs5628, ec6_uk_na
from sitecheck.bearing.serial import input_from_dict, input_to_dict

FORMAT = 1
TOLERANCE = 1e-9
SEED = 5
RANDOM_CHECKS = 340
DEFAULT_PATH = Path("tests") / "vectors" / "bearing-vectors.json.gz"
REWRITE = "python -m devtools.vectors --out"


def build_vectors() -> dict:
    return {
        "format": FORMAT,
        "tolerance": TOLERANCE,
        "check": check_cases(),
        "errors": error_cases(),
        "review": review_vectors(),
        "remedy": remedy_vectors(),
    }


def dumps(vectors: dict) -> str:
    """Compact, sorted JSON with one case per line, so a change reads as a small diff.

    A review reason may carry an unbounded utilisation, which Python's json writes as
    ``Infinity``: the file is read by Python (the tests) and reaches the page through
    Playwright, which carries it as a number. The check cases never hold one (as_dict
    writes null there)."""

    def one(value) -> str:
        return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)

    parts = []
    for key in sorted(vectors):
        value = vectors[key]
        if isinstance(value, list) and value:
            body = ",\n".join(one(case) for case in value)
            parts.append(f"{one(key)}:[\n{body}\n]")
        else:
            parts.append(f"{one(key)}:{one(value)}")
    return "{" + ",\n".join(parts) + "}\n"


def write(path: Path, vectors: dict | None = None) -> str:
    """Write the vectors; a ``.gz`` path is gzip-compressed (the file is about 11 MB of
    text and compresses about tenfold, which keeps the repository small). The stamp inside
    the gzip header is fixed so that unchanged vectors write the same bytes."""
    text = dumps(build_vectors() if vectors is None else vectors)
    data = text.encode("utf-8")
    if path.suffix == ".gz":
        data = gzip.compress(data, compresslevel=9, mtime=0)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(data)
    return text


def read_text(path: Path) -> str:
    """The text of a vectors file, compressed (``.gz``) or not."""
    data = path.read_bytes()
    if path.suffix == ".gz":
        data = gzip.decompress(data)
    return data.decode("utf-8")


def differences(old: dict, new: dict, limit: int = 20) -> list[str]:
    """What differs between two sets of vectors, by section and case id, shortest first."""
    out = []
    for key in sorted(set(old) | set(new)):
        a, b = old.get(key), new.get(key)
        if a == b:
            continue
        if not (isinstance(a, list) and isinstance(b, list)):
            out.append(f"{key}: {a!r} -> {b!r}")
            continue
        before = {_case_id(c, i): c for i, c in enumerate(a)}
        after = {_case_id(c, i): c for i, c in enumerate(b)}
        gone = [i for i in before if i not in after]
        added = [i for i in after if i not in before]
        changed = [i for i in after if i in before and before[i] != after[i]]
        if [i for i in before if i in after] != [i for i in after if i in before]:
            out.append(f"{key}: the cases are in another order")
        for label, ids in (("removed", gone), ("added", added), ("changed", changed)):
            if ids:
                shown = ", ".join(ids[:8]) + (f" and {len(ids) - 8} more" if len(ids) > 8 else "")
                out.append(f"{key}: {len(ids)} {label}: {shown}")
    return out[:limit]


def _case_id(case, index: int) -> str:
    return str(case.get("id", f"#{index}")) if isinstance(case, dict) else f"#{index}"


# ---------------------------------------------------------------- check cases


def check_cases() -> list[dict]:
    cases = [_check_case(f"named-{name}", basis, data) for name, basis, data in _named_checks()]
    rng = random.Random(SEED)
    made = 0
    while made < RANDOM_CHECKS:
        ec6 = made % 3 != 2  # two in three on the default basis
        basis = _random_basis(rng, ec6)
        data = _random_input(rng, ec6)
        try:
            inp = input_from_dict(data)
            check_bearing(inp, basis_from_dict(basis.to_dict()))
        except InputError:
            continue  # the generator aims at valid input; the error cases are made on purpose
        orient = "in-line" if inp.beam.orientation == IN_LINE else "across"
        pad = "pad" if inp.padstone is not None else "bare"
        name = "ec6" if ec6 else "bs"
        cases.append(_check_case(f"rand-{made:03d}-{name}-{orient}-{pad}", basis, data))
        made += 1
    return cases


def _check_case(case_id: str, basis, data: dict) -> dict:
    basis_dict = basis.to_dict()
    inp = input_from_dict(data)
    result = check_bearing(inp, basis_from_dict(basis_dict))
    return {
        "id": case_id,
        "basis": basis_dict,
        "input": input_to_dict(inp),
        "expect": result.as_dict(),
    }


def _bearing(
    *,
    reaction=60_000.0,
    wall_load=0.0,
    beam=None,
    wall=None,
    masonry=None,
    padstone="default",
    **top,
) -> dict:
    """An input dict: a 133 mm flange bearing 150 mm on a 440 × 215 × 140 padstone, on a
    215 mm Group 1 aggregate concrete block wall (sizes common practice; load invented),
    with the parts given here replacing the defaults key by key."""
    data = {
        "load": {"reaction": reaction, "wall_load": wall_load},
        "beam": {"flange_width": 133.0, "bearing_length": 150.0, **(beam or {})},
        "wall": {"thickness": 215.0, "height_to_bearing": 2400.0, "a1": 300.0, **(wall or {})},
        "masonry": {
            "material": "aggregate concrete",
            "group": 1,
            "unit_strength": 10.0,
            "unit_strength_is_normalised": True,
            "mortar": "M4",
            **(masonry or {}),
        },
        **top,
    }
    if padstone == "default":
        data["padstone"] = {"length": 440.0, "width": 215.0, "depth": 140.0, "concrete": "C25/30"}
    elif padstone is not None:
        data["padstone"] = {
            "length": 440.0,
            "width": 215.0,
            "depth": 140.0,
            "concrete": "C25/30",
            **padstone,
        }
    return data


_BRICK = {
    "material": "clay",
    "group": 1,
    "unit_strength": 20.0,
    "unit_strength_is_normalised": False,
    "unit_height": 65.0,
    "unit_width": 102.5,
    "mortar": "M4",
}


def _named_checks() -> list[tuple[str, object, dict]]:
    """Cases chosen by hand, each for one branch of the core."""
    ec6, bs = ec6_uk_na(), bs5628()
    in_line = {"orientation": IN_LINE, "flange_width": 146.0}
    return [
        ("ec6-across-on-padstone", ec6, _bearing()),
        ("ec6-across-bare-wall", ec6, _bearing(padstone=None, beam={"bearing_length": 100.0})),
        (
            "ec6-in-line-end-of-wall",
            ec6,
            _bearing(beam=in_line, wall={"a1": 0.0}, masonry=_BRICK, padstone={"depth": 215.0}),
        ),
        ("ec6-end-a1-zero", ec6, _bearing(wall={"a1": 0.0})),
        ("ec6-end-a1-small", ec6, _bearing(wall={"a1": 2.5, "a2": 40.0})),
        ("ec6-runs-on-both-ways", ec6, _bearing(wall={"a1": None})),
        (
            "ec6-off-centre-triangle",
            ec6,
            _bearing(beam={"offset_along": 153.5}, padstone={"depth": 65.0}),
        ),
        (
            "ec6-off-centre-trapezoid",
            ec6,
            _bearing(beam={"offset_along": -20.0}, padstone={"depth": 100.0}),
        ),
        (
            "ec6-spreader-route",
            ec6,
            _bearing(padstone={"length": 1000.125, "depth": 250.0}, reaction=150_000.0),
        ),
        (
            "ec6-spreader-groups-2-to-4",
            ec6_uk_na(spreader_route_for_groups_2_to_4=True),
            _bearing(
                padstone={"length": 900.0, "depth": 215.5},
                masonry={"group": 2, "material": "clay"},
            ),
        ),
        (
            "ec6-group-3-no-padstone-unbounded",
            ec6,
            _bearing(padstone=None, beam={"bearing_length": 100.0}, masonry={"group": 3}),
        ),
        (
            "ec6-group-2-padstone-at-end",
            ec6,
            _bearing(masonry={"group": 2}, wall={"a1": 0.0}, beam={"offset_along": -153.5}),
        ),
        (
            "ec6-near-third-reaction",
            ec6,
            _bearing(beam={"reaction_at": "near-third"}, wall={"a1": 45.0}),
        ),
        (
            "ec6-in-line-flange-wider-than-wall",
            ec6,
            _bearing(
                beam={"orientation": IN_LINE, "flange_width": 254.0},
                wall={"thickness": 215.0},
                padstone={"width": 215.0, "length": 300.0},
            ),
        ),
        (
            "ec6-in-line-off-centre-web",
            ec6,
            _bearing(beam={**in_line, "offset_across": 30.0, "flange_width": 102.0}),
        ),
        (
            "ec6-padstone-proud-of-wall",
            ec6,
            _bearing(padstone={"width": 218.0}, wall={"thickness": 215.0}),
        ),
        (
            "ec6-thin-layer-clay-group-2",
            ec6,
            _bearing(masonry={"material": "clay", "group": 2, "mortar": "thin-layer"}),
        ),
        (
            "ec6-water-soaked-unit-size",
            ec6,
            _bearing(
                masonry={
                    "unit_strength_is_normalised": False,
                    "unit_strength": 7.3,
                    "unit_height": 215.0,
                    "unit_width": 100.0,
                    "conditioning": "water-soaked",
                }
            ),
        ),
        (
            "ec6-mortar-capped",
            ec6,
            _bearing(masonry={"unit_strength": 2.9, "mortar": "M12"}),
        ),
        (
            "ec6-declared-fk-and-gamma",
            ec6,
            _bearing(masonry={"f_k": 4.5, "gamma_M": 2.5, "unit_strength": None}),
        ),
        (
            "ec6-declared-emk-phi",
            ec6,
            _bearing(e_mk=12.5, phi_m=0.72),
        ),
        (
            "ec6-category-ii-class-1-shell-bedded",
            ec6,
            _bearing(masonry={"unit_category": "II", "execution_class": 1, "shell_bedded": True}),
        ),
        (
            "ec6-slender-wall-fails",
            ec6,
            _bearing(
                wall={"thickness": 100.0, "clear_height": 4000.0, "effective_height": 3900.0},
                padstone={"width": 100.0},
                beam={"bearing_length": 90.0},
                reaction=20_000.0,
            ),
        ),
        (
            "ec6-lintel-short-bearing",
            ec6,
            _bearing(beam={"member": "lintel", "bearing_length": 100.0}, padstone=None),
        ),
        (
            "ec6-declared-fck-uk-alpha-1",
            ec6_uk_na(alpha_cc=1.0),
            _bearing(padstone={"f_ck": 32.0, "concrete": "declared"}),
        ),
        # The one number reader (bearing/typed.py) reads these classes; the mirror alike.
        ("ec6-concrete-class-lower-case", ec6, _bearing(padstone={"concrete": "c30/37"})),
        ("ec6-concrete-class-spaces", ec6, _bearing(padstone={"concrete": "C 32 / 40"})),
        (
            "ec6-heavy-load-fails",
            ec6,
            _bearing(reaction=400_000.0),
        ),
        (
            "ec6-effective-thickness-given",
            ec6,
            _bearing(wall={"effective_thickness": 180.0, "clear_height": 2600.0}, wall_load=35.0),
        ),
        # End bearings under a triangle: both readings of the loaded length, each governing
        # somewhere (the hand examples of tests/test_recheck.py).
        (
            "ec6-end-bearing-whole-window-governs",
            ec6,
            _bearing(
                reaction=58_000.0,
                beam={"orientation": IN_LINE, "flange_width": 150.0},
                wall={"a1": 0.0},
                masonry={"f_k": 5.0, "gamma_M": 2.5, "unit_strength": None},
                padstone={"length": 300.0, "depth": 215.0},
            ),
        ),
        (
            "ec6-end-bearing-spreader-both-readings",
            ec6,
            _bearing(
                beam={"orientation": IN_LINE, "flange_width": 150.0},
                wall={"a1": 25.0, "a2": 60.0},
                padstone={"length": 1000.0, "depth": 250.0},
            ),
        ),
        (
            "bs-end-bearing-contact-governs",
            bs,
            _bearing(
                reaction=60_000.0,
                wall_load=166.0,
                beam={"orientation": IN_LINE, "flange_width": 150.0},
                wall={"a1": 0.0},
                masonry={"material": "clay", "f_k": 7.0, "gamma_M": 3.5, "unit_strength": None},
                padstone={"length": 300.0, "depth": 215.0},
                bearing_type=3,
                beta_s=0.5,
            ),
        ),
        # Plain and reinforced padstones under a concentric in-line load, where an
        # enlargement fits: plain takes none unless the basis allows it.
        (
            "ec6-plain-padstone-no-enhancement",
            ec6,
            _bearing(beam={**in_line, "offset_along": 0.0}, padstone={"depth": 215.0}),
        ),
        (
            "ec6-plain-padstone-enhancement-allowed",
            ec6_uk_na(plain_partial_area_enhancement=True, alpha_cc_pl=0.8),
            _bearing(beam={**in_line, "offset_along": 0.0}, padstone={"depth": 215.0}),
        ),
        (
            "ec6-reinforced-padstone",
            ec6,
            _bearing(
                beam={**in_line, "offset_along": 0.0},
                padstone={"depth": 215.0, "reinforced": True},
            ),
        ),
        # The longitudinal (collar) joint: inferred from a one-brick wall, given, refused.
        ("ec6-one-brick-wall-joint-inferred", ec6, _bearing(masonry=_BRICK)),
        (
            "ec6-one-brick-wall-no-joint-given",
            ec6,
            _bearing(masonry={**_BRICK, "collar_joint": False}),
        ),
        (
            "ec6-block-wall-joint-given",
            ec6_uk_na(collar_joint_factor=0.75),
            _bearing(masonry={"collar_joint": True}),
        ),
        # A padstone narrower than the wall, placed across it each way.
        *(
            (
                f"ec6-padstone-{name}",
                ec6,
                _bearing(
                    beam={"bearing_length": 100.0},
                    padstone={"width": 140.0, "position_across": position, "offset_across": offset},
                ),
            )
            for name, position, offset in (
                ("near-face", "near-face", None),
                ("centred", "centred", None),
                ("far-face", "far-face", None),
                ("offset", "offset", 25.5),
            )
        ),
        (
            "ec6-in-line-padstone-at-far-face",
            ec6,
            _bearing(beam=in_line, padstone={"width": 140.0, "position_across": "far-face"}),
        ),
        ("bs-across-on-padstone", bs, _bearing(masonry=_BRICK)),
        ("bs-brick-20-m4-table-value", bs, _bearing(masonry=_BRICK, padstone=None)),
        (
            "bs-in-line-end-type-3",
            bs,
            _bearing(
                beam=in_line,
                wall={"a1": 0.0},
                masonry=_BRICK,
                padstone={"depth": 215.0},
                bearing_type=3,
            ),
        ),
        (
            "bs-type-2-declared-beta",
            bs,
            _bearing(
                masonry={**_BRICK, "mortar": "M12", "unit_strength": 50.0},
                bearing_type=2,
                beta_s=0.8,
            ),
        ),
        (
            "bs-table-ends",
            bs,
            _bearing(masonry={**_BRICK, "unit_strength": 5.0, "mortar": "M2"}, reaction=5_000.0),
        ),
        (
            "bs-table-top",
            bs,
            _bearing(masonry={**_BRICK, "unit_strength": 100.0, "mortar": "M6"}),
        ),
        (
            "bs-special-control",
            bs,
            _bearing(
                masonry={
                    **_BRICK,
                    "manufacturing_control": "special",
                    "construction_control": "special",
                }
            ),
        ),
        (
            "bs-block-declared-fk",
            bs,
            _bearing(masonry={"f_k": 3.2, "unit_strength": None, "group": 2}),
        ),
        (
            "bs-continuous-wall-near-third",
            bs,
            _bearing(masonry=_BRICK, wall={"a1": None}, beam={"reaction_at": "near-third"}),
        ),
    ]


# Masonry of each material and group the default basis has a K value for.
_EC6_UNITS = (
    ("clay", 1),
    ("clay", 2),
    ("clay", 3),
    ("clay", 4),
    ("calcium silicate", 1),
    ("calcium silicate", 2),
    ("aggregate concrete", 1),
    ("aggregate concrete", 2),
    ("aggregate concrete", 3),
    ("aggregate concrete", 4),
    ("autoclaved aerated concrete", 1),
    ("manufactured stone", 1),
)
_MATERIALS = tuple(sorted({m for m, _ in _EC6_UNITS}))
_GROUP_1 = tuple(u for u in _EC6_UNITS if u[1] == 1)
_K_KEYS = frozenset(ec6_uk_na().to_dict()["k_values"])


def _length(rng: random.Random, common: tuple, low: float, high: float) -> float:
    """Mostly a size of the trade, sometimes any size to the half millimetre, now and then
    a full-precision figure (the engines must agree on every bit of arithmetic)."""
    roll = rng.random()
    if roll < 0.6:
        return float(rng.choice(common))
    if roll < 0.9:
        return round(rng.uniform(low, high) * 2) / 2
    return rng.uniform(low, high)


def _maybe(rng: random.Random, p: float, make: Callable[[], object]):
    return make() if rng.random() < p else None


def _random_basis(rng: random.Random, ec6: bool):
    if rng.random() > 0.12:
        return ec6_uk_na() if ec6 else bs5628()
    overrides = rng.choice(
        (
            {"alpha_cc": 1.0},
            {"spreader_route_for_groups_2_to_4": True},
            {"slenderness_limit": 20.0},
            {"gamma_c": 1.4, "plb_limit_factor": 2.5},
            {"bearing_type_factors": [1.2, 1.4, 1.8]},
            {"masonry_spread_deg": 50.0, "padstone_spread_deg": 40.0},
            {"gamma_M_ec6": {"1|I": 2.0, "1|II": 2.2, "2|I": 2.5, "2|II": 2.8}},
            {"k_values": {**ec6_uk_na().to_dict()["k_values"], "clay|1|general": 0.55}},
            {"creep_lambda_c": {m: 12.0 for m in _MATERIALS}, "creep_phi_inf": {"clay": 0.5}},
        )
    )
    return ec6_uk_na(**overrides) if ec6 else bs5628(**overrides)


def _random_input(rng: random.Random, ec6: bool) -> dict:
    orient = ACROSS if rng.random() < 0.6 else IN_LINE
    t = rng.choice((100.0, 102.5, 140.0, 190.0, 215.0, 215.0, 300.0, 327.5, 440.0))
    has_pad = rng.random() < 0.7
    b_f = _length(rng, (89.0, 102.0, 133.0, 146.0, 152.0, 165.0, 178.0, 203.0), 60.0, 260.0)
    beam: dict = {"orientation": orient}
    pad = None
    if has_pad:
        width = t if rng.random() < 0.7 else rng.choice((min(t, 100.0), t - 2.0, t + 2.5, t * 0.8))
        length = _length(rng, (215.0, 300.0, 440.0, 600.0, 900.0, 1200.0), 150.0, 1500.0)
        depth = _length(rng, (65.0, 100.0, 140.0, 150.0, 215.0, 250.0, 300.0), 50.0, 400.0)
        pad = {"length": length, "width": width, "depth": depth}
        if rng.random() < 0.15:
            pad["f_ck"] = round(rng.uniform(16.0, 50.0), 1)
            pad["concrete"] = "declared"
        else:
            pad["concrete"] = rng.choice(("C20/25", "C25/30", "C30/37", "C32/40", "C40/50"))
        pad["reinforced"] = rng.random() < 0.3
        if width < t and rng.random() < 0.4:
            position = rng.choice(("near-face", "centred", "far-face", "offset"))
            pad["position_across"] = position
            if position == "offset":
                pad["offset_across"] = _offset(rng, (t - width) / 2)
        if orient == ACROSS:
            b_f = min(b_f, length)
            l_b = min(_length(rng, (90.0, 100.0, 125.0, 150.0, 215.0), 50.0, 300.0), width)
            room = (length - b_f) / 2
            beam["offset_along"] = _maybe(rng, 0.35, lambda: _offset(rng, room))
            room_y = (min(width, t) - l_b) / 2
            beam["offset_across"] = _maybe(rng, 0.2, lambda: _offset(rng, room_y))
        else:
            l_b = min(_length(rng, (100.0, 125.0, 150.0, 200.0, 250.0), 60.0, 400.0), length)
            if rng.random() < 0.15:
                beam["offset_along"] = _offset(rng, (length - l_b) / 2)
            foot = min(b_f, width)
            beam["offset_across"] = _maybe(rng, 0.3, lambda: _offset(rng, (width - foot) / 2))
    else:
        if orient == ACROSS:
            l_b = min(_length(rng, (90.0, 100.0, 125.0, 150.0), 40.0, 300.0), t)
            beam["offset_across"] = _maybe(rng, 0.2, lambda: _offset(rng, (t - l_b) / 2))
        else:
            b_f = min(b_f, t)
            l_b = _length(rng, (100.0, 150.0, 200.0), 60.0, 350.0)
            beam["offset_across"] = _maybe(rng, 0.3, lambda: _offset(rng, (t - b_f) / 2))
        if rng.random() < 0.05:
            beam["offset_along"] = 12.0  # ignored without a padstone
    beam.update(
        flange_width=b_f,
        bearing_length=l_b,
        member="lintel" if rng.random() < 0.12 else "beam",
        reaction_at="near-third" if rng.random() < 0.2 else "centroid",
    )
    h_c = _length(rng, (600.0, 1200.0, 2400.0, 2700.0, 3000.0, 5000.0), 300.0, 6000.0)
    wall = {
        "thickness": t,
        "height_to_bearing": h_c,
        "a1": _end_distance(rng),
        "a2": _end_distance(rng),
        "clear_height": _maybe(rng, 0.25, lambda: h_c + rng.choice((0.0, 150.0, 400.0))),
        "effective_height": _maybe(rng, 0.2, lambda: round(h_c * rng.choice((0.75, 0.85, 1.0)))),
        "effective_thickness": _maybe(rng, 0.1, lambda: t * rng.choice((0.9, 1.0, 1.15))),
    }
    masonry = _random_masonry_ec6(rng) if ec6 else _random_masonry_bs(rng)
    data = {
        "load": {
            "reaction": _length(rng, (5e3, 10e3, 20e3, 30e3, 45e3, 80e3), 1e3, 160e3),
            "wall_load": 0.0 if rng.random() < 0.4 else round(rng.uniform(0.0, 90.0), 2),
        },
        "beam": beam,
        "wall": wall,
        "masonry": masonry,
        "padstone": pad,
        "bearing_type": rng.choice((1, 1, 2, 3)),
    }
    if ec6 and rng.random() < 0.08:
        data["e_mk"] = round(rng.uniform(0.0, t / 5), 1)
    if ec6 and rng.random() < 0.08:
        data["phi_m"] = round(rng.uniform(0.3, 1.0), 2)
    if not ec6 and rng.random() < 0.1:
        data["beta_s"] = round(rng.uniform(0.4, 1.0), 2)
    return data


def _offset(rng: random.Random, room: float) -> float:
    if room <= 0:
        return 0.0
    roll = rng.random()
    if roll < 0.2:
        return rng.choice((room, -room))  # against the padstone's or wall's edge
    if roll < 0.8:
        return round(rng.uniform(-room, room))
    return rng.uniform(-room, room)


def _end_distance(rng: random.Random) -> float | None:
    roll = rng.random()
    if roll < 0.35:
        return None
    if roll < 0.5:
        return 0.0
    if roll < 0.65:
        return rng.choice((2.0, 10.0, 25.0, 50.0, 102.5))  # end and near-end bearings
    return _length(rng, (150.0, 300.0, 450.0, 900.0, 2000.0), 0.0, 3000.0)


def _common_masonry(rng: random.Random, masonry: dict) -> dict:
    if rng.random() < 0.1:
        masonry["gamma_M"] = round(rng.uniform(2.0, 3.5), 2)
    masonry["unit_category"] = "I" if rng.random() < 0.8 else "II"
    masonry["execution_class"] = 2 if rng.random() < 0.7 else 1
    masonry["manufacturing_control"] = rng.choice(("normal", "special"))
    masonry["construction_control"] = rng.choice(("normal", "special"))
    masonry["shell_bedded"] = rng.random() < 0.08
    if rng.random() < 0.15:
        masonry["collar_joint"] = rng.random() < 0.5
    return masonry


def _random_masonry_ec6(rng: random.Random) -> dict:
    # Group 1 most often, as on site; the rest for their own branches.
    material, group = rng.choice(_EC6_UNITS if rng.random() < 0.5 else _GROUP_1)
    thin = rng.random() < 0.15 and f"{material}|{group}|thin-layer" in _K_KEYS
    masonry = {"material": material, "group": group}
    masonry["mortar"] = "thin-layer" if thin else rng.choice(("M2", "M4", "M4", "M6", "M12"))
    roll = rng.random()
    if roll < 0.12:
        masonry["f_k"] = round(rng.uniform(1.5, 12.0), 2)
    elif roll < 0.55:
        masonry["unit_strength"] = _length(rng, (2.9, 3.6, 7.3, 10.0, 10.4, 20.0), 2.0, 40.0)
        masonry["unit_strength_is_normalised"] = True
    else:
        masonry["unit_strength"] = _length(rng, (3.6, 7.3, 10.4, 15.0, 20.0, 30.0), 2.5, 35.0)
        masonry["unit_height"] = rng.choice((65.0, 73.0, 100.0, 140.0, 190.0, 215.0, 300.0))
        masonry["unit_width"] = rng.choice((90.0, 100.0, 102.5, 140.0, 215.0, 300.0))
        masonry["conditioning"] = "water-soaked" if rng.random() < 0.2 else "air-dried"
    return _common_masonry(rng, masonry)


def _random_masonry_bs(rng: random.Random) -> dict:
    material = rng.choice(_MATERIALS)
    masonry = {
        "material": material,
        "group": rng.choice((1, 1, 1, 2, 3, 4)),
        "mortar": rng.choice(("M2", "M4", "M6", "M12")),
    }
    if rng.random() < 0.15:
        masonry["f_k"] = round(rng.uniform(1.5, 12.0), 2)
        if rng.random() < 0.5:
            masonry["mortar"] = "thin-layer"  # covered when f_k is given
    else:
        masonry["unit_strength"] = _length(
            rng, (5.0, 10.0, 15.0, 20.0, 27.5, 35.0, 50.0, 70.0, 100.0), 5.0, 100.0
        )
        masonry["unit_height"] = rng.choice((None, 65.0, 73.0, 100.0))
    return _common_masonry(rng, masonry)


# ---------------------------------------------------------------- error cases


def error_cases() -> list[dict]:
    return [_error_case(name, basis, data) for name, basis, data in _named_errors()]


def _error_case(case_id: str, basis: dict, data: dict) -> dict:
    """``data`` is taken as the input dict itself (it may hold what input_from_dict would
    refuse, a text for a length, say: the phone's form can send it to the mirror)."""
    try:
        code_basis = basis_from_dict(basis)
    except InputError as e:
        expect, raises = [e.as_dict()], e.as_dict()
        return {
            "id": f"error-{case_id}",
            "basis": basis,
            "input": data,
            "expect": expect,
            "raises": raises,
        }
    inp = _raw_input(data)
    expect = [e.as_dict() for e in input_errors(inp, code_basis)]
    try:
        check_bearing(inp, code_basis)
    except InputError as e:
        raises = e.as_dict()
    else:
        raise AssertionError(f"error case {case_id} is accepted by the core")
    return {
        "id": f"error-{case_id}",
        "basis": basis,
        "input": data,
        "expect": expect,
        "raises": raises,
    }


def _raw_input(data: dict):
    """A BearingInput holding the dict's values as they are, types and all."""
    from sitecheck.bearing.inputs import Beam, BearingInput, Load, Masonry, Padstone, Wall

    pad = data.get("padstone")
    top = {k: data[k] for k in ("bearing_type", "e_mk", "phi_m", "beta_s") if k in data}
    return BearingInput(
        load=Load(**data["load"]),
        beam=Beam(**data["beam"]),
        wall=Wall(**data["wall"]),
        masonry=Masonry(**data["masonry"]),
        padstone=None if pad is None else Padstone(**pad),
        **top,
    )


def _full(data: dict) -> dict:
    """The full input dict, every default written out, as input_to_dict gives it."""
    return input_to_dict(_raw_input(data))


def _named_errors() -> list[tuple[str, dict, dict]]:
    ec6, bs = ec6_uk_na().to_dict(), bs5628().to_dict()
    out: list[tuple[str, dict, dict]] = []

    def add(name: str, data: dict, basis: dict = ec6) -> None:
        out.append((name, basis, _full(data)))

    def change(part: str, **values) -> dict:
        data = _bearing()
        if part == "top":
            data.update(values)
        else:
            data[part] = {**(data.get(part) or {}), **values}
        return data

    # Loads.
    for value in (0.0, -5000.0, "12"):
        add(f"reaction-{value}", change("load", reaction=value))
    add("reaction-too-large", change("load", reaction=6e6))
    for value in (-1.0, 2500.0, None):
        add(f"wall-load-{value}", change("load", wall_load=value))
    # Lengths: missing, not a number, not positive, metres, out of range, for each field.
    fields = (
        ("beam", "flange_width", 0.133, 1200.0),
        ("beam", "bearing_length", 0.15, 1500.0),
        ("wall", "thickness", 9.0, 1100.0),
        ("wall", "height_to_bearing", 2.0625, 31000.0),
        ("wall", "clear_height", 2.4, 40000.0),
        ("wall", "effective_height", 0.0025, 70000.0),
        ("wall", "effective_thickness", 0.2, 1001.0),
        ("padstone", "length", 0.44, 3500.0),
        ("padstone", "width", 0.215, 1200.0),
        ("padstone", "depth", 0.14, 1200.0),
    )
    for part, name, metres, big in fields:
        add(f"{part}-{name}-metres", change(part, **{name: metres}))
        add(f"{part}-{name}-too-large", change(part, **{name: big}))
        add(f"{part}-{name}-negative", change(part, **{name: -10.0}))
        add(f"{part}-{name}-text", change(part, **{name: "abc"}))
        if name not in ("clear_height", "effective_height", "effective_thickness"):
            add(f"{part}-{name}-missing", change(part, **{name: None}))
    add("wall-thickness-just-short", change("wall", thickness=45.0))
    add("beam-flange-width-zero", change("beam", flange_width=0.0))
    # Choices.
    add("orientation", change("beam", orientation="along"))
    add("member", change("beam", member="joist"))
    add("reaction-at", change("beam", reaction_at="edge"))
    add("material", change("masonry", material="stone"))
    add("group", change("masonry", group=5))
    add("mortar", change("masonry", mortar="M3"))
    add("conditioning", change("masonry", conditioning="wet"))
    add("unit-category", change("masonry", unit_category="III"))
    add("execution-class", change("masonry", execution_class=3))
    add("manufacturing-control", change("masonry", manufacturing_control="poor"))
    add("construction-control", change("masonry", construction_control="tight"))
    add("bearing-type", change("top", bearing_type=4))
    for concrete in ("C25", "X25/30", "C25/20", "C100/115", "C2x/30", "Cinf/inf", None):
        add(f"concrete-{concrete}", change("padstone", concrete=concrete))
    # Figures the one number reader refuses, though Python's float() takes them.
    for concrete in ("C2_5/3_0", "C٢٥/٣٠", "C25,5/30"):
        add(f"concrete-{concrete}", change("padstone", concrete=concrete))
    # Concrete classes read in ways easy to miss: accepted.
    for concrete in ("c25/30", "C 25/30", "C25 / 30 ", "C+25/.3e2", "C1.25e1/15"):
        data = change("padstone", concrete=concrete)
        data["load"]["reaction"] = 5e9  # refused, so the case lists what else is accepted
        add(f"concrete-read-{concrete}", data)
    add("fck-out-of-range", change("padstone", f_ck=95.0))
    add("fck-text", change("padstone", f_ck="thirty"))
    add("reinforced-text", change("padstone", reinforced="yes"))
    add("collar-joint-text", change("masonry", collar_joint="yes"))
    narrow = {"width": 140.0}
    add("padstone-position-unknown", change("padstone", **narrow, position_across="middle"))
    add("padstone-offset-missing", change("padstone", **narrow, position_across="offset"))
    add(
        "padstone-offset-not-needed",
        change("padstone", **narrow, position_across="centred", offset_across=10.0),
    )
    add(
        "padstone-offset-off-wall",
        _bearing(
            beam={"bearing_length": 100.0},
            padstone={**narrow, "position_across": "offset", "offset_across": 40.0},
        ),
    )
    add(
        "padstone-offset-text",
        change("padstone", **narrow, position_across="offset", offset_across="left"),
    )
    # Distances and offsets.
    add("a1-negative", change("wall", a1=-10.0))
    add("a2-text", change("wall", a2="far"))
    add("a1-too-far", change("wall", a1=150_000.0))
    add("offset-along-large", change("beam", offset_along=2500.0))
    add("offset-across-text", change("beam", offset_across="left"))
    # Masonry values.
    add("gamma-m", change("masonry", gamma_M=0.5))
    add("fk-out-of-range", change("masonry", f_k=50.0))
    add("fk-text", change("masonry", f_k="4"))
    add("unit-strength-missing", change("masonry", unit_strength=None))
    add("unit-strength-out-of-range", change("masonry", unit_strength=0.5))
    size = {"unit_strength_is_normalised": False}
    add("unit-size-missing", change("masonry", **size))
    add("unit-height-metres", change("masonry", **size, unit_height=0.065, unit_width=100.0))
    add("unit-width-too-large", change("masonry", **size, unit_height=65.0, unit_width=1200.0))
    add("e-mk-negative", change("top", e_mk=-1.0))
    add("phi-m-zero", change("top", phi_m=0.0))
    add("phi-m-above-one", change("top", phi_m=1.5))
    add("beta-s-above-one", change("top", beta_s=2.0))
    # Geometry.
    add("padstone-wider-than-wall", change("padstone", width=230.0))
    add(
        "padstone-wider-than-thin-wall",
        _bearing(wall={"thickness": 102.5}, padstone={"width": 110.0}),
    )
    add("bearing-longer-than-padstone", change("beam", bearing_length=220.0))
    add(
        "in-line-bearing-longer-than-padstone",
        _bearing(
            beam={"orientation": IN_LINE, "bearing_length": 350.0}, padstone={"length": 300.0}
        ),
    )
    add(
        "flange-wider-than-padstone",
        _bearing(beam={"flange_width": 254.0}, padstone={"length": 215.0}),
    )
    add("offset-along-off-padstone", change("beam", offset_along=160.0))
    add(
        "offset-along-off-long-padstone",
        _bearing(beam={"flange_width": 30.75, "offset_along": 1500.0}, padstone={"length": 3000.0}),
    )
    add("offset-across-off-padstone", change("beam", offset_across=40.0))
    add(
        "offset-across-off-wall",
        _bearing(padstone=None, beam={"bearing_length": 100.0, "offset_across": 80.0}),
    )
    add(
        "in-line-flange-wider-than-wall",
        _bearing(padstone=None, beam={"orientation": IN_LINE, "flange_width": 254.0}),
    )
    add("bearing-longer-than-wall", _bearing(padstone=None, beam={"bearing_length": 250.0}))
    # BS 5628-1 Table 2(a) does not cover these.
    add("bs-thin-layer", change("masonry", **_BRICK | {"mortar": "thin-layer"}), bs)
    add("bs-normalised", change("masonry", unit_strength_is_normalised=True), bs)
    add("bs-block-height", change("masonry", **_BRICK | {"unit_height": 215.0}), bs)
    add("bs-unit-strength-low", change("masonry", **_BRICK | {"unit_strength": 3.0}), bs)
    add("bs-unit-strength-high", change("masonry", **_BRICK | {"unit_strength": 120.0}), bs)
    add(
        "bs-no-control-factor",
        change("masonry", **_BRICK),
        bs5628(gamma_m_bs={"special|special": 2.5}).to_dict(),
    )
    # Only a formula refuses these: input_errors finds nothing, check_bearing raises.
    add("unit-too-short-for-delta", change("masonry", **size, unit_height=35.0, unit_width=100.0))
    add("unit-too-narrow-for-delta", change("masonry", **size, unit_height=65.0, unit_width=40.0))
    add("unit-in-blank-cell", change("masonry", **size, unit_height=42.5, unit_width=150.0))
    add("fb-above-limit-tie", change("masonry", unit_strength=80.25))
    add(
        "fb-above-limit",
        change("masonry", **size, unit_strength=60.0, unit_height=215.0, unit_width=100.0),
    )
    add("no-k-thin-layer-clay-4", change("masonry", material="clay", group=4, mortar="thin-layer"))
    add("no-k-aac-group-2", change("masonry", material="autoclaved aerated concrete", group=2))
    add("no-k-stone-group-3", change("masonry", material="manufactured stone", group=3))
    add(
        "no-creep-values-for-the-unit",
        _bearing(
            wall={"thickness": 100.0}, padstone={"width": 100.0}, beam={"bearing_length": 90.0}
        ),
        ec6_uk_na(creep_lambda_c={"clay": 27.0}).to_dict(),
    )
    add(
        "no-gamma-for-class",
        change("masonry", execution_class=1),
        ec6_uk_na(gamma_M_ec6={"2|I": 2.7, "2|II": 3.0}).to_dict(),
    )
    # Several at once, in the form's order.
    many = _bearing(
        reaction=0.0,
        beam={"flange_width": 0.2, "orientation": "diagonal", "offset_along": 9999.0},
        wall={"a1": -1.0, "thickness": "wide"},
        masonry={"group": 7, "mortar": "lime", "gamma_M": 9.0},
        padstone={"concrete": "B25"},
        bearing_type=0,
        phi_m=2.0,
    )
    add("many-at-once", many)
    add("many-at-once-bs", many, bs)
    # A refused basis.
    out.append(("basis-unknown-value", {**ec6, "colour": "red"}, _full(_bearing())))
    out.append(("basis-unknown-name", {**ec6, "name": "BS 8110"}, _full(_bearing())))
    out.append(("basis-unknown-among-known", {"k_E": 900.0, "beta": 1.0}, _full(_bearing())))
    # Values of a known basis that make no physical sense, each refused by name.
    for name, changes in (
        ("gamma-c-zero", {"gamma_c": 0.0}),
        ("alpha-cc-text", {"alpha_cc": "0.85"}),
        ("k-e-infinite", {"k_E": float("inf")}),
        ("slenderness-limit-true", {"slenderness_limit": True}),
        ("spreader-flag-text", {"spreader_route_for_groups_2_to_4": "yes"}),
        ("k-value-too-large", {"k_values": {**ec6["k_values"], "clay|1|general": 5.0}}),
        ("gamma-m-true", {"gamma_M_ec6": {**ec6["gamma_M_ec6"], "2|I": True}}),
        ("bearing-type-factors-two", {"bearing_type_factors": [1.25, 1.5]}),
        ("bearing-type-factor-zero", {"bearing_type_factors": [1.25, 0.0, 2.0]}),
        ("alpha-cc-pl-zero", {"alpha_cc_pl": 0.0}),
        ("plain-enhancement-text", {"plain_partial_area_enhancement": "no"}),
    ):
        out.append((f"basis-{name}", {**ec6, **changes}, _full(_bearing())))
    # Whole-number choices given as true, and an eccentricity the wall cannot carry.
    add("group-true", change("masonry", group=True))
    add("execution-class-true", change("masonry", execution_class=True))
    add("bearing-type-true", change("top", bearing_type=True))
    add("e-mk-infinite", change("top", e_mk=float("inf")))
    add("e-mk-half-the-wall", change("top", e_mk=107.5))
    return out


def main(argv: list[str] | None = None) -> int:
    """``python -m devtools.vectors --out FILE`` writes the vectors; ``--check FILE`` exits 1
    when the file differs from what the core makes now (and says where)."""
    parser = argparse.ArgumentParser(
        prog="python -m devtools.vectors",
        description="Write or compare the shared test vectors of the browser's mirror.",
    )
    what = parser.add_mutually_exclusive_group(required=True)
    what.add_argument("--out", type=Path, help="write the vectors to this file")
    what.add_argument(
        "--check", type=Path, help="exit 1 if this file differs from freshly made vectors"
    )
    args = parser.parse_args(argv)
    if args.out is not None:
        text = write(args.out)
        size = args.out.stat().st_size
        print(
            f"Vectors written to {args.out} ({len(text) / 1e6:.1f} MB of JSON, {size / 1e6:.2f} MB on disk)"
        )
        return 0
    try:
        kept = json.loads(read_text(args.check))
    except (OSError, EOFError, UnicodeDecodeError, ValueError) as e:
        print(f"devtools.vectors: cannot read {args.check}: {e}", file=sys.stderr)
        return 2
    found = differences(kept, json.loads(dumps(build_vectors())))
    if not found:
        print(f"{args.check} is up to date")
        return 0
    print(f"{args.check} differs from the vectors the core makes now:")
    for line in found:
        print(f"  {line}")
    print(f"Rewrite it with: {REWRITE} {args.check}")
    return 1


if __name__ == "__main__":
    sys.exit(main())
