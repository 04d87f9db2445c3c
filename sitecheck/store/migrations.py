"""Schema changes, as named migrations applied in order, each once.

Add a change as a new function at the end of this file; never edit one that has shipped.
"""

import json

import sqlite_utils
from sqlite_utils import Migrations

from sitecheck.store.base import pack_json, transaction
from sitecheck.store.survey import reference_order_key

MIGRATIONS = Migrations("sitecheck")

STATES = (
    "awaiting survey",
    "within design",
    "engineer to decide",
    "accepted",
    "remedial",
    "released",
)
ROLES = ("engineer", "inspector", "contractor", "viewer")
DECISION_KINDS = ("accept", "remedial", "measure-again")


def _in(values: tuple[str, ...]) -> str:
    return "(" + ", ".join("'" + v.replace("'", "''") + "'" for v in values) + ")"


def _append_only(table: str, message: str) -> list[str]:
    return [
        f"CREATE TRIGGER {table}_no_update BEFORE UPDATE ON {table} "
        f"BEGIN SELECT RAISE(ABORT, '{message}'); END",
        f"CREATE TRIGGER {table}_no_delete BEFORE DELETE ON {table} "
        f"BEGIN SELECT RAISE(ABORT, '{message}'); END",
    ]


_INITIAL_SCHEMA = [
    """
    CREATE TABLE users (
        id INTEGER PRIMARY KEY,
        email TEXT NOT NULL UNIQUE CHECK (email = lower(email) AND email LIKE '%_@_%'),
        name TEXT NOT NULL,
        password_hash TEXT NOT NULL,
        disabled INTEGER NOT NULL DEFAULT 0 CHECK (disabled IN (0, 1)),
        created_at TEXT NOT NULL
    ) STRICT
    """,
    """
    CREATE TABLE sessions (
        id TEXT PRIMARY KEY CHECK (length(id) = 64),
        user_id INTEGER NOT NULL REFERENCES users(id),
        created_at TEXT NOT NULL,
        last_seen_at TEXT NOT NULL,
        revoked_at TEXT
    ) STRICT
    """,
    "CREATE INDEX sessions_user ON sessions(user_id)",
    """
    CREATE TABLE login_attempts (
        id INTEGER PRIMARY KEY,
        email TEXT NOT NULL,
        remote_addr TEXT NOT NULL,
        at TEXT NOT NULL,
        ok INTEGER NOT NULL CHECK (ok IN (0, 1))
    ) STRICT
    """,
    "CREATE INDEX login_attempts_email_at ON login_attempts(email, at)",
    "CREATE INDEX login_attempts_addr_at ON login_attempts(remote_addr, at)",
    """
    CREATE TABLE sites (
        id TEXT PRIMARY KEY,
        name TEXT NOT NULL CHECK (length(trim(name)) > 0),
        address TEXT NOT NULL DEFAULT '',
        code_basis TEXT NOT NULL CHECK (json_valid(code_basis)),
        review_settings TEXT NOT NULL CHECK (json_valid(review_settings)),
        created_by INTEGER NOT NULL REFERENCES users(id),
        created_at TEXT NOT NULL
    ) STRICT
    """,
    f"""
    CREATE TABLE memberships (
        user_id INTEGER NOT NULL REFERENCES users(id),
        site_id TEXT NOT NULL REFERENCES sites(id),
        role TEXT NOT NULL CHECK (role IN {_in(ROLES)}),
        invited_by INTEGER REFERENCES users(id),
        created_at TEXT NOT NULL,
        PRIMARY KEY (user_id, site_id)
    ) STRICT
    """,
    "CREATE INDEX memberships_site ON memberships(site_id)",
    # latest_record_uuid points forward to as_built_records: SQLite resolves foreign keys when
    # rows change, not when tables are created, so the order of the CREATEs does not matter.
    f"""
    CREATE TABLE bearings (
        id TEXT PRIMARY KEY,
        site_id TEXT NOT NULL REFERENCES sites(id),
        reference TEXT NOT NULL COLLATE NOCASE CHECK (length(trim(reference)) > 0),
        location TEXT NOT NULL DEFAULT '',
        revision INTEGER NOT NULL CHECK (revision >= 1),
        design_input TEXT NOT NULL CHECK (json_valid(design_input)),
        design_result TEXT NOT NULL CHECK (json_valid(design_result)),
        design_utilisation REAL,
        design_passed INTEGER NOT NULL CHECK (design_passed IN (0, 1)),
        state TEXT NOT NULL CHECK (state IN {_in(STATES)}),
        state_changed_at TEXT NOT NULL,
        latest_record_uuid TEXT REFERENCES as_built_records(uuid),
        created_by INTEGER NOT NULL REFERENCES users(id),
        created_at TEXT NOT NULL,
        UNIQUE (site_id, reference)
    ) STRICT
    """,
    "CREATE INDEX bearings_state ON bearings(state, site_id)",
    """
    CREATE TABLE bearing_revisions (
        bearing_id TEXT NOT NULL REFERENCES bearings(id),
        revision INTEGER NOT NULL CHECK (revision >= 1),
        location TEXT NOT NULL,
        design_input TEXT NOT NULL CHECK (json_valid(design_input)),
        design_result TEXT NOT NULL CHECK (json_valid(design_result)),
        design_utilisation REAL,
        design_passed INTEGER NOT NULL CHECK (design_passed IN (0, 1)),
        created_by INTEGER NOT NULL REFERENCES users(id),
        created_at TEXT NOT NULL,
        PRIMARY KEY (bearing_id, revision)
    ) STRICT
    """,
    # A failed re-check must carry a blocking review reason, so it can never land a bearing in
    # 'within design' through a caller's slip.
    """
    CREATE TABLE as_built_records (
        uuid TEXT PRIMARY KEY CHECK (length(uuid) = 36),
        bearing_id TEXT NOT NULL REFERENCES bearings(id),
        design_revision INTEGER NOT NULL,
        inspector_id INTEGER NOT NULL REFERENCES users(id),
        measured_at TEXT NOT NULL,
        received_at TEXT NOT NULL,
        measurements TEXT NOT NULL CHECK (json_valid(measurements)),
        checklist TEXT NOT NULL DEFAULT '{}' CHECK (json_valid(checklist)),
        notes TEXT NOT NULL DEFAULT '',
        result TEXT NOT NULL CHECK (json_valid(result)),
        reasons TEXT NOT NULL DEFAULT '[]' CHECK (json_valid(reasons)),
        utilisation REAL,
        passed INTEGER NOT NULL CHECK (passed IN (0, 1)),
        blocking INTEGER NOT NULL CHECK (blocking >= 0),
        late INTEGER NOT NULL DEFAULT 0 CHECK (late IN (0, 1)),
        FOREIGN KEY (bearing_id, design_revision)
            REFERENCES bearing_revisions(bearing_id, revision),
        CHECK (passed = 1 OR blocking > 0)
    ) STRICT
    """,
    "CREATE INDEX as_built_records_bearing ON as_built_records(bearing_id, measured_at)",
    """
    CREATE TABLE photos (
        uuid TEXT PRIMARY KEY CHECK (length(uuid) = 36),
        record_uuid TEXT NOT NULL REFERENCES as_built_records(uuid),
        sha256 TEXT NOT NULL CHECK (length(sha256) = 64),
        thumb_sha256 TEXT CHECK (thumb_sha256 IS NULL OR length(thumb_sha256) = 64),
        width INTEGER NOT NULL CHECK (width > 0),
        height INTEGER NOT NULL CHECK (height > 0),
        size_bytes INTEGER NOT NULL CHECK (size_bytes > 0),
        captured_at TEXT,
        gps_lat REAL CHECK (gps_lat IS NULL OR gps_lat BETWEEN -90 AND 90),
        gps_lon REAL CHECK (gps_lon IS NULL OR gps_lon BETWEEN -180 AND 180),
        created_at TEXT NOT NULL
    ) STRICT
    """,
    "CREATE INDEX photos_record ON photos(record_uuid)",
    f"""
    CREATE TABLE decisions (
        id INTEGER PRIMARY KEY,
        bearing_id TEXT NOT NULL REFERENCES bearings(id),
        record_uuid TEXT NOT NULL REFERENCES as_built_records(uuid),
        engineer_id INTEGER NOT NULL REFERENCES users(id),
        kind TEXT NOT NULL CHECK (kind IN {_in(DECISION_KINDS)}),
        reason TEXT NOT NULL CHECK (length(trim(reason)) > 0),
        created_at TEXT NOT NULL
    ) STRICT
    """,
    "CREATE INDEX decisions_bearing ON decisions(bearing_id)",
    """
    CREATE TABLE releases (
        id INTEGER PRIMARY KEY,
        bearing_id TEXT NOT NULL REFERENCES bearings(id),
        record_uuid TEXT REFERENCES as_built_records(uuid),
        contractor_id INTEGER NOT NULL REFERENCES users(id),
        contractor_name TEXT NOT NULL CHECK (length(trim(contractor_name)) > 0),
        statement TEXT NOT NULL CHECK (length(trim(statement)) > 0),
        created_at TEXT NOT NULL
    ) STRICT
    """,
    "CREATE INDEX releases_bearing ON releases(bearing_id, created_at)",
    """
    CREATE TABLE reopenings (
        id INTEGER PRIMARY KEY,
        bearing_id TEXT NOT NULL REFERENCES bearings(id),
        engineer_id INTEGER NOT NULL REFERENCES users(id),
        reason TEXT NOT NULL CHECK (length(trim(reason)) > 0),
        created_at TEXT NOT NULL
    ) STRICT
    """,
    "CREATE INDEX reopenings_bearing ON reopenings(bearing_id, created_at)",
    # No foreign keys here on purpose: the audit trail must also record attempts on ids that
    # do not exist (a probe for another site's bearing), and must outlive anything it names.
    """
    CREATE TABLE events (
        id INTEGER PRIMARY KEY,
        at TEXT NOT NULL,
        user_id INTEGER,
        site_id TEXT,
        bearing_id TEXT,
        kind TEXT NOT NULL,
        detail TEXT NOT NULL DEFAULT '{}' CHECK (json_valid(detail))
    ) STRICT
    """,
    "CREATE INDEX events_site ON events(site_id, id)",
    "CREATE INDEX events_bearing ON events(bearing_id, id)",
    *_append_only("events", "events are append-only"),
    *_append_only("as_built_records", "as-built records are append-only"),
    *_append_only("photos", "photos are append-only"),
    *_append_only("decisions", "decisions are append-only"),
    *_append_only("releases", "releases are append-only"),
    *_append_only("reopenings", "reopenings are append-only"),
    *_append_only("bearing_revisions", "bearing revisions are append-only"),
    # A released bearing is locked. The one way out is a reopening: a reopenings row made since
    # the release, a state other than 'released', and nothing else about the bearing changed.
    """
    CREATE TRIGGER bearings_released_locked BEFORE UPDATE ON bearings
    WHEN OLD.state = 'released' AND NOT (
        NEW.state <> 'released'
        AND NEW.id IS OLD.id
        AND NEW.site_id IS OLD.site_id
        AND NEW.reference IS OLD.reference COLLATE BINARY
        AND NEW.location IS OLD.location
        AND NEW.revision IS OLD.revision
        AND NEW.design_input IS OLD.design_input
        AND NEW.design_result IS OLD.design_result
        AND NEW.design_utilisation IS OLD.design_utilisation
        AND NEW.design_passed IS OLD.design_passed
        AND NEW.created_by IS OLD.created_by
        AND NEW.created_at IS OLD.created_at
        AND EXISTS (
            SELECT 1 FROM reopenings r
            WHERE r.bearing_id = OLD.id AND r.created_at >= OLD.state_changed_at
        )
    )
    BEGIN SELECT RAISE(ABORT, 'bearing is released and locked'); END
    """,
    """
    CREATE TRIGGER bearings_released_no_delete BEFORE DELETE ON bearings
    WHEN OLD.state = 'released'
    BEGIN SELECT RAISE(ABORT, 'bearing is released and locked'); END
    """,
    # The hold point itself, kept in the database too: a bearing becomes released only from
    # 'within design' or 'accepted', and only with a release row written since its last change.
    """
    CREATE TRIGGER bearings_release_guard BEFORE UPDATE OF state ON bearings
    WHEN NEW.state = 'released' AND OLD.state <> 'released' AND (
        OLD.state NOT IN ('within design', 'accepted')
        OR NOT EXISTS (
            SELECT 1 FROM releases r
            WHERE r.bearing_id = OLD.id AND r.created_at >= OLD.state_changed_at
        )
    )
    BEGIN SELECT RAISE(ABORT, 'only a release for closing up of a bearing within design or accepted can release it'); END
    """,
    """
    CREATE TRIGGER bearings_insert_not_released BEFORE INSERT ON bearings
    WHEN NEW.state = 'released'
    BEGIN SELECT RAISE(ABORT, 'a new bearing cannot start released'); END
    """,
]


@MIGRATIONS()
def m001_initial_schema(db: sqlite_utils.Database) -> None:
    for statement in _INITIAL_SCHEMA:
        db.execute(statement)


@MIGRATIONS()
def m002_password_to_change(db: sqlite_utils.Database) -> None:
    """An account made with a password shown on someone else's screen must choose its own."""
    db.execute(
        "ALTER TABLE users ADD COLUMN must_change_password INTEGER NOT NULL DEFAULT 0 "
        "CHECK (must_change_password IN (0, 1))"
    )


@MIGRATIONS()
def m003_may_make_sites(db: sqlite_utils.Database) -> None:
    """Making sites becomes a permission of an account. Accounts that already made a site
    keep the right they used (an upgrade must not stop an office's engineers); anyone else
    gets it from ``sitecheck create-engineer`` or from an account that has it."""
    db.execute(
        "ALTER TABLE users ADD COLUMN may_make_sites INTEGER NOT NULL DEFAULT 0 "
        "CHECK (may_make_sites IN (0, 1))"
    )
    db.execute("UPDATE users SET may_make_sites = 1 WHERE id IN (SELECT created_by FROM sites)")


@MIGRATIONS()
def m004_outgoing_mail(db: sqlite_utils.Database) -> None:
    """Messages waiting to be sent, kept in the database so that an action never waits on
    a mail server and a message survives a restart. ``claimed_until`` lets one process at a
    time try a message; ``body`` is emptied once the message is sent or given up, since it
    may carry a single-use link."""
    db.execute(
        """
        CREATE TABLE outgoing_mail (
            id INTEGER PRIMARY KEY,
            kind TEXT NOT NULL CHECK (length(kind) > 0),
            to_addr TEXT NOT NULL CHECK (to_addr LIKE '%_@_%'),
            subject TEXT NOT NULL,
            body TEXT NOT NULL,
            created_at TEXT NOT NULL,
            attempts INTEGER NOT NULL DEFAULT 0 CHECK (attempts >= 0),
            next_try_at TEXT,
            claimed_until TEXT,
            last_error TEXT,
            sent_at TEXT,
            gave_up_at TEXT,
            CHECK (sent_at IS NULL OR gave_up_at IS NULL)
        ) STRICT
        """
    )
    db.execute("CREATE INDEX outgoing_mail_due ON outgoing_mail(next_try_at)")


@MIGRATIONS()
def m005_invitations(db: sqlite_utils.Database) -> None:
    """An invitation is an offer, waiting until the invited person accepts or declines it;
    nothing of the site is theirs before. One pending offer per address and site."""
    db.execute(
        f"""
        CREATE TABLE invitations (
            id TEXT PRIMARY KEY,
            site_id TEXT NOT NULL REFERENCES sites(id),
            email TEXT NOT NULL CHECK (email = lower(email) AND email LIKE '%_@_%'),
            role TEXT NOT NULL CHECK (role IN {_in(ROLES)}),
            invited_by INTEGER NOT NULL REFERENCES users(id),
            created_at TEXT NOT NULL,
            expires_at TEXT NOT NULL,
            state TEXT NOT NULL DEFAULT 'pending'
                CHECK (state IN ('pending', 'accepted', 'declined', 'withdrawn')),
            answered_at TEXT,
            answered_by INTEGER REFERENCES users(id),
            mail_id INTEGER REFERENCES outgoing_mail(id),
            CHECK ((state = 'pending') = (answered_at IS NULL))
        ) STRICT
        """
    )
    db.execute(
        "CREATE UNIQUE INDEX invitations_one_pending ON invitations(site_id, email) "
        "WHERE state = 'pending'"
    )
    db.execute("CREATE INDEX invitations_email ON invitations(email, state)")


@MIGRATIONS()
def m006_single_use_links(db: sqlite_utils.Database) -> None:
    """Links that prove an e-mail address: used once, until they expire. Only the sha256 of
    the link's token is kept, so the database alone opens nothing. ``purpose`` says what a
    link is for (an invitation now; a password reset may use the same table)."""
    db.execute(
        """
        CREATE TABLE single_use_links (
            id INTEGER PRIMARY KEY,
            token_hash TEXT NOT NULL UNIQUE CHECK (length(token_hash) = 64),
            purpose TEXT NOT NULL CHECK (length(purpose) > 0),
            email TEXT NOT NULL CHECK (email = lower(email) AND email LIKE '%_@_%'),
            invitation_id TEXT REFERENCES invitations(id),
            created_at TEXT NOT NULL,
            expires_at TEXT NOT NULL,
            used_at TEXT
        ) STRICT
        """
    )


@MIGRATIONS()
def m007_photo_files(db: sqlite_utils.Database) -> None:
    """What a photo was uploaded as, so the same id sent with another picture is told apart
    from a resend; and the hashes indexed, because a file is new (and may be removed when its
    upload is refused) only if no row names it, which is asked inside every photo's
    write transaction."""
    db.execute(
        "ALTER TABLE photos ADD COLUMN upload_sha256 TEXT "
        "CHECK (upload_sha256 IS NULL OR length(upload_sha256) = 64)"
    )
    db.execute("CREATE INDEX photos_sha256 ON photos(sha256)")
    db.execute("CREATE INDEX photos_thumb_sha256 ON photos(thumb_sha256)")


@MIGRATIONS()
def m008_recorded_after_release(db: sqlite_utils.Database) -> None:
    """Evidence that arrives for a released bearing (a record, a photo) is kept and listed
    for the engineer; the engineer answers by reopening or by keeping the release, with a
    reason. Both tables are append-only: what came and what was said stay on the record."""
    db.execute(
        """
        CREATE TABLE after_release_evidence (
            id INTEGER PRIMARY KEY,
            bearing_id TEXT NOT NULL REFERENCES bearings(id),
            release_id INTEGER NOT NULL REFERENCES releases(id),
            record_uuid TEXT NOT NULL REFERENCES as_built_records(uuid),
            photo_uuid TEXT REFERENCES photos(uuid),
            received_at TEXT NOT NULL
        ) STRICT
        """
    )
    db.execute(
        "CREATE INDEX after_release_evidence_bearing ON after_release_evidence(bearing_id, id)"
    )
    db.execute(
        """
        CREATE TABLE releases_kept (
            id INTEGER PRIMARY KEY,
            bearing_id TEXT NOT NULL REFERENCES bearings(id),
            release_id INTEGER NOT NULL REFERENCES releases(id),
            engineer_id INTEGER NOT NULL REFERENCES users(id),
            reason TEXT NOT NULL CHECK (length(trim(reason)) > 0),
            evidence_up_to INTEGER NOT NULL,
            created_at TEXT NOT NULL
        ) STRICT
        """
    )
    db.execute("CREATE INDEX releases_kept_bearing ON releases_kept(bearing_id, id)")
    for statement in (
        *_append_only("after_release_evidence", "evidence after release is append-only"),
        *_append_only("releases_kept", "kept releases are append-only"),
    ):
        db.execute(statement)
    # Records that arrived after a release before this table existed are listed too.
    db.execute(
        """
        INSERT INTO after_release_evidence (bearing_id, release_id, record_uuid, received_at)
        SELECT r.bearing_id,
               (SELECT max(x.id) FROM releases x
                WHERE x.bearing_id = r.bearing_id AND x.created_at <= r.received_at),
               r.uuid, r.received_at
        FROM as_built_records r
        WHERE r.late = 1 AND EXISTS (
            SELECT 1 FROM releases x
            WHERE x.bearing_id = r.bearing_id AND x.created_at <= r.received_at
        )
        ORDER BY r.received_at, r.uuid
        """
    )


@MIGRATIONS()
def m009_record_jobs(db: sqlite_utils.Database) -> None:
    """Site records made in the background, kept in the database rather than in files and
    threads of one process, so that every server process sees the same jobs and a site has
    one making at a time whichever process is asked."""
    db.execute(
        """
        CREATE TABLE record_jobs (
            id TEXT PRIMARY KEY CHECK (length(id) = 32),
            site_id TEXT NOT NULL REFERENCES sites(id),
            state TEXT NOT NULL
                CHECK (state IN ('waiting', 'making', 'done', 'failed', 'stopped')),
            bearings_done INTEGER NOT NULL DEFAULT 0,
            bearings INTEGER NOT NULL DEFAULT 0,
            current TEXT NOT NULL DEFAULT '',
            started_by INTEGER REFERENCES users(id),
            site_version TEXT NOT NULL,
            created_at TEXT NOT NULL,
            updated_at TEXT NOT NULL,
            finished_at TEXT,
            size_bytes INTEGER,
            error TEXT
        ) STRICT
        """
    )
    db.execute(
        "CREATE UNIQUE INDEX record_jobs_one_running ON record_jobs(site_id) "
        "WHERE state IN ('waiting', 'making')"
    )
    db.execute("CREATE INDEX record_jobs_site ON record_jobs(site_id, created_at)")
    db.execute("CREATE INDEX record_jobs_started_by ON record_jobs(started_by, created_at)")


UNMEASURABLE = ("covered", "no-access", "unsafe", "other")


@MIGRATIONS()
def m010_could_not_measure(db: sqlite_utils.Database) -> None:
    """A record may say the bearing could not be measured, and why. Its kind is worked out
    from that one column, so the two can never disagree; older records are 'measured'."""
    db.execute(
        "ALTER TABLE as_built_records ADD COLUMN why_not_measured TEXT "
        f"CHECK (why_not_measured IS NULL OR why_not_measured IN {_in(UNMEASURABLE)})"
    )
    db.execute(
        "ALTER TABLE as_built_records ADD COLUMN kind TEXT GENERATED ALWAYS AS "
        "(CASE WHEN why_not_measured IS NULL THEN 'measured' ELSE 'could not measure' END) "
        "VIRTUAL"
    )


@MIGRATIONS()
def m011_leases(db: sqlite_utils.Database) -> None:
    """Work that one process of several must do alone (sending the mail queue): whoever
    holds a named lease until a time does it; a holder that dies lets it run out."""
    db.execute(
        """
        CREATE TABLE leases (
            name TEXT PRIMARY KEY CHECK (length(name) > 0),
            holder TEXT NOT NULL CHECK (length(holder) > 0),
            taken_at TEXT NOT NULL,
            until TEXT NOT NULL
        ) STRICT
        """
    )


@MIGRATIONS()
def m012_notices(db: sqlite_utils.Database) -> None:
    """Notices: who is told by e-mail that it is their turn, and when each person last
    looked at a site (for "since you last looked").

    ``notices`` are made from the audit trail by the mail sender, after ``notice_cursor``
    (the last event read, and when a sender last looked: ``checked_at``); the cursor starts
    at the newest event, and a sender that finds nobody looked for a while (mail was off)
    starts from the newest event again, so turning mail on never mails the past. A notice is pending until it goes into a
    message (``mailed_at``, with the message's ``mail_id``) or is overtaken before that
    (``dropped_at``: the bearing moved on). ``notices_off`` holds the kinds each person
    turned off. Messages may carry a simple HTML part beside the plain text."""
    db.execute(
        """
        CREATE TABLE notices (
            id INTEGER PRIMARY KEY,
            user_id INTEGER NOT NULL REFERENCES users(id),
            site_id TEXT NOT NULL REFERENCES sites(id),
            bearing_id TEXT NOT NULL REFERENCES bearings(id),
            kind TEXT NOT NULL CHECK (length(kind) > 0),
            event_id INTEGER NOT NULL,
            by_user_id INTEGER REFERENCES users(id),
            words TEXT NOT NULL DEFAULT '',
            created_at TEXT NOT NULL,
            mail_id INTEGER REFERENCES outgoing_mail(id),
            mailed_at TEXT,
            dropped_at TEXT,
            UNIQUE (user_id, event_id, kind),
            CHECK (mailed_at IS NULL OR dropped_at IS NULL)
        ) STRICT
        """
    )
    db.execute(
        "CREATE INDEX notices_waiting ON notices(user_id, id) "
        "WHERE mailed_at IS NULL AND dropped_at IS NULL"
    )
    db.execute("CREATE INDEX notices_mailed ON notices(user_id, mailed_at)")
    db.execute(
        """
        CREATE TABLE notice_cursor (
            id INTEGER PRIMARY KEY CHECK (id = 1),
            last_event_id INTEGER NOT NULL,
            checked_at TEXT NOT NULL
        ) STRICT
        """
    )
    db.execute(
        "INSERT INTO notice_cursor (id, last_event_id, checked_at) "
        "SELECT 1, coalesce(max(id), 0), strftime('%Y-%m-%dT%H:%M:%fZ', 'now') FROM events"
    )
    db.execute(
        """
        CREATE TABLE notices_off (
            user_id INTEGER NOT NULL REFERENCES users(id),
            kind TEXT NOT NULL CHECK (length(kind) > 0),
            PRIMARY KEY (user_id, kind)
        ) STRICT
        """
    )
    db.execute(
        """
        CREATE TABLE site_visits (
            user_id INTEGER NOT NULL REFERENCES users(id),
            site_id TEXT NOT NULL REFERENCES sites(id),
            looked_at TEXT NOT NULL,
            PRIMARY KEY (user_id, site_id)
        ) STRICT
        """
    )
    db.execute("ALTER TABLE outgoing_mail ADD COLUMN html TEXT")
    # "Since you last looked" reads a site's bearings changed after a moment, and the header
    # counts those waiting for the engineer: from these indexes alone, without reading each
    # bearing's row (its design and trace make it large).
    db.execute(
        "CREATE INDEX bearings_site_changed ON bearings(site_id, state_changed_at, state, id)"
    )
    db.execute("CREATE INDEX bearings_state_changed ON bearings(state, site_id, state_changed_at)")


@MIGRATIONS()
def m013_decision_signatures(db: sqlite_utils.Database) -> None:
    """A decision keeps the engineer's name as it was when they decided (an account's name
    may change later; the record must not), and an acceptance of a bearing that fails as
    built keeps what failed (``accepted_failing``: the governing check, its title and the
    utilisation the engineer confirmed). Older decisions have neither."""
    db.execute("ALTER TABLE decisions ADD COLUMN engineer_name TEXT")
    db.execute(
        "ALTER TABLE decisions ADD COLUMN accepted_failing TEXT "
        "CHECK (accepted_failing IS NULL OR json_valid(accepted_failing))"
    )


@MIGRATIONS()
def m014_sign_offs(db: sqlite_utils.Database) -> None:
    """The engineer's sign-off of a site record: who signed (the name as signed), when,
    the statement, and what it covers (``covers``: the bearings by state, the records and
    photos, and the last history entry, as they were when it was signed). Append-only:
    a later sign-off is a new row, and the record shows the newest."""
    db.execute(
        """
        CREATE TABLE sign_offs (
            id INTEGER PRIMARY KEY,
            site_id TEXT NOT NULL REFERENCES sites(id),
            engineer_id INTEGER NOT NULL REFERENCES users(id),
            engineer_name TEXT NOT NULL CHECK (length(trim(engineer_name)) > 0),
            statement TEXT NOT NULL CHECK (length(trim(statement)) > 0),
            covers TEXT NOT NULL CHECK (json_valid(covers)),
            created_at TEXT NOT NULL
        ) STRICT
        """
    )
    db.execute("CREATE INDEX sign_offs_site ON sign_offs(site_id, id)")
    for statement in _append_only("sign_offs", "sign-offs are append-only"):
        db.execute(statement)


def _released_lock_trigger(compared: tuple[str, ...]) -> str:
    """The lock on a released bearing: the one way out is a reopening, with a reopenings row
    made since the release, a state other than 'released' and none of ``compared`` changed."""
    same = "\n".join(f"        AND NEW.{column} IS OLD.{column}" for column in compared)
    return f"""
    CREATE TRIGGER bearings_released_locked BEFORE UPDATE ON bearings
    WHEN OLD.state = 'released' AND NOT (
        NEW.state <> 'released'
        AND NEW.reference IS OLD.reference COLLATE BINARY
{same}
        AND EXISTS (
            SELECT 1 FROM reopenings r
            WHERE r.bearing_id = OLD.id AND r.created_at >= OLD.state_changed_at
        )
    )
    BEGIN SELECT RAISE(ABORT, 'bearing is released and locked'); END
    """


def _pack_text(text: str | None) -> bytes | None:
    return None if text is None else pack_json(json.loads(text))


def _packed_column(db: sqlite_utils.Database, table: str, column: str, what: str) -> None:
    """Turn a JSON text column of an append-only table into a packed one of the same name.

    Done column by column (add, fill, drop, rename) rather than by rebuilding the table, so
    that every other column, index and trigger of the table is kept as it stands, whatever
    later migrations add. The append-only guard is lifted for the fill alone, inside this
    migration's transaction; a guard on insert replaces the old column's NOT NULL.
    """
    db.execute(f"DROP TRIGGER {table}_no_update")
    db.execute(f"ALTER TABLE {table} ADD COLUMN packed_{column} BLOB")
    db.execute(f"UPDATE {table} SET packed_{column} = sitecheck_pack({column})")
    db.execute(f"ALTER TABLE {table} DROP COLUMN {column}")
    db.execute(f"ALTER TABLE {table} RENAME COLUMN packed_{column} TO {column}")
    for statement in _append_only(table, f"{what} are append-only")[:1]:
        db.execute(statement)
    db.execute(
        f"CREATE TRIGGER {table}_{column}_packed BEFORE INSERT ON {table} "
        f"WHEN typeof(NEW.{column}) <> 'blob' OR length(NEW.{column}) = 0 "
        f"BEGIN SELECT RAISE(ABORT, '{table}.{column} must be packed JSON'); END"
    )


# The governing check's code and title in a stored result, for lists that show no more.
_GOVERNING = "json_extract({r}, '$.governing')"
_GOVERNING_TITLE = """(
    SELECT json_extract(c.value, '$.title') FROM json_each({r}, '$.checks') c
    WHERE json_extract(c.value, '$.code') = json_extract({r}, '$.governing')
)"""


@MIGRATIONS()
def m015_results_stored_once(db: sqlite_utils.Database) -> None:
    """Each calculation is stored once, packed. A bearing's design result (about 12 KB of
    trace) was kept on the bearing and again on its design revision, and each record's
    result beside it: three traces a bearing, 42 KB of database with one record. Now the
    design result is kept on its revision only, and it and each record's result are stored
    as zlib-packed JSON (about a quarter of the size). The bearing keeps its governing
    check's code and title, and a record its governing check, as columns: lists show these
    and never unpack a trace. What any reader gets back is the same value as before."""
    db.conn.create_function("sitecheck_pack", 1, _pack_text, deterministic=True)
    db.execute("DROP TRIGGER bearings_released_locked")
    db.execute("ALTER TABLE bearings ADD COLUMN design_governing TEXT")
    db.execute("ALTER TABLE bearings ADD COLUMN design_governing_title TEXT")
    db.execute(
        f"""
        UPDATE bearings SET design_governing = {_GOVERNING.format(r="bearings.design_result")},
            design_governing_title = {_GOVERNING_TITLE.format(r="bearings.design_result")}
        """
    )
    db.execute("ALTER TABLE bearings DROP COLUMN design_result")
    db.execute(
        _released_lock_trigger(
            (
                "id",
                "site_id",
                "location",
                "revision",
                "design_input",
                "design_governing",
                "design_governing_title",
                "design_utilisation",
                "design_passed",
                "created_by",
                "created_at",
            )
        )
    )
    _packed_column(db, "bearing_revisions", "design_result", "bearing revisions")
    db.execute("DROP TRIGGER as_built_records_no_update")
    db.execute("ALTER TABLE as_built_records ADD COLUMN governing TEXT")
    db.execute(f"UPDATE as_built_records SET governing = {_GOVERNING.format(r='result')}")
    db.execute(_append_only("as_built_records", "as-built records are append-only")[0])
    _packed_column(db, "as_built_records", "result", "as-built records")


def apply_migrations(db: sqlite_utils.Database, migrations: Migrations = MIGRATIONS) -> list[str]:
    """Apply pending migrations all-or-nothing; returns the names applied (empty if none).

    The write lock is taken before looking again at what is pending, so two processes starting
    on a fresh file do not both try to create the schema. A migration that cannot run inside a
    transaction (``transactional=False``, e.g. VACUUM) is refused here: run it as a maintenance
    step with no other connection open.
    """
    pending = migrations.pending(db)
    if not pending:
        return []
    outside = [m.name for m in pending if not m.transactional]
    if outside:
        raise ValueError(
            f"migrations {', '.join(outside)} need to run outside a transaction; apply them with "
            "Migrations.apply() while the app is stopped, then open the database again"
        )
    with transaction(db):
        names = [migration.name for migration in migrations.pending(db)]
        migrations.apply(db)
    return names


RECORD_KINDS = ("pdf", "csv", "json")


@MIGRATIONS()
def m016_record_job_kinds(db: sqlite_utils.Database) -> None:
    """The data exports (CSV in a zip, JSON) are made in the background like the PDF, as jobs
    of their own kind, and a PDF may be of part of the site (``selection``: what it keeps,
    as sitecheck.store.record_reads.Selection.key() writes it; empty: the whole site). One
    making of each kind and part at a time per site, each reused while the site has not
    changed. Jobs made before are PDFs of the whole site."""
    db.execute(
        "ALTER TABLE record_jobs ADD COLUMN kind TEXT NOT NULL DEFAULT 'pdf' "
        f"CHECK (kind IN {_in(RECORD_KINDS)})"
    )
    db.execute("ALTER TABLE record_jobs ADD COLUMN selection TEXT NOT NULL DEFAULT ''")
    db.execute("DROP INDEX record_jobs_one_running")
    db.execute(
        "CREATE UNIQUE INDEX record_jobs_one_running ON record_jobs(site_id, kind, selection) "
        "WHERE state IN ('waiting', 'making')"
    )
    db.execute("DROP INDEX record_jobs_site")
    db.execute("CREATE INDEX record_jobs_site ON record_jobs(site_id, kind, selection, created_at)")


@MIGRATIONS()
def m017_survey_order(db: sqlite_utils.Database) -> None:
    """The survey list is ordered in SQL: each bearing keeps its reference as it sorts when
    read as people read it (store.survey.reference_order_key: GF-B2 before GF-B10), and an
    index gives a site's bearings in that order, so a page of the list reads only its own
    lines. A released bearing is locked, so its lock is lifted for the fill alone, inside
    this migration's transaction, and comes back with the new column among those it keeps."""
    db.conn.create_function("sitecheck_reference_key", 1, reference_order_key, deterministic=True)
    db.execute("DROP TRIGGER bearings_released_locked")
    db.execute("ALTER TABLE bearings ADD COLUMN reference_key TEXT")
    db.execute("UPDATE bearings SET reference_key = sitecheck_reference_key(reference)")
    db.execute(
        _released_lock_trigger(
            (
                "id",
                "site_id",
                "location",
                "revision",
                "design_input",
                "design_governing",
                "design_governing_title",
                "design_utilisation",
                "design_passed",
                "created_by",
                "created_at",
                "reference_key",
            )
        )
    )
    db.execute(
        "CREATE TRIGGER bearings_reference_key BEFORE INSERT ON bearings "
        "WHEN NEW.reference_key IS NULL "
        "BEGIN SELECT RAISE(ABORT, 'bearings.reference_key must be given'); END"
    )
    # Everything the list orders, ranks, searches and counts by, so none of it reads a
    # bearing's row (with its design, about 1.4 KB): a page reads its own rows only.
    db.execute(
        "CREATE INDEX bearings_survey ON bearings("
        "site_id, reference_key, reference, id, state, design_passed, location)"
    )
