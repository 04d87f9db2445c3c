"""Every route, for every role and for a non-member, with the answer each must get.

The table below is the access rule written out once more, independently of
``sitecheck.workflow.PERMISSIONS``; a new route fails ``test_every_route_is_in_the_table``
until it is classified here.
"""

from __future__ import annotations

import hashlib

import pytest

from kit.web import ROLES
from sitecheck import store

# Endpoint → action needed on the site, or "public" / "login" for routes not on a site.
# A (GET, POST) route may need a different action for each method: endpoint@METHOD.
ROUTES = {
    "pages.home": "login",
    "pages.home_json": "login",
    "pages.api_csrf": "public",
    "pages.manifest": "public",
    "health.healthz": "public",
    "auth.login": "public",
    "auth.logout": "public",
    "auth.change_password": "login",
    "auth.join": "public",
    "sites.answer_invitation": "invitee",
    "review.queue": "login",
    "notices.settings": "login",
    "review.queue_json": "login",
    "sites.new": "make-sites",
    "sites.site_makers": "make-sites",
    "sites.set_site_maker": "make-sites",
    "people.people": "make-sites",
    "people.act": "make-sites",
    "people.new_password": "public",
    "sites.show": "view",
    "sites.show_json": "view",
    "sites.bearing": "view",
    "sites.bearing_json": "view",
    "sites.add_bearing": "edit-schedule",
    "sites.revise_bearing": "edit-schedule",
    "sites.import_schedule": "edit-schedule",
    "sites.import_template": "edit-schedule",
    "sites.settings": "edit-site",
    "sites.settings_json": "edit-site",
    "sites.save_settings": "edit-site",
    "sites.members": "view",
    "sites.members_json": "view",
    "sites.invite": "invite",
    "sites.change_role": "invite",
    "sites.remove_member": "invite",
    "sites.withdraw_invitation": "invite",
    "inspect.bearings": "record",
    "inspect.bearings_json": "record",
    "inspect.record_form": "record",
    "inspect.result": "view",
    "inspect.result_json": "view",
    "inspect.photo": "view",
    "review.bearing": "view",
    "review.bearing_json": "view",
    "review.decide": "decide",
    "release.site@GET": "view",
    "release.site@POST": "release",
    "release.site_json@GET": "view",
    "release.site_json@POST": "release",
    "release.reopen": "reopen",
    "release.keep_release": "reopen",
    "release.history": "view",
    "release.history_json": "view",
    "record.site": "export",
    "record.site_json": "export",
    "record.pdf_file": "export",
    "record.export_zip": "export",
    "record.export_json": "export",
    "record.make_file": "export",
    "record.progress": "export",
    "record.progress_json": "export",
    "record.made_file": "export",
    "record.sign_off": "sign-off",
    "static": "public",
    "sync.service_worker": "public",
    "sync.offline": "public",
    "sync.refused": "public",
    "sync.words_module": "public",  # the form's labels and the trace's glossary, no data
    "sync.site_offline": "record",
    "sync.pack": "record",
    "sync.post_record": "login",  # the site is in the body: an empty body is refused first
    "sync.post_photo": "record",
}

# Who may do what, written out by hand (DESIGN: engineers set up and decide, inspectors
# record, contractors release, viewers read).
MAY = {
    "engineer": {
        "view",
        "export",
        "record",
        "edit-site",
        "edit-schedule",
        "decide",
        "reopen",
        "invite",
        "sign-off",
    },
    "inspector": {"view", "export", "record"},
    "contractor": {"view", "export", "release"},
    "viewer": {"view", "export"},
    "outsider": set(),
}


def _requests(app):
    """(key, endpoint, method, url path template) for every route."""
    out = []
    for rule in app.url_map.iter_rules():
        for method in sorted(rule.methods - {"HEAD", "OPTIONS"}):
            key = rule.endpoint if rule.endpoint in ROUTES else f"{rule.endpoint}@{method}"
            out.append((key, rule, method))
    return out


def test_every_route_is_in_the_table(app):
    for key, rule, _method in _requests(app):
        assert key in ROUTES, (
            f"{rule.rule} ({key}) is not classified in tests/test_access.py ROUTES"
        )


def _expected(rule_need: str, role: str, json: bool) -> set[int]:
    if rule_need == "public":
        return {200, 302, 400, 404, 405, 410}  # public routes answer as they would anyone
    if role == "anonymous":
        return {401} if json else {302}
    if rule_need == "login":
        return {200, 302, 400}  # an empty form is answered with its errors
    if rule_need == "invitee":
        # Only the invited address answers; anyone else hears of no such invitation.
        return {302, 400} if role == "outsider" else {404}
    if rule_need == "make-sites":
        # A permission of the account: the fixture's engineer has it, nobody else.
        return {200, 302, 400} if role == "engineer" else {403}
    if role == "outsider":
        return {404}
    if rule_need in MAY[role]:
        return {200, 201, 302, 400, 409}  # let in: a form error or a state refusal at most
    return {403}


@pytest.mark.parametrize("role", [*ROLES, "anonymous"])
def test_access_matrix(app, client_as, route_values, role):
    client = app.test_client() if role == "anonymous" else client_as(role)
    token = client.get("/api/csrf").get_json()["token"]
    failures = []
    # Removing a member and logging out last, so the other answers are about the site and
    # the session as they were.
    requests = sorted(
        _requests(app), key=lambda r: (r[0] == "auth.logout", r[0] == "sites.remove_member")
    )
    for key, rule, method in requests:
        need = ROUTES[key]
        url = rule.build(route_values, append_unknown=False)[1]
        r = client.get(url) if method == "GET" else client.post(url, data={"csrf_token": token})
        r.close()
        expected = _expected(need, role, url.endswith(".json") or url.startswith("/api/"))
        if r.status_code not in expected:
            failures.append(
                f"{method} {url} as {role}: {r.status_code}, expected one of {sorted(expected)}"
            )
    assert not failures, "\n".join(failures)


def _table_fingerprint(db) -> str:
    """Everything but the tables that record the asking itself (events of refusals,
    session touches, log-in attempts, when each person last looked at a site)."""
    digest = hashlib.sha256()
    for (name,) in db.execute(
        "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT IN ('events', 'sessions', 'login_attempts', 'site_visits') ORDER BY name"
    ):
        for row in db.execute(f"SELECT * FROM [{name}] ORDER BY 1"):
            digest.update(repr(row).encode())
    return digest.hexdigest()


@pytest.mark.parametrize("role", ["engineer", "contractor"])
def test_no_post_changes_anything_without_a_csrf_token(app, db, client_as, route_values, role):
    client = client_as(role)
    before = _table_fingerprint(db)
    for key, rule, method in _requests(app):
        if method != "POST" or key in ("auth.login",):
            continue
        r = client.post(rule.build(route_values, append_unknown=False)[1], data={})
        r.close()
        assert r.status_code == 400, f"POST {rule.rule} without a token: {r.status_code}"
    assert _table_fingerprint(db) == before


def test_no_get_changes_anything(app, db, client_as, route_values):
    before = _table_fingerprint(db)
    for role in ROLES:
        client = client_as(role)
        for _key, rule, method in _requests(app):
            if method == "GET":
                client.get(rule.build(route_values, append_unknown=False)[1]).close()
    assert _table_fingerprint(db) == before


def test_a_refused_action_is_written_to_the_audit_trail(app, db, client_as, route_values, people):
    client = client_as("inspector")
    assert client.get(f"/sites/{route_values['site_id']}/settings").status_code == 403
    refused = [
        e for e in store.events_for(db, site_id=route_values["site_id"]) if e["kind"] == "refused"
    ]
    assert refused and refused[0]["user_id"] == people["inspector"].id


def test_a_logged_out_cookie_stops_working_at_once(app, client_as, route_values):
    client = client_as("engineer")
    assert client.get(f"/sites/{route_values['site_id']}").status_code == 200
    cookie = client.get_cookie("sitecheck")
    token = client.get("/api/csrf").get_json()["token"]
    client.post("/logout", data={"csrf_token": token})
    replay = app.test_client()
    replay.set_cookie("sitecheck", cookie.value)
    assert replay.get(f"/sites/{route_values['site_id']}").status_code == 302  # back to log-in


def test_a_disabled_user_is_out_at_once(app, db, client_as, route_values, people):
    client = client_as("inspector")
    assert client.get(f"/sites/{route_values['site_id']}").status_code == 200
    store.set_disabled(
        db, user_id=people["inspector"].id, disabled=True, by_user_id=people["engineer"].id
    )
    assert client.get(f"/sites/{route_values['site_id']}").status_code == 302


def test_log_in_is_throttled_after_repeated_failures(app, people):
    client = app.test_client()
    statuses = []
    for _ in range(7):
        token = client.get("/api/csrf").get_json()["token"]
        statuses.append(
            client.post(
                "/login",
                data={
                    "email": people["viewer"].email,
                    "password": "wrong password here",
                    "csrf_token": token,
                },
            ).status_code
        )
    assert statuses[:5] == [401] * 5
    assert statuses[-1] == 429
