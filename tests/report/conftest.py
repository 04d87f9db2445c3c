"""Fixtures of the site record's tests (the app, its database and the demo schedule's site
come from tests/conftest.py)."""

from __future__ import annotations

import uuid
from datetime import UTC, datetime

import pytest

from kit.photo_samples import make_test_jpeg
from sitecheck import services, store
from sitecheck.photos import ingest_photo
from sitecheck.web import photo_store


@pytest.fixture
def recorded(app, db, site, people):
    """One bearing measured as designed and released, one measured short and accepted."""
    now = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    out = {}
    for reference, pad_length in (("GF-B1-E", None), ("GF-B2-N", 300.0)):
        bearing = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
        d = bearing["design_input"]
        pad = d["padstone"]
        measurements = {
            "bearing_length": d["beam"]["bearing_length"],
            "padstone_present": pad is not None,
            "wall_thickness": d["wall"]["thickness"],
            "masonry_group": d["masonry"]["group"],
        }
        if pad:
            measurements |= {
                "padstone_length": pad_length or pad["length"],
                "padstone_width": pad["width"],
                "padstone_depth": pad["depth"],
            }
        if d["wall"]["a1"] is not None:
            measurements["a1"] = d["wall"]["a1"]
        record_uuid = str(uuid.uuid4())
        stored, _ = services.record_as_built(
            db,
            site=site,
            bearing=bearing,
            uuid=record_uuid,
            measured_at=now,
            design_revision=1,
            measurements=measurements,
            checklist={"bedded": True, "cracks": False, "level": True},
            notes="Measured with a tape; invented test record.",
            inspector_id=people["inspector"].id,
        )
        with app.app_context():
            services.store_photo(
                db,
                site=site,
                record_uuid=record_uuid,
                photo=ingest_photo(make_test_jpeg(640, 480)),
                photos=photo_store(),
                user_id=people["inspector"].id,
            )
        bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
        if bearing["state"] == "engineer to decide":
            services.decide(
                db,
                site=site,
                bearing=bearing,
                kind="accept",
                reason="Shorter padstone checked as built; accept.",
                engineer_id=people["engineer"].id,
            )
            bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
        out[reference] = bearing
    b = out["GF-B1-E"]
    assert b["state"] == "within design", b["state"]
    services.release(
        db,
        site=site,
        bearing=b,
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor for Invented Build Ltd",
        statement="Inspected and released for closing up.",
    )
    assert out["GF-B2-N"]["state"] == "accepted"
    return {
        k: store.get_bearing(db, site_id=site["id"], bearing_id=v["id"]) for k, v in out.items()
    }
