"""The site pack a phone keeps up to date: it says which pack it holds, and the server sends
what changed since. Run on the real app and a real SQLite file; the phone's merging is done
here as static/js/unsent.js does it (mergePack), and its result must equal a whole pack
made afresh after every kind of change: records, decisions, releases, reopenings, revisions.
"""

from __future__ import annotations

import dataclasses
import sqlite3

import pytest

from kit.data_folder import as_built_record
from kit.web import csrf_token
from sitecheck import services, store


def _pack(client, site, since=None) -> dict:
    url = f"/api/sites/{site['id']}/pack" + (f"?since={since}" if since else "")
    r = client.get(url)
    assert r.status_code == 200, r.data[:300]
    return r.get_json()


def merge(held: dict, answer: dict) -> dict:
    """What the phone keeps after a pack arrives (unsent.js mergePack): a whole pack as it
    comes; a later one laid over the held one, each bearing keeping its place."""
    if answer["full"]:
        return answer
    by_id = {b["id"]: b for b in held["bearings"]}
    for gone in answer["removed"]:
        by_id.pop(gone, None)
    for b in answer["bearings"]:
        by_id[b["id"]] = {**b, "order": by_id[b["id"]]["order"]}
    designs = {**held["designs"], **answer["designs"]}
    bearings = list(by_id.values())
    return {
        **answer,
        "full": True,
        "bearings": bearings,
        "designs": {b["design"]: designs[b["design"]] for b in bearings},
    }


def _same_pack(kept: dict, fresh: dict) -> None:
    def by_id(pack):
        return {b["id"]: b for b in pack["bearings"]}

    assert by_id(kept) == by_id(fresh)
    assert kept["designs"] == fresh["designs"]
    assert kept["version"] == fresh["version"]


def _record(client, site, bearing, **measured) -> dict:
    body = as_built_record(site["id"], bearing, **measured)
    body["checklist"]["cut_units"] = False
    body["notes"] = "Sent for the site pack test."
    r = client.post("/api/records", json=body, headers={"X-CSRFToken": csrf_token(client)})
    assert r.status_code == 201, r.data[:300]
    return r.get_json()


def _bearing(db, site, reference):
    return store.bearing_by_reference(db, site_id=site["id"], reference=reference)


def test_a_later_pack_holds_only_what_changed_and_keeps_the_phone_right(
    client_as, db, site, people
):
    inspector = client_as("inspector")
    kept = _pack(inspector, site)
    assert kept["full"] and len(kept["bearings"]) == len(
        store.list_bearings(db, site_id=site["id"])
    )

    # Nothing changed: nothing sent, the same version.
    later = _pack(inspector, site, kept["version"])
    assert later["full"] is False and later["bearings"] == [] and later["removed"] == []
    assert later["designs"] == {} and later["version"] == kept["version"]

    def step(expected_changed: set[str]) -> None:
        nonlocal kept
        answer = _pack(inspector, site, kept["version"])
        assert answer["full"] is False
        assert {b["id"] for b in answer["bearings"]} == expected_changed
        assert all("order" not in b for b in answer["bearings"])  # places do not move
        kept = merge(kept, answer)
        _same_pack(kept, _pack(inspector, site))

    # A record: the bearing's new state.
    east = _bearing(db, site, "GF-B1-E")
    _record(inspector, site, east)
    step({east["id"]})
    # Two records and a failing one sent for the engineer.
    west, south = _bearing(db, site, "GF-B1-W"), _bearing(db, site, "GF-B2-S")
    _record(inspector, site, west, padstone_length=300)
    _record(inspector, site, south, bearing_length=90)
    step({west["id"], south["id"]})
    assert _bearing(db, site, "GF-B2-S")["state"] == "engineer to decide"
    # A decision.
    services.decide(
        db,
        site=site,
        bearing=_bearing(db, site, "GF-B2-S"),
        kind="remedial",
        reason="Bearing too short; extend it and measure again.",
        engineer_id=people["engineer"].id,
    )
    step({south["id"]})
    assert {b["id"]: b["state"] for b in kept["bearings"]}[south["id"]] == "remedial"
    # A release, then its reopening.
    released = _bearing(db, site, "GF-B1-E")
    assert released["state"] == "within design"
    services.release(
        db,
        site=site,
        bearing=released,
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor",
        statement="Released for closing up.",
    )
    step({east["id"]})
    services.reopen(
        db,
        site=site,
        bearing=_bearing(db, site, "GF-B1-E"),
        role="engineer",
        reason="Opened up again to look at the packing.",
        engineer_id=people["engineer"].id,
    )
    step({east["id"]})
    # A new design revision: its new design travels with it.
    current = _bearing(db, site, "FF-B4")
    design = services.design_of(current)
    heavier = dataclasses.replace(design, load=dataclasses.replace(design.load, reaction=48_000))
    services.revise_bearing(
        db,
        site=site,
        bearing=current,
        design=heavier,
        location=current["location"],
        user_id=people["engineer"].id,
    )
    step({current["id"]})
    revised = {b["id"]: b for b in kept["bearings"]}[current["id"]]
    assert revised["revision"] == 2
    assert kept["designs"][revised["design"]]["input"]["load"]["reaction"] == 48_000


def test_the_whole_pack_is_sent_when_the_phones_pack_cannot_be_followed(
    client_as, db, site, people
):
    inspector = client_as("inspector")
    first = _pack(inspector, site)
    event_id, _dot, at = first["version"].partition(".")
    for since in (
        "nonsense",
        f"{event_id}.2001-01-01T00:00:00.000000Z",  # a restored database: same id, other event
        f"{int(event_id) + 50}.{at}",  # newer than anything here
    ):
        answer = _pack(inspector, site, since)
        assert answer["full"] is True, since
        assert [b["id"] for b in answer["bearings"]] == [b["id"] for b in first["bearings"]]
    # Another site's version names none of this site's events.
    other = services.default_site_settings()
    elsewhere = store.create_site(
        db,
        name="Another site",
        address="",
        code_basis=other[0],
        review_settings=other[1],
        created_by=people["engineer"].id,
    )
    store.add_membership(
        db,
        user_id=people["inspector"].id,
        site_id=elsewhere["id"],
        role="inspector",
        invited_by=people["engineer"].id,
    )
    answer = _pack(inspector, site, _pack(inspector, elsewhere)["version"])
    assert answer["full"] is True
    # A bearing added: every place in the survey order may move, so the whole pack.
    services.add_bearing(
        db,
        site=site,
        reference="AA-FIRST",
        location="Added after the pack was kept",
        design=services.design_of(_bearing(db, site, "GF-B1-E")),
        user_id=people["engineer"].id,
    )
    answer = _pack(inspector, site, first["version"])
    assert answer["full"] is True
    assert "AA-FIRST" in {b["reference"] for b in answer["bearings"]}


def test_bearings_of_one_design_share_it_in_the_pack(client_as, db, site, people):
    model = _bearing(db, site, "GF-B1-E")
    for n in range(3):
        services.add_bearing(
            db,
            site=site,
            reference=f"TYPE-A-{n}",
            location=f"Level {n}, as GF-B1-E",
            design=services.design_of(model),
            user_id=people["engineer"].id,
        )
    pack = _pack(client_as("inspector"), site)
    keys = {b["reference"]: b["design"] for b in pack["bearings"]}
    assert keys["TYPE-A-0"] == keys["TYPE-A-1"] == keys["TYPE-A-2"] == keys["GF-B1-E"]
    assert len(pack["designs"]) == len(set(keys.values())) < len(pack["bearings"])


def test_a_pack_is_read_in_one_snapshot(app, db, site, monkeypatch):
    """The version and the bearings come from the same moment: a change committed while the
    pack is being read is in neither, and so arrives with the next pack."""
    other = sqlite3.connect(app.config["DB_PATH"], timeout=5)
    real_changed = store.pack._changed_since
    bearing = _bearing(db, site, "GF-B1-E")

    def write_meanwhile(*args):
        # After the version was read, before the changes are looked for.
        other.execute(
            "UPDATE bearings SET location = 'moved meanwhile' WHERE id = ?", [bearing["id"]]
        )
        other.execute(
            "INSERT INTO events (at, site_id, bearing_id, kind) VALUES (?, ?, ?, 'test')",
            ["2099-01-01T00:00:00.000000Z", site["id"], bearing["id"]],
        )
        other.commit()
        return real_changed(*args)

    first = store.pack_rows(db, site_id=site["id"])
    monkeypatch.setattr(store.pack, "_changed_since", write_meanwhile)
    answer = store.pack_rows(db, site_id=site["id"], since=first.version)
    monkeypatch.undo()
    assert answer.bearings == [] and answer.version == first.version
    after = store.pack_rows(db, site_id=site["id"], since=answer.version)
    assert [b["location"] for b in after.bearings] == ["moved meanwhile"]
    other.close()


@pytest.mark.parametrize("since", ["", "0."])
def test_an_empty_or_eventless_version_gets_the_whole_pack(client_as, site, since):
    answer = _pack(client_as("inspector"), site, since or None)
    assert answer["full"] is True and answer["bearings"]
