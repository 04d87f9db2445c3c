"""The phone's number reader (static/js/bearing/typed.js) held to the server's
(sitecheck/bearing/typed.py) in a real browser: every shared case of
tests/vectors/typed-numbers.json, then a few thousand seeded texts made of the characters
where readers differ, each compared with what Python makes of it."""

from __future__ import annotations

import json
import random
from pathlib import Path

from sitecheck.bearing.typed import NumberRefused, read_number

CASES = json.loads(
    (Path(__file__).parent.parent / "vectors" / "typed-numbers.json").read_text(encoding="utf-8")
)["cases"]
OPTIONS = ("unit", "least", "greatest", "example", "shift")

READ_ALL = """
async (cases) => {
  const { NumberRefused, readNumber } = await import("/static/js/bearing/typed.js");
  const options = ["unit", "least", "greatest", "example", "shift"];
  return cases.map((c) => {
    const given = Object.fromEntries(options.filter((k) => k in c).map((k) => [k, c[k]]));
    try {
      return { reads: readNumber(c.typed, given) };
    } catch (error) {
      if (error instanceof NumberRefused) return { refused: error.asDict(c.label ?? null) };
      return { crashed: `${error.name}: ${error.message}` };
    }
  });
}
"""


def python_outcome(case: dict) -> dict:
    options = {k: case[k] for k in OPTIONS if k in case}
    try:
        return {"reads": read_number(case["typed"], **options)}
    except NumberRefused as e:
        return {"refused": e.as_dict(case.get("label"))}


def _differences(cases, got, want) -> list[str]:
    return [
        f"{c['typed']!r} ({c.get('rule', c.get('unit'))}): phone {g}, expected {w}"
        for c, g, w in zip(cases, got, want, strict=True)
        if g != w
    ]


def test_every_shared_case_reads_the_same_on_the_phone(page):
    page.goto("/login")  # any page of the app: the module loads from its origin
    got = page.evaluate(READ_ALL, CASES)
    want = [{k: c[k] for k in ("reads", "refused") if k in c} for c in CASES]
    wrong = _differences(CASES, got, want)
    assert not wrong, "\n".join(wrong[:20])


# Pieces people type, and the characters where one reader could part from the other.
PIECES = [
    *"0123456789" * 2,
    *".,,-+eE_١５²°xO/",
    *" \u00a0\u2003\ufeff\t",
    *["mm", "m", "kN", "N/mm²", "MPa", "nan", "inf", "12,5", "1,234", "1,234.5", ".5"],
]


def _seeded_texts(count: int) -> list[str]:
    rng = random.Random(16)
    return ["".join(rng.choice(PIECES) for _ in range(rng.randint(0, 7))) for _ in range(count)]


def test_seeded_texts_read_the_same_on_the_phone_as_on_the_server(page):
    rng = random.Random(61)
    units = [("mm", None, None), ("kN", -1e6, 1e6), ("", None, None), ("N/mm²", 0, 200)]
    cases = []
    for text in _seeded_texts(3000):
        unit, least, greatest = rng.choice(units)
        case = {"typed": text, "unit": unit, "label": "Field"}
        if least is not None:
            case |= {"least": least, "greatest": greatest}
        if rng.random() < 0.2:
            case["shift"] = 3
        cases.append(case)
    page.goto("/login")
    got = page.evaluate(READ_ALL, cases)
    want = [python_outcome(c) for c in cases]
    wrong = _differences(cases, got, want)
    assert not wrong, f"{len(wrong)} of {len(cases)} differ:\n" + "\n".join(wrong[:20])
    # The texts reach every kind of outcome, so agreeing means something.
    kinds = {w["refused"]["code"] if "refused" in w else "reads" for w in want}
    assert {"reads", "decimal-comma", "unit", "space", "digits", "not-a-number"} <= kinds
