"""Lists of many bearings, a page at a time: what a list shows of each, never a trace.

The site page's schedule (by state, by search), the survey list and the counts beside them.
The search lowers text as Python does (the connection's ``sitecheck_lower``), so the page
and the phone find the same bearings.
"""

from collections.abc import Iterable
from typing import Any

import sqlite_utils

from sitecheck.store.base import Row, many, placeholders, rows, the_row
from sitecheck.store.bearings import known_state
from sitecheck.store.migrations import STATES

_LINE = """
    b.id, b.reference, b.location, b.state, b.revision, b.design_utilisation, b.design_passed,
    b.design_governing, b.design_governing_title, b.latest_record_uuid, b.state_changed_at
"""
_LATEST = """
    r.measured_at AS latest_measured_at, r.utilisation AS latest_utilisation,
    r.passed AS latest_passed, r.blocking AS latest_blocking,
    r.design_revision < b.revision AS latest_older_revision
"""


def _line_filter(
    site_id: str, states: Iterable[str] | None, words: Iterable[str]
) -> tuple[str, list[Any]]:
    """WHERE for a site's bearings in ``states`` whose reference or location holds every one
    of ``words`` (compared as Python lowers text, as the survey list's search does)."""
    where, params = ["b.site_id = ?"], [site_id]
    if states is not None:
        wanted = [known_state(s) for s in states]
        where.append(f"b.state IN ({placeholders(wanted)})" if wanted else "0")
        params += wanted
    for word in words:
        where.append("instr(sitecheck_lower(b.reference || ' ' || b.location), ?) > 0")
        params.append(word.lower())
    return " AND ".join(where), params


def bearing_lines(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    states: Iterable[str] | None = None,
    words: Iterable[str] = (),
    with_latest: bool = False,
    limit: int | None = None,
    offset: int = 0,
) -> list[Row]:
    """A site's bearings by reference, as a list shows them: the governing check's code and
    title, the design's utilisation and verdict, and with ``with_latest`` the latest record's
    ``latest_measured_at``, ``latest_utilisation``, ``latest_passed``, ``latest_blocking``
    and ``latest_older_revision`` (None when nothing was recorded). Only those in ``states``
    and matching every one of ``words``, if given; ``limit`` and ``offset`` give one page."""
    where, params = _line_filter(site_id, states, list(words))
    latest = f", {_LATEST}" if with_latest else ""
    join = "LEFT JOIN as_built_records r ON r.uuid = b.latest_record_uuid" if with_latest else ""
    page = ""
    if limit is not None:
        page = "LIMIT ? OFFSET ?"
        params += [limit, offset]
    return many(
        db,
        f"SELECT {_LINE}{latest} FROM bearings b {join} WHERE {where} "
        f"ORDER BY b.reference, b.id {page}",
        params,
    )


def count_bearing_lines(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    states: Iterable[str] | None = None,
    words: Iterable[str] = (),
) -> int:
    """How many bearings :func:`bearing_lines` would list with no page."""
    where, params = _line_filter(site_id, states, list(words))
    return int(the_row(db, f"SELECT count(*) AS n FROM bearings b WHERE {where}", params)["n"])


def bearing_counts(db: sqlite_utils.Database, *, site_id: str) -> dict[str, Any]:
    """A site's bearings counted: ``states`` (every state, 0 where none) and
    ``failing_at_design``."""
    counts = dict.fromkeys(STATES, 0)
    failing = 0
    for row in rows(
        db,
        "SELECT state, count(*) AS n, sum(design_passed = 0) AS failing FROM bearings "
        "WHERE site_id = ? GROUP BY state",
        [site_id],
    ):
        counts[row["state"]] = row["n"]
        failing += row["failing"]
    return {"states": counts, "failing_at_design": failing}
