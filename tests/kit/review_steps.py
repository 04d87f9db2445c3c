"""The engineer's review as the web tests drive it: as-built records stored through
services (as the sync API stores them), the bearing's review page and its decision form, and
a second site with an engineer of its own. Every site, person and value is invented."""

from __future__ import annotations

import re
import uuid
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

from kit.web import new_site
from sitecheck import credentials, services, store
from sitecheck.demo import schedule_csv

SECOND_PASSWORD = "another long test password"  # a test account only


@dataclass
class Engineer:
    id: int
    email: str


def login(client, email: str, password: str) -> None:
    page = client.get("/login")
    token = hidden(page.data, "csrf_token")
    r = client.post("/login", data={"email": email, "password": password, "csrf_token": token})
    assert r.status_code == 302, r.data[:400]


# Ticked as built to the design: no checklist reason of its own.
CHECKLIST_OK = {"bedded": True, "packing": 0.0, "cracks": False, "cut_units": False, "level": True}


def hours_ago(hours: float) -> str:
    return (datetime.now(UTC) - timedelta(hours=hours)).strftime("%Y-%m-%dT%H:%M:%SZ")


def as_designed(bearing: dict) -> dict:
    """Measurements equal to the design: every value the review requires, nothing changed."""
    d = bearing["design_input"]
    pad = d["padstone"]
    m = {
        "bearing_length": d["beam"]["bearing_length"],
        "flange_width": d["beam"]["flange_width"],
        "wall_thickness": d["wall"]["thickness"],
        "masonry_group": d["masonry"]["group"],
        "padstone_present": pad is not None,
    }
    if pad is not None:
        m |= {
            "padstone_length": pad["length"],
            "padstone_width": pad["width"],
            "padstone_depth": pad["depth"],
        }
    if d["wall"]["a1"] is not None:
        m["a1"] = d["wall"]["a1"]
    return m


def bearing_named(db, site: dict, reference: str) -> dict:
    b = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
    assert b is not None, reference
    return b


def record(
    db,
    site: dict,
    reference: str,
    inspector,
    *,
    hours: float = 1.0,
    notes: str = "",
    design_revision: int | None = None,
    **changes,
) -> str:
    """Store one as-built record, measured ``hours`` ago; the design except ``changes``."""
    b = bearing_named(db, site, reference)
    record_uuid = str(uuid.uuid4())
    services.record_as_built(
        db,
        site=site,
        bearing=b,
        uuid=record_uuid,
        measured_at=hours_ago(hours),
        design_revision=design_revision or b["revision"],
        measurements=as_designed(b) | changes,
        checklist=CHECKLIST_OK,
        notes=notes,
        inspector_id=inspector.id,
    )
    return record_uuid


def state_of(db, site: dict, reference: str) -> str:
    return bearing_named(db, site, reference)["state"]


def review_url(site: dict, bearing: dict, json: bool = False) -> str:
    return f"/sites/{site['id']}/bearings/{bearing['id']}/review" + (".json" if json else "")


def decision_url(site: dict, bearing: dict) -> str:
    return f"/sites/{site['id']}/bearings/{bearing['id']}/decision"


def hidden(html: bytes, name: str) -> str:
    found = re.search(rf'name="{name}" type="hidden" value="([^"]*)"'.encode(), html)
    assert found, f"no hidden {name} on the page"
    return found.group(1).decode()


def decide_form(client, site, bearing, *, kind="accept", reason="Checked the photos; fine."):
    """What the decision form sends, with the record and state now on the page."""
    page = client.get(review_url(site, bearing))
    assert page.status_code == 200
    return {
        "csrf_token": hidden(page.data, "csrf_token"),
        "record_uuid": hidden(page.data, "record_uuid"),
        "seen_state": hidden(page.data, "seen_state"),
        "kind": kind,
        "reason": reason,
    }


def other_site_with_engineer(db, name="Second invented site") -> tuple[dict, Engineer]:
    """A second site whose engineer is on no other site, with one bearing to decide."""
    u = store.create_user(
        db,
        email="second@example.test",
        name="Sam Second",
        password_hash=credentials.hash_password(SECOND_PASSWORD),
    )
    engineer = Engineer(u["id"], "second@example.test")
    other = new_site(db, name=name, created_by=engineer.id, address="Nowhere Lane (invented)")
    text = "\n".join(row for row in schedule_csv().splitlines() if "BS 5628-1" not in row) + "\n"
    assert services.import_schedule(db, site=other, text=text, user_id=engineer.id).ok
    record(db, other, "FF-B5", engineer)
    return store.get_site(db, other["id"]), engineer


def fails_unmeasured(db, site, reference, inspector):
    """No padstone found, and the end distance not measured: fails as built, with a
    'not measured' reason the review lists before the failing check."""
    b = bearing_named(db, site, reference)
    unmeasured = {k: None for k in as_designed(b) if k.startswith("padstone_") or k == "a1"}
    return record(db, site, reference, inspector, **unmeasured | {"padstone_present": False})
