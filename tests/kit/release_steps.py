"""The contractor's release and the engineer's reopening as the web tests drive them: the
pages' addresses, the release form as sent from its confirmation step, and bearings brought
to accepted or released through services. Every name and statement is invented."""

from __future__ import annotations

from kit.review_steps import bearing_named, record
from kit.web import csrf_token
from sitecheck import services, store

STATEMENT = "Bearing inspected before the blockwork above; may be closed up."


def release_url(site: dict, json: bool = False) -> str:
    return f"/sites/{site['id']}/release" + (".json" if json else "")


def reopen_url(site: dict, bearing: dict) -> str:
    return f"/sites/{site['id']}/bearings/{bearing['id']}/reopen"


def history_url(site: dict, json: bool = False) -> str:
    return f"/sites/{site['id']}/history" + (".json" if json else "")


def release_form(
    client, *bearing_ids, name="Cora Contractor", statement=STATEMENT, confirmed="yes"
) -> dict:
    """The release as sent from its confirmation step (``confirmed=""``: the first sending
    of the filled-in form, which only shows that step)."""
    return {
        "csrf_token": csrf_token(client),
        "bearings": list(bearing_ids),
        "contractor_name": name,
        "statement": statement,
        "confirmed": confirmed,
    }


def accepted(db, site, people, reference="GF-B1-W") -> dict:
    """A bearing the engineer accepted as built after a short bearing length."""
    record(db, site, reference, people["inspector"], bearing_length=120.0)
    services.decide(
        db,
        site=site,
        bearing=bearing_named(db, site, reference),
        kind="accept",
        reason="Checked by hand: the short bearing is adequate.",
        engineer_id=people["engineer"].id,
    )
    return bearing_named(db, site, reference)


def released(db, site, people, reference="GF-B1-E") -> dict:
    record(db, site, reference, people["inspector"])
    services.release(
        db,
        site=site,
        bearing=bearing_named(db, site, reference),
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor",
        statement=STATEMENT,
    )
    return bearing_named(db, site, reference)


def kinds_of_events(db, site, bearing) -> list[str]:
    return [e["kind"] for e in store.events_for(db, site_id=site["id"], bearing_id=bearing["id"])]
