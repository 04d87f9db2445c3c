"""Small helpers for the Flask test-client tests (fixtures are in conftest.py)."""

from __future__ import annotations

PASSWORD = "correct horse battery"  # the test accounts' password (tests only)

# The people fixture's roles (tests/conftest.py), the one on no site last.
ROLES = ("engineer", "inspector", "contractor", "viewer", "outsider")


def csrf_token(client) -> str:
    """A fresh token for the client's session, as the phone gets one before sending."""
    return client.get("/api/csrf").get_json()["token"]


def post(client, url, data=None, **kw):
    """A form posted as the page would post it, with a fresh CSRF token."""
    return client.post(url, data={**(data or {}), "csrf_token": csrf_token(client)}, **kw)


def new_site(db, *, name: str, created_by: int, address: str = "") -> dict:
    """An empty site on the default code basis and review settings, made the way the app
    makes one (its creator becomes its engineer)."""
    from sitecheck import services, store

    basis, review = services.default_site_settings()
    return store.create_site(
        db,
        name=name,
        address=address,
        code_basis=basis,
        review_settings=review,
        created_by=created_by,
    )
