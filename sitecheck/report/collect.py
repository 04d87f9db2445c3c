"""Everything one site record holds, read from the store, for the PDF and the export.

Reading happens here and nowhere else in the report package, so the PDF and the data
export cannot disagree about what a site holds.

A site of 10,000 bearings is too much to hold at once (its stored calculations alone
decode to over a GB of Python objects), so a record's bearings and events are read from
the store as they are walked, a batch at a time (sitecheck.store.record_reads), and may be
walked more than once. The connection must stay open while the record is used; wrap the
whole use in ``store.read_snapshot(db)`` so that every walk sees the same moment.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from datetime import UTC, date, datetime
from typing import Protocol, TypeVar

from sitecheck import store


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

    def user_ids(self) -> set[int]:
        """Everyone this bearing's record names."""
        ids = {r["inspector_id"] for r in self.records}
        ids.update(d["engineer_id"] for d in self.decisions)
        ids.update(r["contractor_id"] for r in self.releases)
        ids.update(r["engineer_id"] for r in self.reopenings)
        ids.update(k["engineer_id"] for k in self.releases_kept)
        return ids


_Row = TypeVar("_Row", covariant=True)


class Counted(Protocol[_Row]):
    """Rows that can be walked and say how many they are: a list, or a :class:`Walk`."""

    def __iter__(self) -> Iterator[_Row]: ...
    def __len__(self) -> int: ...


class Walk(Iterable):
    """Rows read from the store each time they are walked, with their count known up front,
    so a writer can say "x of N" without holding N of them."""

    def __init__(self, walk: Callable[[], Iterator], count: int):
        self._walk = walk
        self._count = count

    def __iter__(self) -> Iterator:
        return self._walk()

    def __len__(self) -> int:
        return self._count

    def __bool__(self) -> bool:
        return self._count > 0


@dataclass
class SiteRecord:
    site: dict
    members: list[dict]
    names: dict[int, str]
    bearings: Counted[BearingRecord]
    events: Counted[dict]  # oldest first
    made_at: str = field(default_factory=lambda: datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"))
    # Looks up a person not on the site (taken off it, but still signing what they did).
    lookup: Callable[[int], dict | None] | None = None
    # The part of the site this record holds (None: all of it), and how many bearings the
    # whole site has.
    selection: store.Selection | None = None
    site_bearings: int | None = None
    sign_offs: list[dict] = field(default_factory=list)  # the engineer's, oldest first
    # The whole site's history, which a sign-off covers (a part's own is ``events``).
    site_events: Counted[dict] | None = None
    # The same bearings read light: without their design and calculations (store.HEAVY),
    # for what lists them by state, decision or time. A walk of these costs a fraction.
    lines: Counted[BearingRecord] | None = None

    @property
    def bearing_lines(self) -> Counted[BearingRecord]:
        return self.lines if self.lines is not None else self.bearings

    @property
    def partial(self) -> bool:
        return self.selection is not None and not self.selection.whole

    @property
    def sign_off(self) -> dict | None:
        """The newest sign-off: the one the record carries."""
        return self.sign_offs[-1] if self.sign_offs else None

    def changes_since(self, sign_off: dict) -> list[dict]:
        """History entries that changed the record after the sign-off covered it."""
        last = sign_off["covers"].get("last_event_id") or 0
        every = self.site_events if self.site_events is not None else self.events
        return [e for e in every if e["id"] > last and e["kind"] not in store.NOT_A_CHANGE]

    def name(self, user_id: int | None) -> str:
        if user_id is None:
            return "the system"
        found = self.names.get(user_id)
        if found is None:
            user = self.lookup(user_id) if self.lookup else None
            found = self.names[user_id] = user["name"] if user else f"user {user_id}"
        return found


def iter_bearings(
    db, site_id: str, selection: store.Selection | None = None, *, light: bool = False
) -> Iterator[BearingRecord]:
    """One bearing at a time, read a batch at a time, so a long site is never held at once."""
    for batch in store.bearing_batches(db, site_id=site_id, selection=selection, light=light):
        for b in batch:
            yield BearingRecord(**b)


def collect(db, site_id: str, selection: store.Selection | None = None) -> SiteRecord:
    """The site's record (or the record of the part ``selection`` keeps), read from ``db`` as
    it is walked (keep ``db`` open meanwhile)."""
    site = store.get_site(db, site_id)
    if site is None:
        raise store.NotFound("No such site")
    members = store.members_of(db, site_id=site_id)
    if selection is not None and selection.whole:
        selection = None
    return SiteRecord(
        site,
        members,
        {m["id"]: m["name"] for m in members},
        Walk(
            lambda: iter_bearings(db, site_id, selection),
            store.count_bearings(db, site_id=site_id, selection=selection),
        ),
        Walk(
            lambda: store.site_events(db, site_id=site_id, selection=selection),
            store.count_events(db, site_id=site_id, selection=selection),
        ),
        lookup=lambda user_id: store.get_user_by_id(db, user_id),
        selection=selection,
        site_bearings=store.count_bearings(db, site_id=site_id),
        sign_offs=store.sign_offs_for(db, site_id=site_id),
        lines=Walk(
            lambda: iter_bearings(db, site_id, selection, light=True),
            store.count_bearings(db, site_id=site_id, selection=selection),
        ),
        site_events=Walk(
            lambda: store.site_events(db, site_id=site_id),
            store.count_events(db, site_id=site_id),
        ),
    )


def selection_words(selection: store.Selection) -> str:
    """What part of a site a selection keeps, in words, for the record and its pages."""
    parts = []
    if selection.words:
        parts.append(f"whose reference or location contains “{selection.words.strip()}”")
    if selection.states:
        states = [s for s in store.STATES if s in selection.states]
        parts.append(
            "in the state " + states[0]
            if len(states) == 1
            else "in the states " + ", ".join(states[:-1]) + " or " + states[-1]
        )
    when = _days_words(selection.since, selection.until)
    if when:
        parts.append(
            f"with an as-built record measured, a decision, a release or a reopening {when} "
            "(UTC days)"
        )
    if not parts:
        return "every bearing"
    return "bearings " + "; ".join(parts)


def _days_words(since: date | None, until: date | None) -> str:
    """The days a selection keeps, in words ("" for any day)."""
    if since and until:
        return f"from {since.isoformat()} to {until.isoformat()}"
    if since:
        return f"from {since.isoformat()} on"
    if until:
        return f"up to {until.isoformat()}"
    return ""
