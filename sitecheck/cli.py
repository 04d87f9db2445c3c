"""The ``sitecheck`` command: a thin shell over the library."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from .bearing import BASES, EC6_UK, InputError, basis_named
from .bearing.format import utilisation
from .bearing.remedy import remedy
from .bearing.typed import NumberRefused, read_number
from .cautions import CAUTION
from .config import ConfigError, Settings, load_settings
from .schedule import COLUMNS, RowError, RowOutcome, read_schedule, recheck_rows, row_verdict


# One piece: the command line's declaration, one block per command in --help's order; the work is
# in the functions it hands each command to.
def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="sitecheck", description="Re-check masonry bearings as built."
    )
    sub = parser.add_subparsers(dest="command", required=True)

    check = sub.add_parser("check", help="re-check every bearing of a schedule (CSV)")
    check.add_argument(
        "schedule", type=Path, help="the bearing schedule, CSV (columns: sitecheck columns)"
    )
    check.add_argument(
        "--basis", choices=BASES, default=EC6_UK, help="code basis for rows that name none"
    )
    check.add_argument(
        "--json", action="store_true", help="print everything as JSON, traces included"
    )
    check.add_argument(
        "--no-hints", action="store_true", help="skip the remedy hints for failing bearings"
    )
    check.add_argument(
        "--basis-value",
        action="append",
        default=[],
        metavar="NAME=VALUE",
        help="a value of the --basis code basis for this run, e.g. alpha_cc=1.0, "
        "gamma_M_ec6.2|I=2.5 or bearing_type_factors=1.25,1.5,2 (repeatable); a value that "
        "makes no physical sense is refused by name",
    )

    sub.add_parser("columns", help="list the schedule's columns")

    serve = sub.add_parser(
        "serve", help="serve the web app: several worker processes, one per core by default"
    )
    _home_options(serve)
    serve.add_argument("--host", default=None, help="address to listen on (127.0.0.1)")
    serve.add_argument("--port", type=int, default=None, help="port to listen on (8000)")
    serve.add_argument(
        "--workers", type=int, default=None, help="worker processes (0: one per core, the default)"
    )
    serve.add_argument("--threads", type=int, default=None, help="threads per worker (4)")
    serve.add_argument(
        "--server",
        choices=("auto", "gunicorn", "waitress"),
        default="auto",
        help="gunicorn (several processes) where fork exists, else waitress (one process)",
    )

    first = sub.add_parser(
        "create-engineer",
        help="create an account that may make sites (there are no default accounts)",
    )
    first.add_argument("email")
    first.add_argument("name")
    _home_options(first)

    users = sub.add_parser(
        "users", help="list accounts; disable, enable or reset the password of one"
    )
    users_sub = users.add_subparsers(dest="users_command", required=True)
    _home_options(users_sub.add_parser("list", help="every account, with its state"))
    for verb, meaning in (
        ("disable", "stop an account from logging in; its sessions end at once"),
        ("enable", "let a disabled account log in again"),
        ("reset-password", "a single-use link to choose a new password (by e-mail if set up)"),
    ):
        one = users_sub.add_parser(verb, help=meaning)
        one.add_argument("email")
        _home_options(one)

    settings_cmd = sub.add_parser(
        "settings", help="print every setting in force and where it came from"
    )
    _home_options(settings_cmd)

    back = sub.add_parser(
        "backup", help="copy the data folder safely while the server runs (incremental)"
    )
    back.add_argument("destination", type=Path, help="a folder outside the data folder")
    _home_options(back)

    restore = sub.add_parser("restore", help="check a backup whole, then put it in a data folder")
    restore.add_argument("source", type=Path, help="a folder made by sitecheck backup")
    restore.add_argument(
        "--replace",
        action="store_true",
        help="put the backup in place of a database already there (which is kept beside it)",
    )
    _home_options(restore)

    makers = sub.add_parser(
        "may-make-sites", help="let an existing account make sites, or take that away"
    )
    makers.add_argument("email")
    makers.add_argument("--take-away", action="store_true", help="take the permission away")
    _home_options(makers)

    upkeep = sub.add_parser(
        "maintain",
        help="check every photo against its hash, remove old temporary and unnamed files, "
        "prune old log-in attempts (safe from cron while serving)",
    )
    upkeep.add_argument(
        "--older-than-hours",
        type=float,
        default=24.0,
        help="remove temporary and unnamed files only when older than this (24)",
    )
    _home_options(upkeep)

    demo = sub.add_parser("demo", help="build a fresh demo database (invented site) and serve it")
    demo.add_argument(
        "--home",
        default=None,
        help="the demo's own data folder (default: demo/ in the instance folder)",
    )
    demo.add_argument("--host", default=None)
    demo.add_argument("--port", type=int, default=None)
    demo.add_argument("--workers", type=int, default=None)
    demo.add_argument("--build-only", action="store_true", help="build the database and stop")

    record = sub.add_parser(
        "record", help="write a site's record (PDF) for the quality file, with a progress bar"
    )
    record.add_argument("site", help="the site's id, or its exact name")
    _home_options(record)
    record.add_argument("--out", type=Path, required=True, help="the PDF file to write")

    exported = sub.add_parser(
        "export", help="write a site's data export: CSV files in a zip, or one JSON file"
    )
    exported.add_argument("site", help="the site's id, or its exact name")
    _home_options(exported)
    exported.add_argument(
        "--out", type=Path, required=True, help="the file to write: NAME.zip (CSV) or NAME.json"
    )

    args = parser.parse_args(argv)
    if args.command == "columns":
        for name, (meaning, unit) in COLUMNS.items():
            print(f"{name:28} {unit:7} {meaning}")
        return 0
    if args.command == "check":
        return _check(args)
    try:
        return _OPERATIONS[args.command](args)
    except ConfigError as error:
        print(f"sitecheck: {error}", file=sys.stderr)
        return 2


def _home_options(command: argparse.ArgumentParser) -> None:
    command.add_argument(
        "--home",
        default=None,
        help="the data folder (default $SITECHECK_HOME, else the instance folder)",
    )
    command.add_argument(
        "--db", default=None, help="the database file; its folder is then the data folder"
    )


def _settings(args, **overrides) -> Settings:
    """The settings in force for a command: its options, the environment, the data
    folder's sitecheck.toml. ``--db FILE`` names the database and makes its folder the data
    folder (a path typed on the command line is the one place relative to where it is typed)."""
    home = args.home
    db = getattr(args, "db", None)
    if db is not None:
        database = Path(db).expanduser().resolve()
        overrides["database"] = database
        home = home or database.parent
    elif home is not None:
        home = Path(home).expanduser().resolve()
    return load_settings(home=home, overrides={k: v for k, v in overrides.items() if v is not None})


def _demo(args) -> int:
    from .config import default_home
    from .demo import build_demo
    from .serve import serve, where_data_is

    home = Path(args.home).expanduser().resolve() if args.home else default_home() / "demo"
    settings = load_settings(
        home=home,
        overrides={
            k: v
            for k, v in {"host": args.host, "port": args.port, "workers": args.workers}.items()
            if v is not None
        },
    )
    logins = build_demo(settings.database)
    print(f"Demo site built in {settings.database}. Log in as:")
    for role, (email, password) in logins.items():
        print(f"  {role:11} {email:28} password: {password}")
    if args.build_only:
        return 0
    _serving(settings, where_data_is)
    return serve(settings)


def _serve(args) -> int:
    from .serve import serve, where_data_is

    settings = _settings(
        args, host=args.host, port=args.port, workers=args.workers, threads=args.threads
    )
    _serving(settings, where_data_is, args.server)
    return serve(settings, server=args.server)


def _serving(settings: Settings, where_data_is, server: str = "auto") -> None:
    import os

    if server == "waitress" or (server == "auto" and not hasattr(os, "fork")):
        how = f"one process, {settings.threads} threads (waitress)"
    else:
        how = f"{settings.worker_count()} worker processes x {settings.threads} threads (gunicorn)"
    print(f"sitecheck on http://{settings.host}:{settings.port}/  {how}; Ctrl-C stops it")
    print(where_data_is(settings))
    print(CAUTION, flush=True)


def _print_settings(args) -> int:
    settings = _settings(args)
    print(
        f"settings file: {settings.config_file}"
        + ("" if settings.config_file.is_file() else " (none)")
    )
    for name, value, source in settings.described():
        print(f"{name:18} {value:48} {source}")
    return 0


def _open_site(args):
    """The settings, and the database and site the command names; (settings, None, None)
    after saying why when there is no such database or site."""
    from . import store

    settings = _settings(args)
    if not settings.database.is_file():
        print(
            f"sitecheck: no database at {settings.database}; give the data folder with --home",
            file=sys.stderr,
        )
        return settings, None, None
    db = store.open_db(settings.database)
    site = store.get_site(db, args.site) or _site_named(db, args.site)
    if site is None:
        db.conn.close()
        print(
            f"sitecheck: no site with the id or exact name {args.site!r}; "
            "the site page's address holds its id",
            file=sys.stderr,
        )
        return settings, None, None
    return settings, db, site


def _record(args) -> int:
    from . import store
    from .photos import PhotoStore
    from .report.collect import collect
    from .report.pdf import write_pdf

    settings, db, site = _open_site(args)
    if db is None:
        return 2
    try:
        # Read as it was at the start, however long the PDF takes; a bearing at a time.
        with store.read_snapshot(db):
            rec = collect(db, site["id"])
            photos = PhotoStore(settings.photos)
            write_pdf(rec, args.out, photo_store=photos, progress=_progress_bar)
            count = len(rec.bearings)
    finally:
        db.conn.close()
    print(file=sys.stderr)
    print(f"Site record of {site['name']} ({count} bearings) written to {args.out}")
    print(CAUTION)
    return 0


def _export(args) -> int:
    from . import store
    from .report import export
    from .report.collect import collect

    suffix = args.out.suffix.lower()
    if suffix not in (".zip", ".json"):
        print(
            f"sitecheck: --out {args.out} should end in .zip (the CSV files) or .json",
            file=sys.stderr,
        )
        return 2
    _settings_in_force, db, site = _open_site(args)
    if db is None:
        return 2
    part = args.out.with_name(args.out.name + ".part")
    try:
        with store.read_snapshot(db):
            rec = collect(db, site["id"])
            if suffix == ".zip":
                export.write_csv_zip(rec, part, progress=_progress_bar, workdir=part.parent)
            else:
                export.write_json(rec, part, progress=_progress_bar)
            count = len(rec.bearings)
        part.replace(args.out)
    finally:
        db.conn.close()
        part.unlink(missing_ok=True)
    print(file=sys.stderr)
    print(f"Data export of {site['name']} ({count} bearings) written to {args.out}")
    print(CAUTION)
    return 0


def _site_named(db, name: str) -> dict | None:
    from . import store

    # Names are not unique: only an exact, unambiguous name stands in for an id.
    matches = store.sites_named(db, name)
    return matches[0] if len(matches) == 1 else None


def _progress_bar(done: int, total: int, what: str) -> None:
    width = 30
    filled = int(width * done / max(total, 1))
    bar = "#" * filled + "-" * (width - filled)
    print(f"\r[{bar}] {done}/{total} {what[:30]:30}", end="", file=sys.stderr, flush=True)


def _create_engineer(args) -> int:
    import getpass

    from . import credentials, store

    settings = _settings(args)
    password = getpass.getpass("Password (10 characters or more): ")
    problem = credentials.password_problem(password, email=args.email)
    if problem:
        print(f"sitecheck: {problem}", file=sys.stderr)
        return 2
    settings.database.parent.mkdir(parents=True, exist_ok=True)
    db = store.open_db(settings.database)
    try:
        user = store.create_user(
            db,
            email=args.email,
            name=args.name,
            password_hash=credentials.hash_password(password),
            may_make_sites=True,
        )
    except store.Conflict as e:
        print(f"sitecheck: {e}", file=sys.stderr)
        return 2
    finally:
        db.conn.close()
    print(
        f"Created {user['email']} in {settings.database}: log in and make a site; you will be its engineer."
    )
    return 0


def _open_existing(settings: Settings):
    """The data folder's database, or None (said on stderr) when there is none: a command
    that manages accounts must not make an empty database where it was pointed by mistake."""
    from . import store

    if not settings.database.is_file():
        print(
            f"sitecheck: no database at {settings.database}; give the data folder with --home "
            "or SITECHECK_HOME",
            file=sys.stderr,
        )
        return None
    return store.open_db(settings.database)


def _users(args) -> int:
    from . import store

    settings = _settings(args)
    db = _open_existing(settings)
    if db is None:
        return 2
    try:
        if args.users_command == "list":
            people = store.list_users(db)
            head = f"{'e-mail':32} {'name':24} {'state':9} {'sites':>5}  {'last log-in':20} created"
            print(head)
            print("-" * len(head))
            for u in people:
                state = "disabled" if u["disabled"] else "active"
                print(
                    f"{u['email'][:32]:32} {u['name'][:24]:24} {state:9} {u['sites']:>5}  "
                    f"{(u['last_login_at'] or 'never')[:19]:20} {u['created_at'][:10]}"
                )
            print(f"{len(people)} accounts in {settings.database}")
            return 0
        user = store.get_user_by_email(db, args.email)
        if user is None:
            print(
                f"sitecheck: no account for {store.normalise_email(args.email)!r}; "
                "'sitecheck users list' shows them",
                file=sys.stderr,
            )
            return 2
        if args.users_command == "reset-password":
            return _reset_password(db, user, settings)
        disable = args.users_command == "disable"
        if bool(user["disabled"]) == disable:
            print(
                f"{user['email']} is already {'disabled' if disable else 'active'}; nothing changed"
            )
            return 0
        ended = store.set_disabled(db, user_id=user["id"], disabled=disable, by_user_id=None)
        if disable:
            print(f"{user['email']} is disabled: {ended} sessions ended, log-in refused")
        else:
            print(f"{user['email']} may log in again")
        return 0
    finally:
        db.conn.close()


def _reset_password(db, user: dict, settings: Settings) -> int:
    from .invitations import utc_words
    from .mail import MailSettings, MailSettingsError, send_due
    from .resets import ResetRefused, start_reset

    try:
        mail = MailSettings.from_env(settings.mail_environment())
    except MailSettingsError as error:
        print(f"sitecheck: {error}", file=sys.stderr)
        return 2
    base_url = settings.base_url or f"http://{settings.host}:{settings.port}"
    try:
        started = start_reset(db, user=user, by_user_id=None, mail=mail, base_url=base_url)
    except ResetRefused as error:
        print(f"sitecheck: {error}", file=sys.stderr)
        return 2
    until = utc_words(started.expires_at)
    if mail is None:
        print(f"Mail is not set up, so give this link to {started.email} yourself; it is not")
        print(f"shown again. It works once, until {until}; their password is never shown:")
        print(f"  {started.handover_link}")
        return 0
    # Try it now rather than wait for the server's sender; a failure is retried by it.
    send_due(str(settings.database), mail)
    status = store_status(settings, started.mail_id)
    if status and status["sent_at"]:
        print(
            f"A link to choose a new password went to {started.email}; it works once, until {until}."
        )
    else:
        problem = status["last_error"] if status else "unknown"
        print(
            f"A link to choose a new password for {started.email} is queued; the mail server "
            f"did not take it yet ({problem}), and the running server's sender tries again."
        )
    return 0


def store_status(settings: Settings, mail_id: int) -> dict | None:
    from . import store

    db = store.open_db(settings.database)
    try:
        return store.mail_status(db, mail_id)
    finally:
        db.conn.close()


def _backup(args) -> int:
    from .backup import BackupError, backup

    settings = _settings(args)
    try:
        report = backup(settings, args.destination)
    except (BackupError, OSError) as error:
        print(f"sitecheck: backup failed: {error}", file=sys.stderr)
        return 2
    counts = report.counts
    print(
        f"Backup of {settings.home} in {report.folder}: {counts.get('as_built_records', 0)} "
        f"as-built records, {counts.get('photos', 0)} photos, {counts.get('bearings', 0)} "
        f"bearings, {counts.get('users', 0)} accounts"
    )
    print(
        f"  files copied: {report.photos_copied} pictures ({report.photos_already_there} "
        f"already there), {report.print_copies_copied} print copies, {report.records_copied} "
        f"site record files; {report.bytes_copied / 1e6:.1f} MB in {report.seconds:.1f} s"
    )
    for problem in report.problems:
        print(f"sitecheck: warning: {problem}", file=sys.stderr)
    return 1 if report.problems else 0


def _restore(args) -> int:
    from .backup import BackupError, restore

    settings = _settings(args)
    try:
        report = restore(args.source, settings, replace=args.replace)
    except (BackupError, OSError) as error:
        print(f"sitecheck: restore refused: {error}", file=sys.stderr)
        return 2
    counts = report.counts
    print(
        f"Restored into {report.home}: {counts.get('as_built_records', 0)} as-built records, "
        f"{counts.get('photos', 0)} photos, {counts.get('bearings', 0)} bearings, "
        f"{counts.get('users', 0)} accounts; every hash and the integrity check are ok"
    )
    if report.replaced:
        print(f"  the database that was there is kept as {report.replaced}")
    if report.migrations_applied:
        print(f"  brought up to date: {', '.join(report.migrations_applied)}")
    return 0


def _may_make_sites(args) -> int:
    from . import store

    settings = _settings(args)
    db = _open_existing(settings)
    if db is None:
        return 2
    try:
        user = store.get_user_by_email(db, args.email)
        if user is None:
            print(
                f"sitecheck: no account for {args.email}; make one with "
                "'sitecheck create-engineer', or invite them to a site first",
                file=sys.stderr,
            )
            return 2
        allowed = not args.take_away
        store.set_may_make_sites(db, user_id=user["id"], allowed=allowed, by_user_id=None)
    finally:
        db.conn.close()
    print(f"{user['email']} {'may' if allowed else 'may no longer'} make sites.")
    return 0


def _maintain(args) -> int:
    from .maintain import AlreadyRunning, maintain

    settings = _settings(args)
    if args.older_than_hours < 1:
        print(
            "sitecheck: --older-than-hours must be 1 or more: a younger file may be one an "
            "upload is writing now",
            file=sys.stderr,
        )
        return 2
    try:
        done = maintain(settings, older_than_s=args.older_than_hours * 3600)
    except AlreadyRunning as error:
        print(f"sitecheck: {error}", file=sys.stderr)
        return 3
    except FileNotFoundError as error:
        print(f"sitecheck: {error}", file=sys.stderr)
        return 2
    sound = "all sound" if not done.damaged else f"{len(done.damaged)} MISSING OR CHANGED"
    print(f"sitecheck maintain in {settings.home} ({done.seconds:.1f} s):")
    print(f"  photo files checked against their hashes: {done.photos_checked}, {sound}")
    print(f"  temporary files removed: {done.temporary_files_removed}")
    print(f"  photo files no record names, removed: {done.unnamed_files_removed}")
    print(f"  old log-in attempts removed: {done.login_attempts_removed}")
    for line in done.damaged:
        print(f"sitecheck: {line}; restore it from a backup", file=sys.stderr)
    return 1 if done.damaged else 0


_OPERATIONS = {
    "serve": _serve,
    "demo": _demo,
    "record": _record,
    "export": _export,
    "create-engineer": _create_engineer,
    "may-make-sites": _may_make_sites,
    "users": _users,
    "settings": _print_settings,
    "backup": _backup,
    "restore": _restore,
    "maintain": _maintain,
}


def _basis_overrides(name: str, items: list[str]) -> dict:
    """``--basis-value`` items as overrides of the named basis. Only the shape is read
    here; whether a value makes sense is the core's call (it names the value it refuses)."""
    defaults = basis_named(name).to_dict()
    out: dict = {}
    for item in items:
        key, sep, text = item.partition("=")
        key, text = key.strip(), text.strip()
        if not sep or not key:
            raise InputError("--basis-value", item, "NAME=VALUE, e.g. alpha_cc=1.0", "bad-shape")
        table, dot, entry = key.partition(".")
        if dot and isinstance(defaults.get(table), dict):
            out.setdefault(table, dict(defaults[table]))[entry] = _typed_text(key, text)
        elif key == "bearing_type_factors":
            out[key] = [_typed_text(key, part) for part in text.split(",")]
        else:
            out[key] = _typed_text(key, text)
    return out


def _typed_text(key: str, text: str) -> object:
    """A number where the text is one (the one reader's rules, as every form reads it),
    true/false for yes/no words, else the text. A number written in a way the reader
    refuses (a decimal comma, nan) is refused here, saying how to write it."""
    try:
        value = read_number(text)
    except NumberRefused as e:
        if e.code != "not-a-number":
            raise InputError(f"basis.{key}", text, e.expected, e.code) from None
        value = None
    if value is not None:
        return value
    words = {"yes": True, "true": True, "no": False, "false": False}
    return words.get(text.lower(), text)


def _check(args) -> int:
    try:
        basis = basis_named(args.basis, **_basis_overrides(args.basis, args.basis_value))
    except InputError as e:
        print(f"sitecheck: --basis-value: {e}", file=sys.stderr)
        return 2
    try:
        data = args.schedule.read_bytes()
    except OSError as e:
        message = f"cannot read {args.schedule}: {e.strerror or e}"
        if args.json:
            error = RowError(0, "", str(args.schedule), message)
            print(json.dumps(_as_json([], [error], {}, (), ()), indent=1, ensure_ascii=False))
        print(f"sitecheck: {message}", file=sys.stderr)
        return 2
    parsed = read_schedule(data, args.basis)
    outcomes, errors = recheck_rows(parsed, basis)
    hints = {}
    if not args.no_hints:
        for o in outcomes:
            if not o.current.passed:
                built = o.as_built or o.row.design
                hints[o.row.reference] = remedy(built, o.basis)
    if args.json:
        print(
            json.dumps(
                _as_json(outcomes, errors, hints, parsed.unknown_columns, parsed.notes),
                indent=1,
                ensure_ascii=False,
                allow_nan=False,  # NaN and Infinity are not JSON
            )
        )
    else:
        _print_table(outcomes, hints)
        if parsed.unknown_columns:
            print(f"\nIgnored unknown column(s): {', '.join(parsed.unknown_columns)}")
        for note in parsed.notes:
            print(f"\nNote: {note}")
        print(f"\n{CAUTION}")
    for e in errors:
        print(f"sitecheck: {args.schedule}: {e}", file=sys.stderr)
    return 1 if errors else 0


def _print_table(outcomes: list[RowOutcome], hints: dict) -> None:
    head = f"{'reference':22} {'basis':12} {'governing check':24} {'util.':>6}  {'verdict':19} review reasons"
    print(head)
    print("-" * len(head))
    for o in outcomes:
        r = o.current
        g = r.governing_check
        # No capacity at all is a failure and reads as one (never "n/a").
        util = f"{utilisation(r.utilisation):>6}"
        codes = ", ".join(reason.code for reason in o.reasons) or "-"
        print(
            f"{o.row.reference[:22]:22} {o.basis.name[:12]:12} {g.code[:24]:24} {util}  {row_verdict(o):19} {codes}"
        )
        hint = hints.get(o.row.reference)
        if hint is not None:
            print(f"{'':22} hint: {hint.describe()}")


def _as_json(outcomes, errors, hints, unknown, notes) -> dict:
    rows = []
    for o in outcomes:
        entry = {
            "row": o.row.row,
            "reference": o.row.reference,
            "location": o.row.location,
            "basis": o.basis.name,
            "verdict": row_verdict(o),
            "design": o.design_result.as_dict(),
            "as_built": None if o.result is None else o.result.as_dict(),
            "review_reasons": [r.as_dict() for r in o.reasons],
        }
        if o.row.reference in hints:
            entry["hint"] = hints[o.row.reference].as_dict()
        rows.append(entry)
    return {
        "caution": CAUTION,
        "bearings": rows,
        "errors": [e.as_dict() for e in errors],
        "ignored_columns": list(unknown),
        "notes": list(notes),
    }


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
