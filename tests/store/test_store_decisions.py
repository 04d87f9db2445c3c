"""The engineer's decisions, the contractor's releases and the reopenings, through the
store: each refused when the bearing moved since it was read; the review queue; and the
event with before and after that every move writes."""

from __future__ import annotations

from datetime import timedelta

import pytest

from kit.store_rows import T0, another_site, make_bearing, make_user, send_record
from sitecheck import store, workflow


def test_a_decision_on_an_outdated_record_is_refused(world):
    w = world
    old = w.send(utilisation=1.1, blocking=1)
    w.send(measured_at=T0 + timedelta(hours=1), utilisation=1.05, blocking=1)
    decide = dict(
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        engineer_id=w.engineer["id"],
        kind="measure-again",
        reason="Photo does not show the padstone edge.",
        expected_state="engineer to decide",
        new_state=workflow.state_after_decision("measure-again"),
    )
    with pytest.raises(store.StaleState, match="newer as-built record"):
        store.record_decision(w.db, record_uuid=old.row["uuid"], **decide)
    latest = w.bearing_now()
    store.record_decision(w.db, record_uuid=latest["latest_record_uuid"], **decide)
    after = w.bearing_now()
    assert after["state"] == "awaiting survey"
    with pytest.raises(ValueError, match="reason"):
        store.record_decision(
            w.db, record_uuid=latest["latest_record_uuid"], **{**decide, "reason": "   "}
        )


def test_release_refused_when_the_state_moved_since_it_was_read(world):
    w = world
    w.send()
    w.send(measured_at=T0 + timedelta(hours=1), utilisation=1.1, blocking=1)
    with pytest.raises(store.StaleState, match="engineer to decide"):
        w.release(expected_state="within design", statement="Released.")


def test_releasable_follows_the_workflow(world):
    assert store.STATES == workflow.STATES
    assert store.ROLES == workflow.ROLES
    assert store.DECISION_KINDS == workflow.DECISION_KINDS
    assert set(store.RELEASABLE_STATES) == {s for s in workflow.STATES if workflow.can_release(s)}
    w = world
    b2 = make_bearing(w.db, w.site, w.engineer, "B2")
    w.send()
    w.send(b2, utilisation=1.1, blocking=1)
    assert [b["reference"] for b in store.releasable(w.db, site_id=w.site["id"])] == ["B1"]


def test_reopening_through_the_store_keeps_release_and_reason(released):
    w = released
    reopening = w.reopen(
        "Wall found to be a different block.",
        new_state=workflow.reopen(
            state="released", role="engineer", reason="Wall found to be a different block."
        ),
    )
    bearing = w.bearing_now()
    assert bearing["state"] == "engineer to decide"
    assert reopening["reason"] == "Wall found to be a different block."
    assert len(store.releases_for(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])) == 1
    kinds = [e["kind"] for e in store.events_for(w.db, site_id=w.site["id"])]
    assert kinds[:2] == ["reopening", "release"]


def test_reopening_a_bearing_that_is_not_released_is_stale(world):
    with pytest.raises(store.StaleState):
        world.reopen("No reason")


def test_review_queue_shows_only_the_engineers_own_sites_most_serious_first(world):
    w = world
    db = w.db
    a1, a2, a3 = (
        w.bearing,
        make_bearing(db, w.site, w.engineer, "B2"),
        make_bearing(db, w.site, w.engineer, "B3"),
    )
    w.send(a2, utilisation=0.92, blocking=2)
    w.send(a1, utilisation=1.2, blocking=1)
    w.send(a3, utilisation=0.5)  # within design: not in queue

    other_engineer = make_user(db, "other")
    site_b = another_site(db, other_engineer["id"], name="Site B")
    b1 = make_bearing(db, site_b, other_engineer, "B1")
    store.add_membership(
        db,
        user_id=w.inspector["id"],
        site_id=site_b["id"],
        role="inspector",
        invited_by=other_engineer["id"],
    )
    send_record(db, site_b, b1, w.inspector, utilisation=1.5, blocking=3)
    # Being a viewer on site B does not put B's bearings in the queue.
    store.add_membership(
        db,
        user_id=w.engineer["id"],
        site_id=site_b["id"],
        role="viewer",
        invited_by=other_engineer["id"],
    )

    queue = store.review_queue(db, user_id=w.engineer["id"])
    assert [(q["site_name"], q["reference"]) for q in queue] == [
        ("Mill Lane", "B1"),
        ("Mill Lane", "B2"),
    ]
    assert queue[0]["utilisation"] == 1.2 and queue[0]["reasons"][0]["code"] == "short-bearing"
    assert [q["id"] for q in store.review_queue(db, user_id=other_engineer["id"])] == [b1["id"]]
    assert store.review_queue(db, user_id=w.inspector["id"]) == []


def test_every_state_change_writes_an_event_with_before_and_after(released):
    w = released
    events = store.events_for(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    moves = [
        (e["detail"]["before"]["state"], e["detail"]["after"]["state"])
        for e in reversed(events)
        if "before" in e["detail"]
        and e["detail"]["before"]["state"] != e["detail"]["after"]["state"]
    ]
    assert moves == [
        ("awaiting survey", "engineer to decide"),
        ("engineer to decide", "accepted"),
        ("accepted", "released"),
    ]
