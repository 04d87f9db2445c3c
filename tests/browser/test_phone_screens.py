"""Every screen the inspector and the contractor use, on a 360 x 740 phone screen:

- every link, button and choice is at least 44 x 44 CSS px (header links included);
- axe-core, run inside the page, finds nothing serious or critical;
- nothing is wider than the screen: no table cuts a column off, no sideways scrolling;
- a screenshot of each lands in test-results/ to be looked at.

And on the as-built form, the sticky verdict bar (the header scrolls away on a phone) takes
at most 15 % of the screen, and every symbol of the calculation stands beside plain words.
axe-core is vendored under tests/vendor/ with its licence.
"""

from __future__ import annotations

import re
import sqlite3
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from kit.mirror_compare import load_shared_vectors
from kit.phone import keep_site, log_in, open_record_form
from sitecheck.demo import BRICK_WING_NAME, SITE_NAME
from sitecheck.web.record_form import CORE_PATHS, SPECS

AXE = (Path(__file__).resolve().parents[1] / "vendor" / "axe-core-4.14.1" / "axe.min.js").read_text(
    encoding="utf-8"
)
PHONE = {"width": 360, "height": 740}
TAP_MIN = 44

# Every control a finger may need, with the box a finger hits: a radio or tick box is
# hit through its label.
TAP_TARGETS = """() => {
  const out = [];
  const seen = new Set();
  const controls = "a[href], button, input:not([type=hidden]), select, textarea, summary";
  for (const el of document.querySelectorAll(controls)) {
    if (el.closest("[hidden], [inert]")) continue;
    const target = el.matches("input[type=radio], input[type=checkbox]")
      ? (el.closest("label") || el) : el;
    if (seen.has(target)) continue;
    seen.add(target);
    const r = target.getBoundingClientRect();
    const style = getComputedStyle(target);
    if (!r.width || !r.height || style.visibility === "hidden") continue;  // not on screen
    if (r.width < 43.5 || r.height < 43.5) {
      out.push(`${target.tagName.toLowerCase()} "${(target.innerText || target.value || target.name || "").trim().slice(0, 40)}" ${Math.round(r.width)}x${Math.round(r.height)}`);
    }
  }
  return out;
}"""

TOO_WIDE = """() => {
  const width = document.documentElement.clientWidth;
  const out = [];
  if (document.documentElement.scrollWidth > width + 1) out.push(`page ${document.documentElement.scrollWidth}px wide`);
  for (const cell of document.querySelectorAll("td, th")) {
    // A table's head is kept for screen readers only once its rows are cards.
    if (cell.closest("[hidden]") || getComputedStyle(cell.closest("thead") || cell).position === "absolute") continue;
    const r = cell.getBoundingClientRect();
    if (r.width && r.right > width + 1) out.push(`cell "${cell.innerText.trim().slice(0, 30)}" ends at ${Math.round(r.right)}px`);
  }
  return out;
}"""

AXE_RUN = """async () => {
  const result = await axe.run(document, { resultTypes: ["violations"] });
  return result.violations
    .filter((v) => v.impact === "serious" || v.impact === "critical")
    .map((v) => `${v.id} (${v.impact}): ${v.nodes.slice(0, 3).map((n) => n.target.join(" ")).join(", ")}`);
}"""


def _query(live_server, sql, params=()):
    con = sqlite3.connect(live_server.db_path)
    try:
        return con.execute(sql, params).fetchall()
    finally:
        con.close()


def _ids(live_server) -> dict:
    site = _query(live_server, "SELECT id FROM sites WHERE name = ?", [SITE_NAME])[0][0]
    wing = _query(live_server, "SELECT id FROM sites WHERE name = ?", [BRICK_WING_NAME])[0][0]
    bearings = dict(
        _query(live_server, "SELECT reference, id FROM bearings WHERE site_id = ?", [site])
    )
    record = _query(
        live_server,
        "SELECT latest_record_uuid FROM bearings WHERE site_id = ? AND reference = 'FF-B4'",
        [site],
    )[0][0]
    return {"site": site, "wing": wing, "bearings": bearings, "record": record}


@pytest.fixture
def phone(browser, browser_context_args):
    """A 360 x 740 touch phone (the narrowest common screen)."""
    context = browser.new_context(**{**browser_context_args, "viewport": PHONE, "screen": PHONE})
    yield context.new_page()
    context.close()


def _internal_names() -> re.Pattern:
    """What must never reach these screens: a review reason's code, a field's internal name
    or the core's path for it, an HTTP status."""
    vectors = load_shared_vectors()
    codes = {
        r["code"] for c in vectors["review"] for r in c["expect"]["reasons"] if "-" in r["code"]
    }
    names = {n for n in SPECS if "_" in n} | {"why_not_measured", "measured_at"}
    paths = {p for p in CORE_PATHS if "." in p}
    words = sorted(codes | names | paths, key=len, reverse=True)
    return re.compile(
        r"(?<![\w-])(" + "|".join(map(re.escape, words)) + r")(?![\w-])|\bHTTP\b|\b[45]\d\d:"
    )


INTERNAL = _internal_names()


def _check(page: Page, name: str, problems: dict) -> None:
    page.wait_for_load_state("networkidle")
    page.screenshot(path=str(Path("test-results") / f"phone-360-{name}.png"), full_page=True)
    taps = page.evaluate(TAP_TARGETS)
    wide = page.evaluate(TOO_WIDE)
    page.evaluate(AXE)
    axe = page.evaluate(AXE_RUN)
    text = page.locator("body").inner_text()
    internal = sorted({m.group(0) for m in INTERNAL.finditer(text)})
    problems[name] = {"tap targets": taps, "too wide": wide, "axe": axe, "internal names": internal}


def _report(problems: dict) -> None:
    taps = sum(len(p["tap targets"]) for p in problems.values())
    axe = sum(len(p["axe"]) for p in problems.values())
    wide = sum(len(p["too wide"]) for p in problems.values())
    internal = sum(len(p["internal names"]) for p in problems.values())
    print(
        f"\n{len(problems)} screens at 360 px: tap-target violations {taps}, "
        f"axe serious/critical {axe}, too wide {wide}, internal names or codes {internal}"
    )
    failing = {n: {k: v for k, v in p.items() if v} for n, p in problems.items() if any(p.values())}
    assert not failing, failing


def test_every_inspector_screen_on_a_360_px_phone(phone: Page, live_server):
    Path("test-results").mkdir(exist_ok=True)
    ids = _ids(live_server)
    problems: dict = {}
    log_in(phone, "inspector")
    _check(phone, "inspector-sites", problems)
    phone.goto(f"/sites/{ids['site']}")
    _check(phone, "inspector-site", problems)
    keep_site(phone, ids["site"], role=None)
    phone.goto(f"/sites/{ids['site']}/inspect")
    _check(phone, "inspector-survey-list", problems)
    open_record_form(phone, ids["site"], ids["bearings"]["GF-B2-S"])
    _check(phone, "inspector-form-empty", problems)
    phone.fill("#bearing_length", "95")  # a failing bearing: the verdict, the hint, the trace
    phone.locator("[data-phone-trace] summary").tap()
    _check(phone, "inspector-form-failing", problems)
    phone.check("input[name=why_not_measured][value=no-access]")
    _check(phone, "inspector-form-could-not-measure", problems)
    phone.goto(f"/sites/{ids['site']}/records/{ids['record']}")
    phone.locator("details.trace summary").first.tap()
    _check(phone, "inspector-result", problems)
    phone.goto(f"/sites/{ids['site']}/offline")
    expect(phone.locator("body")).to_have_attribute("data-offline-ready", "1")
    _check(phone, "inspector-offline-list", problems)
    phone.locator("[data-pack-bearings] li[data-bearing] button").first.tap()
    expect(phone.locator("form[data-offline-form]")).to_be_visible()
    _check(phone, "inspector-offline-form", problems)
    phone.goto("/refused")
    _check(phone, "inspector-refused", problems)
    phone.goto("/offline")
    _check(phone, "inspector-no-signal", problems)
    phone.goto("/account/password")
    _check(phone, "inspector-password", problems)
    _report(problems)


def test_every_contractor_screen_on_a_360_px_phone(phone: Page, live_server):
    Path("test-results").mkdir(exist_ok=True)
    ids = _ids(live_server)
    problems: dict = {}
    log_in(phone, "contractor")
    _check(phone, "contractor-sites", problems)
    for path, name in (
        (f"/sites/{ids['site']}", "contractor-site"),
        (f"/sites/{ids['site']}/release", "contractor-release"),
        (f"/sites/{ids['site']}/history", "contractor-history"),
        (f"/sites/{ids['site']}/bearings/{ids['bearings']['FF-B4']}/review", "contractor-bearing"),
        (
            f"/sites/{ids['site']}/bearings/{ids['bearings']['FF-B4']}",
            "contractor-schedule-bearing",
        ),
        (f"/sites/{ids['site']}/records/{ids['record']}", "contractor-result"),
        (f"/sites/{ids['site']}/record", "contractor-site-record"),
        (f"/sites/{ids['site']}/members", "contractor-members"),
        ("/refused", "contractor-refused"),
        ("/account/password", "contractor-password"),
    ):
        phone.goto(path)
        _check(phone, name, problems)
    _report(problems)


def test_the_sticky_verdict_bar_leaves_the_form_the_screen(phone: Page, live_server):
    ids = _ids(live_server)
    log_in(phone, "inspector")
    open_record_form(phone, ids["site"], ids["bearings"]["GF-B2-S"])
    phone.fill("#padstone_length", "300")
    phone.locator("#section-masonry").scroll_into_view_if_needed()
    stuck = phone.evaluate(
        """() => [...document.querySelectorAll("body *")].filter((el) => {
          const p = getComputedStyle(el).position;
          if (p !== "sticky" && p !== "fixed") return false;
          const r = el.getBoundingClientRect();
          return r.height > 0 && r.bottom > 0 && r.top < innerHeight;
        }).map((el) => el.getBoundingClientRect().height)"""
    )
    share = sum(stuck) / PHONE["height"]
    print(
        f"\nsticky header and verdict bar: {sum(stuck):.0f} px of {PHONE['height']} ({share:.1%})"
    )
    assert stuck and share <= 0.15
    bar = phone.locator("[data-verdict-bar]")
    expect(bar).to_have_attribute("data-verdict", "review")
    expect(bar).to_contain_text("? needs the engineer")
    # "Fails" is told apart by colour, symbol and word.
    review_colour = bar.evaluate("(el) => getComputedStyle(el).color")
    phone.fill("#bearing_length", "60")
    expect(bar).to_have_attribute("data-verdict", "fails")
    expect(bar).to_contain_text("✗ fails as built")
    assert bar.evaluate("(el) => getComputedStyle(el).color") != review_colour


# "words symbol = value unit": a symbol of the trace never stands alone on these screens.
INPUT = re.compile(r"^\S.*\s\S+ = \S")


def _alone(trace) -> list[str]:
    lines = trace.locator("td span.muted").all_inner_texts()
    parts = [p.strip() for line in lines for p in line.split(";") if p.strip()]
    assert len(parts) > 20, parts
    return [p for p in parts if not INPUT.match(p)]


def test_every_symbol_of_the_calculation_stands_beside_plain_words(phone: Page, live_server):
    """The server's trace on the result page and the phone's own under the form."""
    ids = _ids(live_server)
    log_in(phone, "inspector")
    phone.goto(f"/sites/{ids['site']}/records/{ids['record']}")
    server = phone.locator("details.trace").first
    server.locator("summary").tap()
    assert _alone(server) == []
    open_record_form(phone, ids["site"], ids["bearings"]["GF-B2-S"])
    phone.fill("#bearing_length", "140")
    phone.locator("[data-phone-trace] summary").tap()
    assert _alone(phone.locator("[data-phone-trace]")) == []
