"""A stored design and stored times as the engineer's pages show them: labelled values in
kN, kN/m, mm and N/mm², and times in UTC. Nothing here parses or computes engineering."""

from __future__ import annotations

from datetime import UTC, datetime

from sitecheck.web.bearing_form import (
    MEMBER_CHOICES,
    ORIENTATION_CHOICES,
    PADSTONE_ACROSS_CHOICES,
    REACTION_AT_CHOICES,
)
from sitecheck.web.form_fields import plain_number


def utc_text(value: str | None) -> str:
    """A stored UTC time as the screens show it: 2026-03-02 08:00 UTC."""
    if not value:
        return "—"
    try:
        moment = datetime.fromisoformat(str(value).replace("Z", "+00:00"))
    except ValueError:
        return str(value)
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).strftime("%Y-%m-%d %H:%M UTC")


def padstone_across_words(pad: dict) -> str:
    """Where a stored padstone sits across the wall, in words."""
    position = pad.get("position_across")
    if position == "offset":
        return f"centre {plain_number(pad.get('offset_across'))} mm from the wall's centre line"
    if not position:
        return "the usual place: flush with the near face (beam across), centred (in line)"
    return dict(PADSTONE_ACROSS_CHOICES).get(position, str(position)).lower()


# One piece: one table per section of the design page, in the page's order, a line per row.
def design_summary(design: dict) -> list[tuple[str, list[tuple[str, str]]]]:
    """A stored design input as labelled, readable values (kN, kN/m, mm, N/mm²)."""
    load, beam, wall, mas = design["load"], design["beam"], design["wall"], design["masonry"]
    pad = design.get("padstone")

    def mm(v, empty="—"):
        return empty if v is None else f"{plain_number(v)} mm"

    def mpa(v, empty="—"):
        return empty if v is None else f"{plain_number(v)} N/mm²"

    out = [
        (
            "Loads (ULS)",
            [
                ("End reaction N_Ed", f"{plain_number(load['reaction'] / 1000.0)} kN"),
                ("Other load on the wall", f"{plain_number(load.get('wall_load') or 0)} kN/m"),
            ],
        ),
        (
            "Beam or lintel",
            [
                ("Member", dict(MEMBER_CHOICES).get(beam.get("member"), beam.get("member"))),
                (
                    "Spans",
                    dict(ORIENTATION_CHOICES).get(beam.get("orientation"), beam.get("orientation")),
                ),
                ("Flange width b_f", mm(beam["flange_width"])),
                ("Bearing length l_b", mm(beam["bearing_length"])),
                (
                    "Reaction acts",
                    dict(REACTION_AT_CHOICES).get(beam.get("reaction_at"), beam.get("reaction_at")),
                ),
                ("Offset along the wall", mm(beam.get("offset_along"), "as built in")),
                ("Offset across the wall", mm(beam.get("offset_across"), "as built in")),
            ],
        ),
    ]
    if pad:
        out.append(
            (
                "Padstone",
                [
                    (
                        "Length × width × depth",
                        f"{plain_number(pad['length'])} × {plain_number(pad['width'])} × {plain_number(pad['depth'])} mm",
                    ),
                    ("Concrete", pad.get("concrete") or "—"),
                    ("Declared f_ck", mpa(pad.get("f_ck"), "from the class")),
                    (
                        "Reinforcement",
                        "reinforced" if pad.get("reinforced") else "none: plain concrete",
                    ),
                    ("Across the wall", padstone_across_words(pad)),
                ],
            )
        )
    else:
        out.append(("Padstone", [("Padstone", "none: the beam bears on the masonry")]))
    out.append(
        (
            "Wall",
            [
                ("Thickness t", mm(wall["thickness"])),
                (
                    "Height from the wall's base to the padstone's underside h_c",
                    mm(wall["height_to_bearing"]),
                ),
                ("a1", mm(wall.get("a1"), "wall runs on")),
                ("a2", mm(wall.get("a2"), "wall runs on")),
                ("Clear height h", mm(wall.get("clear_height"), "= h_c")),
                ("Effective height h_ef", mm(wall.get("effective_height"), "= h")),
                ("Effective thickness t_ef", mm(wall.get("effective_thickness"), "= t")),
            ],
        )
    )
    strength = mpa(mas.get("unit_strength"))
    if mas.get("unit_strength") is not None and mas.get("unit_strength_is_normalised"):
        strength += " (normalised f_b)"
    out.append(
        (
            "Masonry",
            [
                ("Unit", f"{mas.get('material')}, Group {mas.get('group')}"),
                ("Unit strength", strength),
                (
                    "Unit size (height × least width)",
                    "—"
                    if mas.get("unit_height") is None
                    else f"{plain_number(mas.get('unit_height'))} × {plain_number(mas.get('unit_width'))} mm",
                ),
                ("Mortar", mas.get("mortar") or "—"),
                ("Declared f_k", mpa(mas.get("f_k"), "from the units and mortar")),
                ("Shell bedded", "yes" if mas.get("shell_bedded") else "no"),
                (
                    "Collar joint",
                    {True: "yes", False: "no"}.get(
                        mas.get("collar_joint"), "inferred from the wall's thickness"
                    ),
                ),
                (
                    "Category / execution class",
                    f"{mas.get('unit_category')} / {mas.get('execution_class')}",
                ),
                (
                    "Manufacturing / construction control",
                    f"{mas.get('manufacturing_control')} / {mas.get('construction_control')}",
                ),
                (
                    "γ_M override",
                    "—" if mas.get("gamma_M") is None else plain_number(mas.get("gamma_M")),
                ),
            ],
        )
    )
    out.append(
        (
            "Less often needed",
            [
                ("Bearing type (BS 5628-1)", str(design.get("bearing_type", 1))),
                ("e_mk", mm(design.get("e_mk"), "worked out")),
                ("Φ_m", plain_number(design.get("phi_m")) or "worked out"),
                ("β (BS 5628-1)", plain_number(design.get("beta_s")) or "worked out"),
            ],
        )
    )
    return out
