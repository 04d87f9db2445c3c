"""The bearing schedule as CSV: columns, parsing and the re-check of each row.

This is the edge where text and kN meet the core's numbers in N and mm. It reads text,
not files, so the CLI and the web import share it. A bad row is reported with its row
number, column and reason; good rows are still parsed.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass, field
from decimal import Decimal, InvalidOperation

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
from .bearing.review import (
    Checklist,
    Measurements,
    ReviewReason,
    ReviewSettings,
    as_built_input,
    review,
)

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
    "padstone_precast": ("yes (precast) or no (cast in place) (empty: yes)", ""),
    "wall_thickness": ("wall (leaf) thickness t", "mm"),
    "height_to_bearing": ("height from the wall's base to the bearing h_c", "mm"),
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
    "asbuilt_wall_thickness": ("wall thickness as built", "mm"),
    "asbuilt_a1": ("a1 as built", "mm"),
    "asbuilt_a2": ("a2 as built", "mm"),
    "asbuilt_unit_material": ("unit material as built", ""),
    "asbuilt_unit_group": ("unit group as built", ""),
    "asbuilt_unit_strength": ("unit strength as built", "N/mm²"),
    "asbuilt_mortar": ("mortar class as built", ""),
    "asbuilt_bedded": ("yes or no: padstone fully bedded on mortar", ""),
    "asbuilt_packing": ("packing thickness under the beam (0: none)", "mm"),
    "asbuilt_cracks": ("yes or no: cracks near the bearing", ""),
    "asbuilt_cut_units": ("yes or no: cut or hollow units under the padstone", ""),
    "asbuilt_level": ("yes or no: padstone level", ""),
}
COLUMNS = DESIGN_COLUMNS | ASBUILT_COLUMNS
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
    "padstone.precast": "padstone_precast",
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
    "wall.thickness": "asbuilt_wall_thickness",
    "wall.a1": "asbuilt_a1",
    "wall.a2": "asbuilt_a2",
    "masonry.material": "asbuilt_unit_material",
    "masonry.group": "asbuilt_unit_group",
    "masonry.unit_strength": "asbuilt_unit_strength",
    "masonry.mortar": "asbuilt_mortar",
}


@dataclass(frozen=True, slots=True)
class RowError:
    row: int  # line in the file, the header being line 1
    column: str
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
        shown = f" = {self.value!r}" if self.value != "" else ""
        return f"row {self.row}, {self.column}{shown}: {self.message}"


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


class _RowProblem(Exception):
    def __init__(self, column: str, value: str, message: str):
        self.column, self.value, self.message = column, value, message


def parse_schedule(text: str, default_basis: str | None = None) -> Parsed:
    """Parse a schedule. Each bad row gives one :class:`RowError`; good rows are kept."""
    if text.startswith("\ufeff"):
        text = text[1:]
    reader = csv.DictReader(io.StringIO(text))
    header = [h.strip() for h in (reader.fieldnames or [])]
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    if missing:
        return Parsed(
            (), (RowError(1, ", ".join(missing), "", "the header lacks required column(s)"),)
        )
    reader.fieldnames = header
    unknown = tuple(h for h in header if h and h not in COLUMNS)
    rows: list[ScheduleRow] = []
    errors: list[RowError] = []
    seen: dict[str, int] = {}
    for index, raw in enumerate(reader, start=2):
        cells = {k: (v or "").strip() for k, v in raw.items() if k}
        if not any(cells.values()):
            continue
        try:
            row = _parse_row(index, cells, default_basis)
        except _RowProblem as p:
            errors.append(RowError(index, p.column, p.value, p.message))
            continue
        if row.reference in seen:
            errors.append(
                RowError(
                    index, "reference", row.reference, f"already used on row {seen[row.reference]}"
                )
            )
            continue
        seen[row.reference] = index
        rows.append(row)
    return Parsed(tuple(rows), tuple(errors), unknown)


def _parse_row(index: int, c: dict[str, str], default_basis: str | None) -> ScheduleRow:
    reference = c.get("reference", "")
    if not reference:
        raise _RowProblem("reference", "", "a bearing reference is required")
    if len(reference) > 80:
        raise _RowProblem("reference", reference, "at most 80 characters")
    basis_name = c.get("basis") or default_basis
    if basis_name and basis_name not in BASES:
        raise _RowProblem("basis", basis_name, f"one of: {', '.join(BASES)}")
    pad = None
    if c.get("padstone_length") or c.get("padstone_width") or c.get("padstone_depth"):
        pad = Padstone(
            length=_num(c, "padstone_length", required=True),
            width=_num(c, "padstone_width", required=True),
            depth=_num(c, "padstone_depth", required=True),
            **_given(
                concrete=c.get("padstone_concrete") or None,
                f_ck=_num(c, "padstone_f_ck"),
                precast=_yes_no(c, "padstone_precast"),
            ),
        )
    else:
        for column in ("padstone_f_ck", "padstone_precast"):
            if c.get(column):
                raise _RowProblem(
                    column,
                    c[column],
                    "empty, as the row has no padstone (padstone_length, padstone_width and "
                    "padstone_depth are empty); or give the padstone's size",
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
            wall_thickness=_num(c, "asbuilt_wall_thickness"),
            a1=_num(c, "asbuilt_a1"),
            a2=_num(c, "asbuilt_a2"),
            masonry_material=c.get("asbuilt_unit_material") or None,
            masonry_group=_int(c, "asbuilt_unit_group"),
            unit_strength=_num(c, "asbuilt_unit_strength"),
            mortar=c.get("asbuilt_mortar") or None,
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


def _given(**values):
    """The values a row gives; an empty cell (None) is left out for the default to apply."""
    return {k: v for k, v in values.items() if v is not None}


def _number_text(text: str) -> str:
    # "1,234.5": a thousands separator. A lone comma is not taken for a decimal point.
    return text.replace(",", "") if text.count(",") and "." in text else text


def _num(c: dict[str, str], column: str, required: bool = False) -> float | None:
    text = c.get(column, "")
    if text == "":
        if required:
            raise _RowProblem(column, "", "a value is required")
        return None
    try:
        value = float(_number_text(text))
    except ValueError:
        raise _RowProblem(
            column, text, "a number" + (f" in {COLUMNS[column][1]}" if COLUMNS[column][1] else "")
        ) from None
    if value != value or value in (float("inf"), float("-inf")):
        raise _RowProblem(column, text, "a finite number")
    return value


def _kilo(c: dict[str, str], column: str, required: bool = False) -> float | None:
    """A kN cell in N. The decimal point is moved, not the float multiplied by 1000, so a
    value the export wrote with every digit reads back as exactly the N it came from."""
    value = _num(c, column, required)
    if value is None:
        return None
    try:
        return float(Decimal(_number_text(c[column])).scaleb(3))
    except (InvalidOperation, ValueError):
        return value * 1000.0


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
