"""The data export of a site: CSV files (one per kind of row, in a zip) and one JSON file.

Both are written bearing by bearing as the store hands them out (sitecheck.report.collect),
so a site of 10,000 bearings is exported in the memory of a few hundred: the CSV files go
to temporary files in one pass and are then zipped, the JSON is written a bearing a line.

``schedule.csv`` is the bearing schedule in the import's own columns (kN at the edge, as
the import reads them), with every design input and every digit, so importing it into
another site gives the same inputs exactly. :func:`schedule_gaps` checks that for each
bearing by reading its row back; the JSON export and the ``design_input`` column of
``bearings.csv`` also carry every input whole.
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
import tempfile
import unicodedata
import zipfile
from collections.abc import Callable, Iterable
from dataclasses import fields
from datetime import UTC, datetime
from decimal import Decimal
from pathlib import Path
from typing import BinaryIO, TextIO

from sitecheck.bearing.review import Checklist, Measurements
from sitecheck.bearing.serial import input_to_dict
from sitecheck.cautions import CAUTION
from sitecheck.csvcells import Figure, cell
from sitecheck.report.collect import BearingRecord, SiteRecord
from sitecheck.schedule import DESIGN_COLUMNS, parse_schedule

# 2: the calculations' repeated words (each step's label, formula, clause...) are given once
# in "texts" and referred to by number; rows no longer repeat their parent's id or a
# person's name (see "people"). expand_calculation() gives a calculation back whole.
FORMAT_VERSION = 2
# The csv module quotes a cell holding a character of the line ending only: with "\n"
# alone, a lone carriage return in a note would be written bare and read as a row's end.
LINE_END = "\r\n"


# progress(done, total, what): called after each bearing, and at the end.
Progress = Callable[[int, int, str], None]


def file_name(name: str, suffix: str, when: datetime | None = None) -> str:
    """A file name any system accepts, made from the site's name and a date (today, unless
    `when` says): ``tanner-s-yard-block-c-2026-03-02-data.json``."""
    plain = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^A-Za-z0-9]+", "-", plain).strip("-").lower()[:40].strip("-") or "site"
    return f"{slug}-{when or datetime.now(UTC):%Y-%m-%d}{suffix}"


JSON_SUFFIX = "-data.json"


def _number(x: int | float) -> str:
    if isinstance(x, float):
        # Enough digits that reading back gives the same number.
        return f"{x:.12g}"
    return str(x)


def _exact(x: int | float) -> str:
    """A schedule number: the shortest text that reads back as the same number."""
    if isinstance(x, float):
        return repr(x) if x != int(x) or abs(x) >= 1e16 else str(int(x))
    return str(x)


def _kilo(newtons) -> Figure | None:
    """N as kN by moving the decimal point, so the import's own shift back gives the same N."""
    if newtons is None:
        return None
    text = format(Decimal(repr(float(newtons))).scaleb(-3).normalize(), "f")
    return Figure(text if "." not in text else text.rstrip("0").rstrip("."))


def schedule_row(reference: str, location: str, basis: str, design: dict) -> dict[str, str]:
    """One bearing's design input in the schedule's columns (reaction in kN, lengths mm)."""
    load, beam, wall = design["load"], design["beam"], design["wall"]
    mas, pad = design["masonry"], design.get("padstone") or {}
    values = {
        "reference": reference,
        "location": location,
        "basis": basis,
        "reaction_kN": _kilo(load["reaction"]),
        # N/mm is kN/m: the same number.
        "wall_load_kN_per_m": load.get("wall_load") or None,
        "orientation": beam.get("orientation"),
        "member": beam.get("member"),
        "flange_width": beam["flange_width"],
        "bearing_length": beam["bearing_length"],
        "offset_along": beam.get("offset_along"),
        "offset_across": beam.get("offset_across"),
        "reaction_at": beam.get("reaction_at"),
        "padstone_length": pad.get("length"),
        "padstone_width": pad.get("width"),
        "padstone_depth": pad.get("depth"),
        "padstone_concrete": pad.get("concrete"),
        "padstone_f_ck": pad.get("f_ck"),
        # A named position, or the offset of an offset one (the import reads either).
        "padstone_across": pad.get("offset_across")
        if pad.get("position_across") == "offset"
        else pad.get("position_across"),
        "padstone_reinforced": pad.get("reinforced"),
        "wall_thickness": wall["thickness"],
        "height_to_bearing": wall["height_to_bearing"],
        "clear_height": wall.get("clear_height"),
        "effective_height": wall.get("effective_height"),
        "effective_thickness": wall.get("effective_thickness"),
        "a1": wall.get("a1"),
        "a2": wall.get("a2"),
        "unit_material": mas.get("material"),
        "unit_group": mas.get("group"),
        "unit_strength": mas.get("unit_strength"),
        "unit_strength_normalised": mas.get("unit_strength_is_normalised"),
        "unit_height": mas.get("unit_height"),
        "unit_width": mas.get("unit_width"),
        "unit_conditioning": mas.get("conditioning"),
        "mortar": mas.get("mortar"),
        "shell_bedded": mas.get("shell_bedded"),
        "collar_joint": mas.get("collar_joint"),
        "f_k": mas.get("f_k"),
        "gamma_M": mas.get("gamma_M"),
        "execution_class": mas.get("execution_class"),
        "unit_category": mas.get("unit_category"),
        "manufacturing_control": mas.get("manufacturing_control"),
        "construction_control": mas.get("construction_control"),
        "bearing_type": design.get("bearing_type"),
        "e_mk": design.get("e_mk"),
        "phi_m": design.get("phi_m"),
        "beta_s": design.get("beta_s"),
    }
    if set(values) != set(DESIGN_COLUMNS):
        raise RuntimeError(
            "The schedule's columns and the export's differ: "
            f"{sorted(set(values) ^ set(DESIGN_COLUMNS))}; update schedule_row."
        )
    # Text cells (reference, location, the choices) are guarded; numbers are not.
    return {k: cell(values[k], _exact) for k in DESIGN_COLUMNS}


def schedule_gaps(design: dict) -> list[str]:
    """Design inputs that do not come back the same when the bearing's schedule row is
    read back (an empty list: the schedule carries this bearing whole)."""
    row = schedule_row("R", "", "", design)
    out = io.StringIO()
    w = csv.DictWriter(out, fieldnames=list(DESIGN_COLUMNS), lineterminator=LINE_END)
    w.writeheader()
    w.writerow(row)
    parsed = parse_schedule(out.getvalue())
    if parsed.errors or not parsed.rows:
        return [str(e) for e in parsed.errors] or ["the row does not read back"]
    back = input_to_dict(parsed.rows[0].design)
    return _differences(design, back)


def _differences(a, b, path: str = "") -> list[str]:
    if isinstance(a, dict) and isinstance(b, dict):
        found = []
        for key in sorted(set(a) | set(b)):
            found += _differences(a.get(key), b.get(key), f"{path}.{key}" if path else key)
        return found
    same = a == b and (type(a) is type(b) or not (isinstance(a, bool) or isinstance(b, bool)))
    return [] if same else [path]


def schedule_rows(br: BearingRecord, basis: str) -> list[dict[str, str]]:
    b = br.bearing
    return [schedule_row(b["reference"], b["location"], basis, b["design_input"])]


def cell_row(values: Iterable) -> list[str]:
    """A row as kept: every text cell goes through the formula guard and every number is
    written as a number (see :mod:`sitecheck.csvcells`)."""
    return [cell(v, _number) for v in values]


def _json(value) -> str:
    return json.dumps(value, ensure_ascii=False, sort_keys=True, separators=(",", ":"))


BEARINGS_HEADER = [
    "bearing_id",
    "reference",
    "location",
    "state",
    "design_revision",
    "design_utilisation",
    "design_passed",
    "latest_record_uuid",
    "as_built_utilisation",
    "as_built_passed",
    "last_decision",
    "released_by",
    "released_at",
    "design_input",
]


def bearings_rows(_rec: SiteRecord, br: BearingRecord) -> list[list]:
    b, latest = br.bearing, br.latest
    release = br.releases[-1] if br.releases and b["state"] == "released" else None
    return [
        [
            b["id"],
            b["reference"],
            b["location"],
            b["state"],
            b["revision"],
            b["design_utilisation"],
            bool(b["design_passed"]),
            latest["uuid"] if latest else "",
            latest["utilisation"] if latest else None,
            bool(latest["passed"]) if latest else None,
            br.decisions[-1]["kind"] if br.decisions else "",
            release["contractor_name"] if release else "",
            release["created_at"] if release else "",
            _json(b["design_input"]),
        ]
    ]


_MEASURED = [f.name for f in fields(Measurements)]
_CHECKED = [f.name for f in fields(Checklist)]

RECORDS_HEADER = [
    "record_uuid",
    "bearing_id",
    "reference",
    "design_revision",
    "inspector",
    "measured_at",
    "received_at",
    *[f"measured_{k}" for k in _MEASURED],
    *[f"checklist_{k}" for k in _CHECKED],
    "utilisation",
    "passed",
    "blocking_reasons",
    "older_design_revision",
    "late",
    "review_reason_codes",
    "photos",
    "notes",
]


def records_rows(rec: SiteRecord, br: BearingRecord) -> list[list]:
    rows = []
    for r in br.records:
        m, c = r["measurements"] or {}, r["checklist"] or {}
        rows.append(
            [
                r["uuid"],
                br.bearing["id"],
                br.bearing["reference"],
                r["design_revision"],
                rec.name(r["inspector_id"]),
                r["measured_at"],
                r["received_at"],
                *[m.get(k) for k in _MEASURED],
                *[c.get(k) for k in _CHECKED],
                r["utilisation"],
                bool(r["passed"]),
                r["blocking"],
                bool(r["older_revision"]),
                bool(r["late"]),
                " ".join(x.get("code", "") for x in r["reasons"] or []),
                len(br.photos.get(r["uuid"], [])),
                r["notes"],
            ]
        )
    return rows


DECISIONS_HEADER = [
    "decision_id",
    "bearing_id",
    "reference",
    "record_uuid",
    "kind",
    "engineer",
    "at",
    "reason",
]


def decisions_rows(rec: SiteRecord, br: BearingRecord) -> list[list]:
    return [
        [
            d["id"],
            br.bearing["id"],
            br.bearing["reference"],
            d["record_uuid"],
            d["kind"],
            rec.name(d["engineer_id"]),
            d["created_at"],
            d["reason"],
        ]
        for d in br.decisions
    ]


RELEASES_HEADER = [
    "release_id",
    "bearing_id",
    "reference",
    "record_uuid",
    "signed_as",
    "account",
    "at",
    "statement",
]


def releases_rows(rec: SiteRecord, br: BearingRecord) -> list[list]:
    return [
        [
            r["id"],
            br.bearing["id"],
            br.bearing["reference"],
            r["record_uuid"] or "",
            r["contractor_name"],
            rec.name(r["contractor_id"]),
            r["created_at"],
            r["statement"],
        ]
        for r in br.releases
    ]


REOPENINGS_HEADER = ["reopening_id", "bearing_id", "reference", "engineer", "at", "reason"]


def reopenings_rows(rec: SiteRecord, br: BearingRecord) -> list[list]:
    return [
        [
            r["id"],
            br.bearing["id"],
            br.bearing["reference"],
            rec.name(r["engineer_id"]),
            r["created_at"],
            r["reason"],
        ]
        for r in br.reopenings
    ]


EVENTS_HEADER = ["event_id", "at", "who", "kind", "bearing_id", "reference", "detail"]


def events_row(rec: SiteRecord, e: dict, refs: dict[str, str]) -> list:
    return [
        e["id"],
        e["at"],
        rec.name(e["user_id"]),
        e["kind"],
        e["bearing_id"] or "",
        refs.get(e["bearing_id"], ""),
        _json(e["detail"] or {}),
    ]


# File → (header, the rows one bearing gives); events.csv is written after the bearings.
BEARING_FILES: dict[str, tuple[list[str], Callable[[SiteRecord, BearingRecord], list]]] = {
    "bearings.csv": (BEARINGS_HEADER, bearings_rows),
    "records.csv": (RECORDS_HEADER, records_rows),
    "decisions.csv": (DECISIONS_HEADER, decisions_rows),
    "releases.csv": (RELEASES_HEADER, releases_rows),
    "reopenings.csv": (REOPENINGS_HEADER, reopenings_rows),
}
CSV_FILES = ("schedule.csv", *BEARING_FILES, "events.csv")
# The folder the CSV files are written in before they are zipped.
WORK_PREFIX = "sitecheck-export-"


def _basis_name(rec: SiteRecord) -> str:
    return (rec.site.get("code_basis") or {}).get("name", "")


def write_csv_files(
    rec: SiteRecord, folder: Path, *, progress: Progress | None = None
) -> dict[str, list[str]]:
    """Write every CSV file into ``folder`` in one pass over the bearings (each file with a
    byte-order mark, so that spreadsheet programs read it as UTF-8: mm², ≤, names).

    Returns the design inputs schedule.csv cannot hold, by bearing reference (most sites:
    none)."""
    basis = _basis_name(rec)
    handles: dict[str, TextIO] = {}
    gaps: dict[str, list[str]] = {}
    refs: dict[str, str] = {}
    total = len(rec.bearings)
    try:
        for name in CSV_FILES:
            handles[name] = open(folder / name, "w", newline="", encoding="utf-8")  # noqa: SIM115
            handles[name].write("\ufeff")
        schedule = csv.DictWriter(
            handles["schedule.csv"], fieldnames=list(DESIGN_COLUMNS), lineterminator=LINE_END
        )
        schedule.writeheader()
        writers = {
            name: csv.writer(handles[name], lineterminator=LINE_END) for name in BEARING_FILES
        }
        for name, (header, _rows) in BEARING_FILES.items():
            writers[name].writerow(header)
        for done, br in enumerate(rec.bearings, start=1):
            b = br.bearing
            refs[b["id"]] = b["reference"]
            schedule.writerows(schedule_rows(br, basis))
            missing = schedule_gaps(b["design_input"])
            if missing:
                gaps[b["reference"]] = missing
            for name, (_header, rows) in BEARING_FILES.items():
                writers[name].writerows(cell_row(row) for row in rows(rec, br))
            if progress:
                progress(done, total, b["reference"])
        events = csv.writer(handles["events.csv"], lineterminator=LINE_END)
        events.writerow(EVENTS_HEADER)
        events.writerows(cell_row(events_row(rec, e, refs)) for e in rec.events)
    finally:
        for handle in handles.values():
            handle.close()
    return gaps


def readme(rec: SiteRecord, gaps: dict[str, list[str]]) -> str:
    lines = [
        f"Data export of site {rec.site['name']}, made {rec.made_at} (UTC).",
        "",
        CAUTION,
        "",
        "schedule.csv   the bearing schedule (design values, kN and mm); it imports into a site",
        "bearings.csv   each bearing: state, utilisation at design and as built, decision, release",
        "records.csv    every as-built record, newest first per bearing (values in mm, N/mm²)",
        "decisions.csv  the engineer's decisions with their reasons",
        "releases.csv   releases for closing up, signed and timed",
        "reopenings.csv reopened bearings with their reasons",
        "events.csv     the audit trail, oldest first",
        "",
        "Times are UTC. Free text (references, locations, names, notes, reasons) that begins",
        "with = + - @, a tab or a carriage return has a ' put in front, so that a spreadsheet",
        "shows it rather than running it as a formula; so has text that begins with ' and then",
        "one of those. Numbers are written as they are (an offset of -20 is -20). Importing",
        "schedule.csv takes the ' off again.",
    ]
    if gaps:
        lines += ["", "Design inputs schedule.csv cannot hold (they are in bearings.csv):"]
        lines += [f"  {ref}: {', '.join(v)}" for ref, v in gaps.items()]
    return "\n".join(lines) + "\n"


def write_csv_zip(
    rec: SiteRecord,
    out: str | os.PathLike | BinaryIO,
    *,
    progress: Progress | None = None,
    workdir: str | os.PathLike | None = None,
) -> None:
    """The CSV files and a README, zipped, to a path or a binary stream. The CSV files are
    written to temporary files (under ``workdir``) first and then copied into the zip a
    block at a time."""
    with tempfile.TemporaryDirectory(prefix=WORK_PREFIX, dir=workdir) as tmp:
        folder = Path(tmp)
        gaps = write_csv_files(rec, folder, progress=progress)
        with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
            z.writestr("README.txt", readme(rec, gaps))
            for name in CSV_FILES:
                z.write(folder / name, name)


def csv_zip(rec: SiteRecord) -> bytes:
    buffer = io.BytesIO()
    write_csv_zip(rec, buffer)
    return buffer.getvalue()


def _table(header: list[str], rows: Iterable[list]) -> str:
    out = io.StringIO()
    w = csv.writer(out, lineterminator=LINE_END)
    w.writerow(header)
    w.writerows(cell_row(row) for row in rows)
    return out.getvalue()


def schedule_csv(rec: SiteRecord) -> str:
    """schedule.csv's text (without the byte-order mark the zip's copy has)."""
    out = io.StringIO()
    w = csv.DictWriter(out, fieldnames=list(DESIGN_COLUMNS), lineterminator=LINE_END)
    w.writeheader()
    basis = _basis_name(rec)
    for br in rec.bearings:
        w.writerows(schedule_rows(br, basis))
    return out.getvalue()


def records_csv(rec: SiteRecord) -> str:
    """records.csv's text (without the byte-order mark the zip's copy has)."""
    return _table(RECORDS_HEADER, (row for br in rec.bearings for row in records_rows(rec, br)))


# --- JSON -----------------------------------------------------------------------------------

# The words of a calculation step and of a check: the same for every bearing checked the same
# way, so the JSON gives each once (texts.steps, texts.checks) and a calculation refers to it
# by number. A step's inputs keep their values in place; their names and units are words.
STEP_WORDS = ("label", "symbol", "formula", "unit", "clause", "source")
CHECK_WORDS = ("code", "title", "kind", "unit", "clause", "source")


class Texts:
    """The words of every step, check and note met so far, each numbered once."""

    def __init__(self) -> None:
        self.tables: dict[str, list] = {"steps": [], "checks": [], "notes": []}
        self._numbers: dict[tuple[str, str], int] = {}

    def number(self, table: str, words: dict | str) -> int:
        key = (table, _key(words))
        found = self._numbers.get(key)
        if found is None:
            rows = self.tables[table]
            found = self._numbers[key] = len(rows)
            rows.append(words)
        return found

    def as_dict(self) -> dict:
        return self.tables


def _key(words: dict | str):
    """Words as a dict key; the squeezes build their dicts in one key order, and a step's
    input names are its only list."""
    if isinstance(words, str):
        return words
    return tuple((k, tuple(map(tuple, v)) if k == "inputs" else v) for k, v in words.items())


def _plain_inputs(inputs) -> bool:
    return isinstance(inputs, list) and all(
        isinstance(i, list) and len(i) == 3 and isinstance(i[0], str) and isinstance(i[2], str)
        for i in inputs
    )


def _squeeze_step(step, texts: Texts):
    if not isinstance(step, dict) or "text" in step:
        return step
    words = {k: step[k] for k in STEP_WORDS if isinstance(step.get(k), str)}
    rest = {k: v for k, v in step.items() if k not in words}
    if _plain_inputs(rest.get("inputs")):
        words["inputs"] = [[name, unit] for name, _value, unit in rest["inputs"]]
        rest["inputs"] = [value for _name, value, _unit in rest["inputs"]]
    return {"text": texts.number("steps", words), **rest}


def squeeze_calculation(result, texts: Texts):
    """A stored calculation with its steps' and checks' words replaced by their numbers in
    ``texts``; :func:`expand_calculation` gives it back exactly."""
    if isinstance(result, list):
        return [squeeze_calculation(v, texts) for v in result]
    if not isinstance(result, dict):
        return result
    out = {}
    for key, value in result.items():
        if key == "steps" and isinstance(value, list):
            out[key] = [_squeeze_step(s, texts) for s in value]
        elif key == "checks" and isinstance(value, list):
            out[key] = [_squeeze_check(c, texts) for c in value]
        elif key == "notes" and _all_text(value):
            # The same sentences come back on bearing after bearing.
            out[key] = [texts.number("notes", note) for note in value]
        else:
            out[key] = squeeze_calculation(value, texts)
    return out


def _all_text(value) -> bool:
    return isinstance(value, list) and all(isinstance(v, str) for v in value)


def _squeeze_check(check, texts: Texts):
    if not isinstance(check, dict) or "text" in check:
        return squeeze_calculation(check, texts)
    words = {k: check[k] for k in CHECK_WORDS if isinstance(check.get(k), str)}
    rest = {k: v for k, v in check.items() if k not in words}
    return {"text": texts.number("checks", words), **squeeze_calculation(rest, texts)}


def expand_calculation(squeezed, texts: dict):
    """A calculation from the JSON export, whole again (``texts``: the file's "texts")."""
    if isinstance(squeezed, list):
        return [expand_calculation(v, texts) for v in squeezed]
    if not isinstance(squeezed, dict):
        return squeezed
    out = {}
    for key, value in squeezed.items():
        if key == "steps" and isinstance(value, list):
            out[key] = [_expand_item(s, texts["steps"]) for s in value]
        elif key == "checks" and isinstance(value, list):
            out[key] = [expand_calculation(_expand_item(c, texts["checks"]), texts) for c in value]
        elif key == "notes" and isinstance(value, list) and _all_numbers(value):
            out[key] = [texts["notes"][n] for n in value]
        else:
            out[key] = expand_calculation(value, texts)
    return out


def _all_numbers(value: list) -> bool:
    return all(isinstance(v, int) and not isinstance(v, bool) for v in value)


def _expand_item(item, table: list[dict]):
    if not isinstance(item, dict) or "text" not in item:
        return item
    words = dict(table[item["text"]])
    rest = {k: v for k, v in item.items() if k != "text"}
    names = words.pop("inputs", None)
    if names is not None:
        rest["inputs"] = [
            [name, value, unit] for (name, unit), value in zip(names, rest["inputs"], strict=True)
        ]
    return {**words, **rest}


def _without(row: dict, *keys: str) -> dict:
    return {k: v for k, v in row.items() if k not in keys}


def bearing_json(rec: SiteRecord, br: BearingRecord, texts: Texts) -> dict:
    """One bearing as the JSON export gives it. Rows inside it do not repeat its id, nor a
    record's photos their record's; people are named by id (the file's "people")."""
    b = br.bearing
    out = {
        "id": b["id"],
        "reference": b["reference"],
        "location": b["location"],
        "state": b["state"],
        "state_changed_at": b["state_changed_at"],
        "revision": b["revision"],
        "design_input": b["design_input"],
        "design_result": squeeze_calculation(b["design_result"], texts),
        "design_utilisation": b["design_utilisation"],
        "design_passed": bool(b["design_passed"]),
        "latest_record_uuid": b["latest_record_uuid"],
        "records": [
            {
                **_without(r, "site_id", "bearing_id", "kind", "result"),
                "result": squeeze_calculation(r["result"], texts),
                "passed": bool(r["passed"]),
                "late": bool(r["late"]),
                "older_revision": bool(r["older_revision"]),
                "photos": [
                    _without(p, "bearing_id", "record_uuid") for p in br.photos.get(r["uuid"], [])
                ],
            }
            for r in br.records
        ],
        "decisions": [_without(d, "bearing_id") for d in br.decisions],
        "releases": [_without(r, "bearing_id") for r in br.releases],
        "reopenings": [_without(r, "bearing_id") for r in br.reopenings],
        "releases_kept": [_without(k, "bearing_id") for k in br.releases_kept],
    }
    gaps = schedule_gaps(b["design_input"])
    if gaps:
        out["schedule_gaps"] = gaps
    for user_id in br.user_ids():
        rec.name(user_id)  # so "people" names everyone the file names by id
    return out


def _dumps(value) -> str:
    return json.dumps(value, ensure_ascii=False, allow_nan=False, separators=(",", ":"))


def write_json(
    rec: SiteRecord, out: str | os.PathLike | BinaryIO, *, progress: Progress | None = None
) -> None:
    """The JSON export to a path or a binary stream: one JSON object, written a bearing (and
    an event) a line. "people" and "texts" come last, as they gather while the bearings are
    written."""
    if isinstance(out, (str, os.PathLike)):
        with open(out, "wb") as handle:
            write_json(rec, handle, progress=progress)
        return
    site = rec.site
    texts = Texts()
    total = len(rec.bearings)

    def put(text: str) -> None:
        out.write(text.encode())

    head = {
        "format": "sitecheck data export",
        "format_version": FORMAT_VERSION,
        "made_at": rec.made_at,
        "caution": CAUTION,
        "site": {
            "id": site["id"],
            "name": site["name"],
            "address": site["address"],
            "code_basis": site["code_basis"],
            "review_settings": site["review_settings"],
            "created_at": site["created_at"],
        },
        "members": [{"id": m["id"], "name": m["name"], "role": m["role"]} for m in rec.members],
    }
    put(_dumps(head)[:-1] + ',\n"bearings":[')
    for done, br in enumerate(rec.bearings, start=1):
        put(("\n" if done == 1 else ",\n") + _dumps(bearing_json(rec, br, texts)))
        if progress:
            progress(done, total, br.bearing["reference"])
    put('\n],\n"events":[')
    first = True
    for e in rec.events:
        rec.name(e["user_id"])
        put(("\n" if first else ",\n") + _dumps(_without(e, "site_id")))
        first = False
    for signed in rec.sign_offs:
        rec.name(signed["engineer_id"])
    people = {str(k): v for k, v in sorted(rec.names.items())}
    put('\n],\n"people":' + _dumps(people))
    put(',\n"sign_offs":' + _dumps(rec.sign_offs))
    put(',\n"texts":' + _dumps(texts.as_dict()) + "\n}\n")


def json_bytes(rec: SiteRecord) -> bytes:
    buffer = io.BytesIO()
    write_json(rec, buffer)
    return buffer.getvalue()
