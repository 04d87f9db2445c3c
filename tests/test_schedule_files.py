"""Reading schedule files as people save them: shifted rows, repeated columns, semicolons,
tabs, byte-order marks, Windows-1252, mixed-case headers, numbers out of range and columns
needed together. Real files in tmp_path, read by the ``sitecheck`` command run as a
subprocess and by the web import through the app; both must report the same rows.

The bearing is invented: a 133 mm flange bearing 150 mm on a 440 × 215 × 140 padstone on a
215 mm aggregate concrete block wall (sizes of the trade; the padstone is a common precast
size, METHODS.md section 6, common practice).
"""

from __future__ import annotations

import io
import json
import re
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from markupsafe import escape

from kit.web import post
from sitecheck import store
from sitecheck.bearing import ec6_uk_na
from sitecheck.schedule import parse_schedule, read_schedule, recheck_rows

ROOT = Path(__file__).resolve().parent.parent

BEARING = {
    "reference": "B1",
    "location": "Invented wall at grid A",
    "reaction_kN": "40",
    "flange_width": "133",
    "bearing_length": "150",
    "padstone_length": "440",
    "padstone_width": "215",
    "padstone_depth": "140",
    "wall_thickness": "215",
    "height_to_bearing": "2475",
    "unit_material": "aggregate concrete",
    "unit_strength": "7.3",
    "unit_height": "215",
    "unit_width": "215",
    "mortar": "M4",
}


def lines(header: list[str], rows: list[list[str]], sep: str = ",") -> str:
    """Rows written as a person (or a careless program) would: cells joined by the
    separator, nothing quoted unless the cell says so itself."""
    return "".join(sep.join(cells) + "\n" for cells in [header, *rows])


def bearing_rows(*references: str, sep: str = ",", **over: str) -> str:
    header = list(BEARING)
    rows = [[({**BEARING, "reference": ref} | over)[c] for c in header] for ref in references]
    return lines(header, rows, sep)


def check(path: Path, *args: str) -> tuple[int, dict, str]:
    """``sitecheck check --json`` as a user runs it: exit code, the JSON printed, stderr."""
    done = subprocess.run(
        [sys.executable, "-m", "sitecheck.cli", "check", "--json", *args, str(path)],
        capture_output=True,
        text=True,
        check=False,
        cwd=ROOT,
    )
    return done.returncode, json.loads(done.stdout), done.stderr


def where(errors: list[dict]) -> list[tuple[int, str]]:
    return [(e["row"], e["column"]) for e in errors]


# --- rows that do not match the header ----------------------------------------------------------

SHIFT_HEADER = [
    "reference",
    "location",
    "f_k",
    "reaction_kN",
    "flange_width",
    "bearing_length",
    "wall_thickness",
    "height_to_bearing",
]


def test_an_unquoted_comma_in_a_location_refuses_the_row_instead_of_shifting_it(tmp_path):
    # Read shifted, row 2 would be a 4 kN reaction on a 40 mm flange over a 150 mm wall,
    # every value in range: only the count of cells tells it apart.
    path = tmp_path / "schedule.csv"
    path.write_text(
        lines(
            SHIFT_HEADER,
            [
                ["B1", "Grid C, 4", "4", "40", "133", "150", "215", "2400"],
                ["B2", '"Grid D, 4"', "4", "40", "133", "150", "215", "2400"],
            ],
        ),
        encoding="utf-8",
    )
    code, out, err = check(path)
    assert code == 1
    assert [(b["reference"], b["location"]) for b in out["bearings"]] == [("B2", "Grid D, 4")]
    (error,) = out["errors"]
    assert (error["row"], error["column"], error["value"]) == (2, "location", "Grid C, 4")
    assert "9 cells where the header has 8 columns (1 too many)" in error["message"]
    assert "none of the row was read" in error["message"]
    assert "double quotes" in error["message"]
    assert "row 2, location = 'Grid C, 4': this row has 9 cells" in err


def test_a_row_with_a_cell_left_out_is_refused_not_read_shifted(tmp_path):
    path = tmp_path / "schedule.csv"
    path.write_text(
        lines(
            [*SHIFT_HEADER, "a1"],
            [
                ["B1", "Grid C", "4", "40", "133", "150", "215", "2400", "900"],
                ["B2", "Grid D", "40", "133", "150", "215", "2400", "900"],  # no f_k
            ],
        ),
        encoding="utf-8",
    )
    code, out, _ = check(path)
    assert code == 1
    assert [b["reference"] for b in out["bearings"]] == ["B1"]
    (error,) = out["errors"]
    assert where([error]) == [(3, "")]
    assert "8 cells where the header has 9 columns (1 too few)" in error["message"]
    assert "even an empty one" in error["message"]


def test_a_separator_too_many_at_the_end_is_offered_as_a_reason():
    text = lines(SHIFT_HEADER, [["B1", "Grid C", "4", "40", "133", "150", "215", "2400", ""]])
    (error,) = parse_schedule(text).errors
    assert error.row == 2 and "1 too many" in error.message
    assert "a comma too many at the end" in error.message


def test_a_quote_left_open_is_caught_by_the_count_and_said():
    header = ",".join(SHIFT_HEADER)
    text = f'{header}\nB1,"Grid C,4,40,133,150,215,2400\nB2,Grid D,4,40,133,150,215,2400\n'
    parsed = parse_schedule(text)
    assert not parsed.rows
    (error,) = parsed.errors
    assert error.row == 2 and "too few" in error.message
    assert "double quote left open" in error.message


# --- the header ---------------------------------------------------------------------------------


def test_a_column_named_twice_refuses_the_file_naming_it(tmp_path):
    header = list(BEARING) + [" Reaction_KN "]
    rows = [[*[BEARING[c] for c in BEARING], "4"]]
    path = tmp_path / "schedule.csv"
    path.write_text(lines(header, rows), encoding="utf-8")
    code, out, _ = check(path)
    assert code == 1 and out["bearings"] == []
    (error,) = out["errors"]
    assert (error["row"], error["column"]) == (1, "reaction_kN")
    assert error["value"] == "reaction_kN / Reaction_KN"
    assert "2 times (in columns C and P)" in error["message"]
    assert "which one is meant cannot be told" in error["message"]


def test_headers_match_whatever_their_letter_case_and_spaces(tmp_path):
    plain = tmp_path / "plain.csv"
    plain.write_text(bearing_rows("B1"), encoding="utf-8")
    mixed = tmp_path / "mixed.csv"
    header, row = bearing_rows("B1").splitlines()
    shouted = ",".join(
        f"  {name.upper()} " if i % 2 else name.title() for i, name in enumerate(header.split(","))
    )
    mixed.write_text(f"{shouted}\n{row}\n", encoding="utf-8")
    code, out, _ = check(mixed)
    assert code == 0, out["errors"]
    assert out["ignored_columns"] == []
    _, expected, _ = check(plain)
    assert out["bearings"] == expected["bearings"]


def test_a_mistyped_column_is_ignored_with_a_note_naming_the_likely_one(tmp_path):
    text = bearing_rows("B1").replace("unit_height", "unit_heigth", 1)
    parsed = parse_schedule(text)
    assert parsed.unknown_columns == ("unit_heigth",)
    assert any("“unit_heigth”" in n and "is it unit_height?" in n for n in parsed.notes)
    # ... and the core then says what the missing size is for.
    path = tmp_path / "s.csv"
    path.write_text(text, encoding="utf-8")
    code, out, _ = check(path)
    assert code == 1 and where(out["errors"]) == [(2, "unit_height")]
    assert out["notes"] == list(parsed.notes)


# --- separators and encodings -------------------------------------------------------------------


@pytest.mark.parametrize("sep, name", [(";", "semicolons"), ("\t", "tabs")])
def test_semicolon_and_tab_separated_files_read_like_comma_separated_ones(tmp_path, sep, name):
    comma = tmp_path / "comma.csv"
    comma.write_text(bearing_rows("B1", "B2", location="Grid B; east"), encoding="utf-8")
    other = tmp_path / "other.csv"
    location = '"Grid B; east"' if sep == ";" else "Grid B; east"
    # Spreadsheets in many countries save "CSV UTF-8" this way: a byte-order mark, then
    # semicolons.
    other.write_text(
        "\ufeff" + bearing_rows("B1", "B2", sep=sep, location=location), encoding="utf-8"
    )
    _, expected, _ = check(comma)
    code, out, _ = check(other)
    assert code == 0, out["errors"]
    assert out["bearings"] == expected["bearings"] and len(out["bearings"]) == 2
    assert out["bearings"][0]["location"] == "Grid B; east"
    assert out["notes"] == [f"The cells are separated by {name}."]


def test_a_decimal_comma_is_refused_saying_why(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text(bearing_rows("B1", sep=";", reaction_kN="40,5"), encoding="utf-8")
    code, out, _ = check(path)
    assert code == 1
    (error,) = out["errors"]
    assert (error["row"], error["column"], error["value"]) == (2, "reaction_kN", "40,5")
    assert "decimal point" in error["message"] and "decimal comma" in error["message"]


def test_a_windows_1252_file_is_read_with_a_note_naming_the_line(tmp_path):
    path = tmp_path / "s.csv"
    text = (
        bearing_rows("B1", "B2") + bearing_rows("B3", location="Café door, 2° off").splitlines()[1]
    )
    path.write_bytes(text.replace("Café door, 2° off", '"Café door, 2° off"').encode("cp1252"))
    code, out, _ = check(path)
    assert code == 0, out["errors"]
    assert out["bearings"][2]["location"] == "Café door, 2° off"
    (note,) = out["notes"]
    assert "not UTF-8 (line 4: byte 0xE9)" in note and "Windows-1252" in note
    assert '“B3,"Café door, 2° off",' in note


@pytest.mark.parametrize(
    "data, says",
    [
        # 0x81 is not a character in Windows-1252 either.
        (b"\x81", "line 2: byte 0x81 is neither UTF-8 nor Windows-1252"),
        # UTF-8 elsewhere ("²"), one stray Windows-1252 byte: not guessed at.
        ("²".encode() + b"\xe9", "UTF-8 except for line 2: byte 0xE9"),
    ],
)
def test_bytes_that_cannot_be_read_are_refused_naming_the_line(tmp_path, data, says):
    path = tmp_path / "s.csv"
    header, row = bearing_rows("B1").splitlines()
    path.write_bytes(
        f"{header}\n".encode() + row.replace("Invented wall", "Wall ").encode() + data + b"\n"
    )
    code, out, err = check(path)
    assert code == 1 and out["bearings"] == []
    (error,) = out["errors"]
    assert error["row"] == 0 and says in error["message"]
    assert "CSV (UTF-8)" in error["message"]
    assert f"the file: {says}" in err


def test_a_workbook_is_refused_as_not_csv(tmp_path):
    path = tmp_path / "schedule.xlsx"
    with zipfile.ZipFile(path, "w") as z:
        z.writestr("xl/workbook.xml", "<workbook/>")
    code, out, _ = check(path)
    assert code == 1
    assert "spreadsheet workbook" in out["errors"][0]["message"]


def test_utf16_text_with_its_mark_is_read():
    # A spreadsheet's "Unicode text": UTF-16 with a byte-order mark, tab-separated.
    data = ("\ufeff" + bearing_rows("B1", sep="\t", location="Café door")).encode("utf-16-le")
    parsed = read_schedule(data)
    assert not parsed.errors and parsed.rows[0].location == "Café door"


def test_json_stays_valid_when_the_file_cannot_be_opened(tmp_path):
    code, out, err = check(tmp_path / "missing.csv")
    assert code == 2 and out["bearings"] == []
    assert "cannot read" in out["errors"][0]["message"] and "cannot read" in err


# --- numbers ------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "column, text, unit",
    [
        ("reaction_kN", "1e308", "kN"),
        ("wall_thickness", "inf", "mm"),
        ("unit_strength", "nan", "N/mm²"),
        ("offset_along", "-1e308", "mm"),
        ("gamma_M", "1e400", ""),
        # Not used by the core on this row (the strength is normalised), so only the reader
        # stands between it and the arithmetic.
        ("unit_height", "2e6", "mm"),
        ("asbuilt_packing", "1e308", "mm"),
    ],
)
def test_numbers_out_of_range_are_refused_naming_the_column(tmp_path, column, text, unit):
    header = [*BEARING, "offset_along", "gamma_M", "unit_strength_normalised", "asbuilt_packing"]
    cells = {**BEARING, "offset_along": "", "gamma_M": "", "unit_strength_normalised": "yes"}
    cells |= {"asbuilt_packing": "", column: text}
    path = tmp_path / "s.csv"
    path.write_text(lines(header, [[cells[c] for c in header]]), encoding="utf-8")
    code, out, _ = check(path)
    assert code == 1
    (error,) = out["errors"]
    assert (error["row"], error["column"], error["value"]) == (2, column, text)
    assert error["message"].startswith("out of range: a number from -1,000,000 to 1,000,000")
    assert error["message"].endswith(f" {unit}" if unit else "1,000,000")


@pytest.mark.parametrize("text", ["1_000", "٤٠", "40 kN", "0x28", "1,2,3.0"])
def test_a_number_is_digits_a_point_a_sign_and_an_exponent_only(text):
    (error,) = parse_schedule(bearing_rows("B1", reaction_kN=f'"{text}"')).errors
    assert (error.column, error.value) == ("reaction_kN", text)
    assert error.message.startswith("a number in kN")


def test_thousands_separators_with_a_decimal_point_still_read():
    (row,) = parse_schedule(bearing_rows("B1", reaction_kN='"1,040.5"')).rows
    assert row.design.load.reaction == 1_040_500.0


# --- columns needed together --------------------------------------------------------------------


@pytest.mark.parametrize(
    "cells, column, says",
    [
        (
            {"padstone_width": ""},
            "padstone_width",
            "required with padstone_length and padstone_depth",
        ),
        (
            {
                "padstone_length": "",
                "padstone_width": "",
                "padstone_depth": "",
                "padstone_concrete": "C30/37",
            },
            "padstone_concrete",
            "the row has no padstone",
        ),
        (
            {"asbuilt_padstone": "no", "asbuilt_padstone_length": "440"},
            "asbuilt_padstone_length",
            "asbuilt_padstone = no says there is no padstone",
        ),
        (
            {
                "padstone_length": "",
                "padstone_width": "",
                "padstone_depth": "",
                "asbuilt_padstone": "yes",
            },
            "asbuilt_padstone_length",
            "required with asbuilt_padstone = yes, as the design has no padstone",
        ),
        (
            {
                "padstone_length": "",
                "padstone_width": "",
                "padstone_depth": "",
                "asbuilt_padstone_depth": "140",
            },
            "asbuilt_padstone_length",
            "required with asbuilt_padstone_depth",
        ),
        # The masonry's rules depend on the code basis: the core refuses them.
        ({"unit_strength": ""}, "unit_strength", "or f_k given directly"),
        ({"unit_width": ""}, "unit_width", "the unit's size, to normalise its strength"),
    ],
)
def test_columns_needed_together_are_refused_by_name(cells, column, says):
    header = [
        *BEARING,
        "padstone_concrete",
        "asbuilt_padstone",
        *(f"asbuilt_padstone_{s}" for s in ("length", "width", "depth")),
    ]
    values = dict.fromkeys(header, "") | BEARING | cells
    text = lines(header, [[values[c] for c in header]])
    outcomes, errors = recheck_rows(parse_schedule(text), ec6_uk_na())
    assert not outcomes
    (error,) = errors
    assert (error.row, error.column) == (2, column)
    assert says in error.message


def test_the_readme_says_which_columns_are_needed_together():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    section = readme.split("### Columns needed together", 1)[1].split("\n## ", 1)[0]
    for column in (
        "padstone_length",
        "padstone_concrete",
        "padstone_f_ck",
        "padstone_reinforced",
        "unit_strength",
        "unit_height",
        "unit_width",
        "unit_strength_normalised",
        "f_k",
        "asbuilt_padstone",
        "asbuilt_padstone_length",
        "asbuilt_padstone_concrete",
    ):
        assert f"`{column}`" in section, column


# --- the web import says the same ---------------------------------------------------------------


def _refused(html: bytes) -> list[tuple[int, str]]:
    return [
        (int(r), c.decode())
        for r, c in re.findall(rb'data-row="(\d+)" data-column="([^"]*)"', html)
    ]


def test_the_web_import_refuses_the_same_rows_as_the_command_line(tmp_path, client_as, db, site):
    text = lines(
        SHIFT_HEADER,
        [
            ["W1", "Grid C; 4", "4", "40", "133", "150", "215", "2400"],
            ["W2", "Grid D", "4", "1e308", "133", "150", "215", "2400"],
            ["W3", "Grid E", "4", "40", "133", "150", "215"],
            ["W4", "Grid F", "4", "40", "133", "150", "215", "2400"],
        ],
        sep=";",
    )
    path = tmp_path / "schedule.csv"
    path.write_bytes(text.replace("Grid F", "Façade").encode("cp1252"))
    _, out, _ = check(path)
    cli = where(out["errors"])
    assert cli == [(2, "location"), (3, "reaction_kN"), (4, "")]

    c = client_as("engineer")
    before = store.list_bearings(db, site_id=site["id"])
    r = post(
        c, f"/sites/{site['id']}/import", {"file": (io.BytesIO(path.read_bytes()), "schedule.csv")}
    )
    assert r.status_code == 400 and b"Nothing was imported." in r.data
    assert _refused(r.data) == cli
    page = r.data.decode()
    for e in out["errors"]:
        assert str(escape(e["message"])) in page
    assert "The cells are separated by semicolons." in page and "Windows-1252" in page
    assert store.list_bearings(db, site_id=site["id"]) == before

    r = post(
        c,
        f"/sites/{site['id']}/import",
        {"file": (io.BytesIO(path.read_bytes()), "schedule.csv"), "keep_good_rows": "y"},
    )
    assert r.status_code == 200 and _refused(r.data) == cli
    added = store.bearing_by_reference(db, site_id=site["id"], reference="W4")
    assert added["location"] == "Façade" and added["design_input"]["load"]["reaction"] == 40_000.0


def test_cells_pasted_from_a_spreadsheet_import(client_as, db, site):
    # A copy of spreadsheet cells is tab-separated; the last row's empty cells are trailing
    # tabs, which must not be taken off as white space.
    header = [*BEARING, "a1", "a2"]
    rows = [
        [*[({**BEARING, "reference": ref})[k] for k in BEARING], "", ""] for ref in ("P1", "P2")
    ]
    pasted = lines(header, rows, sep="\t").replace("\n", "\r\n")
    c = client_as("engineer")
    r = post(c, f"/sites/{site['id']}/import", {"text": pasted})
    assert r.status_code == 200, _refused(r.data)
    assert "✓ 2 bearings added".encode() in r.data and b"separated by tabs" in r.data
    assert store.bearing_by_reference(db, site_id=site["id"], reference="P2")


def test_a_workbook_uploaded_is_refused_saying_so(client_as, db, site):
    c = client_as("engineer")
    r = post(
        c, f"/sites/{site['id']}/import", {"file": (io.BytesIO(b"PK\x03\x04 not csv"), "s.xlsx")}
    )
    assert r.status_code == 400 and _refused(r.data) == [(0, "")]
    assert b"spreadsheet workbook" in r.data and b"whole file" in r.data


def test_an_older_schedule_with_the_precast_column_imports_and_says_it_was_not_read(
    tmp_path, capsys
):
    from sitecheck.cli import main

    text = (
        "reference,reaction_kN,flange_width,bearing_length,wall_thickness,height_to_bearing,"
        "padstone_length,padstone_width,padstone_depth,padstone_precast,f_k\n"
        "P1,40,133,150,215,2400,440,215,140,yes,4.0\n"
    )
    parsed = parse_schedule(text)
    assert not parsed.errors and not parsed.unknown_columns
    assert parsed.rows[0].design.padstone.reinforced is False
    assert any("padstone_precast is no longer read" in n for n in parsed.notes)
    path = tmp_path / "old.csv"
    path.write_text(text, encoding="utf-8")
    assert main(["check", str(path)]) == 0
    assert "padstone_precast is no longer read" in capsys.readouterr().out
