"""Rows for the store's tests, written straight through the store (no core, no web): people,
sites, bearings with stand-in design values, as-built records, decisions, releases and
reopenings. The values are invented and mean nothing to the engineering; the store keeps
what it is given, and these tests hold it to that.

``World`` is one site with a member per role and one bearing (tests/store/conftest.py makes
it); its methods act on that site as its people would, through the store.
"""

from __future__ import annotations

import uuid as uuid_module
from dataclasses import dataclass
from datetime import UTC, datetime

from sitecheck import store, workflow

T0 = datetime(2026, 3, 2, 8, 0, tzinfo=UTC)


def make_user(db, name):
    return store.create_user(
        db, email=f"{name}@example.test", name=name.title(), password_hash="test-hash-not-real"
    )


def make_bearing(db, site, user, reference, *, utilisation=0.6):
    return store.add_bearing(
        db,
        site_id=site["id"],
        reference=reference,
        location="level 1, grid C-4",
        design_input={"reaction_kN": 40, "bearing_length_mm": 150},
        design_result={"utilisation": utilisation},
        utilisation=utilisation,
        passed=utilisation <= 1,
        user_id=user["id"],
    )


def another_site(db, created_by, *, name="Other") -> dict:
    """A second, empty site, to show that what belongs to one site stays there."""
    return store.create_site(
        db, name=name, address="", code_basis={}, review_settings={}, created_by=created_by
    )


def send_record(
    db,
    site,
    bearing,
    inspector,
    *,
    uuid=None,
    measured_at=T0,
    utilisation=0.7,
    blocking=0,
    measurements=None,
    revision=1,
):
    return store.insert_record(
        db,
        site_id=site["id"],
        uuid=uuid or str(uuid_module.uuid4()),
        bearing_id=bearing["id"],
        design_revision=revision,
        inspector_id=inspector["id"],
        measured_at=measured_at,
        measurements=measurements or {"bearing_length_mm": 140},
        checklist={"mortar bed full": True},
        notes="",
        result={"utilisation": utilisation},
        reasons=[{"code": "short-bearing", "blocking": True}] * blocking,
        utilisation=utilisation,
        passed=utilisation <= 1,
        blocking=blocking,
        state_after_record=workflow.state_after_record,
    )


def count(db, table):
    return db.execute(f"SELECT count(*) FROM {table}").fetchone()[0]


def snapshot(db):
    schema = db.execute(
        "SELECT type, name, tbl_name, sql FROM sqlite_master ORDER BY type, name"
    ).fetchall()
    tables = [row[1] for row in schema if row[0] == "table" and not row[1].startswith("sqlite_")]
    counts = {table: count(db, table) for table in tables}
    applied = db.execute(
        "SELECT migration_set, name, applied_at FROM _sqlite_migrations"
    ).fetchall()
    return schema, counts, applied


@dataclass
class World:
    """One site ("Mill Lane") with an engineer, inspector, contractor and viewer, and B1."""

    db: object
    engineer: dict
    inspector: dict
    contractor: dict
    viewer: dict
    site: dict
    bearing: dict

    def send(self, bearing=None, **record):
        """An as-built record of ``bearing`` (B1) by the inspector; see ``send_record``."""
        return send_record(self.db, self.site, bearing or self.bearing, self.inspector, **record)

    def bearing_now(self, bearing=None) -> dict:
        """The bearing (B1) as the store holds it now."""
        return store.get_bearing(
            self.db, site_id=self.site["id"], bearing_id=(bearing or self.bearing)["id"]
        )

    def decide(self, record_uuid, reason, *, kind="accept", new_state="accepted"):
        """The engineer's decision on B1's record, from "engineer to decide"."""
        return store.record_decision(
            self.db,
            site_id=self.site["id"],
            bearing_id=self.bearing["id"],
            record_uuid=record_uuid,
            engineer_id=self.engineer["id"],
            kind=kind,
            reason=reason,
            expected_state="engineer to decide",
            new_state=new_state,
        )

    def release(self, bearing=None, *, expected_state=None, statement="Released for closing up."):
        """The contractor's release, from the state the bearing is in unless told otherwise."""
        bearing = self.bearing_now(bearing)
        return store.record_release(
            self.db,
            site_id=self.site["id"],
            bearing_id=bearing["id"],
            contractor_id=self.contractor["id"],
            contractor_name="C. Builder",
            statement=statement,
            expected_state=expected_state or bearing["state"],
        )

    def reopen(self, reason, *, new_state="engineer to decide"):
        """The engineer reopens B1, with a reason."""
        return store.record_reopening(
            self.db,
            site_id=self.site["id"],
            bearing_id=self.bearing["id"],
            engineer_id=self.engineer["id"],
            reason=reason,
            new_state=new_state,
        )


def make_world(db) -> World:
    engineer = make_user(db, "engineer")
    inspector = make_user(db, "inspector")
    contractor = make_user(db, "contractor")
    viewer = make_user(db, "viewer")
    site = store.create_site(
        db,
        name="Mill Lane",
        address="1 Mill Lane",
        code_basis={"code": "EN 1996-1-1", "gamma_M": 2.5},
        review_settings={"utilisation_review": 0.9},
        created_by=engineer["id"],
    )
    for person, role in ((inspector, "inspector"), (contractor, "contractor"), (viewer, "viewer")):
        store.add_membership(
            db, user_id=person["id"], site_id=site["id"], role=role, invited_by=engineer["id"]
        )
    bearing = make_bearing(db, site, engineer, "B1")
    return World(db, engineer, inspector, contractor, viewer, site, bearing)


def release_after_a_decision(w: World) -> World:
    """B1 measured, needing a decision, accepted, released."""
    rec = w.send(utilisation=0.95, blocking=1)
    store.insert_photo(
        w.db,
        site_id=w.site["id"],
        uuid=str(uuid_module.uuid4()),
        record_uuid=rec.row["uuid"],
        sha256="a" * 64,
        thumb_sha256="b" * 64,
        width=1600,
        height=1200,
        size_bytes=250_000,
        captured_at=T0,
        gps_lat=51.5,
        gps_lon=-0.1,
        user_id=w.inspector["id"],
    )
    w.decide(
        rec.row["uuid"],
        "Padstone checked by hand; bearing length is adequate.",
        new_state=workflow.state_after_decision("accept"),
    )
    w.release()
    return w
