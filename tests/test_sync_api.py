"""The phone's sync API on the real app and a real SQLite file: the site pack, as-built
records sent from the unsent outbox (idempotent by the phone's UUID), their photos, and the
offline shell the service worker keeps."""

from __future__ import annotations

import html
import io
import json
import re
import threading
import uuid
from datetime import datetime
from pathlib import Path

import pytest

from kit.data_folder import as_built_record
from kit.photo_samples import DATETIME_ORIGINAL, EXIF_IFD, OFFSET_TIME_ORIGINAL, make_test_jpeg
from kit.web import csrf_token
from sitecheck import services, store, workflow
from sitecheck.web import sync
from sitecheck.web.assets import shell_digest
from sitecheck.web.inspect import survey_order
from sitecheck.web.record_form import CHECKLIST_FIELDS, MEASUREMENT_FIELDS

SW = Path(__file__).resolve().parent.parent / "static" / "sw.js"


@pytest.fixture
def bearing(db, site):
    return store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")


def _record(site, bearing, **changes) -> dict:
    """An as-built record as the phone sends it: invented values close to the design."""
    body = as_built_record(site["id"], bearing)
    body["notes"] = "Sent from the unsent outbox."
    body.update(changes)
    return body


def _send(client, body, token=None):
    return client.post(
        "/api/records", json=body, headers={"X-CSRFToken": token or csrf_token(client)}
    )


def _count(db, record_uuid) -> int:
    return db.execute(
        "SELECT count(*) FROM as_built_records WHERE uuid = ?", [record_uuid]
    ).fetchone()[0]


# --- the site pack ----------------------------------------------------------------------------


def test_site_pack_holds_every_bearing_with_its_design(client_as, db, site):
    r = client_as("inspector").get(f"/api/sites/{site['id']}/pack")
    assert r.status_code == 200
    assert r.headers["Cache-Control"] == "no-store"
    pack = r.get_json()
    assert pack["site"]["id"] == site["id"] and pack["site"]["name"] == site["name"]
    assert pack["site"]["basis"] and pack["site"]["code_basis"] == site["code_basis"]
    assert pack["site"]["review_settings"] == site["review_settings"]
    assert pack["role"] == "inspector"
    assert datetime.fromisoformat(pack["generated_at"]).tzinfo is not None
    assert pack["generated_at"].endswith("Z")
    # In survey order, each with its place by reference for the phone to rank them again.
    expected = survey_order(store.list_bearings(db, site_id=site["id"]))
    assert pack["full"] is True and pack["removed"] == [] and pack["version"]
    assert [b["id"] for b in pack["bearings"]] == [b["id"] for b in expected]
    assert [b["order"] for b in pack["bearings"]] == [b["order"] for b in expected]
    for got, row in zip(pack["bearings"], expected, strict=True):
        assert got["reference"] == row["reference"] and got["revision"] == row["revision"]
        assert got["state"] == row["state"] and got["location"] == row["location"]
        assert got["design_passed"] == bool(row["design_passed"])
        design = pack["designs"][got["design"]]
        assert design["input"] == row["design_input"]
        assert design["passed"] == bool(row["design_passed"])
        assert design["utilisation"] == pytest.approx(row["design_utilisation"])
        assert design["governing"] == row["design_result"]["governing"]
        assert set(design["designed"]) >= set(MEASUREMENT_FIELDS)
    # The phone's re-check gets the basis and settings in full, exactly as the server
    # reads them (the site row may hold only what was changed from the defaults).
    assert pack["site"]["mirror"] == {
        "basis": services.basis_for(site).to_dict(),
        "settings": services.settings_for(site).as_dict(),
    }


@pytest.mark.parametrize(
    ("role", "status"), [("contractor", 403), ("viewer", 403), ("outsider", 404)]
)
def test_site_pack_is_only_for_those_who_record(client_as, site, role, status):
    r = client_as(role).get(f"/api/sites/{site['id']}/pack")
    assert r.status_code == status
    assert r.is_json and r.get_json()["error"]


def test_site_pack_needs_a_log_in(app, site):
    r = app.test_client().get(f"/api/sites/{site['id']}/pack")
    assert r.status_code == 401  # the phone keeps its items and asks for a log-in


# --- records ----------------------------------------------------------------------------------


def test_record_is_stored_once_and_a_resend_gets_the_first_answer(client_as, db, site, bearing):
    client = client_as("inspector")
    body = _record(site, bearing)
    first = _send(client, body)
    assert first.status_code == 201, first.get_json()
    answer = first.get_json()
    assert answer["uuid"] == body["uuid"] and answer["created"] is True
    assert answer["state"] in ("within design", "engineer to decide")
    assert isinstance(answer["passed"], bool) and answer["governing"]
    assert answer["url"] == f"/sites/{site['id']}/records/{body['uuid']}"
    assert all({"code", "severity", "sentence"} == set(r) for r in answer["reasons"])

    again = _send(client, body)
    assert again.status_code == 200
    assert again.get_json() == {**answer, "created": False}
    assert _count(db, body["uuid"]) == 1
    assert client.get(answer["url"]).status_code == 200


def test_a_bearing_that_could_not_be_measured_is_stored_as_its_own_kind(
    client_as, db, site, bearing
):
    client = client_as("inspector")
    body = _record(site, bearing, measurements={}, why_not_measured="no-access")
    body["checklist"] = {}
    r = _send(client, body)
    assert r.status_code == 201, r.get_json()
    answer = r.get_json()
    assert answer["state"] == "engineer to decide"
    assert [x["code"] for x in answer["reasons"]] == ["could-not-measure"]
    row = db.execute(
        "SELECT kind, why_not_measured, blocking FROM as_built_records WHERE uuid = ?",
        [body["uuid"]],
    ).fetchone()
    assert tuple(row) == ("could not measure", "no-access", 1)


@pytest.mark.parametrize(
    ("changes", "field", "code"),
    [
        (
            {"why_not_measured": "covered"},
            "measurements.bearing_length",
            "measured-but-not-measurable",
        ),
        ({"why_not_measured": "too dark", "measurements": {}}, "why_not_measured", "bad-choice"),
        ({"why_not_measured": "other", "measurements": {}, "notes": ""}, "notes", "why-in-notes"),
        ({"why_not_measured": 3, "measurements": {}}, "why_not_measured", "not-text"),
    ],
    ids=["with-measurements", "unknown-why", "other-without-notes", "not-text"],
)
def test_a_could_not_measure_record_the_core_refuses_is_refused_with_its_field(
    client_as, db, site, bearing, changes, field, code
):
    body = _record(site, bearing, **changes)
    r = _send(client_as("inspector"), body)
    assert r.status_code == 422
    assert (r.get_json()["field"], r.get_json()["code"]) == (field, code)
    assert _count(db, body["uuid"]) == 0


def _differed(db, site, record_uuid) -> list[dict]:
    return [
        e
        for e in store.events_for(db, site_id=site["id"])
        if e["kind"] == services.PHONE_VERDICT_DIFFERED and record_uuid in str(e["detail"])
    ]


def test_the_phones_verdict_is_compared_and_the_servers_is_stored(client_as, db, site, bearing):
    client = client_as("inspector")
    body = _record(site, bearing, measurements={"padstone_length": 300})
    rc = services.recheck(site, bearing, body["measurements"], body["checklist"])
    agreeing = {
        "passed": rc.result.passed,
        "governing": rc.result.governing,
        "utilisation": rc.result.utilisation,
        "reasons": [r.code for r in rc.reasons],
    }
    r = _send(client, {**body, "provisional": agreeing})
    assert r.status_code == 201 and _differed(db, site, body["uuid"]) == []

    wrong = {**agreeing, "passed": not agreeing["passed"], "reasons": []}
    other = _record(site, bearing, measurements={"padstone_length": 300})
    r = _send(client, {**other, "provisional": wrong})
    assert r.status_code == 201
    answer = r.get_json()
    assert answer["passed"] is agreeing["passed"]  # the server's, not the phone's
    (event,) = _differed(db, site, other["uuid"])
    assert "passed" in str(event["detail"]) and "reasons" in str(event["detail"])


@pytest.mark.parametrize("odd", ["a verdict", 42, ["passed"]])
def test_a_verdict_the_server_cannot_read_never_costs_the_record(client_as, db, site, bearing, odd):
    body = _record(site, bearing, provisional=odd)
    r = _send(client_as("inspector"), body)
    assert r.status_code == 201 and _count(db, body["uuid"]) == 1
    (event,) = _differed(db, site, body["uuid"])
    assert "unreadable" in str(event["detail"])


def test_two_sends_of_one_uuid_at_the_same_moment_store_one_row(client_as, db, site, bearing):
    body = _record(site, bearing)
    clients = []
    for _ in range(2):  # two sessions, as the page and a second tab would have
        c = client_as("inspector")
        clients.append((c, csrf_token(c)))
    start = threading.Barrier(2)
    answers: list = [None, None]

    def send(i):
        client, token = clients[i]
        start.wait()
        r = _send(client, body, token)
        answers[i] = (r.status_code, r.get_json())

    threads = [threading.Thread(target=send, args=(i,)) for i in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(30)
    assert sorted(a[0] for a in answers) == [200, 201]
    assert _count(db, body["uuid"]) == 1
    assert answers[0][1]["reasons"] == answers[1][1]["reasons"]


@pytest.mark.parametrize(
    ("change", "field", "code"),
    [
        (
            {"measurements": {"bearing_length": "150mm"}},
            "measurements.bearing_length",
            "not-a-number",
        ),
        ({"measurements": {"bearing_length": -20}}, "beam.bearing_length", None),
        ({"measurements": {"padstone_size": 4}}, "measurements.padstone_size", "unknown-field"),
        ({"checklist": {"packing": 900}}, "checklist.packing", "out-of-range"),
        ({"measured_at": "2026-05-04 10:30"}, "measured_at", "no-zone"),
        ({"uuid": "not-a-uuid"}, "uuid", "bad-uuid"),
        ({"design_revision": 99}, "design_revision", "refused"),
        ({"role": "engineer"}, "role", "unknown-field"),
    ],
)
def test_bad_input_is_422_naming_the_field(client_as, db, site, bearing, change, field, code):
    before = db.execute("SELECT count(*) FROM as_built_records").fetchone()[0]
    r = _send(client_as("inspector"), _record(site, bearing, **change))
    assert r.status_code == 422, r.get_json()
    body = r.get_json()
    assert body["field"] == field and body["error"]
    if code:
        assert body["code"] == code
    assert db.execute("SELECT count(*) FROM as_built_records").fetchone()[0] == before


def test_not_a_number_in_the_json_is_refused_not_a_500(client_as, site, bearing):
    client = client_as("inspector")
    # json.dumps writes NaN for a float nan, as a careless client would.
    text = json.dumps(
        _record(site, bearing, measurements={"bearing_length": float("nan")}), allow_nan=True
    )
    r = client.post(
        "/api/records",
        data=text,
        content_type="application/json",
        headers={"X-CSRFToken": csrf_token(client)},
    )
    assert r.status_code == 422 and r.get_json()["field"] == "measurements.bearing_length"


def test_a_body_that_is_not_json_is_400(client_as):
    client = client_as("inspector")
    r = client.post("/api/records", data="x", headers={"X-CSRFToken": csrf_token(client)})
    assert r.status_code == 400 and r.get_json()["code"] == "not-json"


def test_one_uuid_for_two_bearings_is_409(client_as, db, site, bearing):
    client = client_as("inspector")
    body = _record(site, bearing)
    assert _send(client, body).status_code == 201
    other = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-W")
    r = _send(client, {**body, "bearing_id": other["id"]})
    assert r.status_code == 409 and r.get_json()["code"] == "uuid-in-use"


def test_a_contractor_may_not_send_a_record(client_as, db, site, bearing):
    body = _record(site, bearing)
    r = _send(client_as("contractor"), body)
    assert r.status_code == 403 and r.get_json()["error"]
    assert _count(db, body["uuid"]) == 0


def test_a_person_taken_off_the_site_is_refused(client_as, db, site, bearing, people):
    client = client_as("inspector")
    token = csrf_token(client)
    store.remove_membership(
        db, user_id=people["inspector"].id, site_id=site["id"], by_user_id=people["engineer"].id
    )
    body = _record(site, bearing)
    r = _send(client, body, token)
    # A non-member gets 404 (the site's existence is not revealed); the phone treats it like
    # 403: moved to the refused list with this sentence, never retried, never deleted.
    assert r.status_code == 404
    answer = r.get_json()
    assert answer["code"] == "not-on-site" and answer["field"] == "site_id"
    assert "taken off" in answer["error"]
    assert _count(db, body["uuid"]) == 0
    # A site that never existed gets the very same answer.
    other = _send(client, _record(site, bearing, site_id=str(uuid.uuid4())), token)
    assert (other.status_code, other.get_json()) == (404, answer)


def test_a_send_without_the_csrf_header_is_400(client_as, db, site, bearing):
    body = _record(site, bearing)
    r = client_as("inspector").post("/api/records", json=body)
    assert r.status_code == 400 and r.get_json()["reason"] == "csrf"
    assert _count(db, body["uuid"]) == 0


# --- photos -----------------------------------------------------------------------------------


def _photo(client, record_uuid, photo_uuid, data, **fields):
    return client.post(
        f"/api/records/{record_uuid}/photos",
        data={"photo_uuid": photo_uuid, "photo": (io.BytesIO(data), "p.jpg"), **fields},
        headers={"X-CSRFToken": csrf_token(client)},
        content_type="multipart/form-data",
    )


def test_a_photo_is_stored_once_by_its_uuid(client_as, db, site, bearing):
    client = client_as("inspector")
    body = _record(site, bearing)
    assert _send(client, body).status_code == 201
    photo_uuid = str(uuid.uuid4())
    data = make_test_jpeg(800, 600)
    first = _photo(client, body["uuid"], photo_uuid, data, captured_at="2026-05-04T09:15:00Z")
    assert first.status_code == 201, first.get_json()
    assert first.get_json() == {"uuid": photo_uuid, "created": True, "record_uuid": body["uuid"]}
    again = _photo(client, body["uuid"], photo_uuid, data, captured_at="2026-05-04T09:15:00Z")
    assert again.status_code == 200 and again.get_json()["created"] is False
    rows = store.photos_for_record(db, site_id=site["id"], record_uuid=body["uuid"])
    assert [p["uuid"] for p in rows] == [photo_uuid]
    assert rows[0]["captured_at"].startswith("2026-05-04T09:15:00")


def _camera_jpeg(taken: str, offset: str | None) -> bytes:
    """A small JPEG as a camera writes it: EXIF DateTimeOriginal, with or without the
    camera's UTC offset (OffsetTimeOriginal)."""
    from PIL import Image

    exif = Image.Exif()
    exif_ifd = exif.get_ifd(EXIF_IFD)
    exif_ifd[DATETIME_ORIGINAL] = taken
    if offset:
        exif_ifd[OFFSET_TIME_ORIGINAL] = offset
    out = io.BytesIO()
    Image.new("RGB", (64, 48), (120, 110, 100)).save(out, "JPEG", exif=exif)
    return out.getvalue()


@pytest.mark.parametrize(
    ("offset", "stored"),
    [
        # The file's own time has no zone: the phone's time (read from the EXIF before the
        # phone re-encoded, or the file's time) is kept rather than nothing.
        (None, "2026-05-04T09:15:00"),
        # The file says its zone: the camera's own moment wins over the phone's.
        ("+02:00", "2026-05-04T06:10:00"),  # kept in UTC
    ],
)
def test_a_photos_capture_time_comes_from_the_camera_or_else_the_phone(
    client_as, db, site, bearing, offset, stored
):
    client = client_as("inspector")
    body = _record(site, bearing)
    assert _send(client, body).status_code == 201
    photo_uuid = str(uuid.uuid4())
    data = _camera_jpeg("2026:05:04 08:10:00", offset)
    r = _photo(client, body["uuid"], photo_uuid, data, captured_at="2026-05-04T09:15:00Z")
    assert r.status_code == 201, r.get_json()
    (row,) = store.photos_for_record(db, site_id=site["id"], record_uuid=body["uuid"])
    assert row["captured_at"].startswith(stored)


def test_a_file_that_is_not_a_photo_is_422(client_as, site, bearing):
    client = client_as("inspector")
    body = _record(site, bearing)
    _send(client, body)
    r = _photo(client, body["uuid"], str(uuid.uuid4()), b"<html>not a photo</html>")
    assert r.status_code == 422
    assert r.get_json()["code"] in ("not-an-image", "format-not-allowed", "damaged")


def test_a_photo_for_a_record_never_sent_is_404(client_as):
    client = client_as("inspector")
    r = _photo(client, str(uuid.uuid4()), str(uuid.uuid4()), make_test_jpeg(40, 30))
    assert r.status_code == 404 and r.is_json


def test_only_the_records_own_inspector_adds_its_photos(client_as, site, bearing):
    inspector = client_as("inspector")
    body = _record(site, bearing)
    _send(inspector, body)
    r = _photo(client_as("engineer"), body["uuid"], str(uuid.uuid4()), make_test_jpeg(40, 30))
    assert r.status_code == 403


# --- the offline shell ------------------------------------------------------------------------


def _shell_urls() -> list[str]:
    block = re.search(r"const SHELL = \[(.*?)\];", SW.read_text(encoding="utf-8"), re.S).group(1)
    return re.findall(r'"([^"]+)"', block)


def test_the_service_worker_is_served_from_the_root(app):
    r = app.test_client().get("/sw.js")
    assert r.status_code == 200
    assert r.mimetype == "text/javascript"
    assert r.headers["Cache-Control"] == "no-cache"
    text = r.get_data(as_text=True)
    assert "const SHELL" in text
    # The words module the server writes is part of the shell, and of its version.
    assert f'const VERSION = "{shell_digest(sync._words_module())}";' in text
    assert '"/phone-words.js"' in text
    words = app.test_client().get("/phone-words.js")
    assert words.mimetype == "text/javascript" and "export const PHONE_WORDS" in words.get_data(
        as_text=True
    )
    words.close()
    again = app.test_client().get("/sw.js", headers={"If-None-Match": r.headers["ETag"]})
    assert again.status_code == 304
    r.close()


def test_any_change_to_the_shell_gives_the_worker_a_new_version(tmp_path, monkeypatch):
    import shutil

    from sitecheck.web import assets

    static, templates = tmp_path / "static", tmp_path / "templates"
    shutil.copytree(assets.STATIC_DIR, static)
    shutil.copytree(assets.TEMPLATE_DIR, templates)
    monkeypatch.setattr(assets, "STATIC_DIR", static)
    monkeypatch.setattr(assets, "TEMPLATE_DIR", templates)
    first = assets.shell_digest()
    assert assets.shell_digest() == first  # the same files, the same version
    checks = static / "js" / "bearing" / "checks.js"
    checks.write_text(checks.read_text() + "\n// a change to the mirror\n")
    second = assets.shell_digest()
    assert second != first
    (templates / "offline" / "shell.html").write_text("changed")
    assert assets.shell_digest() not in (first, second)


@pytest.mark.parametrize("role", ["inspector", None])
def test_every_url_of_the_shell_is_served(app, client_as, role):
    """cache.addAll is all or nothing: one missing file and the phone has no offline use."""
    client = client_as(role) if role else app.test_client()
    urls = _shell_urls()
    assert "/offline" in urls and "/refused" in urls and "/static/js/outbox.js" in urls
    for url in urls:
        r = client.get(url)
        assert r.status_code == 200, url
        r.close()


def test_every_js_module_is_in_the_shell():
    """A module missing from the precache fails its import with no signal, and with it the
    page's script: every module, in every folder under static/js, is kept."""
    static = SW.parent
    modules = {"/" + p.relative_to(static.parent).as_posix() for p in (static / "js").rglob("*.js")}
    assert "/static/js/bearing/checks.js" in modules
    assert modules <= set(_shell_urls())


def test_the_refused_page_is_the_same_for_anyone(app, client_as):
    """Kept by the service worker at install, so it holds no one's data: the phone fills it
    from IndexedDB."""
    for client in (app.test_client(), client_as("inspector")):
        page = client.get("/refused")
        assert page.status_code == 200
        assert "data-refused-all" in page.get_data(as_text=True)


def test_every_page_links_the_refused_list_from_its_header(client_as, site):
    client = client_as("inspector")
    for url in ("/", f"/sites/{site['id']}/inspect", f"/sites/{site['id']}/offline", "/offline"):
        page = client.get(url).get_data(as_text=True)
        header = page.split("<header", 1)[1].split("</header>", 1)[0]
        assert 'href="/refused" data-refused' in header, url


def test_the_offline_page_shows_states_with_the_online_pages_badges(client_as, site):
    page = client_as("inspector").get(f"/sites/{site['id']}/offline").get_data(as_text=True)
    raw = re.search(r"data-state-badges='([^']*)'", page).group(1)
    badges = json.loads(html.unescape(raw))
    assert badges == {
        state: {"symbol": b.symbol, "label": b.label, "css_class": b.css_class}
        for state, b in workflow.STATE_BADGES.items()
    }
    assert all(b["symbol"] and b["label"] for b in badges.values())


def test_the_offline_form_sends_the_online_forms_field_names(client_as, site):
    page = client_as("inspector").get(f"/sites/{site['id']}/offline").get_data(as_text=True)
    for name in (*MEASUREMENT_FIELDS, *CHECKLIST_FIELDS, "notes", "photos", "measured_at"):
        assert f'name="{name}"' in page, name
    assert client_as("contractor").get(f"/sites/{site['id']}/offline").status_code == 403


def test_the_phones_field_lists_are_the_servers():
    """The phone's one list (bearing/serial.js, read by the form and the re-check) is the
    core's dataclass fields; a field added on the server must be added there too."""
    source = (
        Path(__file__).resolve().parent.parent / "static" / "js" / "bearing" / "serial.js"
    ).read_text()

    def listed(const: str) -> tuple[str, ...]:
        body = re.search(rf"export const {const} = \[(.*?)\];", source, flags=re.S).group(1)
        return tuple(re.findall(r'"([a-z_0-9]+)"', body))

    assert listed("MEASUREMENT_FIELDS") == MEASUREMENT_FIELDS
    assert listed("CHECKLIST_FIELDS") == CHECKLIST_FIELDS
