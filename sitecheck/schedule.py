"""The bearing schedule as CSV: columns, parsing and the re-check of each row.

This is the edge where text and kN meet the core's numbers in N and mm. It reads a file's
bytes or text, never a path, so the CLI and the web import share it and report the same.
A bad row is reported with its row number, column and reason, and is never read with its
values shifted; good rows are still parsed.
"""

from __future__ import annotations

import codecs
import csv
import difflib
import io
from dataclasses import dataclass, field, replace

from .bearing import (
    BASES,
    Beam,
    BearingInput,
    BearingResult,
    CodeBasis,
    InputError,
    Load,
    Masonry,
    Padstone,
    Wall,
    basis_named,
    check_bearing,
)
from .bearing.inputs import PADSTONE_POSITIONS
from .bearing.review import (
    BLOCKS,
    Checklist,
    Measurements,
    ReviewReason,
    ReviewSettings,
    as_built_input,
    review,
)
from .bearing.typed import NumberRefused, number_text, read_number
from .csvcells import unguard_text
from .workflow import AWAITING_SURVEY, ENGINEER_TO_DECIDE, WITHIN_DESIGN

# Column → (what it holds, unit). Lengths are mm, loads kN as their names say.
DESIGN_COLUMNS: dict[str, tuple[str, str]] = {
    "reference": ("bearing reference, unique in the schedule", ""),
    "location": ("where it is, in words", ""),
    "basis": (f"code basis: {' or '.join(BASES)} (empty: the site's)", ""),
    "reaction_kN": ("ULS end reaction N_Ed", "kN"),
    "wall_load_kN_per_m": ("other ULS load on the wall at that level", "kN/m"),
    "orientation": ("across or in-line (beam spans across the wall, or in its plane)", ""),
    "member": ("beam or lintel", ""),
    "flange_width": ("flange width b_f", "mm"),
    "bearing_length": ("bearing length l_b", "mm"),
    "offset_along": (
        "flange centre from padstone centre, along the wall (empty: as built in)",
        "mm",
    ),
    "offset_across": (
        "flange centre from padstone centre, across the wall (empty: as built in)",
        "mm",
    ),
    "reaction_at": ("centroid, or near-third for a flexible beam end", ""),
    "padstone_length": ("padstone length along the wall (empty: no padstone)", "mm"),
    "padstone_width": ("padstone width across the wall", "mm"),
    "padstone_depth": ("padstone depth", "mm"),
    "padstone_concrete": ("concrete class, e.g. C25/30", ""),
    "padstone_f_ck": ("declared concrete strength f_ck, if it is to override the class", "N/mm²"),
    "padstone_across": (
        "where a padstone narrower than the wall sits across it: near-face, centred, "
        "far-face, or its centre's offset from the wall's centre line in mm, + towards the far "
        "face (empty: flush with the near face under a beam across the wall, centred in line)",
        "",
    ),
    "padstone_reinforced": (
        "yes if the padstone is reinforced (empty: no, plain concrete, as site padstones "
        "usually are; plain takes α_cc,pl)",
        "",
    ),
    "wall_thickness": ("wall (leaf) thickness t", "mm"),
    "height_to_bearing": (
        "height h_c from the wall's base to the padstone's underside (with no padstone, the "
        "beam's underside); not the level the beam sits at on the padstone",
        "mm",
    ),
    "clear_height": ("clear height h (empty: h_c)", "mm"),
    "effective_height": ("effective height h_ef (empty: h)", "mm"),
    "effective_thickness": ("effective thickness t_ef (empty: t)", "mm"),
    "a1": ("from the padstone's end to the wall's end or an opening (empty: wall runs on)", "mm"),
    "a2": ("from the other end (empty: wall runs on)", "mm"),
    "unit_material": (
        "clay, calcium silicate, aggregate concrete, autoclaved aerated concrete, manufactured stone",
        "",
    ),
    "unit_group": ("unit group 1 to 4", ""),
    "unit_strength": ("declared mean unit strength", "N/mm²"),
    "unit_strength_normalised": (
        "yes if unit_strength is already the normalised f_b (empty: no)",
        "",
    ),
    "unit_height": ("unit height", "mm"),
    "unit_width": ("unit's least horizontal dimension", "mm"),
    "unit_conditioning": (
        "air-dried or water-soaked, as the units were tested (empty: air-dried)",
        "",
    ),
    "mortar": ("M2, M4, M6, M12 or thin-layer", ""),
    "shell_bedded": ("yes if the units are shell bedded (empty: no)", ""),
    "collar_joint": (
        "yes if the wall has a mortar joint parallel to its face, as a one-brick wall does "
        "(EC6: 0.8 × K); no if not (empty: yes when the wall is at least twice the unit's width)",
        "",
    ),
    "f_k": ("characteristic strength, if declared (overrides the unit route)", "N/mm²"),
    "gamma_M": ("partial factor, if it is to override the basis's", ""),
    "execution_class": ("EC6 execution class 1 or 2", ""),
    "unit_category": ("EC6 unit category I or II", ""),
    "manufacturing_control": ("BS 5628-1 manufacturing control: normal or special", ""),
    "construction_control": ("BS 5628-1 construction control: normal or special", ""),
    "bearing_type": ("BS 5628-1 bearing type 1, 2 or 3", ""),
    "e_mk": ("EC6 mid-height eccentricity e_mk, if given (empty: worked out)", "mm"),
    "phi_m": ("EC6 mid-height reduction factor Φ_m, if given (empty: worked out)", ""),
    "beta_s": ("BS 5628-1 capacity reduction factor β, if given (empty: worked out)", ""),
}
ASBUILT_COLUMNS: dict[str, tuple[str, str]] = {
    "asbuilt_bearing_length": ("bearing length as built", "mm"),
    "asbuilt_flange_width": ("flange width as built", "mm"),
    "asbuilt_offset_along": ("offset along as built", "mm"),
    "asbuilt_offset_across": ("offset across as built", "mm"),
    "asbuilt_padstone": ("yes or no: is there a padstone", ""),
    "asbuilt_padstone_length": ("padstone length as built", "mm"),
    "asbuilt_padstone_width": ("padstone width as built", "mm"),
    "asbuilt_padstone_depth": ("padstone depth as built", "mm"),
    "asbuilt_padstone_concrete": ("padstone concrete class as built", ""),
    "asbuilt_padstone_reinforced": ("yes or no: is the padstone reinforced", ""),
    "asbuilt_padstone_across": (
        "padstone's position across the wall as built, as padstone_across",
        "",
    ),
    "asbuilt_wall_thickness": ("wall thickness as built", "mm"),
    "asbuilt_a1": ("a1 as built", "mm"),
    "asbuilt_a2": ("a2 as built", "mm"),
    "asbuilt_unit_material": ("unit material as built", ""),
    "asbuilt_unit_group": ("unit group as built", ""),
    "asbuilt_unit_strength": ("unit strength as built", "N/mm²"),
    "asbuilt_mortar": ("mortar class as built", ""),
    "asbuilt_collar_joint": ("yes or no: a collar joint in the wall as built", ""),
    "asbuilt_bedded": ("yes or no: padstone fully bedded on mortar", ""),
    "asbuilt_packing": ("packing thickness under the beam (0: none)", "mm"),
    "asbuilt_cracks": ("yes or no: cracks near the bearing", ""),
    "asbuilt_cut_units": ("yes or no: cut or hollow units under the padstone", ""),
    "asbuilt_level": ("yes or no: padstone level", ""),
}
COLUMNS = DESIGN_COLUMNS | ASBUILT_COLUMNS
# Columns earlier versions read and this one does not, with why: a schedule that has one
# still imports, and says the column was not read.
RETIRED_COLUMNS = {
    "padstone_precast": (
        "precast or cast in place changes no check; a padstone is plain concrete unless "
        "padstone_reinforced says yes"
    ),
}
REQUIRED_COLUMNS = (
    "reference",
    "reaction_kN",
    "flange_width",
    "bearing_length",
    "wall_thickness",
    "height_to_bearing",
)

# Where a core field lives in the CSV, so a core error names the column.
FIELD_TO_COLUMN = {
    "load.reaction": "reaction_kN",
    "load.wall_load": "wall_load_kN_per_m",
    "beam.flange_width": "flange_width",
    "beam.bearing_length": "bearing_length",
    "beam.orientation": "orientation",
    "beam.member": "member",
    "beam.offset_along": "offset_along",
    "beam.offset_across": "offset_across",
    "beam.reaction_at": "reaction_at",
    "padstone.length": "padstone_length",
    "padstone.width": "padstone_width",
    "padstone.depth": "padstone_depth",
    "padstone.concrete": "padstone_concrete",
    "padstone.f_ck": "padstone_f_ck",
    "padstone.reinforced": "padstone_reinforced",
    "padstone.position_across": "padstone_across",
    "padstone.offset_across": "padstone_across",
    "wall.thickness": "wall_thickness",
    "wall.height_to_bearing": "height_to_bearing",
    "wall.clear_height": "clear_height",
    "wall.effective_height": "effective_height",
    "wall.effective_thickness": "effective_thickness",
    "wall.a1": "a1",
    "wall.a2": "a2",
    "masonry.material": "unit_material",
    "masonry.group": "unit_group",
    "masonry.unit_strength": "unit_strength",
    "masonry.unit_strength_is_normalised": "unit_strength_normalised",
    "masonry.unit_height": "unit_height",
    "masonry.unit_width": "unit_width",
    "masonry.conditioning": "unit_conditioning",
    "masonry.mortar": "mortar",
    "masonry.shell_bedded": "shell_bedded",
    "masonry.collar_joint": "collar_joint",
    "masonry.f_k": "f_k",
    "masonry.gamma_M": "gamma_M",
    "masonry.execution_class": "execution_class",
    "masonry.unit_category": "unit_category",
    "masonry.manufacturing_control": "manufacturing_control",
    "masonry.construction_control": "construction_control",
    "bearing_type": "bearing_type",
    "e_mk": "e_mk",
    "phi_m": "phi_m",
    "beta_s": "beta_s",
}
_ASBUILT_FIELD_TO_COLUMN = {
    "beam.flange_width": "asbuilt_flange_width",
    "beam.bearing_length": "asbuilt_bearing_length",
    "beam.offset_along": "asbuilt_offset_along",
    "beam.offset_across": "asbuilt_offset_across",
    "padstone.length": "asbuilt_padstone_length",
    "padstone.width": "asbuilt_padstone_width",
    "padstone.depth": "asbuilt_padstone_depth",
    "padstone.concrete": "asbuilt_padstone_concrete",
    "padstone.reinforced": "asbuilt_padstone_reinforced",
    "padstone.position_across": "asbuilt_padstone_across",
    "padstone.offset_across": "asbuilt_padstone_across",
    "wall.thickness": "asbuilt_wall_thickness",
    "wall.a1": "asbuilt_a1",
    "wall.a2": "asbuilt_a2",
    "masonry.material": "asbuilt_unit_material",
    "masonry.group": "asbuilt_unit_group",
    "masonry.unit_strength": "asbuilt_unit_strength",
    "masonry.mortar": "asbuilt_mortar",
    "masonry.collar_joint": "asbuilt_collar_joint",
}


@dataclass(frozen=True, slots=True)
class RowError:
    row: int  # row as a spreadsheet shows it, the header being row 1; 0: the whole file
    column: str  # "" for the row as a whole
    value: str
    message: str

    def as_dict(self) -> dict:
        return {
            "row": self.row,
            "column": self.column,
            "value": self.value,
            "message": self.message,
        }

    def __str__(self) -> str:
        where = "the file" if self.row == 0 else f"row {self.row}"
        column = f", {self.column}" if self.column else ""
        shown = f" = {self.value!r}" if self.value != "" else ""
        return f"{where}{column}{shown}: {self.message}"


@dataclass(frozen=True, slots=True)
class ScheduleRow:
    row: int
    reference: str
    location: str
    basis_name: str | None
    design: BearingInput
    measurements: Measurements | None
    checklist: Checklist | None


@dataclass(frozen=True, slots=True)
class Parsed:
    rows: tuple[ScheduleRow, ...]
    errors: tuple[RowError, ...]
    unknown_columns: tuple[str, ...] = ()
    # How the file was read, where it was not the plain case (UTF-8, commas): the
    # encoding taken, the separator found, a column name that looks mistyped.
    notes: tuple[str, ...] = ()


class _RowProblem(Exception):
    def __init__(self, column: str, value: str, message: str):
        self.column, self.value, self.message = column, value, message


class _FileProblem(Exception):
    def __init__(self, message: str):
        self.error = RowError(0, "", "", message)


# --- from bytes to text ------------------------------------------------------------------------


def read_schedule(data: bytes, default_basis: str | None = None) -> Parsed:
    """Parse a schedule file's bytes: :func:`decode_schedule`, then :func:`parse_schedule`."""
    try:
        text, notes = decode_schedule(data)
    except _FileProblem as p:
        return Parsed((), (p.error,))
    parsed = parse_schedule(text, default_basis)
    return replace(parsed, notes=notes + parsed.notes)


def decode_schedule(data: bytes) -> tuple[str, tuple[str, ...]]:
    """The text of a schedule file, and a note where it was not UTF-8.

    UTF-8 (with or without its byte-order mark) and UTF-16 with its mark (a spreadsheet's
    "Unicode text") are read as they are. Anything else is read as Windows-1252, the code
    page spreadsheets on Windows save CSV in by default, with a note naming the first line
    that is not UTF-8: numbers and the columns' choices are plain ASCII and read the same
    either way, so only free text could come out different, and the note says where to
    look. A file that is mostly UTF-8 with a stray byte, or has bytes Windows-1252 does not
    define, is refused rather than guessed at. Problems are the whole file's (row 0) and
    name the line, which differs from the row where a cell runs over several lines.
    """
    if data.startswith(b"PK\x03\x04"):
        raise _FileProblem(
            "a spreadsheet workbook (.xlsx or .ods), not CSV: save the sheet as CSV (UTF-8) "
            "and import that"
        )
    for mark, codec in (
        (codecs.BOM_UTF8, "UTF-8"),
        (codecs.BOM_UTF16_LE, "UTF-16-LE"),
        (codecs.BOM_UTF16_BE, "UTF-16-BE"),
    ):
        if data.startswith(mark):
            body = data[len(mark) :]
            try:
                return body.decode(codec), ()
            except UnicodeDecodeError as e:
                raise _FileProblem(
                    f"marked as {codec[:6]} but {_where(body, e)} is not: save it as CSV "
                    "(UTF-8) again"
                ) from None
    if b"\x00" in data:
        raise _FileProblem(
            "NUL bytes, so not CSV text (a workbook, or UTF-16 text without its byte-order "
            "mark?): save the sheet as CSV (UTF-8) and import that"
        )
    try:
        return data.decode("utf-8"), ()
    except UnicodeDecodeError as e:
        first = e
    if any(ord(ch) > 127 and ch != "\ufffd" for ch in data.decode("utf-8", errors="replace")):
        raise _FileProblem(
            f"UTF-8 except for {_where(data, first)}: one encoding per file; save it as CSV "
            "(UTF-8) again"
        )
    try:
        text = data.decode("cp1252")
    except UnicodeDecodeError as e:
        where = (
            f"{_where(data, e)} is neither UTF-8 nor Windows-1252"
            if e.start == first.start
            else f"not UTF-8 ({_where(data, first)}) nor Windows-1252 ({_where(data, e)})"
        )
        raise _FileProblem(f"{where}: save it as CSV (UTF-8) and import that") from None
    line = _line_of(data, first.start)
    seen = text.splitlines()[line - 1]
    if len(seen) > 80:
        seen = seen[:77] + "..."
    return text, (
        f"The file is not UTF-8 ({_where(data, first)}), so it was read as Windows-1252, the "
        f"encoding spreadsheets on Windows save CSV in. Line {line} then reads “{seen}”: if "
        "its text is not right, save the file as CSV (UTF-8) and import it again.",
    )


def _where(data: bytes, e: UnicodeDecodeError) -> str:
    shown = " ".join(f"0x{b:02X}" for b in data[e.start : max(e.end, e.start + 1)])
    return f"line {_line_of(data, e.start)}: byte {shown}"


def _line_of(data: bytes, offset: int) -> int:
    return data.count(b"\n", 0, offset) + 1


# --- from text to rows -------------------------------------------------------------------------

SEPARATORS = {",": "comma", ";": "semicolon", "\t": "tab"}
# The most a number cell may hold either way, in its column's own unit: well beyond any
# bearing (the core's own ranges end at 100 m and 5000 kN), so arithmetic never overflows
# and 1e308 is not taken for a measurement.
NUMBER_LIMIT = 1_000_000.0
# Columns that hold words of the engineer's own, where a separator may be typed; the
# columns of numbers are the rest, less the choices.
FREE_TEXT_COLUMNS = ("reference", "location")
_WHOLE_NUMBER_COLUMNS = ("unit_group", "asbuilt_unit_group", "execution_class", "bearing_type")
_FACTOR_COLUMNS = ("gamma_M", "phi_m", "beta_s")
_BY_LOWER_NAME = {name.lower(): name for name in COLUMNS}


def column_named(text: str) -> str | None:
    """The column a header cell names: spaces around it and letter case do not matter."""
    return _BY_LOWER_NAME.get(text.strip().lower())


_NUMBER_COLUMNS = frozenset(
    name
    for name, (_meaning, unit) in COLUMNS.items()
    if unit or name in _WHOLE_NUMBER_COLUMNS or name in _FACTOR_COLUMNS
)


def parse_schedule(text: str, default_basis: str | None = None) -> Parsed:
    """Parse a schedule's text. Each bad row gives one :class:`RowError`; good rows are kept.

    The header decides everything: its separator (comma, semicolon or tab: the one that
    splits it into the most known column names), which column is where (names matched
    without regard to case or surrounding spaces), and how many cells a row has. A row
    with more or fewer cells than the header is refused whole rather than read shifted,
    and a header naming a column twice refuses the file: which copy is meant cannot be
    told.
    """
    text = text.removeprefix("\ufeff")
    if "\x00" in text:
        return Parsed((), (RowError(0, "", "", "NUL characters, so not CSV text"),))
    separator = _separator(text)
    notes = [] if separator == "," else [f"The cells are separated by {SEPARATORS[separator]}s."]
    # Rows are numbered as a spreadsheet shows them: one per record, blank ones included.
    records = enumerate(csv.reader(io.StringIO(text), delimiter=separator), start=1)
    header: list[str] = []
    index = 0
    try:
        while not any(h.strip() for h in header):
            index, header = next(records)
    except csv.Error as e:
        return Parsed((), (RowError(index + 1, "", "", f"the header cannot be read: {e}"),))
    except StopIteration:
        empty = "empty: the first row must name the columns (sitecheck columns lists them)"
        return Parsed((), (RowError(0, "", "", empty),))
    names = [column_named(h) for h in header]
    errors = _header_errors(index, header, names)
    if errors:
        return Parsed((), tuple(errors))
    unknown = [h.strip() for h, n in zip(header, names, strict=True) if n is None and h.strip()]
    retired = [h for h in unknown if h.lower() in RETIRED_COLUMNS]
    unknown = [h for h in unknown if h not in retired]
    notes += [f"Column {h} is no longer read: {RETIRED_COLUMNS[h.lower()]}." for h in retired]
    notes += _mistyped_names(unknown)
    rows: list[ScheduleRow] = []
    seen: dict[str, int] = {}
    nameless_used: set[int] = set()
    try:
        for index, raw in records:
            if not any(cell.strip() for cell in raw):
                continue
            if len(raw) != len(header):
                errors.append(_cell_count_error(index, raw, names, separator))
                continue
            cells: dict[str, str] = {}
            for position, (name, cell) in enumerate(zip(names, raw, strict=True)):
                if name is not None:
                    cells[name] = unguard_text(cell.strip())
                elif not header[position].strip() and cell.strip():
                    nameless_used.add(position)
            try:
                row = _parse_row(index, cells, default_basis)
            except _RowProblem as p:
                errors.append(RowError(index, p.column, p.value, p.message))
                continue
            if row.reference in seen:
                errors.append(
                    RowError(
                        index,
                        "reference",
                        row.reference,
                        f"already used on row {seen[row.reference]}",
                    )
                )
                continue
            seen[row.reference] = index
            rows.append(row)
    except csv.Error as e:
        errors.append(
            RowError(index + 1, "", "", f"the file cannot be read as CSV from here on: {e}")
        )
    unknown += [f"column {_letters(p)} (no name)" for p in sorted(nameless_used)]
    return Parsed(tuple(rows), tuple(errors), tuple(unknown), tuple(notes))


def _separator(text: str) -> str:
    """The separator that splits the header into the most known column names (a comma
    when none does better)."""
    first_line = text.lstrip("\r\n").split("\n", 1)[0]

    def known(separator: str) -> int:
        cells = next(csv.reader([first_line], delimiter=separator), [])
        return sum(1 for c in cells if column_named(c))

    return max(SEPARATORS, key=known)  # max keeps the first of equals: the comma


def _header_errors(row: int, header: list[str], names: list[str | None]) -> list[RowError]:
    errors = []
    where: dict[str, list[int]] = {}
    for position, name in enumerate(names):
        if name is not None:
            where.setdefault(name, []).append(position)
    for name, positions in where.items():
        if len(positions) > 1:
            errors.append(
                RowError(
                    row,
                    name,
                    " / ".join(header[p].strip() for p in positions),
                    f"the header names this column {len(positions)} times (in columns "
                    f"{_and(_letters(p) for p in positions)}): which one is meant cannot be "
                    "told, so no row was read; keep one of them",
                )
            )
    missing = [c for c in REQUIRED_COLUMNS if c not in where]
    if missing:
        errors.append(RowError(row, ", ".join(missing), "", "the header lacks required column(s)"))
    return errors


def _and(words) -> str:
    words = list(words)
    return ", ".join(words[:-1]) + " and " + words[-1] if len(words) > 1 else "".join(words)


def _mistyped_names(unknown: list[str]) -> list[str]:
    notes = []
    for text in unknown:
        close = difflib.get_close_matches(text.lower(), _BY_LOWER_NAME, n=1, cutoff=0.8)
        if close:
            notes.append(
                f"The column “{text}” is not one of sitecheck's and was ignored: "
                f"is it {_BY_LOWER_NAME[close[0]]}?"
            )
    return notes


def _letters(position: int) -> str:
    """A column as a spreadsheet labels it: A, B, ... Z, AA ..."""
    n, label = position + 1, ""
    while n:
        n, rest = divmod(n - 1, 26)
        label = chr(ord("A") + rest) + label
    return label


def _cell_count_error(
    index: int, raw: list[str], names: list[str | None], separator: str
) -> RowError:
    """A row whose cells do not match the header's columns: refused whole, saying how."""
    width, count = len(names), len(raw)
    sep_name = SEPARATORS[separator]
    column = value = ""
    if count > width:
        extra = count - width
        message = (
            f"this row has {count} cells where the header has {width} columns ({extra} too "
            "many), so which value belongs to which column cannot be told and none of the row "
            f"was read; a value with a {sep_name} in it must be in double quotes"
        )
        split = _split_text_cells(raw, names, extra, separator)
        guesses = [f"the {name}" for name, _ in split]
        if not any(c.strip() for c in raw[-extra:]):
            many = f"a {sep_name}" if extra == 1 else f"{extra} {sep_name}s"
            guesses.append(f"{many} too many at the end")
        if len(split) == 1 and len(guesses) == 1:
            column, value = split[0]  # the one likely place: name it as the column
        if guesses:
            message += f" (here perhaps {' or '.join(guesses)})"
    else:
        message = (
            f"this row has {count} cells where the header has {width} columns ({width - count} "
            "too few), so which value belongs to which column cannot be told and none of the "
            "row was read; every row needs a cell for each column, even an empty one"
        )
    if any("\n" in c or "\r" in c for c in raw):
        message += "; a cell here runs over several lines: is a double quote left open?"
    return RowError(index, column, value, message)


def _split_text_cells(
    raw: list[str], names: list[str | None], extra: int, separator: str
) -> list[tuple[str, str]]:
    """The free-text column whose value, split by an unquoted separator, best accounts for
    the extra cells: joined again there, every number column holds a number and no
    free-text column holds a bare number. Where several columns would do, one whose pieces
    follow the separator with a space (as in "Grid C, 4") is preferred; otherwise all are
    named."""
    found = []
    for position, name in enumerate(names):
        if name not in FREE_TEXT_COLUMNS:
            continue
        pieces = raw[position : position + extra + 1]
        if any(not p.strip() for p in pieces[1:]):
            continue
        trial = raw[:position] + [separator.join(pieces)] + raw[position + extra + 1 :]
        if all(
            _reads_as_number(cell)
            if n in _NUMBER_COLUMNS
            else not (n in FREE_TEXT_COLUMNS and cell.strip() and _reads_as_number(cell))
            for cell, n in zip(trial, names, strict=True)
        ):
            found.append(
                (name, separator.join(pieces).strip(), all(p[:1].isspace() for p in pieces[1:]))
            )
    spaced = [f for f in found if f[2]]
    chosen = spaced if len(spaced) == 1 else found
    return [(name, value) for name, value, _ in chosen]


# One piece: one row's cells in the order of the columns, each refused by its column's name.
def _parse_row(index: int, c: dict[str, str], default_basis: str | None) -> ScheduleRow:
    reference = c.get("reference", "")
    if not reference:
        raise _RowProblem("reference", "", "a bearing reference is required")
    if len(reference) > 80:
        raise _RowProblem("reference", reference, "at most 80 characters")
    basis_name = c.get("basis") or default_basis
    if basis_name and basis_name not in BASES:
        raise _RowProblem("basis", basis_name, f"one of: {', '.join(BASES)}")
    _needed_together(c)
    pad = None
    if c.get("padstone_length") or c.get("padstone_width") or c.get("padstone_depth"):
        pad = Padstone(
            length=_num(c, "padstone_length", required=True),
            width=_num(c, "padstone_width", required=True),
            depth=_num(c, "padstone_depth", required=True),
            **_given(
                concrete=c.get("padstone_concrete") or None,
                f_ck=_num(c, "padstone_f_ck"),
                reinforced=_yes_no(c, "padstone_reinforced"),
            ),
            **dict(
                zip(
                    ("position_across", "offset_across"),
                    _padstone_across(c, "padstone_across"),
                    strict=True,
                )
            ),
        )
    # An empty cell leaves the core's own default, so the defaults live in one place.
    design = BearingInput(
        load=Load(
            reaction=_kilo(c, "reaction_kN", required=True),
            **_given(wall_load=_num(c, "wall_load_kN_per_m")),
        ),
        beam=Beam(
            flange_width=_num(c, "flange_width", required=True),
            bearing_length=_num(c, "bearing_length", required=True),
            **_given(
                orientation=c.get("orientation") or None,
                member=c.get("member") or None,
                offset_along=_num(c, "offset_along"),
                offset_across=_num(c, "offset_across"),
                reaction_at=c.get("reaction_at") or None,
            ),
        ),
        wall=Wall(
            thickness=_num(c, "wall_thickness", required=True),
            height_to_bearing=_num(c, "height_to_bearing", required=True),
            a1=_num(c, "a1"),
            a2=_num(c, "a2"),
            clear_height=_num(c, "clear_height"),
            effective_height=_num(c, "effective_height"),
            effective_thickness=_num(c, "effective_thickness"),
        ),
        masonry=Masonry(
            **_given(
                material=c.get("unit_material") or None,
                group=_int(c, "unit_group"),
                unit_strength=_num(c, "unit_strength"),
                unit_strength_is_normalised=_yes_no(c, "unit_strength_normalised"),
                unit_height=_num(c, "unit_height"),
                unit_width=_num(c, "unit_width"),
                conditioning=c.get("unit_conditioning") or None,
                mortar=c.get("mortar") or None,
                f_k=_num(c, "f_k"),
                shell_bedded=_yes_no(c, "shell_bedded"),
                collar_joint=_yes_no(c, "collar_joint"),
                unit_category=c.get("unit_category") or None,
                execution_class=_int(c, "execution_class"),
                manufacturing_control=c.get("manufacturing_control") or None,
                construction_control=c.get("construction_control") or None,
                gamma_M=_num(c, "gamma_M"),
            )
        ),
        padstone=pad,
        **_given(
            bearing_type=_int(c, "bearing_type"),
            e_mk=_num(c, "e_mk"),
            phi_m=_num(c, "phi_m"),
            beta_s=_num(c, "beta_s"),
        ),
    )
    measurements = checklist = None
    if any(c.get(k) for k in ASBUILT_COLUMNS):
        present = _yes_no(c, "asbuilt_padstone")
        built_across = _padstone_across(c, "asbuilt_padstone_across")
        measurements = Measurements(
            bearing_length=_num(c, "asbuilt_bearing_length"),
            flange_width=_num(c, "asbuilt_flange_width"),
            offset_along=_num(c, "asbuilt_offset_along"),
            offset_across=_num(c, "asbuilt_offset_across"),
            padstone_present=present,
            padstone_length=_num(c, "asbuilt_padstone_length"),
            padstone_width=_num(c, "asbuilt_padstone_width"),
            padstone_depth=_num(c, "asbuilt_padstone_depth"),
            padstone_concrete=c.get("asbuilt_padstone_concrete") or None,
            padstone_reinforced=_yes_no(c, "asbuilt_padstone_reinforced"),
            padstone_position=built_across[0],
            padstone_offset_across=built_across[1],
            wall_thickness=_num(c, "asbuilt_wall_thickness"),
            a1=_num(c, "asbuilt_a1"),
            a2=_num(c, "asbuilt_a2"),
            masonry_material=c.get("asbuilt_unit_material") or None,
            masonry_group=_int(c, "asbuilt_unit_group"),
            unit_strength=_num(c, "asbuilt_unit_strength"),
            mortar=c.get("asbuilt_mortar") or None,
            collar_joint=_yes_no(c, "asbuilt_collar_joint"),
        )
        checklist = Checklist(
            bedded=_yes_no(c, "asbuilt_bedded"),
            packing=_num(c, "asbuilt_packing"),
            cracks=_yes_no(c, "asbuilt_cracks"),
            cut_units=_yes_no(c, "asbuilt_cut_units"),
            level=_yes_no(c, "asbuilt_level"),
        )
    return ScheduleRow(
        index, reference, c.get("location", ""), basis_name, design, measurements, checklist
    )


PADSTONE_SIZE = ("padstone_length", "padstone_width", "padstone_depth")
PADSTONE_DETAILS = ("padstone_concrete", "padstone_f_ck", "padstone_reinforced", "padstone_across")
ASBUILT_PADSTONE_SIZE = (
    "asbuilt_padstone_length",
    "asbuilt_padstone_width",
    "asbuilt_padstone_depth",
)


def _needed_together(c: dict[str, str]) -> None:
    """Columns that mean something only with others (README, "Columns needed together").
    The masonry's (f_k or the unit's strength, and a strength with the unit's size) depend
    on the code basis and are the core's to refuse."""
    sizes = [k for k in PADSTONE_SIZE if c.get(k)]
    if sizes and len(sizes) < len(PADSTONE_SIZE):
        missing = next(k for k in PADSTONE_SIZE if not c.get(k))
        raise _RowProblem(
            missing,
            "",
            f"required with {' and '.join(sizes)}: a padstone is given by its length, width "
            "and depth (all three empty: no padstone)",
        )
    if not sizes:
        for column in PADSTONE_DETAILS:
            if c.get(column):
                raise _RowProblem(
                    column,
                    c[column],
                    "empty, as the row has no padstone (padstone_length, padstone_width and "
                    "padstone_depth are empty); or give the padstone's size",
                )
    present = _yes_no(c, "asbuilt_padstone")
    built = [
        k
        for k in (
            *ASBUILT_PADSTONE_SIZE,
            "asbuilt_padstone_concrete",
            "asbuilt_padstone_reinforced",
            "asbuilt_padstone_across",
        )
        if c.get(k)
    ]
    if present is False and built:
        raise _RowProblem(
            built[0],
            c[built[0]],
            "empty, as asbuilt_padstone = no says there is no padstone as built",
        )
    if not sizes and (present or built):
        missing = [k for k in ASBUILT_PADSTONE_SIZE if not c.get(k)]
        if missing:
            said = "asbuilt_padstone = yes" if present else built[0]
            raise _RowProblem(
                missing[0],
                "",
                f"required with {said}, as the design has no padstone: a padstone found on "
                "site is given by its length, width and depth as built",
            )


def _padstone_across(c: dict[str, str], column: str) -> tuple[str | None, float | None]:
    """A padstone_across cell as (position, offset): a named position, or a number, the
    offset of the padstone's centre from the wall's centre line."""
    text = c.get(column, "")
    if not text:
        return None, None
    named = text.strip().lower()
    if named in PADSTONE_POSITIONS and named != "offset":
        return named, None
    try:
        read_number(text)
    except NumberRefused as e:
        # Words, not a number badly written: the choices are what was meant.
        if e.code == "not-a-number":
            raise _RowProblem(
                column,
                text,
                "near-face, centred, far-face, or the padstone centre's offset from the wall's "
                "centre line in mm",
            ) from None
    return "offset", _num(c, column)


def _given(**values):
    """The values a row gives; an empty cell (None) is left out for the default to apply."""
    return {k: v for k, v in values.items() if v is not None}


def _reads_as_number(text: str) -> bool:
    text = text.strip()
    return text == "" or number_text(unguard_text(text)) is not None


def _num(c: dict[str, str], column: str, required: bool = False, shift: int = 0) -> float | None:
    """A number cell by the one reader's rules (bearing/typed.py), within ±NUMBER_LIMIT in
    its column's unit; ``shift`` 3 reads a kN cell as N by moving the decimal point, so a
    value the export wrote with every digit reads back as exactly the N it came from."""
    text = c.get(column, "")
    if text == "":
        if required:
            raise _RowProblem(column, "", "a value is required")
        return None
    try:
        return read_number(
            text,
            unit=COLUMNS[column][1],
            least=-NUMBER_LIMIT,
            greatest=NUMBER_LIMIT,
            shift=shift,
        )
    except NumberRefused as e:
        # A row's error says what the cell should hold; its value is shown beside it.
        words = f"out of range: {e.expected}" if e.code == "out-of-range" else e.expected
        raise _RowProblem(column, text, words) from None


def _kilo(c: dict[str, str], column: str, required: bool = False) -> float | None:
    """A kN cell in N."""
    return _num(c, column, required, shift=3)


def _int(c: dict[str, str], column: str) -> int | None:
    value = _num(c, column)
    if value is None:
        return None
    if value != int(value):
        raise _RowProblem(column, c[column], "a whole number")
    return int(value)


def _yes_no(c: dict[str, str], column: str) -> bool | None:
    text = c.get(column, "").lower()
    if text == "":
        return None
    if text in ("yes", "y", "true", "1"):
        return True
    if text in ("no", "n", "false", "0"):
        return False
    raise _RowProblem(column, c[column], "yes or no")


@dataclass(frozen=True, slots=True)
class RowOutcome:
    row: ScheduleRow
    basis: CodeBasis
    design_result: BearingResult
    as_built: BearingInput | None = None
    result: BearingResult | None = None
    reasons: tuple[ReviewReason, ...] = field(default=())

    @property
    def current(self) -> BearingResult:
        return self.result or self.design_result


def row_verdict(outcome: RowOutcome) -> str:
    """The state word the command line prints for a schedule row: the state the bearing
    would take (workflow's words), or "fails at design" before anything is measured."""
    if outcome.result is None:
        return AWAITING_SURVEY if outcome.design_result.passed else "fails at design"
    if any(r.severity == BLOCKS for r in outcome.reasons):
        return ENGINEER_TO_DECIDE
    return WITHIN_DESIGN


def recheck_row(
    row: ScheduleRow,
    basis: CodeBasis,
    settings: ReviewSettings = ReviewSettings(),
    design_result: BearingResult | None = None,
) -> RowOutcome:
    """Design check, then, where the row has as-built values, the re-check and review.
    Raises :class:`InputError` for values the core refuses."""
    if design_result is None:
        design_result = check_bearing(row.design, basis)
    if row.measurements is None:
        return RowOutcome(row, basis, design_result)
    built = as_built_input(row.design, row.measurements)
    result = check_bearing(built, basis)
    reasons = review(
        row.design,
        design_result,
        row.measurements,
        row.checklist or Checklist(),
        built,
        result,
        basis,
        settings,
    )
    return RowOutcome(row, basis, design_result, built, result, reasons)


def recheck_rows(
    parsed: Parsed, default_basis: CodeBasis, settings: ReviewSettings = ReviewSettings()
) -> tuple[list[RowOutcome], list[RowError]]:
    """Re-check every parsed row; a row the core refuses becomes a :class:`RowError`."""
    outcomes, errors = [], list(parsed.errors)
    bases: dict[str, CodeBasis] = {default_basis.name: default_basis}
    for row in parsed.rows:
        name = row.basis_name or default_basis.name
        basis = bases.get(name) or bases.setdefault(name, basis_named(name))
        try:
            design_result = check_bearing(row.design, basis)
        except InputError as e:
            errors.append(_row_error(row, e, FIELD_TO_COLUMN))
            continue
        try:
            outcomes.append(recheck_row(row, basis, settings, design_result))
        except InputError as e:
            errors.append(_row_error(row, e, _ASBUILT_FIELD_TO_COLUMN | FIELD_TO_COLUMN))
    errors.sort(key=lambda e: e.row)
    return outcomes, errors


def _row_error(row: ScheduleRow, e: InputError, columns: dict[str, str]) -> RowError:
    value = e.value
    if e.field == "load.reaction" and isinstance(value, (int, float)):
        value = value / 1000.0  # back to the kN the schedule was written in
    return RowError(
        row.row,
        columns.get(e.field, e.field),
        "" if value is None else f"{value:g}" if isinstance(value, float) else str(value),
        e.expected,
    )
