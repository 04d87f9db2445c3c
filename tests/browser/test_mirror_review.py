"""The phone's mirror of the as-built merge, the review and the remedy, held equal to the
Python core: every review and remedy case of the shared vectors is run in the browser
through static/js/bearing/ (record.js's recheckRecord, remedy.js's remedy) and what comes
back must match what the Python core wrote into the vectors, every figure within a relative
1e-9 and every word exactly (tests/kit/mirror_compare.py).

The cases come from the committed file, so the phone is held to what the server gives.
"""

from __future__ import annotations

import pytest

from kit.mirror_compare import differences, load_shared_vectors
from sitecheck.bearing.review import settings_from_dict

SHOWN = 20  # differences printed on a failure
BATCH = 40  # cases sent to the page at a time: a few MB a call at most

RUN_REVIEW = """
async (cases) => {
  const { recheckRecord } = await import("/static/js/bearing/record.js");
  return cases.map((c) => {
    try {
      return recheckRecord(c.design, c.measurements, c.checklist, c.basis, c.settings, c.why ?? null);
    } catch (error) {
      return { crashed: `${error.name}: ${error.message}\\n${error.stack}` };
    }
  });
}
"""

RUN_REMEDY = """
async (cases) => {
  const { remedy } = await import("/static/js/bearing/remedy.js");
  const { basisFromDict } = await import("/static/js/bearing/basis.js");
  return cases.map((c) => {
    const o = c.options || {};
    try {
      return remedy(c.input, basisFromDict(c.basis), o.sizes, o.classes, o.step);
    } catch (error) {
      return { crashed: `${error.name}: ${error.message}\\n${error.stack}` };
    }
  });
}
"""


@pytest.fixture(scope="module")
def vectors() -> dict:
    return load_shared_vectors()


def _run(page, script: str, cases: list[dict]) -> list:
    page.goto("/login")
    out = []
    for start in range(0, len(cases), BATCH):
        out.extend(page.evaluate(script, cases[start : start + BATCH]))
    return out


def _report(cases: list[dict], actual: list) -> list[str]:
    lines = []
    for case, got in zip(cases, actual, strict=True):
        if isinstance(got, dict) and "crashed" in got:
            lines.append(f"{case['id']}: the mirror threw {got['crashed']}")
            continue
        lines.extend(f"{case['id']}: {d}" for d in differences(case["expect"], got))
    return lines


def _assert_equal(kind: str, cases: list[dict], actual: list) -> None:
    lines = _report(cases, actual)
    failed = len({line.split(": ", 1)[0] for line in lines})
    shown = "\n".join(lines[:SHOWN])
    assert not lines, (
        f"{failed} of {len(cases)} {kind} cases differ from Python "
        f"({len(lines)} differences; the first {min(SHOWN, len(lines))}):\n{shown}"
    )


def test_every_review_case_gives_what_the_server_gives(page, vectors):
    cases = vectors["review"]
    assert len(cases) >= 150
    actual = _run(page, RUN_REVIEW, cases)
    assert len(actual) == len(cases)
    _assert_equal("review", cases, actual)
    # The comparison saw real reasons and real refusals, not a page of empty answers.
    assert sum(len(a["reasons"]) for a in actual) >= len(cases)
    assert any(a["error"] is not None for a in actual)


def test_every_remedy_case_gives_what_the_server_gives(page, vectors):
    cases = vectors["remedy"]
    assert len(cases) >= 30
    actual = _run(page, RUN_REMEDY, cases)
    assert len(actual) == len(cases)
    _assert_equal("remedy", cases, actual)
    assert any(a["padstone"] is not None for a in actual)
    assert any(a["padstone"] is None and a["bearing_length"] is None for a in actual)


READ_SETTINGS = """
async (settings) => {
  const { settingsFromDict } = await import("/static/js/bearing/serial.js");
  const { InputError } = await import("/static/js/bearing/errors.js");
  return settings.map((s) => {
    try {
      return { settings: settingsFromDict(s) };
    } catch (error) {
      return error instanceof InputError ? { error: error.asDict() } : { threw: String(error) };
    }
  });
}
"""


def test_settings_are_read_as_python_reads_them(page):
    # Numbers written as text are read as Python's float() reads them.
    readable = [{"threshold": " 0.75 ", "max_packing": "1_2.5", "tol_position": True}, {}]
    page.goto("/login")
    got = page.evaluate(READ_SETTINGS, readable)
    for settings, answer in zip(readable, got, strict=True):
        assert differences(settings_from_dict(settings).as_dict(), answer["settings"]) == []
    assert got[0]["settings"]["max_packing"] == 12.5


def test_a_setting_python_cannot_read_is_refused_on_the_phone_naming_it(page):
    unreadable = ["a lot", None, [0.5]]
    for value in unreadable:
        # Python's float() refuses these too, but with no field named.
        with pytest.raises((TypeError, ValueError)):
            settings_from_dict({"threshold": value})
    page.goto("/login")
    got = page.evaluate(READ_SETTINGS, [{"threshold": v} for v in unreadable])
    assert got == [
        {
            "error": {
                "field": "review.threshold",
                "value": v,
                "expected": "a number",
                "code": "not-a-number",
            }
        }
        for v in unreadable
    ]
