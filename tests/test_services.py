"""What happens when someone acts, below the screens: services on a real SQLite file."""

from __future__ import annotations

import uuid
from datetime import UTC, datetime, timedelta

import pytest

from kit.review_steps import as_designed
from sitecheck import services, store, workflow


def _record(db, site, people, reference, measured_at, **changes):
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
    stored, rc = services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=str(uuid.uuid4()),
        measured_at=measured_at.strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=bearing["revision"],
        measurements=as_designed(bearing) | changes,
        checklist={
            "bedded": True,
            "packing": 0.0,
            "cracks": False,
            "cut_units": False,
            "level": True,
        },
        notes="",
        inspector_id=people["inspector"].id,
    )
    return stored, rc


def test_a_record_as_designed_is_within_design(db, site, people):
    stored, rc = _record(db, site, people, "GF-B1-E", datetime.now(UTC))
    assert rc.reasons == () and stored.state == "within design"


def test_a_phone_clock_far_ahead_sends_the_record_to_the_engineer(db, site, people):
    # A clock two hours fast would make this record "newest" until long after it is not.
    stored, rc = _record(db, site, people, "GF-B1-E", datetime.now(UTC) + timedelta(hours=2))
    assert "clock-ahead" in {r.code for r in rc.reasons}
    assert stored.state == "engineer to decide"


def test_the_newest_record_by_measured_time_drives_the_state(db, site, people):
    # Two inspectors offline: the later measurement (short padstone) arrives first, the
    # earlier one (as designed) second; the state follows the later measurement.
    now = datetime.now(UTC)
    _record(db, site, people, "GF-B1-E", now - timedelta(minutes=5), padstone_length=300.0)
    stored, _ = _record(db, site, people, "GF-B1-E", now - timedelta(minutes=30))
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    assert bearing["state"] == "engineer to decide"
    assert len(store.records_for_bearing(db, site_id=site["id"], bearing_id=bearing["id"])) == 2
    assert stored.created


def test_a_refused_release_is_written_down(db, site, people):
    _record(db, site, people, "GF-B1-E", datetime.now(UTC), padstone_length=300.0)
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    with pytest.raises(workflow.WorkflowError, match="engineer"):
        services.release(
            db,
            site=site,
            bearing=bearing,
            contractor_id=people["contractor"].id,
            contractor_name="C",
            statement="S",
        )
    kinds = [e["kind"] for e in store.events_for(db, site_id=site["id"], bearing_id=bearing["id"])]
    assert "release refused" in kinds


def test_a_changed_code_basis_is_used_by_the_next_record_design_and_as_built_alike(
    db, site, people
):
    # The design's check is kept per design and basis; a new basis must never meet the
    # design's check under the old one. As designed, the as-built's utilisation is the
    # design's under the same basis: nothing rose, whatever the basis.
    from dataclasses import replace

    from sitecheck.bearing.recheck import check_bearing

    first, before = _record(db, site, people, "GF-B1-E", datetime.now(UTC))
    assert first.state == "within design"
    basis = services.basis_for(site)
    # γ_M at the top of what the settings accept (5.0) divides the masonry's strength by
    # more: the same bearing is far more utilised under it.
    harsher = replace(basis, gamma_M_ec6=tuple((k, 5.0) for k, _v in basis.gamma_M_ec6))
    # A review that notices any rise at all.
    keen = services.settings_for(site).as_dict() | {"rise_margin": 0.01}
    store.update_site_settings(
        db,
        site_id=site["id"],
        user_id=people["engineer"].id,
        code_basis=harsher.to_dict(),
        review_settings=keen,
    )
    site = store.get_site(db, site["id"])
    assert services.basis_for(site) == harsher
    second, rc = _record(db, site, people, "GF-B1-E", datetime.now(UTC) + timedelta(minutes=1))
    assert rc.result == check_bearing(rc.as_built, harsher)
    # Against the design's check under the old basis it would have risen past the margin.
    margin = services.settings_for(site).rise_margin
    assert rc.result.utilisation > before.result.utilisation + margin
    assert "utilisation-rise" not in [r.code for r in rc.reasons]


def test_a_record_that_leaves_the_state_as_it_was_moves_only_the_latest_record(db, site, people):
    first, _rc = _record(db, site, people, "GF-B1-E", datetime.now(UTC))
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    second, _rc = _record(db, site, people, "GF-B1-E", datetime.now(UTC) + timedelta(minutes=1))
    after = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    assert first.state == second.state == after["state"] == "within design"
    assert after["state_changed_at"] == bearing["state_changed_at"]
    assert after["latest_record_uuid"] == second.row["uuid"] != first.row["uuid"]
    event = store.events_for(db, site_id=site["id"])[0]  # newest first
    assert event["kind"] == "record received"
    assert event["detail"]["before"]["latest_record_uuid"] == first.row["uuid"]
    assert event["detail"]["after"] == {
        "state": "within design",
        "latest_record_uuid": second.row["uuid"],
    }


def test_a_new_record_is_answered_with_the_row_as_stored(db, site, people):
    # The row comes back from the insert itself; it must be the row a later read gives.
    stored, _rc = _record(db, site, people, "GF-B1-E", datetime.now(UTC))
    assert stored.created
    assert stored.row == store.record_line(db, site_id=site["id"], uuid=stored.row["uuid"])
    assert stored.row["kind"] == "measured" and stored.row["older_revision"] is False
    again, _rc = _record(db, site, people, "GF-B2-N", datetime.now(UTC))
    assert again.row == store.record_line(db, site_id=site["id"], uuid=again.row["uuid"])
