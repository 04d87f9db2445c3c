"""Inputs to plain dicts and back, for storage and the JSON API (still N, mm, N/mm²).

``from_dict`` functions refuse unknown keys and wrong types with an :class:`InputError`
naming the field, so a stored or sent input can never quietly change shape.
"""

from __future__ import annotations

from dataclasses import asdict, fields
from typing import TYPE_CHECKING, Any, TypeVar

from .errors import InputError
from .inputs import Beam, BearingInput, Load, Masonry, Padstone, Wall
from .review import Checklist, Measurements, as_built_input

if TYPE_CHECKING:
    from _typeshed import DataclassInstance

# What _build makes: an input class, a Measurements or a Checklist.
_Built = TypeVar("_Built", bound="DataclassInstance")

_PARTS: dict[str, type[DataclassInstance]] = {
    "load": Load,
    "beam": Beam,
    "wall": Wall,
    "masonry": Masonry,
    "padstone": Padstone,
}
# Inputs this version no longer has, still found in designs stored before it (and in site
# packs on phones): read and dropped, as nothing is computed from them. ``precast`` was
# carried but used by no check; a padstone is now plain unless ``reinforced``.
_RETIRED = {"padstone": ("precast",)}
_TOP_LEVEL = ("bearing_type", "e_mk", "phi_m", "beta_s")


def input_to_dict(inp: BearingInput) -> dict[str, Any]:
    return asdict(inp)


def input_from_dict(data: dict[str, Any]) -> BearingInput:
    if not isinstance(data, dict):
        raise InputError("design", data, "an object with load, beam, wall and masonry", "bad-shape")
    unknown = set(data) - set(_PARTS) - set(_TOP_LEVEL)
    if unknown:
        name = sorted(unknown)[0]
        raise InputError(name, data[name], "a known part of a bearing input", "unknown-field")
    # Each value's type is checked as it is read; BearingInput takes them as they come.
    parts: dict[str, Any] = {}
    for name, cls in _PARTS.items():
        value = data.get(name)
        if value is None:
            if name == "padstone":
                parts[name] = None
                continue
            raise InputError(name, None, f"the {name} of the bearing", "missing")
        if isinstance(value, dict) and name in _RETIRED:
            value = {k: v for k, v in value.items() if k not in _RETIRED[name]}
        parts[name] = _build(cls, value, name)
    top: dict[str, Any] = {}
    for name in _TOP_LEVEL:
        if data.get(name) is not None:
            top[name] = _typed(name, data[name], int if name == "bearing_type" else float)
    return BearingInput(**parts, **top)


def measurements_from_dict(data: dict[str, Any] | None) -> Measurements:
    return _build(Measurements, data or {}, "measurements")


def as_built_input_dict(
    design_input: dict[str, Any], measurements: dict[str, Any] | None
) -> dict[str, Any]:
    """A stored design input with a stored record's measured values put in, as a stored
    input again (what the drawings of a record are made from)."""
    built = as_built_input(input_from_dict(design_input), measurements_from_dict(measurements))
    return input_to_dict(built)


def checklist_from_dict(data: dict[str, Any] | None) -> Checklist:
    return _build(Checklist, data or {}, "checklist")


def _build(cls: type[_Built], data: object, prefix: str) -> _Built:
    if not isinstance(data, dict):
        raise InputError(prefix, data, "an object of named values", "bad-shape")
    known = {f.name: f for f in fields(cls)}
    unknown = set(data) - set(known)
    if unknown:
        name = sorted(unknown)[0]
        raise InputError(f"{prefix}.{name}", data[name], f"a known {prefix} value", "unknown-field")
    values: dict[str, object] = {}
    for name, value in data.items():
        if value is None:
            values[name] = None
            continue
        kind = _KINDS.get(name, float)
        values[name] = _typed(f"{prefix}.{name}", value, kind)
    try:
        return cls(**values)
    except TypeError as e:  # a required value left out
        raise InputError(
            prefix, data, f"every required value of the {prefix}: {e}", "missing"
        ) from None


# Field → type, where not a float.
_KINDS: dict[str, type] = {
    "orientation": str,
    "member": str,
    "reaction_at": str,
    "concrete": str,
    "material": str,
    "conditioning": str,
    "mortar": str,
    "unit_category": str,
    "manufacturing_control": str,
    "construction_control": str,
    "padstone_concrete": str,
    "masonry_material": str,
    "group": int,
    "execution_class": int,
    "masonry_group": int,
    "bearing_type": int,
    "reinforced": bool,
    "position_across": str,
    "padstone_position": str,
    "padstone_reinforced": bool,
    "unit_strength_is_normalised": bool,
    "shell_bedded": bool,
    "collar_joint": bool,
    "padstone_present": bool,
    "bedded": bool,
    "cracks": bool,
    "cut_units": bool,
    "level": bool,
}


def _typed(field: str, value: object, kind: type) -> object:
    if kind is bool:
        if isinstance(value, bool):
            return value
        raise InputError(field, value, "true or false", "not-a-choice")
    if kind is str:
        if isinstance(value, str):
            return value
        raise InputError(field, value, "text", "not-text")
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(field, value, "a number", "not-a-number")
    if kind is int:
        if value != int(value):
            raise InputError(field, value, "a whole number", "not-whole")
        return int(value)
    return float(value)
