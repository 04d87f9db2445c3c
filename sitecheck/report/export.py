"""The data export of a site: CSV files (one per kind of row, in a zip) and one JSON file.

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
import re
import unicodedata
import zipfile
from dataclasses import fields
from datetime import UTC, datetime
from decimal import Decimal

from sitecheck.bearing.review import Checklist, Measurements
from sitecheck.bearing.serial import input_to_dict
from sitecheck.cautions import CAUTION
from sitecheck.csvcells import Figure, cell
from sitecheck.report.collect import SiteRecord
from sitecheck.schedule import DESIGN_COLUMNS, parse_schedule

FORMAT_VERSION = 1
# The csv module quotes a cell holding a character of the line ending only: with "\n"
# alone, a lone carriage return in a note would be written bare and read as a row's end.
LINE_END = "\r\n"


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


def schedule_csv(rec: SiteRecord) -> str:
    out = io.StringIO()
    w = csv.DictWriter(out, fieldnames=list(DESIGN_COLUMNS), lineterminator=LINE_END)
    w.writeheader()
    basis = (rec.site.get("code_basis") or {}).get("name", "")
    for br in rec.bearings:
        b = br.bearing
        w.writerow(schedule_row(b["reference"], b["location"], basis, b["design_input"]))
    return out.getvalue()


def _table(header: list[str], rows: list[list]) -> str:
    """A CSV file from rows of values as they are kept: every text cell goes through the
    formula guard and every number is written as a number (see :mod:`sitecheck.csvcells`)."""
    out = io.StringIO()
    w = csv.writer(out, lineterminator=LINE_END)
    w.writerow(header)
    w.writerows([cell(v, _number) for v in row] for row in rows)
    return out.getvalue()


def _json(value) -> str:
    return json.dumps(value, ensure_ascii=False, sort_keys=True, separators=(",", ":"))


def bearings_csv(rec: SiteRecord) -> str:
    rows = []
    for br in rec.bearings:
        b, latest = br.bearing, br.latest
        release = br.releases[-1] if br.releases and b["state"] == "released" else None
        rows.append(
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
        )
    header = [
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
    return _table(header, rows)


_MEASURED = [f.name for f in fields(Measurements)]
_CHECKED = [f.name for f in fields(Checklist)]


def records_csv(rec: SiteRecord) -> str:
    rows = []
    for br in rec.bearings:
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
    header = [
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
    return _table(header, rows)


def decisions_csv(rec: SiteRecord) -> str:
    rows = [
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
        for br in rec.bearings
        for d in br.decisions
    ]
    header = ["decision_id", "bearing_id", "reference", "record_uuid", "kind", "engineer"]
    return _table(header + ["at", "reason"], rows)


def releases_csv(rec: SiteRecord) -> str:
    rows = [
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
        for br in rec.bearings
        for r in br.releases
    ]
    header = ["release_id", "bearing_id", "reference", "record_uuid", "signed_as", "account"]
    return _table(header + ["at", "statement"], rows)


def reopenings_csv(rec: SiteRecord) -> str:
    rows = [
        [
            r["id"],
            br.bearing["id"],
            br.bearing["reference"],
            rec.name(r["engineer_id"]),
            r["created_at"],
            r["reason"],
        ]
        for br in rec.bearings
        for r in br.reopenings
    ]
    return _table(["reopening_id", "bearing_id", "reference", "engineer", "at", "reason"], rows)


def events_csv(rec: SiteRecord) -> str:
    refs = {br.bearing["id"]: br.bearing["reference"] for br in rec.bearings}
    rows = [
        [
            e["id"],
            e["at"],
            rec.name(e["user_id"]),
            e["kind"],
            e["bearing_id"] or "",
            refs.get(e["bearing_id"], ""),
            _json(e["detail"] or {}),
        ]
        for e in rec.events
    ]
    return _table(["event_id", "at", "who", "kind", "bearing_id", "reference", "detail"], rows)


CSV_FILES = {
    "schedule.csv": schedule_csv,
    "bearings.csv": bearings_csv,
    "records.csv": records_csv,
    "decisions.csv": decisions_csv,
    "releases.csv": releases_csv,
    "reopenings.csv": reopenings_csv,
    "events.csv": events_csv,
}


def readme(rec: SiteRecord) -> str:
    gaps = {
        br.bearing["reference"]: schedule_gaps(br.bearing["design_input"]) for br in rec.bearings
    }
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
    missing = {k: v for k, v in gaps.items() if v}
    if missing:
        lines += ["", "Design inputs schedule.csv cannot hold (they are in bearings.csv):"]
        lines += [f"  {ref}: {', '.join(v)}" for ref, v in missing.items()]
    return "\n".join(lines) + "\n"


def csv_zip(rec: SiteRecord) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("README.txt", readme(rec))
        for name, make in CSV_FILES.items():
            # A BOM lets spreadsheet programs read the file as UTF-8 (mm², ≤, names).
            z.writestr(name, "\ufeff" + make(rec))
    return buffer.getvalue()


def site_json(rec: SiteRecord) -> dict:
    site = rec.site
    bearings = []
    for br in rec.bearings:
        b = br.bearing
        bearings.append(
            {
                "id": b["id"],
                "reference": b["reference"],
                "location": b["location"],
                "state": b["state"],
                "state_changed_at": b["state_changed_at"],
                "revision": b["revision"],
                "design_input": b["design_input"],
                "design_result": b["design_result"],
                "design_utilisation": b["design_utilisation"],
                "design_passed": bool(b["design_passed"]),
                "latest_record_uuid": b["latest_record_uuid"],
                "records": [
                    {
                        **{k: r[k] for k in r if k not in ("site_id",)},
                        "inspector": rec.name(r["inspector_id"]),
                        "passed": bool(r["passed"]),
                        "late": bool(r["late"]),
                        "older_revision": bool(r["older_revision"]),
                        "photos": [
                            {k: p[k] for k in p if k != "bearing_id"}
                            for p in br.photos.get(r["uuid"], [])
                        ],
                    }
                    for r in br.records
                ],
                "decisions": [{**d, "engineer": rec.name(d["engineer_id"])} for d in br.decisions],
                "releases": [{**r, "account": rec.name(r["contractor_id"])} for r in br.releases],
                "reopenings": [
                    {**r, "engineer": rec.name(r["engineer_id"])} for r in br.reopenings
                ],
                "schedule_gaps": schedule_gaps(b["design_input"]),
            }
        )
    return {
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
        "bearings": bearings,
        "events": [{**e, "who": rec.name(e["user_id"])} for e in rec.events],
        "sign_offs": rec.sign_offs,
    }


def json_bytes(rec: SiteRecord) -> bytes:
    return json.dumps(site_json(rec), ensure_ascii=False, indent=1, allow_nan=False).encode()
