"""Every page's .json twin, walked as each role: it answers with what its declared shape picks
for that role, never the template's whole context. No e-mail addresses (except the members
page for whoever may invite), no password hashes, tokens, paths or internal fields.

Real app, real SQLite file, the same values as the access walk (``route_values``: a record
with a photo).
"""

from __future__ import annotations

import re

import pytest

from kit.web import ROLES
from sitecheck import store
from sitecheck.web.pages import render_page
from sitecheck.web.shapes import SHAPES

EMAIL = re.compile(r"[^\s@\"'<>]+@[^\s@\"'<>]+\.[A-Za-z]{2,}")
# Keys that name people by their account id, or hold secrets or the app's own workings.
INTERNAL = {
    "password",
    "password_hash",
    "token",
    "token_hash",
    "csrf_token",
    "session_id",
    "must_change_password",
    "may_make_sites",
    "created_by",
    "started_by",
    "started_ns",
    "user_id",
    "inspector_id",
    "engineer_id",
    "contractor_id",
    "answered_by",
    "mail_id",
    "remote_addr",
}


def json_pages(app) -> list:
    """The pages' twins (page_rule); downloads such as export.json are files, not pages."""
    return [
        rule
        for rule in app.url_map.iter_rules()
        if rule.rule.endswith(".json")
        and "GET" in rule.methods
        # A twin is the page's own view at a second address.
        and app.view_functions.get(rule.endpoint.removesuffix("_json"))
        is app.view_functions[rule.endpoint]
    ]


def walk(value, path=""):
    """(path, key or None, leaf value) for every leaf of a JSON answer."""
    if isinstance(value, dict):
        for key, item in value.items():
            yield path + "." + key, key, None
            yield from walk(item, path + "." + key)
    elif isinstance(value, list):
        for n, item in enumerate(value):
            yield from walk(item, f"{path}[{n}]")
    else:
        yield path, None, value


@pytest.fixture
def invited(db, site, people):
    """An invitation waiting for an answer, so the members page has one to show."""
    return store.create_invitation(
        db,
        site_id=site["id"],
        email="waiting.person@example.test",
        role="inspector",
        invited_by=people["engineer"].id,
        valid_s=3600,
    )


@pytest.mark.parametrize("role", ROLES)
def test_no_json_answer_carries_addresses_secrets_or_internal_fields(
    app,
    client_as,
    route_values,
    invited,
    people,
    tmp_path,
    role,
):
    client = client_as(role)
    secrets = {client.get_cookie("sitecheck").value, client.get("/api/csrf").get_json()["token"]}
    found, answered = [], 0
    for rule in json_pages(app):
        url = rule.build(route_values, append_unknown=False)[1]
        r = client.get(url)
        if r.status_code != 200:
            assert r.status_code in (403, 404), f"{url} as {role}: {r.status_code}"
            continue
        answered += 1
        body = r.get_json()
        may_see_addresses = role == "engineer" and rule.endpoint == "sites.members_json"
        for path, key, leaf in walk(body):
            if key is not None and key in INTERNAL:
                found.append(f"{url}: {path} is internal")
            if not isinstance(leaf, str):
                continue
            if EMAIL.search(leaf) and not may_see_addresses:
                found.append(f"{url}: {path} holds an e-mail address ({leaf[:60]})")
            if "scrypt:" in leaf or any(s and s in leaf for s in secrets):
                found.append(f"{url}: {path} holds a secret")
            if str(tmp_path) in leaf:
                found.append(f"{url}: {path} holds a path on the server")
    assert answered >= (1 if role == "outsider" else 5), answered
    assert not found, "\n".join(found)


def test_the_members_twin_gives_addresses_only_to_whoever_may_invite(
    client_as, site, invited, people
):
    url = f"/sites/{site['id']}/members.json"
    viewer = client_as("viewer").get(url).get_json()
    assert {m["name"] for m in viewer["members"]} >= {people["engineer"].name}
    assert all(set(m) == {"name", "role", "you", "disabled"} for m in viewer["members"])
    assert "invitations" not in viewer
    engineer = client_as("engineer").get(url).get_json()
    assert {m["email"] for m in engineer["members"]} == {
        people[r].email for r in ("engineer", "inspector", "contractor", "viewer")
    }
    (waiting,) = engineer["invitations"]
    assert waiting["email"] == "waiting.person@example.test" and waiting["role"] == "inspector"


def test_every_page_with_a_json_twin_declares_its_shape(app):
    """A page added later without a shape would answer JSON with its whole context; the
    renderer refuses instead, and this lists any template that has none."""
    import ast
    from pathlib import Path

    package = Path(__file__).resolve().parents[1] / "sitecheck" / "web"
    rendered = set()
    for path in package.glob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if (
                isinstance(node, ast.Call)
                and getattr(node.func, "id", None) == "render_page"
                and node.args
                and isinstance(node.args[0], ast.Constant)
            ):
                rendered.add(node.args[0].value)
    # The as-built form is rendered by render_page but has no .json address.
    assert rendered - {"inspect/record_form.html"} <= set(SHAPES), rendered - set(SHAPES)
    with app.test_request_context("/anything.json"), pytest.raises(LookupError, match="shape"):
        render_page("sites/no-such-page.html", secret="x")
