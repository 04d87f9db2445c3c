"""The site record as PDF (fpdf2): a cover with the code basis and every value used, a
summary of every bearing, a page or more per bearing, and the audit trail.

It prints what the store holds and what the core worked out when each record arrived;
nothing is re-calculated. Symbols (σ, β, γ, ≤) need a Unicode font: DejaVu Sans is looked
for in the usual places; with none found the symbols are spelt out in words and the core
PDF font is used, so a record can always be made.
"""

from __future__ import annotations

import io
import math
import os
from collections import deque
from collections.abc import Callable, Iterable
from concurrent.futures import ThreadPoolExecutor
from itertools import islice
from pathlib import Path
from typing import BinaryIO

from fpdf.enums import XPos, YPos

from sitecheck import workflow
from sitecheck.bearing import SOURCES, basis_named
from sitecheck.bearing.format import quantity, utilisation
from sitecheck.bearing.review import FIELD_LABELS
from sitecheck.bearing.serial import as_built_input_dict
from sitecheck.cautions import CAUTION
from sitecheck.photos import PhotoRejected, print_copy
from sitecheck.report.audit import Words, sentence
from sitecheck.report.collect import BearingRecord, SiteRecord, selection_words
from sitecheck.report.drawing import bearing_svg, differences
from sitecheck.report.export import JSON_SUFFIX, file_name
from sitecheck.report.pages import PAGE_COUNT, PackedPages
from sitecheck.report.summary import (
    CHECKLIST_QUESTIONS,
    covers_words,
    decision_title,
    plural,
    state_counts,
    who_must_act,
)
from sitecheck.settings_words import (
    BASIS_FLAGS,
    BASIS_GROUPS,
    BASIS_LABELS,
    CREEP_TABLES,
    GAMMA_M_BS_ROWS,
    GAMMA_M_EC6_ROWS,
    K_MORTARS,
    REQUIRED_LABELS,
    REVIEW_LABELS,
    TABLE_TITLES,
)

Progress = Callable[[int, int, str], None]

FONT_DIRS = (
    "/usr/share/fonts/truetype/dejavu",
    "/usr/share/fonts/dejavu",
    "/usr/share/fonts/TTF",
    "/usr/local/share/fonts",
    "/usr/local/share/fonts/dejavu",
    "/Library/Fonts",
    "C:/Windows/Fonts",
)
FAMILY = "dejavu"

SOURCE_WORDS = (
    "Source labels: S seen in a published source · P partly seen · M from memory, confirm "
    "against the standard · CP common practice · ours: a choice of this tool."
)

# Spelt-out symbols for a PDF made without a Unicode font.
_PLAIN = {
    "σ": "sigma",
    "β": "beta",
    "γ": "gamma",
    "α": "alpha",
    "Φ": "Phi",
    "λ": "lambda",
    "√": "sqrt",
    "∞": "infinity",
    "≤": "<=",
    "≥": ">=",
    "≠": "!=",
    "→": "->",
    "—": "-",
    "–": "-",
    "…": "...",
    "✓": "ok",
    "✗": "x",
    "☑": "[x]",
    "○": "o",
    "■": "#",
    "⚠": "!",
    "“": '"',
    "”": '"',
    "‘": "'",
    "’": "'",
}

# Widths of words remembered while a record is laid out (about 5 MB at most).
_WIDTHS_KEPT = 50_000

# Each photo is printed this wide. The photos' print copies are sized for it (see
# sitecheck.photos.PhotoLimits.print_long_edge) and embedded as they are.
PHOTO_WIDTH_MM = 56.0


def find_font() -> tuple[Path, Path | None] | None:
    """DejaVu Sans (regular, bold) if installed; ``$SITECHECK_FONT`` names another TTF."""
    chosen = os.environ.get("SITECHECK_FONT")
    if chosen and Path(chosen).is_file():
        return Path(chosen), None
    for folder in FONT_DIRS:
        regular = Path(folder) / "DejaVuSans.ttf"
        if regular.is_file():
            bold = Path(folder) / "DejaVuSans-Bold.ttf"
            return regular, bold if bold.is_file() else None
    return None


def plain(text: str) -> str:
    """Text the core PDF fonts (Latin-1) can print."""
    for symbol, words in _PLAIN.items():
        text = text.replace(symbol, words)
    return text.encode("latin-1", "replace").decode("latin-1")


def _util(u) -> str:
    return utilisation(u)


def _when(stamp: str | None) -> str:
    if not stamp:
        return "—"
    return stamp[:16].replace("T", " ") + " UTC"


def _v(x, unit: str = "") -> str:
    if x is None:
        return "—"
    if isinstance(x, bool):
        return "yes" if x else "no"
    return quantity(x, unit)


class _Doc(PackedPages):
    def __init__(self, site_name: str, *, part: bool = False):
        super().__init__(orientation="P", unit="mm", format="A4")
        self.site_name = site_name
        # A loose page of a record of part of the site says so.
        self.record_name = "Site record (part)" if part else "Site record"
        font = find_font()
        self.unicode = font is not None
        if font:
            regular, bold = font
            self.add_font(FAMILY, "", str(regular))
            self.add_font(FAMILY, "B", str(bold or regular))
            self.family = FAMILY
        else:
            self.family = "helvetica"
        self.set_auto_page_break(True, margin=20)
        self.set_margins(15, 15, 15)
        self.set_title(self.t(f"Site record: {site_name}"))
        self.set_creator("sitecheck")
        self._widths: dict = {}
        self._caution_lines: list[str] | None = None

    def t(self, text) -> str:
        text = "" if text is None else str(text)
        return text if self.unicode else plain(text)

    def footer(self) -> None:
        self.set_font(self.family, "", 7)
        self.set_text_color(80, 80, 80)
        if self._caution_lines is None:
            self._caution_lines = self._wrap(
                self.t(CAUTION), self.w - self.l_margin - self.r_margin
            )
        y = self.h - 14
        for line in self._caution_lines:
            self.text(self.l_margin, y, line)
            y += 3.2
        # cell(), not text(): only cell() has the page-count alias filled in at the end.
        self.set_xy(self.l_margin, y - 2.2)
        self.cell(
            0,
            3.2,
            self.t(
                f"{self.record_name} · {self.site_name} · page {self.page_no()} of {PAGE_COUNT}"
            ),
        )
        self.set_text_color(0, 0, 0)

    # --- small building blocks ---------------------------------------------------------------

    def h1(self, text: str) -> None:
        self.set_font(self.family, "B", 16)
        self.multi_cell(0, 8, self.t(text), new_x=XPos.LMARGIN, new_y=YPos.NEXT)
        self.ln(1)

    def keep(self, room_mm: float) -> None:
        """A new page unless ``room_mm`` is left: a heading stays with what it heads."""
        if self.get_y() + room_mm > self.h - self.b_margin:
            self.add_page()

    def h2(self, text: str) -> None:
        if self.get_y() > self.h - 40:
            self.add_page()
        self.ln(2)
        self.set_font(self.family, "B", 11.5)
        self.multi_cell(0, 6, self.t(text), new_x=XPos.LMARGIN, new_y=YPos.NEXT)
        self.set_font(self.family, "", 9)

    def para(self, text: str, size: float = 9, bold: bool = False) -> None:
        self.set_font(self.family, "B" if bold else "", size)
        lh = size * 0.48
        bottom = self.h - self.b_margin
        for line in self._wrap(self.t(text), self.w - self.l_margin - self.r_margin):
            if self.get_y() + lh > bottom:
                self.add_page()
                self.set_font(self.family, "B" if bold else "", size)
            self.text(self.l_margin, self.get_y() + 0.78 * lh, line)
            self.set_y(self.get_y() + lh)

    def grid(self, header: list[str], rows: Iterable[list[str]], widths: list[float], size=8.0):
        """A table that breaks across pages and repeats its heading.

        fpdf2's own table lays text out a character at a time, which costs seconds per
        bearing; this wraps whole words with remembered widths and places each line with
        ``text()``, fast enough for a record of hundreds of bearings.
        """
        pad, lh = 0.9, size * 0.42
        bottom = self.h - self.b_margin

        def draw(values: list[str], bold: bool) -> None:
            self.set_font(self.family, "B" if bold else "", size)
            cells = [
                self._wrap(self.t(v), w - 2 * pad) for v, w in zip(values, widths, strict=True)
            ]
            height = max(len(c) for c in cells) * lh + 2 * pad
            y = self.get_y()
            if bold:
                self.set_fill_color(232, 236, 238)
                self.rect(self.l_margin, y, sum(widths), height, style="F")
            x = self.l_margin
            for lines, w in zip(cells, widths, strict=True):
                for i, line in enumerate(lines):
                    self.text(x + pad, y + pad + (i + 0.78) * lh, line)
                x += w
            self.set_draw_color(190, 190, 190)
            self.line(self.l_margin, y + height, self.l_margin + sum(widths), y + height)
            self.set_draw_color(0, 0, 0)
            self.set_y(y + height)

        def height_of(values: list[str]) -> float:
            self.set_font(self.family, "", size)
            n = max(
                len(self._wrap(self.t(v), w - 2 * pad)) for v, w in zip(values, widths, strict=True)
            )
            return n * lh + 2 * pad

        if self.get_y() + 2 * (lh + 2 * pad) > bottom:
            self.add_page()
        draw(header, True)
        for values in rows:
            if self.get_y() + height_of(values) > bottom:
                self.add_page()
                draw(header, True)
            draw(values, False)
        self.set_font(self.family, "", 9)

    def _width(self, word: str) -> float:
        key = (self.font_style, self.font_size_pt, word)
        found = self._widths.get(key)
        if found is None:
            if len(self._widths) >= _WIDTHS_KEPT:
                # Numbers make most words unique to their bearing: a long site's record would
                # keep them all. The words that come back are measured again soon enough.
                self._widths.clear()
            found = self._widths[key] = self.get_string_width(word)
        return found

    def _wrap(self, text: str, width: float) -> list[str]:
        lines: list[str] = []
        space = self._width(" ")
        for paragraph in text.split("\n"):
            line, used = "", 0.0
            for word in paragraph.split(" "):
                w = self._width(word)
                if line and used + space + w > width:
                    lines.append(line)
                    line, used = "", 0.0
                while w > width and len(word) > 1:
                    # A word longer than the column (an id, a formula) is cut where it must be.
                    cut = len(word)
                    while cut > 1 and self._width(word[:cut]) > width:
                        cut = max(1, int(cut * width / self._width(word[:cut])) - 1)
                    if line:
                        lines.append(line)
                        line, used = "", 0.0
                    lines.append(word[:cut])
                    word = word[cut:]
                    w = self._width(word)
                line = f"{line} {word}" if line else word
                used += (space if used else 0.0) + w
            lines.append(line)
        return lines or [""]


# --- the first page: the summary and the engineer's sign-off ------------------------------------

# Beyond this many bearings a role's list on the first page says how many more there are;
# every bearing is in the table that follows.
LISTED_ON_FIRST_PAGE = 24


def _first_page(pdf: _Doc, rec: SiteRecord) -> None:
    site = rec.site
    pdf.add_page()
    pdf.start_section("Summary and sign-off", level=0)
    pdf.h1("Site record")
    pdf.para(site["name"], 14, bold=True)
    if site.get("address"):
        pdf.para(site["address"], 10)
    basis = (site.get("code_basis") or {}).get("name", "—")
    pdf.para(f"Made {_when(rec.made_at)} from the data held by sitecheck; code basis {basis}.", 9)
    pdf.ln(2)
    pdf.set_fill_color(255, 244, 214)
    pdf.set_font(pdf.family, "B", 10)
    pdf.multi_cell(
        0, 5.5, pdf.t(CAUTION), fill=True, border=1, align="L", new_x=XPos.LMARGIN, new_y=YPos.NEXT
    )
    pdf.set_font(pdf.family, "", 9)
    _part_note(pdf, rec)
    _sign_off_block(pdf, rec)

    counts = state_counts([br.bearing["state"] for br in rec.bearing_lines])
    pdf.h2("Bearings by state")
    pdf.grid(
        ["state", "bearings"],
        [[f"{workflow.STATE_BADGES[state].symbol} {state}", str(n)] for state, n in counts.items()]
        + [["all", str(len(rec.bearings))]],
        [60, 25],
        size=8.5,
    )
    pdf.h2("Open items: who must act")
    acts = who_must_act(counts)
    if not acts:
        pdf.para("None: every bearing is released for closing up.")
    else:
        rows = []
        for act in acts:
            refs = [
                br.bearing["reference"]
                for br in rec.bearing_lines
                if br.bearing["state"] in act["states"]
            ]
            listed = ", ".join(refs[:LISTED_ON_FIRST_PAGE])
            if len(refs) > LISTED_ON_FIRST_PAGE:
                listed += f" and {len(refs) - LISTED_ON_FIRST_PAGE} more"
            rows.append([f"the {act['role']}", "; ".join(act["what"]) + ".", listed])
        pdf.grid(["who", "must", "bearings"], rows, [26, 84, 70], size=8)
    failing = [
        (br, d) for br in rec.bearing_lines for d in br.decisions[-1:] if d.get("accepted_failing")
    ]
    if failing:
        pdf.h2("Accepted although they fail as built")
        pdf.grid(
            ["bearing", "what fails", "accepted by, when", "reason"],
            [
                [
                    br.bearing["reference"],
                    decision_title(d).removeprefix("Accepted although it fails: "),
                    f"{d.get('engineer_name') or rec.name(d['engineer_id'])}, "
                    f"{_when(d['created_at'])}",
                    d["reason"],
                ]
                for br, d in failing
            ],
            [24, 50, 40, 66],
            size=8,
        )
    pdf.ln(2)
    export_name = file_name(site["name"], JSON_SUFFIX)
    pdf.para(
        "This record says in words who did what and when. The identifiers, file hashes and "
        "raw values behind it are in the data export (JSON) of this site, made from the "
        f"same data on its site record page (a file named like {export_name}).",
        8,
    )


def _sign_off_block(pdf: _Doc, rec: SiteRecord) -> None:
    pdf.h2("Engineer's sign-off")
    signed = rec.sign_off
    if signed is None:
        lines = [
            "Not signed off: no engineer has signed off this site record in sitecheck. The "
            "site's engineer signs it off on the site record page; a record made after that "
            "carries the sign-off here."
        ]
        fill = (245, 245, 245)
    else:
        lines = [
            f"Signed off by {signed['engineer_name']} on {_when(signed['created_at'])}.",
            f"Statement: “{signed['statement']}”",
            f"What it covers: {covers_words(signed['covers'])}",
        ]
        later = rec.changes_since(signed)
        if later:
            lines.append(
                f"⚠ Since then, {plural(len(later), 'entry', 'entries')} in the history "
                f"changed the record, from {_when(later[0]['at'])} on (marked “after the "
                "sign-off” in the audit trail): this sign-off does not cover them."
            )
        else:
            lines.append("Nothing in the record has changed since it was signed.")
        fill = (232, 244, 236)
    pdf.set_fill_color(*fill)
    pdf.set_font(pdf.family, "", 9.5)
    pdf.multi_cell(
        0,
        5,
        pdf.t("\n".join(lines)),
        fill=True,
        border=1,
        align="L",
        new_x=XPos.LMARGIN,
        new_y=YPos.NEXT,
    )
    pdf.set_font(pdf.family, "", 9)


# --- the code basis and the review settings, in the settings page's words -----------------------


def _with_unit(value, unit: str) -> str:
    text = _v(value)
    if unit == "°":
        return text + "°"
    return f"{text} {unit}".strip()


def _source(name: str) -> str:
    return SOURCES.get(name, "set for this site")


def _basis_pages(pdf: _Doc, rec: SiteRecord) -> None:
    code = rec.site.get("code_basis") or {}
    pdf.add_page()
    pdf.start_section("Code basis and review settings", level=0)
    pdf.h1(f"Code basis: {code.get('name', '—')}")
    pdf.para(
        "Every value the checks use, named as on the site's settings page, with its unit and "
        "where its default comes from. Values tagged M are from memory and must be confirmed "
        "against the standard and national annex in force before relying on them; “changed” "
        "marks a value this site set apart from the default."
    )
    changed = _changed_from_default(code)
    _basis_values(pdf, code, changed)
    _k_table(pdf, code, changed)
    _basis_tables(pdf, code, changed)
    _review_settings(pdf, rec.site.get("review_settings") or {})
    pdf.h2("People on this site")
    pdf.grid(["name", "role"], [[m["name"], m["role"]] for m in rec.members], [90, 90], size=8)
    pdf.ln(2)
    pdf.para(SOURCE_WORDS, 7.5)


def _changed_from_default(code: dict) -> Callable[[str], str]:
    """'changed' for a value this site set apart from its basis's default, else ''."""
    try:
        default = basis_named(code.get("name", "")).to_dict()
    except (KeyError, ValueError):
        default = {}

    def changed(name: str) -> str:
        return "changed" if name in default and default[name] != code.get(name) else ""

    return changed


def _basis_values(pdf: _Doc, code: dict, changed: Callable[[str], str]) -> None:
    """The single values, group by group as the settings page shows them."""
    widths = [62, 28, 72, 18]
    for title, names in BASIS_GROUPS:
        rows = []
        for name in names:
            if name not in code:
                continue
            if name in BASIS_FLAGS:
                label, used = BASIS_FLAGS[name], _v(bool(code[name]))
            else:
                label, unit = BASIS_LABELS[name]
                used = _with_unit(code[name], unit)
            rows.append([label, used, _source(name), changed(name)])
        if rows:
            pdf.h2(title)
            pdf.grid(["value", "used", "default from", ""], rows, widths, size=7.5)


def _k_table(pdf: _Doc, code: dict, changed: Callable[[str], str]) -> None:
    """EC6's K, a row for each unit and group, a column for each mortar."""
    k_values = code.get("k_values") or {}
    if not k_values:
        return
    pdf.keep(60)  # the heading with the first rows of its table
    pdf.h2(TABLE_TITLES["k_values"])
    pdf.para(f"Default from: {_source('k_values')}. {changed('k_values')}", 7.5)
    cells: dict[tuple[str, str], dict[str, float]] = {}
    for key, value in k_values.items():
        material, group, mortar = key.split("|")
        cells.setdefault((material, group), {})[mortar] = value
    pdf.grid(
        ["unit", "Group", *(f"{m} mortar" for m in K_MORTARS)],
        [
            [material, group, *(_v(by.get(m)) for m in K_MORTARS)]
            for (material, group), by in cells.items()
        ],
        [60, 20, 40, 40],
        size=7.5,
    )


def _basis_tables(pdf: _Doc, code: dict, changed: Callable[[str], str]) -> None:
    """The other tables of the basis: the partial factors, creep, the bearing types."""
    for name, rows in (("gamma_M_ec6", GAMMA_M_EC6_ROWS), ("gamma_m_bs", GAMMA_M_BS_ROWS)):
        table = code.get(name) or {}
        if table:
            pdf.keep(40)
            pdf.h2(TABLE_TITLES[name])
            pdf.para(f"Default from: {_source(name)}. {changed(name)}", 7.5)
            pdf.grid(
                ["", "value"],
                [[label, _v(table.get(key))] for key, label in rows],
                [100, 30],
                size=7.5,
            )
    creep = [(name, words, code.get(name) or {}) for name, words in CREEP_TABLES]
    materials = list(dict.fromkeys(m for _n, _w, table in creep for m in table))
    if materials:
        pdf.keep(45)
        pdf.h2(TABLE_TITLES["creep_lambda_c"])
        for name, _words, _table in creep:
            pdf.para(f"Default from: {_source(name)}. {changed(name)}", 7.5)
        pdf.grid(
            ["unit", *(words for _n, words, _t in creep)],
            [[m, *(_v(table.get(m)) for _n, _w, table in creep)] for m in materials],
            [60, 60, 60],
            size=7.5,
        )
    factors = code.get("bearing_type_factors") or []
    if factors:
        pdf.keep(35)
        pdf.h2(TABLE_TITLES["bearing_type_factors"])
        pdf.para(
            f"Default from: {_source('bearing_type_factors')}. {changed('bearing_type_factors')}",
            7.5,
        )
        pdf.grid(
            ["", "factor"],
            [[f"Type {i}", _v(k)] for i, k in enumerate(factors, start=1)],
            [100, 30],
            size=7.5,
        )


def _review_settings(pdf: _Doc, review: dict) -> None:
    pdf.keep(60)
    pdf.h2("Review settings")
    pdf.para(
        "When an as-built record goes to the engineer: this site's thresholds and tolerances "
        "(defaults of this tool unless a source is named)."
    )
    rows = [
        [label, _with_unit(review[name], unit), source]
        for name, (label, unit, source) in REVIEW_LABELS.items()
        if name in review
    ]
    for name, label in REQUIRED_LABELS.items():
        if name in review:
            asked = ", ".join(FIELD_LABELS.get(f, f).lower() for f in review[name]) or "none"
            rows.append([label, asked, "[ours]"])
    pdf.grid(["setting", "value", "default from"], rows, [72, 60, 48], size=7.5)


def _part_note(pdf: _Doc, rec: SiteRecord) -> None:
    """A record of part of the site says which part, and how much of the site that is."""
    if not rec.partial:
        return
    dated = rec.selection.since or rec.selection.until
    pdf.para(
        f"This record holds part of the site: {selection_words(rec.selection)}. That is "
        f"{len(rec.bearings)} of the site's {rec.site_bearings} bearings, each with its whole "
        "history; the audit trail holds these bearings' entries"
        + (" in those days" if dated else "")
        + ". The record of the whole site is made on the site record page.",
        10,
        bold=True,
    )
    pdf.ln(2)


def _current(br: BearingRecord) -> dict:
    latest = br.latest
    return latest["result"] if latest else br.bearing["design_result"]


def _check_title(result: dict, code: str) -> str:
    return next((c["title"] for c in result.get("checks", []) if c["code"] == code), code)


def _release(br: BearingRecord) -> dict | None:
    if br.bearing["state"] != workflow.RELEASED or not br.releases:
        return None
    return br.releases[-1]


def _summary(pdf: _Doc, rec: SiteRecord) -> None:
    pdf.add_page()
    pdf.h1("Every bearing")
    pdf.para(
        "Utilisation is demand over capacity of the governing check; 1.00 or less passes. "
        "As built is the latest as-built record (the one that sets the state)."
    )
    pdf.ln(1)
    rows = []
    for br in rec.bearings:
        b, latest = br.bearing, br.latest
        badge = workflow.STATE_BADGES[b["state"]]
        result = _current(br)
        release = _release(br)
        decision = br.decisions[-1] if br.decisions else None
        rows.append(
            [
                b["reference"],
                f"{badge.symbol} {badge.label}",
                _check_title(result, result.get("governing", "")),
                _util(b["design_utilisation"]),
                _util(latest["utilisation"]) if latest else "not measured",
                decision_title(decision) if decision else "—",
                f"{release['contractor_name']}, {_when(release['created_at'])}" if release else "—",
            ]
        )
    pdf.grid(
        [
            "bearing",
            "state",
            "governing check",
            "design",
            "as built",
            "decision",
            "released by, when",
        ],
        rows,
        [28, 25, 36, 14, 16, 22, 39],
        size=7.5,
    )


# --- one bearing --------------------------------------------------------------------------------

_COMPARED = (
    ("bearing_length", ("beam", "bearing_length"), "mm"),
    ("flange_width", ("beam", "flange_width"), "mm"),
    ("offset_along", ("beam", "offset_along"), "mm"),
    ("offset_across", ("beam", "offset_across"), "mm"),
    ("padstone_present", ("padstone", None), ""),
    ("padstone_length", ("padstone", "length"), "mm"),
    ("padstone_width", ("padstone", "width"), "mm"),
    ("padstone_depth", ("padstone", "depth"), "mm"),
    ("padstone_concrete", ("padstone", "concrete"), ""),
    ("padstone_reinforced", ("padstone", "reinforced"), ""),
    ("padstone_position", ("padstone", "position_across"), ""),
    ("padstone_offset_across", ("padstone", "offset_across"), "mm"),
    ("wall_thickness", ("wall", "thickness"), "mm"),
    ("a1", ("wall", "a1"), "mm"),
    ("a2", ("wall", "a2"), "mm"),
    ("masonry_material", ("masonry", "material"), ""),
    ("masonry_group", ("masonry", "group"), ""),
    ("unit_strength", ("masonry", "unit_strength"), "N/mm²"),
    ("mortar", ("masonry", "mortar"), ""),
    ("collar_joint", ("masonry", "collar_joint"), ""),
)
_EXTRA_LABELS = {
    "offset_along": "Beam offset along the wall",
    "offset_across": "Beam offset across the wall",
    "padstone_concrete": "Padstone concrete",
}


def _compare_rows(design: dict, measured: dict) -> list[list[str]]:
    rows = []
    for name, (part, key), unit in _COMPARED:
        holder = design.get(part)
        d = (holder is not None) if key is None else (holder or {}).get(key)
        m = measured.get(name)
        label = FIELD_LABELS.get(name) or _EXTRA_LABELS.get(name, name)
        if m is None:
            rows.append([label, _v(d, unit), "not measured", ""])
            continue
        same = (
            math.isclose(float(d), float(m), abs_tol=1e-6)
            if isinstance(d, (int, float))
            and isinstance(m, (int, float))
            and not isinstance(d, bool)
            else d == m
        )
        rows.append([label, _v(d, unit), _v(m, unit), "" if same else "≠"])
    return rows


def _bearing_pages(pdf: _Doc, rec: SiteRecord, br: BearingRecord, photos: list) -> None:
    b, latest = br.bearing, br.latest
    pdf.add_page()
    badge = workflow.STATE_BADGES[b["state"]]
    pdf.start_section(pdf.t(b["reference"]), level=1)
    pdf.h1(f"Bearing {b['reference']}")
    pdf.para(f"{badge.symbol} {badge.label} · design revision {b['revision']}", 10, bold=True)
    if b["location"]:
        pdf.para(b["location"])
    design_result = b["design_result"]
    pdf.para(
        f"Design: utilisation {_util(b['design_utilisation'])}, "
        f"governing {_check_title(design_result, design_result.get('governing', ''))}, "
        + ("passes" if b["design_passed"] else "fails")
        + "."
    )
    if latest:
        result = latest["result"]
        pdf.para(
            f"As built (measured {_when(latest['measured_at'])} by "
            f"{rec.name(latest['inspector_id'])}): utilisation {_util(latest['utilisation'])}, "
            f"governing {_check_title(result, result.get('governing', ''))}, "
            + ("passes" if latest["passed"] else "fails")
            + f", {latest['blocking']} blocking review reason"
            + ("" if latest["blocking"] == 1 else "s")
            + "."
        )
        if latest["older_revision"]:
            pdf.para(
                f"⚠ Measured against design revision {latest['design_revision']}; the design "
                f"is now at revision {b['revision']}."
            )
    else:
        pdf.para("Not measured yet: only the design is shown.")

    drawn_input, drawn_result, what = b["design_input"], design_result, "design"
    if latest:
        pdf.h2("Design against as built")
        pdf.grid(
            ["value", "design", "as built", ""],
            _compare_rows(b["design_input"], latest["measurements"] or {}),
            [75, 45, 45, 15],
            size=8,
        )
        try:
            drawn_input = as_built_input_dict(b["design_input"], latest["measurements"] or {})
            drawn_result, what = latest["result"], "as built"
        except (ValueError, TypeError, KeyError):
            pass  # the design is drawn instead; the values table still shows what was measured
    _drawing(pdf, b, drawn_input, drawn_result, what, latest)

    if latest:
        pdf.h2("Review reasons")
        if latest["reasons"]:
            for r in workflow.ordered_reasons(latest["reasons"]):
                head = "Blocks release" if r.get("severity") == "blocks" else "Note"
                pdf.para(f"{head}: {r.get('sentence', '')} ({r.get('code', '')})")
        else:
            pdf.para("No review reasons.")
        checklist = latest["checklist"] or {}
        if checklist:
            answers = [
                f"{question}: {_with_unit(checklist[key], unit)}"
                for key, question, unit in CHECKLIST_QUESTIONS
                if checklist.get(key) is not None
            ]
            pdf.para("Checklist: " + "; ".join(answers) + ".", 8)
        if latest["notes"]:
            pdf.para(f"Inspector's notes: {latest['notes']}", 8)

    _history(pdf, rec, br)
    _checks(pdf, "Checks at design", design_result, trace=latest is None)
    if latest:
        _checks(pdf, "Checks as built", latest["result"], trace=True)
    _photos(pdf, br, photos)


def _drawing(pdf: _Doc, b: dict, inp: dict, result: dict, what: str, latest) -> None:
    try:
        svg = bearing_svg(inp, result, title=f"{b['reference']}, {what}")
    except (ValueError, TypeError, KeyError):
        pdf.para("The drawing could not be made from the stored values.")
        return
    svg = svg.replace('font-family="sans-serif"', f'font-family="{pdf.family}"')
    # fpdf2 logs a notice for each <title>; the PDF has its own caption.
    start, end = svg.find("<title>"), svg.find("</title>")
    if start >= 0:
        svg = svg[:start] + svg[end + len("</title>") :]
    if not pdf.unicode:
        svg = plain(svg)
    pdf.h2(f"Drawing ({what})")
    view = svg.split('viewBox="', 1)[1].split('"', 1)[0].split()
    aspect = float(view[3]) / float(view[2])
    # As wide as 92 mm, as tall as what is left of the page; a new page if that is little.
    room = pdf.h - 22 - pdf.get_y()
    if room < 120:
        pdf.add_page()
        room = pdf.h - 22 - pdf.get_y()
    width = min(92.0, room / aspect)
    height = width * aspect
    y = pdf.get_y()
    pdf.image(io.BytesIO(svg.encode()), x=15, y=y, w=width, h=height)
    notes = []
    if latest and what == "as built":
        design = (b["design_input"], b["design_result"])
        diffs = differences(design, (inp, result))
        notes = [f"≠ {w}: {_v(a, u)} → {_v(v, u)}" for _n, w, a, v, u in diffs]
    pdf.set_xy(15 + width + 5, y)
    pdf.set_font(pdf.family, "", 8)
    side = [
        "Elevation along the wall and section across it, to scale (the beam's depth is "
        "nominal). Blue: 45° spread through the padstone. Red: spread in the masonry to the "
        "check depth, with the length it gives there. Below: the pressure under the "
        "padstone and its peak value.",
    ]
    if notes:
        side.append("Differences from the design:")
        side += notes
    for line in side:
        pdf.set_x(15 + width + 5)
        pdf.multi_cell(
            pdf.w - 15 - (15 + width + 5), 3.8, pdf.t(line), new_x=XPos.LEFT, new_y=YPos.NEXT
        )
    pdf.set_y(y + height + 2)


def _history(pdf: _Doc, rec: SiteRecord, br: BearingRecord) -> None:
    pdf.h2("Decisions, releases and reopenings")
    items = [
        (
            d["created_at"],
            f"Decision: {decision_title(d)}",
            d.get("engineer_name") or rec.name(d["engineer_id"]),
            d["reason"],
        )
        for d in br.decisions
    ]
    items += [
        (
            r["created_at"],
            "Released for closing up",
            f"{r['contractor_name']} (account {rec.name(r['contractor_id'])})",
            r["statement"],
        )
        for r in br.releases
    ]
    items += [
        (r["created_at"], "Reopened", rec.name(r["engineer_id"]), r["reason"])
        for r in br.reopenings
    ]
    items += [
        (
            k["created_at"],
            "Release kept after later evidence",
            rec.name(k["engineer_id"]),
            k["reason"],
        )
        for k in br.releases_kept
    ]
    if not items:
        pdf.para("None.")
        return
    items.sort(key=lambda i: i[0])
    pdf.grid(
        ["when", "what", "who", "reason or statement"],
        [[_when(a), b, c, d] for a, b, c, d in items],
        [27, 33, 40, 80],
        size=7.5,
    )
    if len(br.records) > 1:
        pdf.para(
            f"{len(br.records)} as-built records are kept for this bearing; the newest by "
            "measured time sets the state. All are in the data export.",
            8,
        )
    after = sum(1 for r in br.records if r["late"])
    if after:
        pdf.para(
            f"{after} as-built record{' was' if after == 1 else 's were'} recorded after a "
            "release; each is listed for the engineer, who reopens the bearing or keeps the "
            "release.",
            8,
        )


def _checks(pdf: _Doc, heading: str, result: dict, *, trace: bool) -> None:
    pdf.h2(f"{heading} ({result.get('basis', '')})")
    rows = [
        [
            c["title"] + (" (for information)" if c["kind"] == "informative" else ""),
            quantity(c["demand"], c["unit"]),
            quantity(c["capacity"], c["unit"]),
            _util(c["utilisation"]),
            "✓ passes" if c["passed"] else "✗ fails",
            c["clause"],
        ]
        for c in result.get("checks", [])
    ]
    pdf.grid(
        ["check", "demand", "capacity", "util.", "result", "clause"],
        rows,
        [52, 24, 24, 14, 18, 48],
        size=7.5,
    )
    if not trace:
        return
    for note in result.get("notes", []):
        pdf.para(note, 7.5)
    steps = [("Materials", s) for s in result.get("strengths", {}).get("steps", [])]
    for c in result.get("checks", []):
        steps += [(c["title"], s) for s in c["steps"]]
    rows = []
    last = None
    for group, s in steps:
        inputs = "; ".join(
            f"{i[0]} = {i[1] if isinstance(i[1], str) else _v(i[1])} {i[2]}".strip()
            for i in s["inputs"]
        )
        rows.append(
            [
                group if group != last else "",
                s["label"],
                f"{s['symbol']} = {s['formula']}" + (f"\n{inputs}" if inputs else ""),
                f"{_v(s['value'])} {s['unit']}".strip(),
                f"{s['clause']} [{s['source']}]",
            ]
        )
        last = group
    pdf.para("Calculation, step by step:", 8, bold=True)
    pdf.grid(
        ["check", "step", "formula and values", "result", "clause [source]"],
        rows,
        [28, 36, 62, 20, 34],
        size=6.8,
    )


def _photo_bytes(photo_store, sha: str) -> bytes | None:
    """The photo's print copy, a JPEG that fpdf2 embeds without decoding it; one missing
    (a photo stored before print copies) is made now and kept for the next record."""
    try:
        return print_copy(photo_store, sha)
    except (FileNotFoundError, ValueError, OSError, PhotoRejected):
        return None


def _prepared_photos(rec: SiteRecord, photo_store, ahead: int = 4):
    """Each bearing's photos as (record, photo, future bytes), read a few bearings ahead on
    worker threads: a print copy still to be made (a photo stored before print copies) is
    made while the main thread lays out pages, and only a few bearings' photos are held."""
    workers = max(1, min(4, (os.cpu_count() or 1)))
    with ThreadPoolExecutor(max_workers=workers) as pool:

        def submit(br: BearingRecord) -> list:
            return [
                (r, p, pool.submit(_photo_bytes, photo_store, p["sha256"]) if photo_store else None)
                for r in br.records
                for p in br.photos.get(r["uuid"], [])
            ]

        # Light: only the records and photos are needed here, not the calculations.
        upcoming = iter(rec.bearing_lines)
        pending = deque(submit(br) for br in islice(upcoming, ahead))
        while pending:
            nxt = next(upcoming, None)
            if nxt is not None:
                pending.append(submit(nxt))
            yield pending.popleft()


def _photos(pdf: _Doc, br: BearingRecord, shown: list) -> None:
    pdf.h2("Photos")
    if not shown:
        pdf.para("No photos.")
        return
    col_w, gap = PHOTO_WIDTH_MM, 6.0
    x0 = pdf.l_margin
    col = 0
    row_h = 0.0
    for n, (r, p, future) in enumerate(shown, start=1):
        h = col_w * p["height"] / p["width"]
        if col == 0 and pdf.get_y() + h + 12 > pdf.h - 22:
            pdf.add_page()
        y = pdf.get_y()
        x = x0 + col * (col_w + gap)
        data = future.result() if future else None
        if data:
            pdf.image(io.BytesIO(data), x=x, y=y, w=col_w, h=h)
        else:
            pdf.rect(x, y, col_w, h)
            pdf.set_xy(x + 2, y + 2)
            pdf.set_font(pdf.family, "", 7)
            pdf.multi_cell(
                col_w - 4, 3.5, pdf.t("Photo file not found in the photo store, or unreadable.")
            )
        taken = p["captured_at"] or r["measured_at"]
        source = "camera time" if p["captured_at"] else "record's time"
        caption = f"Photo {n} · {br.bearing['reference']} · {_when(taken)} ({source})"
        pdf.set_xy(x, y + h + 0.8)
        pdf.set_font(pdf.family, "", 7)
        pdf.multi_cell(col_w, 3.3, pdf.t(caption), new_x=XPos.LEFT, new_y=YPos.NEXT)
        row_h = max(row_h, h + 9)
        col += 1
        if col == 3:
            col = 0
            pdf.set_xy(x0, y + row_h)
            row_h = 0.0
        else:
            pdf.set_xy(x0, y)
    if col:
        pdf.set_y(pdf.get_y() + row_h)


# --- the audit trail ----------------------------------------------------------------------------


def _appendix(pdf: _Doc, rec: SiteRecord) -> None:
    pdf.add_page()
    pdf.start_section("Audit trail", level=0)
    pdf.h1("Appendix: audit trail")
    pdf.para(
        f"Every change on this site, oldest first ({plural(len(rec.events), 'entry', 'entries')}), "
        "in words. Entries are written when things happen and are never changed or deleted. "
        "The identifiers, hashes and values before and after each entry are in the data "
        "export (JSON)."
    )
    refs = {br.bearing["id"]: br.bearing["reference"] for br in rec.bearing_lines}
    words = Words(
        name=rec.name,
        measured={r["uuid"]: r["measured_at"] for br in rec.bearing_lines for r in br.records},
    )
    after = {e["id"] for e in rec.changes_since(rec.sign_off)} if rec.sign_off else set()
    # Laid out as they are read: a long site's trail is never held whole.
    rows = (
        [
            _when(e["at"]),
            rec.name(e["user_id"]),
            refs.get(e["bearing_id"], ""),
            ("After the sign-off: " if e["id"] in after else "") + sentence(e, words),
        ]
        for e in rec.events
    )
    pdf.grid(["when", "who", "bearing", "what happened"], rows, [25, 32, 23, 100], size=7)


# Progress steps before the first bearing's: the cover and the summary.
BEFORE_BEARINGS = 2


def write_pdf(
    rec: SiteRecord,
    out: str | os.PathLike | BinaryIO,
    *,
    photo_store=None,
    progress: Progress | None = None,
) -> None:
    """Write the site record to a file path or a binary stream. ``progress(done, total,
    what)`` is called as each part is made, for a progress bar: the cover and the summary
    (BEFORE_BEARINGS), each bearing by its reference, then the audit trail."""
    total = len(rec.bearings) + BEFORE_BEARINGS + 1
    step = 0

    def tick(what: str) -> None:
        nonlocal step
        step += 1
        if progress:
            progress(step, total, what)

    pdf = _Doc(rec.site["name"], part=rec.partial)
    _first_page(pdf, rec)
    _basis_pages(pdf, rec)
    tick("cover")
    _summary(pdf, rec)
    tick("summary")
    for br, photos in zip(rec.bearings, _prepared_photos(rec, photo_store), strict=True):
        _bearing_pages(pdf, rec, br, photos)
        tick(br.bearing["reference"])
    _appendix(pdf, rec)
    data = pdf.output()
    tick("audit trail")
    if isinstance(out, (str, os.PathLike)):
        Path(out).write_bytes(data)
    else:
        out.write(data)


def pdf_bytes(rec: SiteRecord, *, photo_store=None, progress: Progress | None = None) -> bytes:
    buffer = io.BytesIO()
    write_pdf(rec, buffer, photo_store=photo_store, progress=progress)
    return buffer.getvalue()
