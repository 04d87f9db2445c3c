"""The data export: the zipped CSV files and the JSON hold every kind of row with the
caution, and no cell of any CSV starts a formula a spreadsheet would run."""

from __future__ import annotations

import csv
import io
import json
import uuid
import zipfile
from datetime import UTC, datetime

from kit.bearing_inputs import across_on_padstone
from sitecheck import cli, services, store
from sitecheck.csvcells import FORMULA_STARTS
from sitecheck.report import export
from sitecheck.report.collect import collect


def test_the_zip_holds_every_kind_of_row_with_the_caution(db, site, recorded):
    data = export.csv_zip(collect(db, site["id"]))
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        names = set(z.namelist())
        assert names == {"README.txt", *export.CSV_FILES}
        read = {
            n: list(csv.DictReader(io.StringIO(z.read(n).decode("utf-8-sig"))))
            for n in export.CSV_FILES
        }
        assert "competent engineer" in z.read("README.txt").decode()
    assert len(read["schedule.csv"]) == len(store.list_bearings(db, site_id=site["id"]))
    assert {r["reference"] for r in read["records.csv"]} == {"GF-B1-E", "GF-B2-N"}
    assert [r["kind"] for r in read["decisions.csv"]] == ["accept"]
    assert read["releases.csv"][0]["signed_as"] == "Cora Contractor for Invented Build Ltd"
    kinds = {r["kind"] for r in read["events.csv"]}
    assert {"site created", "bearing added", "record received", "decision", "release"} <= kinds
    released = next(r for r in read["bearings.csv"] if r["reference"] == "GF-B1-E")
    assert released["state"] == "released" and released["released_by"]


def test_free_text_that_a_spreadsheet_would_run_is_defused(db, site, people):
    bearing = store.list_bearings(db, site_id=site["id"])[0]
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=str(uuid.uuid4()),
        measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=1,
        measurements={},
        checklist={},
        notes='=HYPERLINK("http://example.test")',
        inspector_id=people["inspector"].id,
    )
    rows = list(csv.DictReader(io.StringIO(export.records_csv(collect(db, site["id"])))))
    assert rows[0]["notes"].startswith("'=")


def test_no_cell_of_any_exported_csv_starts_a_formula(db, site, people):
    """Text that a spreadsheet would run, typed in every free-text place the data export
    writes: in every CSV each such cell is guarded, and a negative measured offset stays a
    number."""
    hostile = {}
    for role, name in (("engineer", "=Eng"), ("inspector", "@Insp"), ("contractor", "+Con")):
        user = store.create_user(
            db, email=f"formula.{role}@example.test", name=name, password_hash="x"
        )
        store.add_membership(
            db, user_id=user["id"], site_id=site["id"], role=role, invited_by=people["engineer"].id
        )
        hostile[role] = user["id"]
    bearing = services.add_bearing(
        db,
        site=site,
        reference="=HYPERLINK(1)",
        location="-grid, invented",
        design=across_on_padstone(),
        user_id=hostile["engineer"],
    )
    record_uuid = str(uuid.uuid4())
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=record_uuid,
        measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=1,
        measurements={"padstone_length": 300.0, "offset_across": -20.0},
        checklist={"packing": 0.0},
        notes="-notes",
        inspector_id=hostile["inspector"],
    )
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    assert bearing["state"] == "engineer to decide"
    services.decide(
        db,
        site=site,
        bearing=bearing,
        kind="accept",
        reason="+reason",
        engineer_id=hostile["engineer"],
    )
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    services.release(
        db,
        site=site,
        bearing=bearing,
        contractor_id=hostile["contractor"],
        contractor_name="@signed",
        statement="\tstatement",
    )
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    services.reopen(
        db,
        site=site,
        bearing=bearing,
        role="engineer",
        reason="\rreason",
        engineer_id=hostile["engineer"],
    )

    with zipfile.ZipFile(io.BytesIO(export.csv_zip(collect(db, site["id"])))) as z:
        read = {
            n: list(csv.reader(io.StringIO(z.read(n).decode("utf-8-sig"), newline="")))
            for n in export.CSV_FILES
        }
    for name, (header, *rows) in read.items():
        guarded = 0
        for row in rows:
            for column, value in zip(header, row, strict=True):
                if value.startswith(FORMULA_STARTS):
                    float(value)  # only a number may begin with a sign
                    assert column.startswith("measured_") or column in (
                        "offset_along",
                        "offset_across",
                    ), (name, column, value)
                guarded += value.startswith("'")
        assert guarded, f"{name} has no hostile text to guard: the test would prove nothing"
    (record,) = [r for r in read["records.csv"][1:] if r[2] == "'=HYPERLINK(1)"]
    by_column = dict(zip(read["records.csv"][0], record, strict=True))
    assert by_column["measured_offset_across"] == "-20"
    assert by_column["notes"] == "'-notes" and by_column["inspector"] == "'@Insp"


def test_the_json_export_holds_everything_and_parses(db, site, recorded):
    data = json.loads(export.json_bytes(collect(db, site["id"])))
    assert data["caution"] == cli.CAUTION
    assert data["site"]["code_basis"]["name"] == "EC6 + UK NA"
    by_ref = {b["reference"]: b for b in data["bearings"]}
    b = by_ref["GF-B2-N"]
    assert b["records"][0]["photos"] and b["decisions"][0]["kind"] == "accept"
    assert b["design_result"]["spread"]["sigma_max"] > 0
    assert by_ref["GF-B1-E"]["releases"][0]["contractor_name"].startswith("Cora")
