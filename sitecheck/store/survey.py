"""The survey list in SQL: a site's bearings in survey order, a page at a time.

Survey order is what the inspector came for first (a rank the caller gives each state),
then the references as people read them: GF-B2 before GF-B10, digits compared as numbers
and the rest without case. That second order is kept as a column of its own,
``reference_key`` (:func:`reference_order_key`, written when a bearing is added: a
reference never changes), so SQLite orders a site by it from an index and a page reads
only its own lines, however many bearings the site has.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import sqlite_utils

from sitecheck.store.base import Row, many, the_row

_DIGITS = re.compile(r"(\d+)")


def natural_key(text: str) -> tuple[tuple[int, int, str], ...]:
    """GF-B2 before GF-B10: digits compared as numbers, the rest without case."""
    return tuple(
        (1, int(part), "") if part.isdecimal() else (0, 0, part.lower())
        for part in _DIGITS.split(text)
        if part
    )


def reference_order_key(reference: str) -> str:
    """:func:`natural_key` as text that sorts the same way, byte by byte, as SQLite sorts.

    A run of text is its lower case between a mark and an end mark lower than any character
    a reference holds, so a shorter run sorts first; a run of digits is its number, written
    after its count of digits, so 10 follows 9. Text sorts before digits, as in the key."""
    out = []
    for kind, number, words in natural_key(reference):
        if kind:
            digits = str(number)
            out.append(f"\x03{len(digits):04d}{digits}")
        else:
            out.append(f"\x02{words}\x01")
    return "".join(out)


@dataclass(frozen=True)
class SurveyCounts:
    """What the survey list says about the whole site."""

    total: int  # bearings on the site
    found: int  # of them, those matching the search
    to_survey: int  # of them, those ranked before the rest
    design_fails: int  # of them, those whose design fails


@dataclass(frozen=True)
class SurveyRanks:
    """Where each bearing comes in survey order: ``first`` the rank of each state that
    comes before the rest (``other``), and ``design_fails`` the rank of a bearing whose
    design fails, whatever its state."""

    first: Mapping[str, int]
    other: int
    design_fails: int

    def sql(self) -> tuple[str, list[Any]]:
        """The rank of ``b``'s bearing as an SQL expression, and its parameters."""
        whens = " ".join("WHEN ? THEN ?" for _ in self.first)
        params: list[Any] = [self.design_fails]
        for state, rank in self.first.items():
            params += [state, rank]
        return (
            f"CASE WHEN b.design_passed = 0 THEN ? ELSE CASE b.state {whens} ELSE ? END END",
            [*params, self.other],
        )


# Every bearing of the site with its rank, its place by reference and whether it matches
# the search, read from the index bearings_survey alone (it holds every column named here),
# so a site of any size is put in order without reading its bearings' rows; a page then
# reads its own rows only. Few columns: the window keeps each row until the site is read.
_PLACED = """
    SELECT b.id, {rank} AS rank, {match} AS hit,
        row_number() OVER (ORDER BY b.reference_key, b.reference, b.id) - 1 AS "order"
    FROM bearings b INDEXED BY bearings_survey WHERE b.site_id = ?
"""


def _matching(words: list[str]) -> tuple[str, list[str]]:
    # As the survey list has always searched: every word in the reference or the location,
    # lowered as Python lowers text (the connection's sitecheck_lower).
    where = " AND ".join(
        "instr(sitecheck_lower(reference || ' ' || location), ?) > 0" for _ in words
    )
    return (where or "1"), [w.lower() for w in words]


def survey_counts(
    db: sqlite_utils.Database, *, site_id: str, ranks: SurveyRanks, words: Iterable[str] = ()
) -> SurveyCounts:
    """The site's bearings counted for its survey list, ``found`` those matching every one
    of ``words``."""
    rank, rank_params = ranks.sql()
    counts = the_row(
        db,
        f"""
        SELECT count(*) AS total, coalesce(sum(design_passed = 0), 0) AS design_fails,
            coalesce(sum(({rank}) < ?), 0) AS to_survey
        FROM bearings b INDEXED BY bearings_survey WHERE b.site_id = ?
        """,
        [*rank_params, ranks.other, site_id],
    )
    found = counts["total"]
    match, match_params = _matching(list(words))
    if match_params:
        found = the_row(
            db,
            f"SELECT count(*) AS n FROM bearings b INDEXED BY bearings_survey "
            f"WHERE b.site_id = ? AND {match}",
            [site_id, *match_params],
        )["n"]
    return SurveyCounts(counts["total"], found, counts["to_survey"], counts["design_fails"])


def survey_lines(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    ranks: SurveyRanks,
    words: Iterable[str] = (),
    limit: int,
    offset: int = 0,
) -> list[Row]:
    """One page (``limit`` from ``offset``) of the site's bearings in survey order, those
    matching every one of ``words``; each line carries its ``order``, its place by
    reference among all the site's bearings (the phone ranks again by it)."""
    rank, rank_params = ranks.sql()
    match, match_params = _matching(list(words))
    placed = _PLACED.format(rank=rank, match=match)
    return many(
        db,
        f"""
        SELECT p.id, b.reference, b.location, b.state, b.design_passed, p."order",
            b.revision, b.latest_record_uuid
        FROM (
            SELECT * FROM ({placed}) WHERE hit ORDER BY rank, "order" LIMIT ? OFFSET ?
        ) p JOIN bearings b ON b.id = p.id
        ORDER BY p.rank, p."order"
        """,
        [*rank_params, *match_params, site_id, limit, offset],
    )


def survey_next(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    ranks: SurveyRanks,
    limit: int,
) -> list[Row]:
    """Up to ``limit`` bearings to survey (ranked before ``ranks.other``) that come after
    ``bearing_id`` in survey order, going round to the start of the list after its end."""
    rank, rank_params = ranks.sql()
    placed = _PLACED.format(rank=rank, match="1")
    return many(
        db,
        f"""
        WITH placed AS ({placed}),
        here AS (SELECT rank, "order" FROM placed WHERE id = ?)
        SELECT b.id, b.reference, p.rank, p."order",
            (p.rank, p."order") <= (SELECT rank, "order" FROM here) AS before
        FROM placed p JOIN bearings b ON b.id = p.id
        WHERE p.rank < ? AND p.id <> ?
        ORDER BY before, p.rank, p."order" LIMIT ?
        """,
        [*rank_params, site_id, bearing_id, ranks.other, bearing_id, limit],
    )
