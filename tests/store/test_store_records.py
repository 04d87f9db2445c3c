"""As-built records and their photos in the store: sent twice, stored once; the same id
with other values refused; which record drives the state; times in UTC; revisions of the
design and the records they leave behind."""

from __future__ import annotations

import sqlite3
import threading
import uuid as uuid_module
from datetime import timedelta

import pytest

from kit.store_rows import T0, another_site, count, make_bearing, send_record
from sitecheck import store, workflow


def test_sending_a_record_twice_stores_it_once_and_returns_the_original(world):
    w = world
    uuid = str(uuid_module.uuid4())
    first = w.send(uuid=uuid)
    events = count(w.db, "events")
    second = w.send(
        uuid=uuid.upper(),
        # The server's own answer may differ (a later re-check); what was sent is the same.
        utilisation=1.5,
        blocking=2,
    )
    assert first.created is True
    assert second.created is False
    assert second.row == first.row
    assert second.row["measurements"] == {"bearing_length_mm": 140}
    assert second.state == "within design"
    assert count(w.db, "as_built_records") == 1
    assert count(w.db, "events") == events


def test_the_same_record_id_with_other_values_is_refused_naming_what_differs(world):
    w = world
    uuid = str(uuid_module.uuid4())
    first = w.send(uuid=uuid)
    events = count(w.db, "events")
    with pytest.raises(store.SameIdOtherValues) as refused:
        w.send(uuid=uuid, measurements={"bearing_length_mm": 99})
    assert refused.value.differs == ("measurements",)
    assert "already stored with other values (measurements)" in str(refused.value)
    assert isinstance(refused.value, store.UuidInUse)  # callers that know only the older error
    assert store.record_line(w.db, site_id=w.site["id"], uuid=uuid) == first.row
    assert count(w.db, "as_built_records") == 1
    assert count(w.db, "events") == events


def test_a_record_of_a_bearing_that_could_not_be_measured_is_its_own_kind(world):
    w = world
    measured = w.send()
    assert (measured.row["kind"], measured.row["why_not_measured"]) == ("measured", None)
    unmeasured = store.insert_record(
        w.db,
        site_id=w.site["id"],
        uuid=str(uuid_module.uuid4()),
        bearing_id=w.bearing["id"],
        design_revision=1,
        inspector_id=w.inspector["id"],
        measured_at=T0 + timedelta(hours=1),
        measurements={},
        checklist={},
        notes="Behind the new stud wall.",
        result={"utilisation": 0.5},
        reasons=[{"code": "could-not-measure"}],
        utilisation=0.5,
        passed=True,
        blocking=1,
        state_after_record=workflow.state_after_record,
        why_not_measured="covered",
    )
    assert (unmeasured.row["kind"], unmeasured.row["why_not_measured"]) == (
        "could not measure",
        "covered",
    )
    assert unmeasured.state == "engineer to decide"
    # Only the core's codes: anything else is refused by the database itself.
    with pytest.raises(sqlite3.IntegrityError, match="CHECK"):
        w.db.execute(
            "INSERT INTO as_built_records (uuid, bearing_id, design_revision, inspector_id, "
            "measured_at, received_at, measurements, result, passed, blocking, why_not_measured) "
            "VALUES (?, ?, 1, ?, ?, ?, '{}', X'789C', 1, 1, 'too dark')",
            [
                str(uuid_module.uuid4()),
                w.bearing["id"],
                w.inspector["id"],
                "2026-01-01T00:00:00Z",
                "2026-01-01T00:00:00Z",
            ],
        )


def test_a_uuid_already_used_for_another_bearing_is_refused(world):
    w = world
    other = make_bearing(w.db, w.site, w.engineer, "B2")
    uuid = str(uuid_module.uuid4())
    w.send(uuid=uuid)
    with pytest.raises(store.UuidInUse):
        w.send(other, uuid=uuid)
    assert count(w.db, "as_built_records") == 1


def test_a_record_for_another_sites_bearing_is_not_found(world):
    w = world
    other_site = another_site(w.db, w.engineer["id"], name="Elsewhere")
    with pytest.raises(store.NotFound):
        send_record(w.db, other_site, w.bearing, w.inspector)


def test_two_connections_sending_the_same_uuid_together_store_one_row(world, tmp_path):
    w = world
    uuid = str(uuid_module.uuid4())
    barrier = threading.Barrier(4)
    results, errors = [], []

    def send():
        db = store.open_db(tmp_path / "site.db")
        try:
            barrier.wait()
            results.append(send_record(db, w.site, w.bearing, w.inspector, uuid=uuid))
        except Exception as error:  # collected and asserted below
            errors.append(error)
        finally:
            db.close()

    threads = [threading.Thread(target=send) for _ in range(4)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    assert sorted(r.created for r in results) == [False, False, False, True]
    assert len({tuple(sorted(map(str, r.row.items()))) for r in results}) == 1
    assert count(w.db, "as_built_records") == 1


def test_the_newest_record_by_measured_time_drives_the_state(world):
    w = world
    a = w.send(measured_at=T0 + timedelta(hours=2), utilisation=1.1, blocking=1)
    assert a.state == "engineer to decide"
    # Measured earlier by a second inspector who was offline longer: kept, does not drive.
    b = w.send(measured_at=T0, utilisation=0.5)
    assert b.created and b.state == "engineer to decide"
    bearing = w.bearing_now()
    assert bearing["latest_record_uuid"] == a.row["uuid"]
    c = w.send(measured_at=T0 + timedelta(hours=3))
    assert c.state == "within design"
    records = store.records_for_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert [r["uuid"] for r in records] == [c.row["uuid"], a.row["uuid"], b.row["uuid"]]


def test_a_record_after_release_is_kept_late_and_the_bearing_stays_released(released):
    w = released
    before = w.bearing_now()
    late = w.send(measured_at=T0 + timedelta(days=1))
    after = w.bearing_now()
    assert late.created and late.row["late"] is True
    assert late.state == "released"
    assert after == before
    # Reopening makes the late record the one the engineer decides on.
    w.reopen("A later measurement arrived.")
    reopened = w.bearing_now()
    assert reopened["latest_record_uuid"] == late.row["uuid"]


def test_a_failed_recheck_without_a_blocking_reason_is_refused(world):
    w = world
    with pytest.raises(sqlite3.IntegrityError, match="CHECK"):
        w.send(utilisation=1.3, blocking=0)
    assert count(w.db, "as_built_records") == 0
    assert w.bearing_now()["state"] == "awaiting survey"


def test_records_keep_their_json_and_times_in_utc(world):
    w = world
    rec = w.send(measured_at="2026-06-01T10:15:00+01:00")
    assert rec.row["measured_at"] == "2026-06-01T09:15:00.000000Z"
    assert rec.row["received_at"].endswith("Z")
    assert rec.row["checklist"] == {"mortar bed full": True}
    assert rec.row["passed"] is True
    with pytest.raises(ValueError, match="time zone"):
        w.send(measured_at="2026-06-01T10:15:00")
    with pytest.raises(ValueError, match="not a UUID"):
        w.send(uuid="record-1")


def test_revising_a_bearing_keeps_history_and_flags_older_records(world):
    w = world
    rec = w.send()
    revised = store.revise_bearing(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        expected_revision=1,
        expected_state="within design",
        new_state=workflow.state_after_revision("within design", has_records=True),
        design_input={"reaction_kN": 55, "bearing_length_mm": 150},
        design_result={"utilisation": 0.8},
        utilisation=0.8,
        passed=True,
        user_id=w.engineer["id"],
    )
    assert revised["revision"] == 2 and revised["state"] == "engineer to decide"
    history = store.bearing_revisions(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert [h["design_input"]["reaction_kN"] for h in history] == [40, 55]
    old = store.get_record(w.db, site_id=w.site["id"], uuid=rec.row["uuid"])
    assert old["older_revision"] is True
    with pytest.raises(store.StaleState, match="revision 2"):
        store.revise_bearing(
            w.db,
            site_id=w.site["id"],
            bearing_id=w.bearing["id"],
            expected_revision=1,
            expected_state="engineer to decide",
            new_state="engineer to decide",
            design_input={},
            design_result={},
            utilisation=0.1,
            passed=True,
            user_id=w.engineer["id"],
        )
    with pytest.raises(ValueError, match="design_revision 3"):
        w.send(revision=3)


def test_latest_record_summaries_hold_the_record_that_sets_each_state(world):
    w = world
    second = make_bearing(w.db, w.site, w.engineer, "B2")
    later = w.send(measured_at=T0, utilisation=0.8)
    # Sent afterwards but measured earlier: kept, and not the one that sets the state.
    w.send(measured_at="2026-01-01T08:00:00Z", utilisation=0.5)
    summaries = store.latest_record_summaries(w.db, site_id=w.site["id"])
    assert set(summaries) == {w.bearing["id"]}  # B2 has no record yet
    latest = summaries[w.bearing["id"]]
    assert latest["uuid"] == later.row["uuid"] and latest["utilisation"] == 0.8
    assert latest["passed"] is True and latest["older_revision"] is False
    assert "result" not in latest and "reasons" not in latest  # the heavy columns stay out
    assert second["id"] not in summaries


def test_photos_are_idempotent_and_scoped(world):
    w = world
    rec = w.send()
    photo = {
        "uuid": str(uuid_module.uuid4()),
        "record_uuid": rec.row["uuid"],
        "sha256": "c" * 64,
        "thumb_sha256": None,
        "width": 800,
        "height": 600,
        "size_bytes": 90_000,
        "captured_at": None,
        "gps_lat": None,
        "gps_lon": None,
        "user_id": w.inspector["id"],
    }
    first = store.insert_photo(w.db, site_id=w.site["id"], **photo)
    second = store.insert_photo(w.db, site_id=w.site["id"], **photo)
    assert first.created and not second.created
    assert second.row == first.row
    # Another picture under the same id is not a resend.
    with pytest.raises(store.SameIdOtherValues):
        store.insert_photo(w.db, site_id=w.site["id"], **{**photo, "sha256": "d" * 64})
    other = another_site(w.db, w.engineer["id"])
    with pytest.raises(store.NotFound):
        store.insert_photo(w.db, site_id=other["id"], **{**photo, "uuid": str(uuid_module.uuid4())})
    assert store.get_photo(w.db, site_id=other["id"], uuid=photo["uuid"]) is None
    assert store.get_photo(w.db, site_id=w.site["id"], uuid=photo["uuid"])["sha256"] == "c" * 64
