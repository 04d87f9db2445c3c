"""The phone's side door: the site pack it keeps for offline use, the as-built records and
photos it sends from its unsent outbox, and the offline shell (service worker, offline pages).

Every answer is JSON with a status the phone acts on without reading the words:

- 200/201: stored (201 the first time, 200 for the same UUID with the same values again, with
  the first answer); the phone deletes its copy only now. The same UUID with other values is
  a 409: those values were not stored, and the phone keeps them on its refused list.
- 400: the request itself is malformed (not JSON, JSON too large or too deep, no file part, a
  stale CSRF token); the phone fetches a new token and tries again after a stale token, and
  otherwise moves the item to its refused list.
- 401: logged out; the phone keeps the item until its person logs in again.
- 403/404/409/422: refused for good; the phone moves the item to its visible refused list
  with ``error`` (a sentence) and ``code`` / ``field``.
- 5xx or no answer: the phone keeps the item and tries again later (503 with Retry-After:
  too many photos arrived at once; nothing was stored).
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import re
from datetime import UTC, datetime

from flask import (
    Blueprint,
    Response,
    abort,
    current_app,
    g,
    jsonify,
    render_template,
    request,
    url_for,
)
from werkzeug.exceptions import NotFound

from sitecheck import services, store, workflow
from sitecheck.bearing.errors import InputError
from sitecheck.photos import PhotoLimits, PhotoRejected, PhotosBusy, ingest_photo
from sitecheck.store.base import NoTimeZone, canonical_uuid, parse_timestamp
from sitecheck.web import get_db, photo_store
from sitecheck.web.access import bearing_for, site_for
from sitecheck.web.assets import STATIC_DIR, shell_digest
from sitecheck.web.inspect import survey_order
from sitecheck.web.jsonbody import JsonRefused, read_json
from sitecheck.web.login import login_required
from sitecheck.web.record_form import (
    CHECKLIST_FIELDS,
    GROUPS,
    MAX_PHOTOS,
    MEASUREMENT_FIELDS,
    NOTES_MAX,
    PACKING_MAX_MM,
    SPECS,
    RecordForm,
    designed_text,
    phone_words,
)
from sitecheck.web.review import engineer_words
from sitecheck.web.symbols import SYMBOL_WORDS

bp = Blueprint("sync", __name__)

RECORD_KEYS = frozenset(
    {
        "uuid",
        "site_id",
        "bearing_id",
        "design_revision",
        "measured_at",
        "measurements",
        "checklist",
        "notes",
        # The verdict the phone's mirror showed; compared, never trusted (see services).
        "provisional",
        # Set when the bearing could not be measured: why, as a code of the core's.
        "why_not_measured",
    }
)


class Refused(Exception):
    """Input the phone must not send again as it is: 422 with the field it is about."""

    def __init__(self, field: str, code: str, error: str, status: int = 422):
        super().__init__(error)
        self.field, self.code, self.error, self.status = field, code, error, status

    def response(self):
        return jsonify(error=self.error, field=self.field, code=self.code), self.status


# --- the offline shell ------------------------------------------------------------------------


@bp.get("/sw.js")
def service_worker():
    """Served from the root so that its scope is the whole app, not only /static/, with
    its version set to a digest of the shell's files (see :func:`shell_digest`)."""
    version = current_app.extensions.get("shell_digest")
    if version is None:  # once per process: the files do not change under a running server
        version = current_app.extensions["shell_digest"] = shell_digest(_words_module())
    text = (STATIC_DIR / "sw.js").read_text(encoding="utf-8")
    text, found = SW_VERSION.subn(f'const VERSION = "{version}";', text, count=1)
    if not found:
        raise RuntimeError("static/sw.js has lost its `const VERSION = ...;` line")
    response = Response(text, mimetype="text/javascript")
    response.set_etag(version)
    # A phone must see a new version at once; the worker itself decides what else is cached.
    response.headers["Cache-Control"] = "no-cache"
    return response.make_conditional(request)


SW_VERSION = re.compile(r'^const VERSION = "[^"]*";$', flags=re.M)


def _words_module() -> str:
    return (
        "// Written by the server (sitecheck/web/sync.py) from the form's own labels and the\n"
        "// trace's glossary, so the phone's messages have one source. Part of the offline shell.\n"
        f"export const PHONE_WORDS = {json.dumps(phone_words(), ensure_ascii=False)};\n"
        f"export const SYMBOL_WORDS = {json.dumps(SYMBOL_WORDS, ensure_ascii=False)};\n"
    )


@bp.get("/phone-words.js")
def words_module():
    """The words the phone's messages and traces use (record_form.phone_words, the symbol
    glossary), as a module the service worker keeps with the shell: one download, not a
    copy in every page."""
    response = Response(_words_module(), mimetype="text/javascript")
    response.headers["Cache-Control"] = "no-cache"
    return response


@bp.get("/offline")
def offline():
    """Shown by the service worker for a page it has not kept; lists the kept site packs."""
    return render_template("offline/shell.html")


@bp.get("/refused")
def refused():
    """Every record and photo the server refused, as kept on this phone. The page reads them
    from IndexedDB itself, so it is the same with no signal (the service worker keeps it)."""
    return render_template("offline/refused.html")


@bp.get("/sites/<site_id>/offline")
@login_required
def site_offline(site_id):
    """The as-built form driven by the site pack, for basements with no signal."""
    site, _role = site_for(site_id, "record")
    return render_template(
        "offline/site.html",
        site={"id": site["id"], "name": site["name"]},
        groups=GROUPS,
        specs=SPECS,
        # The online form's fields, unfilled: the phone fills them from the site pack.
        form=RecordForm(meta={"csrf": False}, formdata=None),
        max_photos=MAX_PHOTOS,
        photo_mb=PhotoLimits().max_bytes // 1_000_000,
        total_mb=(current_app.config.get("MAX_CONTENT_LENGTH") or 0) // (1024 * 1024),
        # The phone draws each state's badge (symbol and words) from the same table as the
        # online pages, so a state is never shown by colour alone there either.
        badges={
            state: {"symbol": b.symbol, "label": b.label, "css_class": b.css_class}
            for state, b in workflow.STATE_BADGES.items()
        },
    )


# --- the site pack ----------------------------------------------------------------------------


@bp.get("/api/sites/<site_id>/pack")
@login_required
def pack(site_id):
    """The site pack: the site's code basis and review settings in full, and its bearings.

    The phone says which pack it holds (``?since=`` the ``version`` of its last one) and is
    sent only the bearings changed since (``full`` false), with ``removed`` the ones gone;
    otherwise, or when that cannot be told, every bearing (``full`` true). Bearings of one
    design share it: each names its design (``design``, a key of ``designs``), which holds
    the design input, the words shown beside each field and the design's verdict."""
    site, role = site_for(site_id, "record")
    since = (request.args.get("since") or "").strip()[:80] or None
    found = store.pack_rows(get_db(), site_id=site["id"], since=since)
    designs = _shared_designs(found)
    bearings = _pack_bearings(site["id"], found)
    basis = services.basis_for(site)
    response = jsonify(
        site={
            "id": site["id"],
            "name": site["name"],
            "basis": basis.name,
            "code_basis": site["code_basis"],
            "review_settings": site["review_settings"],
            # In full, as the server checks with them: the phone's re-check has no
            # defaults of its own to fall back on.
            "mirror": services.mirror_settings(site),
        },
        role=role,
        user=g.user["id"],
        generated_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        version=found.version,
        full=found.full,
        bearings=bearings,
        removed=found.removed,
        designs=designs,
    )
    response.headers["Cache-Control"] = "no-store"
    return response


def _shared_designs(found: store.PackRows) -> dict[str, dict]:
    """The pack's designs, each once, keyed so bearings of one design share it; each bearing
    gets the key of its design as ``design_key``."""
    designs: dict[str, dict] = {}
    keys: dict[tuple, str] = {}
    for b in found.bearings:
        summary = (
            b["design_input_json"],
            _finite(b["design_utilisation"]),
            bool(b["design_passed"]),
            b["design_governing"],
        )
        if summary not in keys:
            keys[summary] = _design_key(summary)
            design_input = found.designs[b["design_input_json"]]
            designs[keys[summary]] = {
                "input": design_input,
                # Ready-made words beside each field, so the phone shows what the online
                # form shows.
                "designed": {name: designed_text(design_input, name) for name in SPECS},
                "utilisation": summary[1],
                "passed": summary[2],
                "governing": summary[3],
            }
        b["design_key"] = keys[summary]
    return designs


def _pack_bearings(site_id: str, found: store.PackRows) -> list[dict]:
    """The pack's bearings as the phone reads them, with the engineer's standing words."""
    # A whole pack is in survey order, with each bearing's place by reference, so the phone
    # ranks them again as their states change just as the survey list does. A bearing's
    # place changes only when bearings are added, and then the whole pack is sent.
    rows = survey_order(found.bearings) if found.full else found.bearings
    if found.full or len(rows) > 50:
        decisions = store.latest_decisions(get_db(), site_id=site_id)
    else:
        decisions = {}
        for b in rows:
            decisions |= store.latest_decisions(get_db(), site_id=site_id, bearing_id=b["id"])
    return [
        {
            "id": b["id"],
            "reference": b["reference"],
            "location": b["location"],
            "state": b["state"],
            "revision": b["revision"],
            **({"order": b["order"]} if found.full else {}),
            "design": b["design_key"],
            "design_passed": bool(b["design_passed"]),
            # What the engineer asked for, shown on the form with no signal too.
            "engineer_words": engineer_words(
                workflow.standing_decision(b["state"], decisions.get(b["id"]))
            ),
        }
        for b in rows
    ]


def _design_key(summary: tuple) -> str:
    # The same design gets the same key in every pack, so a later pack's bearings can name
    # a design the phone already holds.
    return hashlib.sha256(json.dumps(summary).encode()).hexdigest()[:12]


# --- as-built records -------------------------------------------------------------------------


@bp.post("/api/records")
@login_required
def post_record():
    try:
        data = read_json(request)
    except JsonRefused as refused:
        return jsonify(error=refused.message, code=refused.code), 400
    if not isinstance(data, dict):
        return jsonify(error="Send the as-built record as a JSON object.", code="not-json"), 400
    try:
        fields = _record_fields(data)
    except Refused as refused:
        return refused.response()
    try:
        site, _role = site_for(fields["site_id"], "record")
    except NotFound:
        return _not_on_site()
    bearing = bearing_for(site, fields["bearing_id"])
    db = get_db()
    try:
        # The re-check refuses input that makes no physical sense (InputError) before
        # anything is stored, with the same first error a separate look would find.
        stored, _recheck = services.record_as_built(
            db,
            site=site,
            bearing=bearing,
            uuid=fields["uuid"],
            measured_at=fields["measured_at"],
            design_revision=fields["design_revision"],
            measurements=fields["measurements"],
            checklist=fields["checklist"],
            notes=fields["notes"],
            inspector_id=g.user["id"],
            provisional=fields["provisional"],
            why_not_measured=fields["why_not_measured"],
        )
    except Refused as refused:
        return refused.response()
    except InputError as error:
        return _input_error(error)
    except store.SameIdOtherValues as error:
        return (
            jsonify(
                error=str(error), field="uuid", code="same-id-other-values", differs=error.differs
            ),
            409,
        )
    except store.UuidInUse as error:
        return jsonify(error=str(error), field="uuid", code="uuid-in-use"), 409
    except ValueError as error:  # the store's own refusals, e.g. a design revision it never had
        return jsonify(error=str(error), field=_field_of(str(error)), code="refused"), 422
    return jsonify(_answer(site, stored)), (201 if stored.created else 200)


def _answer(site, stored) -> dict:
    """Built from the stored row, so a resend gets the first answer, not a new re-check."""
    row = stored.row
    return {
        "uuid": row["uuid"],
        "created": stored.created,
        "state": stored.state,
        "passed": bool(row["passed"]),
        "utilisation": _finite(row["utilisation"]),
        "governing": row["governing"],
        "reasons": [
            {"code": r["code"], "severity": r["severity"], "sentence": r["sentence"]}
            for r in row["reasons"]
        ],
        "url": url_for("inspect.result", site_id=site["id"], record_uuid=row["uuid"]),
        # The bearing was released before this arrived: kept, and listed for the engineer.
        "after_release": bool(row["late"]),
    }


def _not_on_site():
    """A site the person is not on, whether it exists or not (so nothing is revealed), in
    words the phone can show on its refused list: the usual cause is being taken off it."""
    return (
        jsonify(
            error=(
                "This site is not among your sites (you may have been taken off it), so the "
                "record was not stored. Ask the site's engineer to add you again, then record it."
            ),
            field="site_id",
            code="not-on-site",
        ),
        404,
    )


def _record_fields(data: dict) -> dict:
    unknown = sorted(set(data) - RECORD_KEYS)
    if unknown:
        raise Refused(unknown[0], "unknown-field", f"“{unknown[0][:40]}” is not part of a record.")
    out: dict = {}
    out["uuid"] = _uuid(data.get("uuid"), "uuid")
    for name in ("site_id", "bearing_id"):
        value = data.get(name)
        if not isinstance(value, str) or not value or len(value) > 64:
            raise Refused(name, "missing", f"{name} is missing.")
        out[name] = value
    revision = data.get("design_revision")
    if isinstance(revision, bool) or not isinstance(revision, int):
        raise Refused(
            "design_revision",
            "not-whole",
            "design_revision must be the whole number of the design revision.",
        )
    out["design_revision"] = revision
    out["measured_at"] = _moment(data.get("measured_at"), "measured_at")
    for name, allowed in (("measurements", MEASUREMENT_FIELDS), ("checklist", CHECKLIST_FIELDS)):
        values = data.get(name) or {}
        if not isinstance(values, dict):
            raise Refused(name, "bad-shape", f"{name} must be an object of named values.")
        for key, value in values.items():
            if key not in allowed:
                raise Refused(
                    f"{name}.{key}", "unknown-field", f"{key} is not a known {name} value."
                )
            if isinstance(value, float) and not math.isfinite(value):
                raise Refused(f"{name}.{key}", "not-a-number", f"{key} must be a finite number.")
        # Nothing empty: a field not measured is left out, as the online form leaves it out.
        out[name] = {k: v for k, v in values.items() if v is not None}
    packing = out["checklist"].get("packing")
    is_number = isinstance(packing, int | float) and not isinstance(packing, bool)
    if is_number and not 0 <= packing <= PACKING_MAX_MM:
        raise Refused(
            "checklist.packing",
            "out-of-range",
            f"Packing of {packing:g} mm is not accepted; expected 0 to {PACKING_MAX_MM:g} mm.",
        )
    concrete = out["measurements"].get("padstone_concrete")
    if isinstance(concrete, str):
        concrete = concrete.strip()
        if len(concrete) > 20:
            raise Refused(
                "measurements.padstone_concrete",
                "too-long",
                "Padstone concrete class: at most 20 characters.",
            )
        if concrete:
            out["measurements"]["padstone_concrete"] = concrete
        else:
            del out["measurements"]["padstone_concrete"]
    notes = data.get("notes") or ""
    if not isinstance(notes, str):
        raise Refused("notes", "not-text", "notes must be text.")
    if len(notes) > NOTES_MAX:
        raise Refused("notes", "too-long", f"Notes: at most {NOTES_MAX} characters.")
    out["notes"] = notes
    why = data.get("why_not_measured")
    if why is not None and not isinstance(why, str):
        raise Refused("why_not_measured", "not-text", "why_not_measured must be text or null.")
    if why == "other" and not notes.strip():
        raise Refused("notes", "why-in-notes", "Notes: say why the bearing could not be measured.")
    out["why_not_measured"] = why
    # Never a reason to refuse a record: an odd verdict is itself what the server reports.
    out["provisional"] = data.get("provisional")
    return out


def _input_error(error: InputError):
    return (
        jsonify(
            error=f"{error.field}: {error.expected}",
            field=error.field,
            code=error.code,
            expected=error.expected,
        ),
        422,
    )


def _field_of(message: str) -> str:
    return message.split(" ", 1)[0] if message else "record"


def _uuid(value, field: str) -> str:
    try:
        return canonical_uuid(value, field=field)
    except ValueError:
        raise Refused(field, "bad-uuid", f"{field} must be a UUID made on the phone.") from None


def _moment(value, field: str) -> str:
    """The phone's time as it sent it, once the store's reading of times accepts it. A
    padded time is refused here as before: the phone writes its own ISO text, never padded."""
    if not isinstance(value, str) or len(value) > 40:
        raise Refused(
            field, "missing", f"{field} must be a date and time such as 2026-05-04T10:30:00Z."
        )
    try:
        if value != value.strip():
            raise ValueError(value)
        parse_timestamp(value, field=field)
    except NoTimeZone:
        raise Refused(
            field, "no-zone", f"{field}: add Z for UTC or an offset such as +01:00."
        ) from None
    except ValueError:
        raise Refused(field, "not-a-time", f"{field}: “{value}” is not a date and time.") from None
    return value


def _finite(x):
    return x if isinstance(x, int | float) and math.isfinite(x) else None


# --- photos -----------------------------------------------------------------------------------


@bp.post("/api/records/<record_uuid>/photos")
@login_required
def post_photo(record_uuid):
    db = get_db()
    site_id, record = _find_record(db, record_uuid)
    site, _role = site_for(site_id, "record")
    upload = request.files.get("photo")
    if upload is None or not request.form.get("photo_uuid"):
        return (
            jsonify(
                error="Send the photo as the multipart part “photo” with its photo_uuid.",
                code="no-photo",
            ),
            400,
        )
    if record["inspector_id"] != g.user["id"]:
        abort(403, description="Only the person who made an as-built record may add its photos.")
    try:
        photo_uuid = _uuid(request.form["photo_uuid"], "photo_uuid")
        captured = request.form.get("captured_at")
        captured = _moment(captured, "captured_at") if captured else None
    except Refused as refused:
        return refused.response()
    # A cheap answer before the picture is decoded; the store counts again, with the write
    # lock held, when it keeps the photo (several uploads may be on their way at once).
    if store.get_photo(db, site_id=site["id"], uuid=photo_uuid) is None:
        already = store.photos_for_record(db, site_id=site["id"], record_uuid=record["uuid"])
        if len(already) >= MAX_PHOTOS:
            return (
                jsonify(
                    error=f"At most {MAX_PHOTOS} photos for one as-built record.",
                    code="too-many-photos",
                ),
                422,
            )
    try:
        photo = ingest_photo(upload.read())
    except PhotoRejected as rejected:
        return jsonify(error=rejected.message, code=rejected.code), 422
    except PhotosBusy as busy:
        # A 5xx: the phone keeps the photo and sends it again later, as it should.
        response = jsonify(error=busy.message, code="busy")
        response.headers["Retry-After"] = str(busy.retry_after_s)
        return response, 503
    if captured and services.camera_time(photo.capture_time) is None:
        # The phone re-encodes the picture to save space, which drops the camera's EXIF; it
        # reads the camera's time first and sends it, always with its zone. A time in the
        # file itself wins only if it says its zone (a picture the phone could not shrink).
        photo = dataclasses.replace(photo, capture_time=captured.replace("Z", "+00:00"))
    try:
        stored = services.store_photo(
            db,
            site=site,
            record_uuid=record["uuid"],
            photo=photo,
            photos=photo_store(),
            user_id=g.user["id"],
            uuid=photo_uuid,
            max_photos=MAX_PHOTOS,
        )
    except store.TooManyPhotos as error:
        return jsonify(error=str(error), code="too-many-photos"), 422
    except store.SameIdOtherValues as error:
        return jsonify(error=str(error), field="photo_uuid", code="same-id-other-values"), 409
    except store.UuidInUse as error:
        return jsonify(error=str(error), field="photo_uuid", code="uuid-in-use"), 409
    status = 201 if stored.created else 200
    return jsonify(
        uuid=stored.row["uuid"], created=stored.created, record_uuid=record["uuid"]
    ), status


def _find_record(db, record_uuid: str) -> tuple[str, dict]:
    """The record among the user's own sites only, so another site's record reads as absent."""
    for s in store.sites_for_user(db, g.user["id"]):
        row = store.get_record(db, site_id=s["id"], uuid=record_uuid)
        if row is not None:
            return s["id"], row
    abort(
        404,
        description=(
            "There is no such as-built record among your sites: send the record before its "
            "photos (or you may have been taken off its site)."
        ),
    )
