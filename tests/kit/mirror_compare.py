"""Compare what the browser's mirror of the core returned with what the Python core wrote
into the shared vectors: every figure within a relative tolerance, everything else equal.

Used by the browser tests that hold the two engines equal; kept apart from them so the
rule for "equal" is written once.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from devtools.vectors import DEFAULT_PATH, REWRITE, read_text

VECTORS = Path(__file__).resolve().parents[2] / DEFAULT_PATH

RELATIVE = 1e-9
# Below this, two figures are both rounding noise around zero (a stress of 1e-13 N/mm²
# against 0.0): a relative test would call them different.
ABSOLUTE_NEAR_ZERO = 1e-12


def figures_agree(expected: float, actual: float, rel: float = RELATIVE) -> bool:
    if expected == actual:
        return True
    if math.isnan(expected) or math.isnan(actual):
        return math.isnan(expected) and math.isnan(actual)
    if math.isinf(expected) or math.isinf(actual):
        return False
    scale = max(abs(expected), abs(actual))
    return abs(expected - actual) <= max(rel * scale, ABSOLUTE_NEAR_ZERO)


def differences(expected, actual, path: str = "$", rel: float = RELATIVE) -> list[str]:
    """Every place where ``actual`` differs from ``expected``, as readable lines naming the
    JSON path. Booleans are not numbers here (True is not 1), ints and floats are both
    figures, lists must match item by item and dicts key by key."""
    out: list[str] = []
    _walk(expected, actual, path, rel, out)
    return out


def _is_figure(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _walk(expected, actual, path, rel, out):
    if _is_figure(expected) and _is_figure(actual):
        if not figures_agree(float(expected), float(actual), rel):
            out.append(f"{path}: expected {expected!r}, got {actual!r}")
        return
    if isinstance(expected, dict) and isinstance(actual, dict):
        for key in expected.keys() - actual.keys():
            out.append(f"{path}.{key}: missing (expected {expected[key]!r})")
        for key in actual.keys() - expected.keys():
            out.append(f"{path}.{key}: not expected (got {actual[key]!r})")
        for key in expected.keys() & actual.keys():
            _walk(expected[key], actual[key], f"{path}.{key}", rel, out)
        return
    if isinstance(expected, list | tuple) and isinstance(actual, list | tuple):
        if len(expected) != len(actual):
            out.append(f"{path}: expected {len(expected)} items, got {len(actual)}")
        for i, (e, a) in enumerate(zip(expected, actual, strict=False)):
            _walk(e, a, f"{path}[{i}]", rel, out)
        return
    if type(expected) is not type(actual) or expected != actual:
        out.append(f"{path}: expected {expected!r}, got {actual!r}")


def load_shared_vectors() -> dict:
    """The committed vectors (test_vectors.py holds them equal to what the core makes now).

    They may hold Infinity (an unbounded utilisation in a review reason's values): Python's
    json reads it, and Playwright carries it to the page as a number."""
    if not VECTORS.exists():
        pytest.fail(f"{VECTORS} is missing: write it with `{REWRITE} {DEFAULT_PATH}`")
    return json.loads(read_text(VECTORS))
