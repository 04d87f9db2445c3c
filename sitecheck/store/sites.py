"""Sites and who belongs to them, in which role."""

import sqlite3
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    Row,
    many,
    new_id,
    one,
    present,
    the_row,
    timestamp,
    to_json,
    transaction,
)
from sitecheck.store.errors import AlreadyMember, LastEngineer, NotFound
from sitecheck.store.events import add_event
from sitecheck.store.migrations import ROLES


def _role(role: str) -> str:
    if role not in ROLES:
        raise ValueError(f"role {role!r} is not one of {', '.join(ROLES)}")
    return role


def create_site(
    db: sqlite_utils.Database,
    *,
    name: str,
    address: str,
    code_basis: dict[str, Any],
    review_settings: dict[str, Any],
    created_by: int,
) -> Row:
    """Create a site; its creator becomes its engineer, so no site is left without one."""
    name = (name or "").strip()
    if not name:
        raise ValueError("site name is empty; give the site a name")
    site_id = new_id()
    now = timestamp()
    with transaction(db):
        db.execute(
            """
            INSERT INTO sites (id, name, address, code_basis, review_settings, created_by, created_at)
            VALUES (?, ?, ?, ?, ?, ?, ?)
            """,
            [
                site_id,
                name,
                (address or "").strip(),
                to_json(code_basis),
                to_json(review_settings),
                created_by,
                now,
            ],
        )
        db.execute(
            """
            INSERT INTO memberships (user_id, site_id, role, invited_by, created_at)
            VALUES (?, ?, 'engineer', NULL, ?)
            """,
            [created_by, site_id, now],
        )
        add_event(
            db,
            kind="site created",
            user_id=created_by,
            site_id=site_id,
            after={"name": name, "code_basis": code_basis, "review_settings": review_settings},
        )
    return present(get_site(db, site_id), "the site")


def get_site(db: sqlite_utils.Database, site_id: str) -> Row | None:
    return one(db, "SELECT * FROM sites WHERE id = ?", [site_id])


def update_site_settings(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    user_id: int,
    name: str | None = None,
    address: str | None = None,
    code_basis: dict[str, Any] | None = None,
    review_settings: dict[str, Any] | None = None,
) -> Row:
    """Change any of name, address, code basis, review settings; None leaves a field as it is."""
    changes: dict[str, Any] = {}
    if name is not None:
        if not name.strip():
            raise ValueError("site name is empty; give the site a name")
        changes["name"] = name.strip()
    if address is not None:
        changes["address"] = address.strip()
    if code_basis is not None:
        changes["code_basis"] = code_basis
    if review_settings is not None:
        changes["review_settings"] = review_settings
    with transaction(db):
        before = get_site(db, site_id)
        if before is None:
            raise NotFound("No such site")
        if changes:
            stored = {
                key: to_json(value) if key in ("code_basis", "review_settings") else value
                for key, value in changes.items()
            }
            # Column names come from the fixed keys above, never from the caller.
            assignments = ", ".join(f"{key} = :{key}" for key in stored)
            db.execute(
                f"UPDATE sites SET {assignments} WHERE id = :site_id",
                {**stored, "site_id": site_id},
            )
            add_event(
                db,
                kind="site settings changed",
                user_id=user_id,
                site_id=site_id,
                before={key: before[key] for key in changes},
                after=changes,
            )
    return present(get_site(db, site_id), "the site")


def add_membership(
    db: sqlite_utils.Database, *, user_id: int, site_id: str, role: str, invited_by: int | None
) -> Row:
    with transaction(db):
        try:
            db.execute(
                """
                INSERT INTO memberships (user_id, site_id, role, invited_by, created_at)
                VALUES (?, ?, ?, ?, ?)
                """,
                [user_id, site_id, _role(role), invited_by, timestamp()],
            )
        except sqlite3.IntegrityError as error:
            if "UNIQUE" in str(error):
                raise AlreadyMember(
                    "That person is already on this site; change their role instead"
                ) from None
            raise
        add_event(
            db,
            kind="member added",
            user_id=invited_by,
            site_id=site_id,
            after={"user": user_id, "role": role},
        )
    return the_row(
        db, "SELECT * FROM memberships WHERE user_id = ? AND site_id = ?", [user_id, site_id]
    )


ENGINEER = "engineer"  # workflow.ENGINEER: the store sits below the workflow


def _keep_an_engineer(db: sqlite_utils.Database, *, user_id: int, site_id: str) -> None:
    """Inside the caller's write transaction, so two changes at once cannot both see a
    second engineer and each take one away."""
    others = the_row(
        db,
        "SELECT count(*) AS n FROM memberships WHERE site_id = ? AND role = ? AND user_id != ?",
        [site_id, ENGINEER, user_id],
    )
    if not others["n"]:
        raise LastEngineer(
            "This is the site's only engineer. Make someone else engineer first; a site "
            "without an engineer has no one to decide or to invite."
        )


def set_role(
    db: sqlite_utils.Database, *, user_id: int, site_id: str, role: str, by_user_id: int
) -> None:
    """Raises :class:`LastEngineer` if it would leave the site without an engineer."""
    with transaction(db):
        before = role_of(db, user_id=user_id, site_id=site_id)
        if before is None:
            raise NotFound("That person is not on this site; add them first")
        if before == ENGINEER and role != ENGINEER:
            _keep_an_engineer(db, user_id=user_id, site_id=site_id)
        db.execute(
            "UPDATE memberships SET role = ? WHERE user_id = ? AND site_id = ?",
            [_role(role), user_id, site_id],
        )
        add_event(
            db,
            kind="member role changed",
            user_id=by_user_id,
            site_id=site_id,
            before={"user": user_id, "role": before},
            after={"user": user_id, "role": role},
        )


def remove_membership(
    db: sqlite_utils.Database, *, user_id: int, site_id: str, by_user_id: int
) -> bool:
    """Take a person off a site. Their records stay; from now on they are refused.
    Raises :class:`LastEngineer` if it would leave the site without an engineer."""
    with transaction(db):
        before = role_of(db, user_id=user_id, site_id=site_id)
        if before is None:
            return False
        if before == ENGINEER:
            _keep_an_engineer(db, user_id=user_id, site_id=site_id)
        db.execute("DELETE FROM memberships WHERE user_id = ? AND site_id = ?", [user_id, site_id])
        add_event(
            db,
            kind="member removed",
            user_id=by_user_id,
            site_id=site_id,
            before={"user": user_id, "role": before},
        )
    return True


def role_of(db: sqlite_utils.Database, *, user_id: int, site_id: str) -> str | None:
    """The user's role on the site, or None if they are not on it."""
    row = one(
        db,
        "SELECT role FROM memberships WHERE user_id = ? AND site_id = ?",
        [user_id, site_id],
    )
    return None if row is None else row["role"]


def sites_for_user(db: sqlite_utils.Database, user_id: int) -> list[Row]:
    """The user's sites, each with the user's ``role`` there, by name."""
    return many(
        db,
        """
        SELECT s.*, m.role FROM memberships m JOIN sites s ON s.id = m.site_id
        WHERE m.user_id = ? ORDER BY s.name COLLATE NOCASE, s.created_at
        """,
        [user_id],
    )


def sites_named(db: sqlite_utils.Database, name: str) -> list[Row]:
    """Sites whose name is exactly ``name`` (names are not unique; the CLI refuses two)."""
    return many(db, "SELECT * FROM sites WHERE name = ? ORDER BY created_at", [name])


def members_of(db: sqlite_utils.Database, *, site_id: str) -> list[Row]:
    """People on a site with their role (no password hashes)."""
    return many(
        db,
        """
        SELECT u.id, u.email, u.name, u.disabled, m.role, m.invited_by, m.created_at
        FROM memberships m JOIN users u ON u.id = m.user_id
        WHERE m.site_id = ? ORDER BY u.name COLLATE NOCASE, u.email
        """,
        [site_id],
    )
