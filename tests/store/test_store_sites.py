"""Sites in the store: memberships and roles, the last engineer kept, settings changed
with an event, references unique per site, and every read scoped to its site."""

from __future__ import annotations

import threading

import pytest

from kit.store_rows import another_site, make_bearing
from sitecheck import store


def test_memberships_and_roles(world):
    w = world
    assert store.role_of(w.db, user_id=w.engineer["id"], site_id=w.site["id"]) == "engineer"
    assert store.role_of(w.db, user_id=w.viewer["id"], site_id=w.site["id"]) == "viewer"
    with pytest.raises(store.AlreadyMember):
        store.add_membership(
            w.db,
            user_id=w.viewer["id"],
            site_id=w.site["id"],
            role="viewer",
            invited_by=w.engineer["id"],
        )
    with pytest.raises(ValueError, match="role"):
        store.set_role(
            w.db,
            user_id=w.viewer["id"],
            site_id=w.site["id"],
            role="admin",
            by_user_id=w.engineer["id"],
        )
    assert [s["role"] for s in store.sites_for_user(w.db, w.inspector["id"])] == ["inspector"]
    assert store.remove_membership(
        w.db, user_id=w.viewer["id"], site_id=w.site["id"], by_user_id=w.engineer["id"]
    )
    assert store.role_of(w.db, user_id=w.viewer["id"], site_id=w.site["id"]) is None


def test_the_last_engineer_is_kept_by_the_store(world):
    w = world
    for change in (
        lambda: store.set_role(
            w.db,
            user_id=w.engineer["id"],
            site_id=w.site["id"],
            role="viewer",
            by_user_id=w.engineer["id"],
        ),
        lambda: store.remove_membership(
            w.db, user_id=w.engineer["id"], site_id=w.site["id"], by_user_id=w.engineer["id"]
        ),
    ):
        with pytest.raises(store.LastEngineer, match="only engineer"):
            change()
        assert store.role_of(w.db, user_id=w.engineer["id"], site_id=w.site["id"]) == "engineer"


def test_two_engineers_stepping_down_at_once_leave_one(world, tmp_path):
    """Each sees a second engineer if both read before either writes; the check inside the
    write transaction makes the later one see the truth."""
    w = world
    store.set_role(
        w.db,
        user_id=w.viewer["id"],
        site_id=w.site["id"],
        role="engineer",
        by_user_id=w.engineer["id"],
    )
    path = w.db.conn.execute("PRAGMA database_list").fetchone()[2]
    start = threading.Barrier(2)
    outcomes: dict[str, str] = {}

    def step_down(name: str, user_id: int) -> None:
        db = store.open_db(path)
        try:
            start.wait()
            store.set_role(
                db, user_id=user_id, site_id=w.site["id"], role="inspector", by_user_id=user_id
            )
            outcomes[name] = "stepped down"
        except store.LastEngineer:
            outcomes[name] = "refused"
        finally:
            db.close()

    threads = [
        threading.Thread(target=step_down, args=("first", w.engineer["id"])),
        threading.Thread(target=step_down, args=("second", w.viewer["id"])),
    ]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert sorted(outcomes.values()) == ["refused", "stepped down"]
    roles = [m["role"] for m in store.members_of(w.db, site_id=w.site["id"])]
    assert roles.count("engineer") == 1


def test_site_settings_change_with_an_event(world):
    w = world
    site = store.update_site_settings(
        w.db,
        site_id=w.site["id"],
        user_id=w.engineer["id"],
        review_settings={"utilisation_review": 0.85},
    )
    assert site["review_settings"] == {"utilisation_review": 0.85}
    assert site["code_basis"] == w.site["code_basis"]
    event = store.events_for(w.db, site_id=w.site["id"])[0]
    assert event["kind"] == "site settings changed"
    assert event["detail"]["before"] == {"review_settings": {"utilisation_review": 0.9}}


def test_references_are_unique_per_site_ignoring_case(world):
    w = world
    with pytest.raises(store.DuplicateReference, match="'b1'"):
        make_bearing(w.db, w.site, w.engineer, "b1")
    found = store.bearing_by_reference(w.db, site_id=w.site["id"], reference=" b1 ")
    assert found["id"] == w.bearing["id"]
    other = another_site(w.db, w.engineer["id"])
    assert make_bearing(w.db, other, w.engineer, "B1")["reference"] == "B1"


def test_reads_are_scoped_to_the_site(world):
    w = world
    w.send()
    other = another_site(w.db, w.engineer["id"])
    sid, bid = other["id"], w.bearing["id"]
    assert store.get_bearing(w.db, site_id=sid, bearing_id=bid) is None
    assert store.records_for_bearing(w.db, site_id=sid, bearing_id=bid) == []
    assert store.records_for_site(w.db, site_id=sid) == []
    assert store.decisions_for(w.db, site_id=sid, bearing_id=bid) == []
    assert store.bearing_revisions(w.db, site_id=sid, bearing_id=bid) == []
    assert store.events_for(w.db, site_id=sid, bearing_id=bid) == []
    assert all(e["site_id"] == sid for e in store.events_for(w.db, site_id=sid))
    assert store.list_bearings(w.db, site_id=sid) == []
