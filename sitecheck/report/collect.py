"""Everything one site record holds, read from the store once, for the PDF and the export.

Reading happens here and nowhere else in the report package, so the PDF and the data
export cannot disagree about what a site holds.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime

from sitecheck import store

# The audit trail is exported whole; the store's default page is for screens.
ALL_EVENTS = 1_000_000_000


@dataclass
class BearingRecord:
    bearing: dict
    records: list[dict]  # newest by measured time first
    photos: dict[str, list[dict]]  # record uuid → photos
    decisions: list[dict]
    releases: list[dict]
    reopenings: list[dict]
    # The engineer's answers keeping the release after evidence recorded since.
    releases_kept: list[dict] = field(default_factory=list)

    @property
    def latest(self) -> dict | None:
        uuid = self.bearing["latest_record_uuid"]
        return next((r for r in self.records if r["uuid"] == uuid), None)


@dataclass
class SiteRecord:
    site: dict
    members: list[dict]
    names: dict[int, str]
    bearings: list[BearingRecord]
    events: list[dict]  # oldest first
    made_at: str = field(default_factory=lambda: datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"))
    sign_offs: list[dict] = field(default_factory=list)  # the engineer's, oldest first

    @property
    def sign_off(self) -> dict | None:
        """The newest sign-off: the one the record carries."""
        return self.sign_offs[-1] if self.sign_offs else None

    def changes_since(self, sign_off: dict) -> list[dict]:
        """History entries that changed the record after the sign-off covered it."""
        last = sign_off["covers"].get("last_event_id") or 0
        return [e for e in self.events if e["id"] > last and e["kind"] not in store.NOT_A_CHANGE]

    def name(self, user_id: int | None) -> str:
        if user_id is None:
            return "the system"
        return self.names.get(user_id, f"user {user_id}")


def _names(db, site_id: str, members: list[dict], user_ids) -> dict[int, str]:
    names = {m["id"]: m["name"] for m in members}
    for uid in user_ids:
        # People taken off the site still sign what they did while on it.
        if uid is not None and uid not in names:
            user = store.get_user_by_id(db, uid)
            names[uid] = user["name"] if user else f"user {uid}"
    return names


def iter_bearings(db, site_id: str) -> Iterator[BearingRecord]:
    """One bearing at a time, so a long site need not be held all at once by a caller that
    streams (the PDF); the export gathers them."""
    by_bearing: dict[str, list[dict]] = {}
    for r in store.records_for_site(db, site_id=site_id):
        by_bearing.setdefault(r["bearing_id"], []).append(r)
    for b in store.list_bearings(db, site_id=site_id):
        records = by_bearing.get(b["id"], [])
        photos = {
            r["uuid"]: store.photos_for_record(db, site_id=site_id, record_uuid=r["uuid"])
            for r in records
        }
        yield BearingRecord(
            bearing=b,
            records=records,
            photos=photos,
            decisions=store.decisions_for(db, site_id=site_id, bearing_id=b["id"]),
            releases=store.releases_for(db, site_id=site_id, bearing_id=b["id"]),
            reopenings=store.reopenings_for(db, site_id=site_id, bearing_id=b["id"]),
            releases_kept=store.releases_kept_for(db, site_id=site_id, bearing_id=b["id"]),
        )


def collect(db, site_id: str) -> SiteRecord:
    site = store.get_site(db, site_id)
    if site is None:
        raise store.NotFound("No such site")
    members = store.members_of(db, site_id=site_id)
    bearings = list(iter_bearings(db, site_id))
    events = list(reversed(store.events_for(db, site_id=site_id, limit=ALL_EVENTS)))
    ids = {e["user_id"] for e in events}
    for br in bearings:
        ids.update(r["inspector_id"] for r in br.records)
        ids.update(d["engineer_id"] for d in br.decisions)
        ids.update(r["contractor_id"] for r in br.releases)
        ids.update(r["engineer_id"] for r in br.reopenings)
        ids.update(k["engineer_id"] for k in br.releases_kept)
    sign_offs = store.sign_offs_for(db, site_id=site_id)
    ids.update(s["engineer_id"] for s in sign_offs)
    return SiteRecord(
        site, members, _names(db, site_id, members, ids), bearings, events, sign_offs=sign_offs
    )
