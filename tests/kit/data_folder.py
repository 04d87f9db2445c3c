"""A data folder with a site in it, as the app makes one, for tests that run a real server
on it (kit.servers); and the as-built record its inspectors send.

Every name, e-mail and measurement here is invented for tests.
"""

from __future__ import annotations

import uuid
from datetime import UTC, datetime
from pathlib import Path

from kit.web import PASSWORD, new_site
from sitecheck import credentials, services, store
from sitecheck.demo import SITE_NAME, schedule_csv


def prepare_home(home: Path, *, inspectors: int = 1) -> dict:
    """A data folder with one site (the demo schedule's block bearings), its engineer and
    ``inspectors`` inspectors, as the app makes them. Returns ids, e-mails and bearings."""
    home.mkdir(parents=True, exist_ok=True)
    db = store.open_db(home / "sitecheck.db")
    try:
        hashed = credentials.hash_password(PASSWORD)
        engineer = store.create_user(
            db, email="engineer@example.test", name="Esme Engineer", password_hash=hashed
        )
        site = new_site(db, name=SITE_NAME, created_by=engineer["id"])
        people = []
        for n in range(inspectors):
            u = store.create_user(
                db, email=f"inspector{n}@example.test", name=f"Inspector {n}", password_hash=hashed
            )
            store.add_membership(
                db, user_id=u["id"], site_id=site["id"], role="inspector", invited_by=engineer["id"]
            )
            people.append(u["email"])
        text = "\n".join(x for x in schedule_csv().splitlines() if "BS 5628-1" not in x) + "\n"
        report = services.import_schedule(db, site=site, text=text, user_id=engineer["id"])
        assert report.ok, report.errors
        bearings = store.list_bearings(db, site_id=site["id"])
    finally:
        db.conn.close()
    return {
        "site_id": site["id"],
        "engineer": engineer["email"],
        "inspectors": people,
        "bearings": bearings,
    }


def as_built_record(site_id: str, bearing: dict, **measured) -> dict:
    """An as-built record as the phone sends it: invented values close to the design;
    ``measured`` replaces any measurement."""
    d = bearing["design_input"]
    return {
        "uuid": str(uuid.uuid4()),
        "site_id": site_id,
        "bearing_id": bearing["id"],
        "design_revision": bearing["revision"],
        "measured_at": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "measurements": {
            "bearing_length": d["beam"]["bearing_length"],
            "padstone_present": True,
            "padstone_length": 440,
            "padstone_width": 215,
            "padstone_depth": 140,
            "wall_thickness": 215,
            "masonry_group": 1,
            "a1": d["wall"]["a1"],
            **measured,
        },
        "checklist": {"bedded": True, "packing": 0, "cracks": False},
        "notes": "Sent by a test inspector.",
    }
