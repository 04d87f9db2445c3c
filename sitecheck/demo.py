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
from typing import TYPE_CHECKING

from .schedule import COLUMNS

if TYPE_CHECKING:
    from . import store

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

BRICK_WING_NAME = "Tanner's Yard, brick wing"

# Demo log-ins, printed when the demo is built. For the invented demo only.
DEMO_PEOPLE = {
    "engineer": ("engineer@tanners-yard.example", "Priya Okafor", "demo engineer pass"),
    "inspector": ("inspector@tanners-yard.example", "Tom Brennan", "demo inspector pass"),
    "contractor": ("contractor@tanners-yard.example", "Lena Varga", "demo contractor pass"),
    "viewer": (
        "building.control@tanners-yard.example",
        "Sam Ruiz (building control)",
        "demo viewer pass",
    ),
}

# What happens after the site visit, so every state shows in the demo.
_DECISIONS = {
    "GF-B1-W": (
        "accept",
        "Padstone cut to 330 mm on site; re-check as built passes with the measured 175 mm to the door. Accept as built.",
    ),
    "GF-B2-S": (
        "remedial",
        "Bearing of 90 mm is under the 100 mm minimum. Extend the bearing: reposition the beam end or add a steel bearing plate, then measure again.",
    ),
}
_RELEASES = {"GF-B1-E"}


# One piece: the invented site's story in the order it happens (people, site, schedule, records,
# decisions, releases).
def build_demo(db_path: str | Path) -> dict[str, tuple[str, str]]:
    """A fresh demo database: the invented site, one person per role, the schedule, as-built
    records with generated photos, one decision of each kind that matters and releases.
    Returns role → (e-mail, password) for the log-in list."""
    import dataclasses
    from datetime import UTC, datetime, timedelta

    from . import credentials, services, store
    from .bearing import BS5628, basis_named
    from .bearing.review import ReviewSettings
    from .photos import PhotoStore, ingest_photo
    from .schedule import parse_schedule

    path = Path(db_path).resolve()
    path.parent.mkdir(parents=True, exist_ok=True)
    for suffix in ("", "-wal", "-shm"):
        Path(str(path) + suffix).unlink(missing_ok=True)
    photos = PhotoStore(path.parent / "photos")
    db = store.open_db(path)
    try:
        people = {}
        for role, (email, name, password) in DEMO_PEOPLE.items():
            u = store.create_user(
                db,
                email=email,
                name=name,
                password_hash=credentials.hash_password(password),
                may_make_sites=role == "engineer",
            )
            people[role] = u["id"]
        engineer = people["engineer"]
        parsed = parse_schedule(schedule_csv())
        sites = {}
        for site_name, basis_name, address in (
            (SITE_NAME, None, SITE_ADDRESS),
            (BRICK_WING_NAME, BS5628, SITE_ADDRESS),
        ):
            basis = basis_named(basis_name) if basis_name else None
            code_basis, review = services.default_site_settings(basis.name if basis else None)
            site = store.create_site(
                db,
                name=site_name,
                address=address,
                code_basis=code_basis,
                review_settings=review,
                created_by=engineer,
            )
            for role in ("inspector", "contractor", "viewer"):
                store.add_membership(
                    db, user_id=people[role], site_id=site["id"], role=role, invited_by=engineer
                )
            sites[basis.name if basis else "EC6"] = site
        ReviewSettings()  # the defaults; shown and editable on each site's settings page

        visit = datetime.now(UTC).replace(microsecond=0) - timedelta(days=1, hours=3)
        for n, row in enumerate(parsed.rows):
            site = sites[BS5628] if row.basis_name == BS5628 else sites["EC6"]
            bearing = services.add_bearing(
                db,
                site=site,
                reference=row.reference,
                location=row.location,
                design=row.design,
                user_id=engineer,
            )
            if row.measurements is None:
                continue
            measured = visit + timedelta(minutes=12 * n)
            stamp = measured.strftime("%Y-%m-%dT%H:%M:%SZ")
            stored, _ = services.record_as_built(
                db,
                site=site,
                bearing=bearing,
                uuid=str(_uuid_for(row.reference)),
                measured_at=stamp,
                design_revision=bearing["revision"],
                measurements=_plain(dataclasses.asdict(row.measurements)),
                checklist=_plain(dataclasses.asdict(row.checklist)) if row.checklist else {},
                notes=f"Measured on the demo visit: {row.location.lower()}.",
                inspector_id=people["inspector"],
                now=measured + timedelta(minutes=1),
            )
            for k in range(2 if n % 3 else 1):
                picture = ingest_photo(_demo_photo(row.reference, measured, k))
                services.store_photo(
                    db,
                    site=site,
                    record_uuid=stored.row["uuid"],
                    photo=picture,
                    photos=photos,
                    user_id=people["inspector"],
                )
        for reference, (kind, reason) in _DECISIONS.items():
            site = sites["EC6"]
            bearing = _bearing_added(db, site, reference)
            services.decide(
                db,
                site=site,
                bearing=bearing,
                kind=kind,
                reason=reason,
                engineer_id=engineer,
                engineer_name=DEMO_PEOPLE["engineer"][1],
            )
        for reference in sorted(_RELEASES):
            site = sites["EC6"]
            bearing = _bearing_added(db, site, reference)
            services.release(
                db,
                site=site,
                bearing=bearing,
                contractor_id=people["contractor"],
                contractor_name="Lena Varga, Varga Build Ltd (invented)",
                statement="Bearing inspected and released for closing up.",
            )
        # The demo's invented past is history, not news: a server with mail on does not
        # mail it as notices.
        store.skip_notices(db)
    finally:
        db.conn.close()
    return {role: (email, password) for role, (email, _name, password) in DEMO_PEOPLE.items()}


def _bearing_added(db: store.Database, site: dict, reference: str) -> dict:
    """A bearing the demo has just added to ``site``."""
    from . import store

    bearing = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
    if bearing is None:
        raise LookupError(f"the demo added no bearing {reference}")
    return bearing


def _plain(values: dict) -> dict:
    return {k: v for k, v in values.items() if v is not None}


def _uuid_for(reference: str):
    import uuid

    # Stable per bearing, so rebuilding the demo gives the same record ids.
    return uuid.uuid5(uuid.NAMESPACE_URL, f"sitecheck-demo:{reference}")


def _demo_photo(reference: str, when, k: int) -> bytes:
    """A drawn stand-in for a site photo: coursed blocks, a padstone and a beam end, with the
    bearing's reference, and the capture time in its EXIF as a phone would write it."""
    import io
    import random

    from PIL import Image, ImageDraw

    rng = random.Random(f"{reference}-{k}")
    w, h = 1600, 1200
    im = Image.new("RGB", (w, h), (196, 196, 190))
    d = ImageDraw.Draw(im)
    course = 110
    for row in range(h // course + 1):
        off = 0 if row % 2 == 0 else 220
        for col in range(-1, w // 440 + 2):
            x0, y0 = col * 440 + off, row * course
            tone = rng.randint(150, 185)
            d.rectangle([x0 + 6, y0 + 6, x0 + 434, y0 + course - 4], fill=(tone, tone, tone - 6))
    pad_top = 560 + rng.randint(-30, 30)
    d.rectangle(
        [520, pad_top, 1080, pad_top + 150], fill=(120, 122, 118), outline=(60, 60, 60), width=4
    )
    d.rectangle([600, pad_top - 60, 1000, pad_top], fill=(70, 52, 40))
    d.rectangle([600, pad_top - 260, 1000, pad_top - 220], fill=(70, 52, 40))
    d.rectangle([780, pad_top - 220, 820, pad_top - 60], fill=(70, 52, 40))
    d.rectangle([40, 40, 760, 130], fill=(255, 255, 255))
    d.text((60, 60), f"{reference}  photo {k + 1}", fill=(0, 0, 0), font_size=56)
    exif = Image.Exif()
    exif[0x0132] = when.strftime("%Y:%m:%d %H:%M:%S")  # DateTime
    out = io.BytesIO()
    im.save(out, "JPEG", quality=85, exif=exif.tobytes())
    return out.getvalue()


def main(argv: list[str] | None = None) -> int:
    target = Path(argv[0]) if argv else SCHEDULE_PATH
    target.parent.mkdir(parents=True, exist_ok=True)
    target.write_text(schedule_csv(), encoding="utf-8")
    print(f"wrote {target}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main(sys.argv[1:]))
