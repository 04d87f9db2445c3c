"""The ``sitecheck`` command: a thin shell over the library."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from .bearing import BASES, EC6_UK, InputError, basis_named
from .bearing.format import utilisation
from .bearing.remedy import remedy
from .bearing.review import BLOCKS
from .schedule import COLUMNS, RowError, RowOutcome, read_schedule, recheck_rows

CAUTION = (
    "Caution: these results support, and never replace, the judgement of a competent "
    "engineer. Local codes, national annexes and licensed practice govern."
)


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

    serve = sub.add_parser("serve", help="serve the web app (waitress) on one SQLite file")
    serve.add_argument(
        "--db", default=None, help="SQLite file (default $SITECHECK_DB or var/sitecheck.db)"
    )
    serve.add_argument("--host", default="127.0.0.1")
    serve.add_argument("--port", type=int, default=8000)
    serve.add_argument("--threads", type=int, default=8)

    first = sub.add_parser(
        "create-engineer",
        help="create an account that may make sites (there are no default accounts)",
    )
    first.add_argument("email")
    first.add_argument("name")
    first.add_argument("--db", default=None)

    makers = sub.add_parser(
        "may-make-sites", help="let an existing account make sites, or take that away"
    )
    makers.add_argument("email")
    makers.add_argument("--take-away", action="store_true", help="take the permission away")
    makers.add_argument("--db", default=None)

    demo = sub.add_parser("demo", help="build a fresh demo database (invented site) and serve it")
    demo.add_argument("--db", default="var/demo.db")
    demo.add_argument("--host", default="127.0.0.1")
    demo.add_argument("--port", type=int, default=8000)
    demo.add_argument("--build-only", action="store_true", help="build the database and stop")

    record = sub.add_parser(
        "record", help="write a site's record (PDF) for the quality file, with a progress bar"
    )
    record.add_argument("site", help="the site's id, or its exact name")
    record.add_argument("--db", default=None, help="SQLite file (default $SITECHECK_DB)")
    record.add_argument("--out", type=Path, required=True, help="the PDF file to write")

    vectors = sub.add_parser(
        "vectors", help="write or compare the shared test vectors of the browser's mirror"
    )
    what = vectors.add_mutually_exclusive_group(required=True)
    what.add_argument("--out", type=Path, help="write the vectors to this file")
    what.add_argument(
        "--check", type=Path, help="exit 1 if this file differs from freshly made vectors"
    )

    args = parser.parse_args(argv)
    if args.command == "vectors":
        return _vectors(args)
    if args.command == "columns":
        for name, (meaning, unit) in COLUMNS.items():
            print(f"{name:28} {unit:7} {meaning}")
        return 0
    if args.command == "serve":
        return _serve(args.db, args.host, args.port, args.threads)
    if args.command == "create-engineer":
        return _create_engineer(args)
    if args.command == "may-make-sites":
        return _may_make_sites(args)
    if args.command == "record":
        return _record(args)
    if args.command == "demo":
        from .demo import build_demo

        logins = build_demo(args.db)
        print(f"Demo site built in {args.db}. Log in as:")
        for role, (email, password) in logins.items():
            print(f"  {role:11} {email:28} password: {password}")
        if args.build_only:
            return 0
        return _serve(args.db, args.host, args.port, 8)
    return _check(args)


def _vectors(args) -> int:
    from . import vectors

    if args.out is not None:
        text = vectors.write(args.out)
        size = args.out.stat().st_size
        print(
            f"Vectors written to {args.out} ({len(text) / 1e6:.1f} MB of JSON, {size / 1e6:.2f} MB on disk)"
        )
        return 0
    try:
        kept = json.loads(vectors.read_text(args.check))
    except (OSError, EOFError, UnicodeDecodeError, ValueError) as e:
        print(f"sitecheck: cannot read {args.check}: {e}", file=sys.stderr)
        return 2
    fresh = json.loads(vectors.dumps(vectors.build_vectors()))
    found = vectors.differences(kept, fresh)
    if not found:
        print(f"{args.check} is up to date")
        return 0
    print(f"{args.check} differs from the vectors the core makes now:")
    for line in found:
        print(f"  {line}")
    print(f"Rewrite it with: sitecheck vectors --out {args.check}")
    return 1


def _serve(db: str | None, host: str, port: int, threads: int) -> int:
    from waitress import serve

    from .web import create_app

    app = create_app(db)
    print(
        f"sitecheck on http://{host}:{port}/  (database {app.config['DB_PATH']}); Ctrl-C stops it"
    )
    print(CAUTION)
    serve(app, host=host, port=port, threads=threads, ident="sitecheck")
    return 0


def _record(args) -> int:
    import os

    from . import store
    from .photos import PhotoStore
    from .report.collect import collect
    from .report.pdf import write_pdf

    path = Path(args.db or os.environ.get("SITECHECK_DB") or "var/sitecheck.db")
    if not path.is_file():
        print(f"sitecheck: no database at {path}; give it with --db", file=sys.stderr)
        return 2
    db = store.open_db(path)
    try:
        site = store.get_site(db, args.site) or _site_named(db, args.site)
        if site is None:
            print(
                f"sitecheck: no site with the id or exact name {args.site!r}; "
                "the site page's address holds its id",
                file=sys.stderr,
            )
            return 2
        rec = collect(db, site["id"])
    finally:
        db.conn.close()
    write_pdf(rec, args.out, photo_store=PhotoStore(path.parent / "photos"), progress=_progress_bar)
    print(file=sys.stderr)
    print(f"Site record of {site['name']} ({len(rec.bearings)} bearings) written to {args.out}")
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

    from . import auth, store
    from .web import create_app

    app = create_app(args.db)
    password = getpass.getpass("Password (10 characters or more): ")
    problem = auth.password_problem(password, email=args.email)
    if problem:
        print(f"sitecheck: {problem}", file=sys.stderr)
        return 2
    db = store.open_db(app.config["DB_PATH"])
    try:
        user = store.create_user(
            db,
            email=args.email,
            name=args.name,
            password_hash=auth.hash_password(password),
            may_make_sites=True,
        )
    except store.Conflict as e:
        print(f"sitecheck: {e}", file=sys.stderr)
        return 2
    finally:
        db.conn.close()
    print(f"Created {user['email']}: log in and make a site; you will be its engineer.")
    return 0


def _may_make_sites(args) -> int:
    import os

    from . import store

    path = Path(args.db or os.environ.get("SITECHECK_DB") or "var/sitecheck.db")
    if not path.is_file():
        print(f"sitecheck: no database at {path}; give it with --db", file=sys.stderr)
        return 2
    db = store.open_db(path)
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


def verdict(outcome: RowOutcome) -> str:
    """One of our state words for a schedule row."""
    if outcome.result is None:
        return "awaiting survey" if outcome.design_result.passed else "fails at design"
    if any(r.severity == BLOCKS for r in outcome.reasons):
        return "engineer to decide"
    return "within design"


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
            out.setdefault(table, dict(defaults[table]))[entry] = _typed_text(text)
        elif key == "bearing_type_factors":
            out[key] = [_typed_text(part) for part in text.split(",")]
        else:
            out[key] = _typed_text(text)
    return out


def _typed_text(text: str) -> object:
    """A number where the text is one, true/false for yes/no words, else the text."""
    try:
        return float(text)
    except ValueError:
        pass
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
            f"{o.row.reference[:22]:22} {o.basis.name[:12]:12} {g.code[:24]:24} {util}  {verdict(o):19} {codes}"
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
            "verdict": verdict(o),
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
