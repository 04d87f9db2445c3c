"""The ``sitecheck check`` command on the demo schedule and on a schedule with bad rows."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from sitecheck import demo
from sitecheck.cli import main
from sitecheck.schedule import COLUMNS, parse_schedule

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "demo_site" / "schedule.csv"


def test_demo_schedule_is_written_by_code():
    # One fixtures set for tests and the demo, written by code, never hand-edited.
    assert DEMO.read_text(encoding="utf-8") == demo.schedule_csv()


def test_demo_schedule_covers_what_the_demo_must_show():
    rows = parse_schedule(DEMO.read_text(encoding="utf-8")).rows
    assert len(rows) >= 12
    assert {r.design.beam.orientation for r in rows} == {"across", "in-line"}
    assert {r.basis_name for r in rows} >= {None, "BS 5628-1"}
    assert any(r.design.padstone is None for r in rows) and any(r.design.padstone for r in rows)


def test_check_prints_every_demo_bearing(capsys):
    assert main(["check", str(DEMO)]) == 0
    out = capsys.readouterr().out
    for row in demo.BEARINGS:
        assert row["reference"] in out
    assert "within design" in out and "engineer to decide" in out and "fails at design" in out
    assert "hint:" in out
    assert "never replace" in out  # the caution


def test_check_json_has_traces_reasons_and_hints(capsys):
    assert main(["check", "--json", str(DEMO)]) == 0
    data = json.loads(capsys.readouterr().out)
    by_ref = {b["reference"]: b for b in data["bearings"]}
    assert len(by_ref) == len(demo.BEARINGS)
    b1w = by_ref["GF-B1-W"]
    assert b1w["verdict"] == "engineer to decide"
    assert {r["code"] for r in b1w["review_reasons"]} >= {"padstone-length-off"}
    assert b1w["as_built"]["checks"][0]["steps"]
    failing = by_ref["FF-B5"]
    assert failing["verdict"] == "fails at design" and failing["hint"]["padstone"]
    assert by_ref["EX-B7"]["basis"] == "BS 5628-1" and by_ref["EX-B7"]["verdict"] == "within design"
    assert data["errors"] == [] and "caution" in data


def test_bad_rows_are_reported_and_good_rows_still_checked(tmp_path, capsys):
    header = "reference,reaction_kN,flange_width,bearing_length,wall_thickness,height_to_bearing,padstone_length,padstone_width,padstone_depth,f_k,asbuilt_bearing_length,asbuilt_cracks\n"
    rows = [
        "OK-1,40,133,150,215,2400,440,215,140,4.0,,\n",
        "BAD-NUMBER,forty,133,150,215,2400,440,215,140,4.0,,\n",
        "BAD-METRES,40,133,150,0.215,2400,,,,4.0,,\n",
        "BAD-PAD,40,133,250,215,2400,440,215,140,4.0,,\n",
        "OK-1,40,133,150,215,2400,440,215,140,4.0,,\n",
        "BAD-YESNO,40,133,150,215,2400,440,215,140,4.0,150,maybe\n",
        "OK-2,40,133,150,215,2400,440,215,140,4.0,150,no\n",
    ]
    path = tmp_path / "schedule.csv"
    path.write_text(header + "".join(rows), encoding="utf-8")
    assert main(["check", str(path)]) == 1
    captured = capsys.readouterr()
    assert "OK-1" in captured.out and "OK-2" in captured.out
    err = captured.err
    assert "row 3, reaction_kN = 'forty': a number in kN" in err
    assert "row 4, wall_thickness = '0.215'" in err and "looks like metres" in err
    assert "row 5, bearing_length = '250': no longer than the padstone it sits on (215 mm)" in err
    assert "row 6, reference = 'OK-1': already used on row 2" in err
    assert "row 7, asbuilt_cracks = 'maybe': yes or no" in err


def test_missing_required_column(tmp_path, capsys):
    path = tmp_path / "s.csv"
    path.write_text("reference,reaction_kN\nX,10\n", encoding="utf-8")
    assert main(["check", str(path)]) == 1
    assert "lacks required column(s)" in capsys.readouterr().err


def test_unreadable_file(tmp_path, capsys):
    assert main(["check", str(tmp_path / "nope.csv")]) == 2
    assert "cannot read" in capsys.readouterr().err


def test_columns_are_documented_in_the_readme():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    for name in COLUMNS:
        assert f"`{name}`" in readme, name


def test_console_script_runs():
    done = subprocess.run(
        [sys.executable, "-m", "sitecheck.cli", "check", str(DEMO)],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert "GF-B1-E" in done.stdout


def test_a_basis_value_for_the_run_is_used_and_a_non_physical_one_refused(tmp_path, capsys):
    path = tmp_path / "s.csv"
    path.write_text(
        "reference,reaction_kN,flange_width,bearing_length,wall_thickness,height_to_bearing,"
        "padstone_length,padstone_width,padstone_depth,padstone_reinforced,f_k\n"
        "P1,40,133,150,215,2400,440,215,140,yes,4.0\n",
        encoding="utf-8",
    )
    assert main(["check", "--json", "--basis-value", "alpha_cc=1.0", str(path)]) == 0
    data = json.loads(capsys.readouterr().out)
    # f_cd = α_cc f_ck / γ_c, EN 1992-1-1 eqn 3.15: C25/30 with α_cc = 1.0, γ_c = 1.5.
    assert data["bearings"][0]["design"]["strengths"]["f_cd"] == pytest.approx(25 / 1.5)
    for value, field in (
        ("gamma_c=0", "basis.gamma_c"),
        ("alpha_cc=nan", "basis.alpha_cc"),
        ("alpha_cc=0,85", "basis.alpha_cc = '0,85': a number with a decimal point: write 0.85"),
        ("alpha_cc=1_0", "basis.alpha_cc = '1_0': a number without underscores: write 10"),
        ("gamma_M_ec6.2|I=abc", "basis.gamma_M_ec6.2|I"),
        ("colour=red", "basis.colour"),
        ("alpha_cc", "--basis-value"),
    ):
        assert main(["check", "--basis-value", value, str(path)]) == 2
        captured = capsys.readouterr()
        assert captured.out == "" and f"sitecheck: --basis-value: {field}" in captured.err


def test_create_engineer_makes_an_account_that_may_make_sites(tmp_path, monkeypatch, capsys):
    from sitecheck import store

    db_path = tmp_path / "office.db"
    monkeypatch.setattr("getpass.getpass", lambda prompt="": "lintels over the back door")
    assert main(["create-engineer", "ann@firm.example", "Ann Example", "--db", str(db_path)]) == 0
    assert "make a site" in capsys.readouterr().out
    db = store.open_db(db_path)
    try:
        user = store.get_user_by_email(db, "ann@firm.example")
        assert user["name"] == "Ann Example" and user["may_make_sites"] is True
        store.create_user(db, email="bo@firm.example", name="Bo", password_hash="x")
    finally:
        db.conn.close()

    assert main(["may-make-sites", "bo@firm.example", "--db", str(db_path)]) == 0
    assert "bo@firm.example may make sites" in capsys.readouterr().out
    assert main(["may-make-sites", "bo@firm.example", "--take-away", "--db", str(db_path)]) == 0
    assert main(["may-make-sites", "nobody@firm.example", "--db", str(db_path)]) == 2
    assert "no account for nobody@firm.example" in capsys.readouterr().err
    db = store.open_db(db_path)
    try:
        assert store.get_user_by_email(db, "bo@firm.example")["may_make_sites"] is False
        kinds = [k for (k,) in db.execute("SELECT kind FROM events WHERE kind LIKE 'may make%'")]
    finally:
        db.conn.close()
    assert kinds == ["may make sites given", "may make sites taken away"]


def test_create_engineer_refuses_a_weak_password(tmp_path, monkeypatch, capsys):
    monkeypatch.setattr("getpass.getpass", lambda prompt="": "password123")
    assert main(["create-engineer", "ann@firm.example", "Ann", "--db", str(tmp_path / "o.db")]) == 2
    assert "first that anyone would try" in capsys.readouterr().err
