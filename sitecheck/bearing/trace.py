"""What a re-check returns: checks made of steps, each step with its clause.

Steps are named tuples rather than dataclasses: a bearing makes dozens of them and the
benchmark asks for ten thousand bearings a second. Formatting waits until something is
shown, so a step holds numbers, not text.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, NamedTuple

# What as_dict gives: plain JSON values (numbers, text, lists, nested dicts).
JsonDict = dict[str, Any]
# One value a step was worked out from: (symbol, value, unit); the value may be a
# class or a choice in words, or None where the input was left out.
StepInput = tuple[str, float | str | None, str]

STRENGTH = "strength"
RULE = "rule"
INFORMATIVE = "informative"

# Utilisation is compared with 1.0 after rounding noise is taken off, so a bearing
# designed exactly to its limit passes (pass means utilisation ≤ 1.0).
PASS_LIMIT = 1.0 + 1e-9


class Step(NamedTuple):
    label: str
    symbol: str
    formula: str
    inputs: tuple[StepInput, ...]
    value: float
    unit: str
    clause: str
    source: str  # S, P, M, CP or ours

    def as_dict(self) -> JsonDict:
        return {
            "label": self.label,
            "symbol": self.symbol,
            "formula": self.formula,
            "inputs": [list(i) for i in self.inputs],
            "value": self.value,
            "unit": self.unit,
            "clause": self.clause,
            "source": self.source,
        }


@dataclass(frozen=True, slots=True)
class Check:
    """One check: demand against capacity. ``demand`` is what is needed and ``capacity``
    what is provided, so ``utilisation = demand / capacity`` and passing is ≤ 1.0."""

    code: str
    title: str
    kind: str
    demand: float
    capacity: float
    unit: str
    utilisation: float
    passed: bool
    clause: str
    source: str
    steps: tuple[Step, ...]
    notes: tuple[str, ...] = ()

    def as_dict(self) -> JsonDict:
        return {
            "code": self.code,
            "title": self.title,
            "kind": self.kind,
            "demand": self.demand,
            "capacity": self.capacity,
            "unit": self.unit,
            "utilisation": finite_or_none(self.utilisation),
            "passed": self.passed,
            "clause": self.clause,
            "source": self.source,
            "steps": [s.as_dict() for s in self.steps],
            "notes": list(self.notes),
        }


_new_tuple = tuple.__new__


def make_step(
    label: str,
    symbol: str,
    formula: str,
    inputs: tuple[StepInput, ...],
    value: float,
    unit: str,
    clause: str,
    source: str,
) -> Step:
    """A :class:`Step`, the same as ``Step(...)`` but built directly: calling a named tuple
    class goes through its Python-level ``__new__``, which costs half as much again, and
    the checks make dozens of steps per bearing."""
    return _new_tuple(Step, (label, symbol, formula, inputs, value, unit, clause, source))


def given_step(
    label: str, symbol: str, value: float, unit: str, clause: str, source: str = "ours"
) -> Step:
    """A value the engineer gave in place of the one the method works out: a step with no
    formula and no inputs, labelled "…, as given"."""
    return make_step(f"{label}, as given", symbol, "declared", (), value, unit, clause, source)


def finite_or_none(x: float) -> float | None:
    """JSON has no infinity: an unbounded utilisation travels as null."""
    return x if math.isfinite(x) else None


def make_check(
    code: str,
    title: str,
    kind: str,
    demand: float,
    capacity: float,
    unit: str,
    clause: str,
    source: str,
    steps: list[Step] | tuple[Step, ...],
    notes: list[str] | tuple[str, ...] = (),
) -> Check:
    # No capacity at all (e.g. no solid material under a load on hollow units) is an
    # unbounded utilisation; serialisers write it as null.
    utilisation = demand / capacity if capacity > 0 else math.inf
    return Check(
        code,
        title,
        kind,
        demand,
        capacity,
        unit,
        utilisation,
        utilisation <= PASS_LIMIT,
        clause,
        source,
        tuple(steps),
        tuple(notes),
    )


@dataclass(frozen=True, slots=True)
class Spread:
    """How the load reaches the masonry: what the drawings and the record show.

    Along-wall coordinates are in the support's frame (x = 0 at the a1 end); across-wall
    ones from the wall's near face.
    """

    support_length: float
    support_width: float
    support_depth: float
    support_y0: float
    footprint_x0: float
    footprint_x1: float
    footprint_y0: float
    footprint_y1: float
    reaction_x: float
    reaction_y: float
    window_x0: float
    window_x1: float
    window_y0: float
    window_y1: float
    rigid: bool
    distribution: str  # uniform, trapezoid or triangle
    eccentricity: float
    sigma_max: float
    sigma_min: float
    contact_x0: float
    contact_x1: float
    a1_eff: float | None
    a2_eff: float | None
    eccentricity_across: float
    masonry_spread_deg: float
    spread_depth: float  # depth below the bearing where the spread length is checked
    spread_length: float  # l_efm (EC6) or the 45° dispersed length (BS 5628)
    # The loaded length that spread starts from, on the reading that governs the wall's
    # check below (a1_eff and a2_eff are from its ends), and that reading's name ("" where
    # the whole window is in contact, so there is only one).
    spread_x0: float
    spread_x1: float
    spread_reading: str

    def as_dict(self) -> JsonDict:
        return {name: getattr(self, name) for name in self.__slots__}


@dataclass(frozen=True, slots=True)
class Strengths:
    f_k: float
    gamma_M: float
    f_d: float
    f_cd: float | None
    steps: tuple[Step, ...]

    def as_dict(self) -> JsonDict:
        return {
            "f_k": self.f_k,
            "gamma_M": self.gamma_M,
            "f_d": self.f_d,
            "f_cd": self.f_cd,
            "steps": [s.as_dict() for s in self.steps],
        }


@dataclass(frozen=True, slots=True)
class BearingResult:
    basis: str
    checks: tuple[Check, ...]
    governing: str
    utilisation: float
    passed: bool
    strengths: Strengths
    spread: Spread
    notes: tuple[str, ...]

    def check(self, code: str) -> Check | None:
        for c in self.checks:
            if c.code == code:
                return c
        return None

    @property
    def governing_check(self) -> Check:
        found = self.check(self.governing)
        assert found is not None
        return found

    def as_dict(self) -> JsonDict:
        return {
            "basis": self.basis,
            "governing": self.governing,
            "utilisation": finite_or_none(self.utilisation),
            "passed": self.passed,
            "checks": [c.as_dict() for c in self.checks],
            "strengths": self.strengths.as_dict(),
            "spread": self.spread.as_dict(),
            "notes": list(self.notes),
        }
