"""The demo scenario, written by code and never by hand.

An invented site: "Tanner's Yard, Block C", the conversion of a two-storey workshop into
flats, with new steel beams on block and brick walls, and an older brick wing checked to
BS 5628-1. Every name, load and size here is invented for the demo; none is a test
reference value. ``python -m sitecheck.demo`` rewrites ``demo_site/schedule.csv``; a test
keeps the committed file equal to what this module writes.
"""

from __future__ import annotations

import csv
import io
import sys
from pathlib import Path

from .schedule import COLUMNS

SITE_NAME = "Tanner's Yard, Block C"
SITE_ADDRESS = "Tanner's Yard, Millbrook (invented demo site)"

_BLOCK = {
    "unit_material": "aggregate concrete",
    "unit_group": "1",
    "unit_strength": "7.3",
    "unit_height": "215",
    "unit_width": "100",
    "mortar": "M4",
}
_BLOCK_215 = _BLOCK | {"unit_width": "215"}
_BRICK = {
    "basis": "BS 5628-1",
    "unit_material": "clay",
    "unit_group": "1",
    "unit_strength": "20",
    "unit_height": "65",
    "unit_width": "102.5",
    "mortar": "M4",
}
_PAD_440_215_140 = {
    "padstone_length": "440",
    "padstone_width": "215",
    "padstone_depth": "140",
    "padstone_concrete": "C25/30",
}
_AS_DESIGNED_CHECKS = {
    "asbuilt_bedded": "yes",
    "asbuilt_packing": "0",
    "asbuilt_cracks": "no",
    "asbuilt_cut_units": "no",
    "asbuilt_level": "yes",
}

BEARINGS: list[dict[str, str]] = [
    # Ground floor: the new beam B1 across the spine wall, both ends.
    {
        "reference": "GF-B1-E",
        "location": "Ground floor, spine wall grid C-4, beam B1 east end",
        "reaction_kN": "62",
        "flange_width": "133",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2475",
        "a1": "900",
        **_PAD_440_215_140,
        **_BLOCK_215,
        "asbuilt_bearing_length": "155",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "215",
        "asbuilt_padstone_depth": "140",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "905",
        **_AS_DESIGNED_CHECKS,
    },
    {
        "reference": "GF-B1-W",
        "location": "Ground floor, spine wall grid C-2, beam B1 west end beside the hall door",
        "reaction_kN": "62",
        "flange_width": "133",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2475",
        "a1": "120",
        **_PAD_440_215_140,
        **_BLOCK_215,
        "asbuilt_bearing_length": "150",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "330",
        "asbuilt_padstone_width": "215",
        "asbuilt_padstone_depth": "140",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "175",
        **_AS_DESIGNED_CHECKS,
    },
    # A beam in line with the 100 mm inner leaf over the new kitchen opening.
    {
        "reference": "GF-B2-N",
        "location": "Ground floor, rear inner leaf, beam B2 over the kitchen opening, north end",
        "reaction_kN": "18",
        "orientation": "in-line",
        "flange_width": "102",
        "bearing_length": "150",
        "wall_thickness": "100",
        "height_to_bearing": "2250",
        "a1": "0",
        "padstone_length": "440",
        "padstone_width": "100",
        "padstone_depth": "215",
        "padstone_concrete": "C25/30",
        **(_BLOCK | {"unit_strength": "10.4"}),
        "asbuilt_bearing_length": "150",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "100",
        "asbuilt_padstone_depth": "215",
        "asbuilt_wall_thickness": "100",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "0",
        **_AS_DESIGNED_CHECKS,
    },
    {
        "reference": "GF-B2-S",
        "location": "Ground floor, rear inner leaf, beam B2 over the kitchen opening, south end",
        "reaction_kN": "18",
        "orientation": "in-line",
        "flange_width": "102",
        "bearing_length": "150",
        "wall_thickness": "100",
        "height_to_bearing": "2250",
        "a1": "0",
        "padstone_length": "440",
        "padstone_width": "100",
        "padstone_depth": "215",
        "padstone_concrete": "C25/30",
        **(_BLOCK | {"unit_strength": "10.4"}),
        "asbuilt_bearing_length": "90",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "100",
        "asbuilt_padstone_depth": "215",
        "asbuilt_wall_thickness": "100",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "0",
        **_AS_DESIGNED_CHECKS,
    },
    # Lintels over new windows in the 100 mm inner leaf.
    {
        "reference": "GF-L1",
        "location": "Ground floor, side wall, lintel L1 over window W3, east end",
        "reaction_kN": "9",
        "member": "lintel",
        "orientation": "in-line",
        "flange_width": "100",
        "bearing_length": "150",
        "wall_thickness": "100",
        "height_to_bearing": "2100",
        "a1": "0",
        **_BLOCK,
    },
    {
        "reference": "GF-L2",
        "location": "Ground floor, side wall, lintel L2 over window W4, west end",
        "reaction_kN": "9",
        "member": "lintel",
        "orientation": "in-line",
        "flange_width": "100",
        "bearing_length": "150",
        "wall_thickness": "100",
        "height_to_bearing": "2100",
        "a1": "0",
        **_BLOCK,
        "asbuilt_bearing_length": "110",
        "asbuilt_padstone": "no",
        "asbuilt_wall_thickness": "100",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "0",
        "asbuilt_cracks": "no",
    },
    # First floor: a beam on 140 mm hollow blocks, and one on the party wall.
    {
        "reference": "FF-B3-E",
        "location": "First floor, bedroom 2 wall, beam B3 east end",
        "reaction_kN": "30",
        "flange_width": "102",
        "bearing_length": "100",
        "wall_thickness": "140",
        "height_to_bearing": "2400",
        "padstone_length": "440",
        "padstone_width": "140",
        "padstone_depth": "215",
        "padstone_concrete": "C25/30",
        "unit_material": "aggregate concrete",
        "unit_group": "2",
        "unit_strength": "7.3",
        "unit_height": "215",
        "unit_width": "140",
        "mortar": "M4",
    },
    {
        "reference": "FF-B3-W",
        "location": "First floor, bedroom 2 wall, beam B3 west end",
        "reaction_kN": "30",
        "flange_width": "102",
        "bearing_length": "100",
        "wall_thickness": "140",
        "height_to_bearing": "2400",
        "padstone_length": "440",
        "padstone_width": "140",
        "padstone_depth": "215",
        "padstone_concrete": "C25/30",
        **(_BLOCK | {"unit_width": "140"}),
        "asbuilt_bearing_length": "100",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "140",
        "asbuilt_padstone_depth": "215",
        "asbuilt_wall_thickness": "140",
        "asbuilt_unit_group": "2",
        **_AS_DESIGNED_CHECKS,
    },
    {
        "reference": "FF-B4",
        "location": "First floor, party wall, transfer beam B4 south end",
        "reaction_kN": "150",
        "flange_width": "146",
        "bearing_length": "180",
        "wall_thickness": "215",
        "height_to_bearing": "2400",
        "a1": "600",
        "padstone_length": "440",
        "padstone_width": "215",
        "padstone_depth": "215",
        "padstone_concrete": "C30/37",
        **(_BLOCK_215 | {"unit_strength": "10.4", "mortar": "M6"}),
        "asbuilt_bearing_length": "180",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "215",
        "asbuilt_padstone_depth": "140",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "600",
        **_AS_DESIGNED_CHECKS,
    },
    {
        "reference": "FF-B5",
        "location": "First floor, landing wall, trimmer B5 west end (no padstone shown)",
        "reaction_kN": "38",
        "flange_width": "102",
        "bearing_length": "100",
        "wall_thickness": "100",
        "height_to_bearing": "2400",
        "a1": "300",
        **_BLOCK,
    },
    {
        "reference": "FF-B6",
        "location": "First floor, gable wall, roof beam B6 (flexible end)",
        "reaction_kN": "28",
        "flange_width": "133",
        "bearing_length": "200",
        "reaction_at": "near-third",
        "wall_thickness": "215",
        "height_to_bearing": "2400",
        **_PAD_440_215_140,
        **_BLOCK_215,
    },
    # The older brick wing, checked to BS 5628-1.
    {
        "reference": "EX-B7",
        "location": "Brick wing, ground floor, beam B7 on the 215 mm brick wall",
        "reaction_kN": "45",
        "flange_width": "146",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2700",
        "a1": "1200",
        **_PAD_440_215_140,
        **_BRICK,
        "asbuilt_bearing_length": "150",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "215",
        "asbuilt_padstone_depth": "140",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "1200",
        **_AS_DESIGNED_CHECKS,
    },
    {
        "reference": "EX-B8",
        "location": "Brick wing, ground floor, beam B8 in line with the wall at the new arch",
        "reaction_kN": "35",
        "orientation": "in-line",
        "flange_width": "146",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2700",
        "a1": "0",
        "padstone_length": "440",
        "padstone_width": "215",
        "padstone_depth": "215",
        "padstone_concrete": "C25/30",
        "bearing_type": "3",
        **_BRICK,
        "asbuilt_bearing_length": "150",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "215",
        "asbuilt_padstone_depth": "215",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "75",
        **_AS_DESIGNED_CHECKS,
    },
    {
        "reference": "EX-B9",
        "location": "Brick wing, first floor, joist trimmer B9 on brickwork",
        "reaction_kN": "12",
        "flange_width": "102",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2500",
        "a1": "450",
        **_BRICK,
        "asbuilt_bearing_length": "150",
        "asbuilt_padstone": "no",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "450",
        "asbuilt_packing": "15",
        "asbuilt_cracks": "yes",
    },
    {
        "reference": "EX-B10",
        "location": "Brick wing, rear block wall, beam B10",
        "basis": "BS 5628-1",
        "reaction_kN": "40",
        "flange_width": "133",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2600",
        "a1": "800",
        **_PAD_440_215_140,
        "unit_material": "aggregate concrete",
        "unit_group": "1",
        "f_k": "3.5",
        "mortar": "M4",
        "asbuilt_bearing_length": "150",
        "asbuilt_offset_along": "120",
        "asbuilt_padstone": "yes",
        "asbuilt_padstone_length": "440",
        "asbuilt_padstone_width": "215",
        "asbuilt_padstone_depth": "140",
        "asbuilt_wall_thickness": "215",
        "asbuilt_unit_group": "1",
        "asbuilt_a1": "800",
        **_AS_DESIGNED_CHECKS,
    },
]


def schedule_csv() -> str:
    """The demo schedule as CSV text, every column in its documented order."""
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(COLUMNS), lineterminator="\n")
    writer.writeheader()
    for row in BEARINGS:
        unknown = set(row) - set(COLUMNS)
        if unknown:
            raise ValueError(
                f"demo bearing {row['reference']} has unknown columns {sorted(unknown)}"
            )
        writer.writerow(row)
    return out.getvalue()


SCHEDULE_PATH = Path(__file__).resolve().parent.parent / "demo_site" / "schedule.csv"


def main(argv: list[str] | None = None) -> int:
    target = Path(argv[0]) if argv else SCHEDULE_PATH
    target.parent.mkdir(parents=True, exist_ok=True)
    target.write_text(schedule_csv(), encoding="utf-8")
    print(f"wrote {target}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main(sys.argv[1:]))
