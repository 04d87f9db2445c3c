"""A schedule row (the bearing schedule's columns, as text) of one invented bearing that
passes at design, for tests that import or build sites of many bearings."""

from __future__ import annotations


def schedule_row(reference: str, **over: str) -> dict[str, str]:
    """An aggregate-concrete 215 mm wall under a 133 mm flange on a 440 x 215 x 140 padstone;
    ``over`` replaces any column (all values as text, as a CSV holds them)."""
    row = {
        "reference": reference,
        "location": "invented wall",
        "reaction_kN": "40",
        "flange_width": "133",
        "bearing_length": "150",
        "padstone_length": "440",
        "padstone_width": "215",
        "padstone_depth": "140",
        "padstone_concrete": "C25/30",
        "wall_thickness": "215",
        "height_to_bearing": "2475",
        "unit_material": "aggregate concrete",
        "unit_group": "1",
        "unit_strength": "7.3",
        "unit_height": "215",
        "unit_width": "215",
        "mortar": "M4",
    }
    return row | over
