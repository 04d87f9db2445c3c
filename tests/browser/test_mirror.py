"""The phone's mirror of the calculation core, held equal to Python in a real browser: every
``check`` and ``errors`` case of the shared vectors runs through static/js/bearing/ and what
comes back must match what the Python core wrote, every figure within a relative 1e-9 and
every word exactly (tests/kit/mirror_compare.py).

The cases come from the committed file (tests/test_vectors.py keeps it equal to the core),
so the phone is held to what the server gives.
"""

from __future__ import annotations

import random
import struct

import pytest

from kit.mirror_compare import differences, load_shared_vectors
from sitecheck.bearing.format import number, quantity, utilisation

SHOWN = 20  # differences printed on a failure
BATCH = 40  # cases per page.evaluate: about half a megabyte each way

RUN_CHECKS = """
async (cases) => {
  const { checkBearing, basisFromDict } = await import("/static/js/bearing/index.js");
  return cases.map((c) => {
    try {
      return checkBearing(c.input, basisFromDict(c.basis));
    } catch (error) {
      return { crashed: `${error.name}: ${error.message}\\n${error.stack}` };
    }
  });
}
"""

# What a form sees for a refused input: every problem (inputErrors), and the one error the
# re-check throws. A refused basis throws from basisFromDict, before either.
RUN_ERRORS = """
async (cases) => {
  const { InputError, basisFromDict, checkBearing, inputErrors } = await import(
    "/static/js/bearing/index.js"
  );
  const described = (error) =>
    error instanceof InputError
      ? error.asDict()
      : { crashed: `${error.name}: ${error.message}\\n${error.stack}` };
  return cases.map((c) => {
    let basis;
    try {
      basis = basisFromDict(c.basis);
    } catch (error) {
      return { expect: [described(error)], raises: described(error) };
    }
    let expect;
    try {
      expect = inputErrors(c.input, basis);
    } catch (error) {
      expect = [described(error)];
    }
    try {
      checkBearing(c.input, basis);
      return { expect, raises: null };
    } catch (error) {
      return { expect, raises: described(error) };
    }
  });
}
"""


@pytest.fixture(scope="module")
def vectors() -> dict:
    return load_shared_vectors()


def _run(page, script: str, cases: list[dict]) -> list:
    page.goto("/login")  # any page of the app: the modules load from its origin
    out = []
    for start in range(0, len(cases), BATCH):
        out.extend(page.evaluate(script, cases[start : start + BATCH]))
    return out


def _report(cases: list[dict], expected: list, actual: list) -> list[str]:
    lines = []
    for case, want, got in zip(cases, expected, actual, strict=True):
        if isinstance(got, dict) and "crashed" in got:
            lines.append(f"{case['id']}: the mirror threw {got['crashed']}")
            continue
        lines.extend(f"{case['id']}: {d}" for d in differences(want, got))
    return lines


def _fail_with(lines: list[str], total: int, what: str) -> None:
    shown = "\n".join(lines[:SHOWN])
    more = f"\n… and {len(lines) - SHOWN} more" if len(lines) > SHOWN else ""
    pytest.fail(f"{len(lines)} differences over {total} {what} cases:\n{shown}{more}")


def test_every_check_case_gives_the_same_result_in_the_browser(page, vectors):
    cases = vectors["check"]
    assert cases, "no check cases in the vectors"
    actual = _run(page, RUN_CHECKS, cases)
    lines = _report(cases, [c["expect"] for c in cases], actual)
    if lines:
        _fail_with(lines, len(cases), "check")


def test_every_error_case_gives_the_same_errors_in_the_browser(page, vectors):
    cases = vectors["errors"]
    assert cases, "no error cases in the vectors"
    actual = _run(page, RUN_ERRORS, cases)
    expected = [{"expect": c["expect"], "raises": c["raises"]} for c in cases]
    lines = _report(cases, expected, actual)
    if lines:
        _fail_with(lines, len(cases), "error")


def _awkward_numbers() -> list[float]:
    """Exact binary ties at the 6th significant figure and the 1st decimal (Python rounds
    them to even, JavaScript's toPrecision and toFixed away from zero), whole numbers
    across the switch to exponents, tiny and huge values, and random doubles."""
    rng = random.Random(11)
    values = [0.0, -0.0, 0.25, 2.5, -2.5, 80.25, 1000.125, 1484.625, 2015.625, 12.40625]
    values += [100000.5, 999999.5, 1e6, 1234565.0, 0.0001, 0.00001234565, 5e-324, 1e300]
    # Ties at four significant figures, and carries into the next power of ten.
    values += [2062.5, 2.0625, 1234.5, 1235.5, 9.9995, 9.99951, 99995.0, 0.99995, 1e20]
    for _ in range(300):
        values.append(rng.randint(-(10**9), 10**9) / 2 ** rng.randint(0, 14))
        values.append(rng.uniform(-5000.0, 5000.0))
        bits = struct.unpack("<d", struct.pack("<Q", rng.getrandbits(63)))[0]
        if bits == bits and abs(bits) != float("inf"):
            values.append(bits)
    return values


def test_numbers_are_written_as_python_writes_them(page):
    values = _awkward_numbers()
    page.goto("/login")
    got = page.evaluate(
        """async (values) => {
          const { formatG, formatFixed, number, quantity, utilisationText } = await import(
            "/static/js/bearing/format.js"
          );
          return values.map((v) => [
            formatG(v), formatFixed(v, 1), formatFixed(v, 3),
            number(v), number(v, true), quantity(v, "N"), quantity(v, "mm²"), utilisationText(v),
          ]);
        }""",
        values,
    )
    wrong = [
        f"{v!r}: expected {want}, got {have}"
        for v, have in zip(values, got, strict=True)
        for want in [
            [
                format(v, "g"),
                format(v, ".1f"),
                format(v, ".3f"),
                number(v),
                number(v, plus=True),
                quantity(v, "N"),
                quantity(v, "mm²"),
                utilisation(v),
            ]
        ]
        if have != want
    ]
    assert not wrong, "\n".join(wrong[:SHOWN])
