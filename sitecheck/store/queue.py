"""The engineer's queue: the bearings waiting for their decision across their sites, and
how many, for the header."""

from typing import TypedDict

import sqlite_utils

from sitecheck.store.base import Row, many, one, the_row
from sitecheck.store.releases import OPEN_EVIDENCE


def review_queue(db: sqlite_utils.Database, *, user_id: int) -> list[Row]:
    """Bearings waiting for this user's decision, across the sites where they are engineer:
    those 'engineer to decide', and released ones with evidence recorded after release that
    the engineer has not answered yet.

    Highest utilisation first (of the latest record, or of the worst record after release),
    then most blocking reasons, then longest waiting (the review page orders by severity on
    top of this). Each row is the bearing (without its design and trace, which a queue of a
    thousand would read for nothing) plus ``site_name``, ``utilisation``, ``passed``,
    ``blocking``, ``measured_at`` and ``reasons`` of its latest record, and
    ``records_after_release``, ``photos_after_release``, ``worst_after_release``,
    ``first_after_release`` (None when nothing is waiting).
    """
    return many(
        db,
        f"""
        SELECT b.id, b.site_id, b.reference, b.location, b.revision, b.state,
               b.state_changed_at, b.latest_record_uuid,
               s.name AS site_name, r.utilisation, r.passed, r.blocking, r.measured_at,
               r.reasons, r.design_revision < b.revision AS older_revision,
               ev.records_after_release, ev.photos_after_release, ev.worst_after_release,
               ev.first_after_release
        FROM memberships m
        JOIN sites s ON s.id = m.site_id
        JOIN bearings b ON b.site_id = m.site_id
        LEFT JOIN as_built_records r ON r.uuid = b.latest_record_uuid
        LEFT JOIN (
            SELECT e.bearing_id,
                   count(CASE WHEN e.photo_uuid IS NULL THEN 1 END) AS records_after_release,
                   count(e.photo_uuid) AS photos_after_release,
                   max(CASE WHEN e.photo_uuid IS NULL THEN er.utilisation END)
                       AS worst_after_release,
                   min(e.received_at) AS first_after_release
            FROM after_release_evidence e
            JOIN bearings b ON b.id = e.bearing_id
            JOIN as_built_records er ON er.uuid = e.record_uuid
            WHERE {OPEN_EVIDENCE}
            GROUP BY e.bearing_id
        ) ev ON ev.bearing_id = b.id
        WHERE m.user_id = ? AND m.role = 'engineer'
          AND (b.state = 'engineer to decide' OR ev.bearing_id IS NOT NULL)
        ORDER BY coalesce(ev.worst_after_release, r.utilisation) DESC NULLS LAST,
                 r.blocking DESC NULLS LAST, b.state_changed_at ASC, b.id
        """,
        [user_id],
    )


class ToDecide(TypedDict):
    waiting: int  # bearings waiting for the engineer's decision
    new: int  # of those, how many arrived since they last looked
    engineer: bool  # whether they are the engineer on any site at all


def to_decide_counts(db: sqlite_utils.Database, *, user_id: int) -> ToDecide:
    """For the engineer's header: bearings waiting for their decision across their sites,
    how many of them arrived since they last looked, and whether they are the engineer on any
    site at all (only then does the header offer the queue)."""
    row = the_row(
        db,
        f"""
        SELECT count(*) AS waiting, coalesce(sum(since > looked), 0) AS new FROM (
            SELECT coalesce(v.looked_at, m.created_at) AS looked,
                   CASE WHEN b.state = 'engineer to decide' THEN b.state_changed_at
                        ELSE (SELECT min(e.received_at) FROM after_release_evidence e
                              WHERE {OPEN_EVIDENCE}) END AS since
            FROM memberships m
            JOIN bearings b ON b.site_id = m.site_id
            LEFT JOIN site_visits v ON v.user_id = m.user_id AND v.site_id = m.site_id
            WHERE m.user_id = ? AND m.role = 'engineer'
              AND (b.state = 'engineer to decide' OR (b.state = 'released' AND EXISTS (
                  SELECT 1 FROM after_release_evidence e WHERE {OPEN_EVIDENCE})))
        )
        """,
        [user_id],
    )
    engineer = one(
        db,
        "SELECT 1 AS yes FROM memberships WHERE user_id = ? AND role = 'engineer' LIMIT 1",
        [user_id],
    )
    return {
        "waiting": int(row["waiting"]),
        "new": int(row["new"]),
        "engineer": engineer is not None,
    }
