"""Small helpers for the Flask test-client tests (fixtures are in conftest.py)."""

from __future__ import annotations


def csrf_token(client) -> str:
    """A fresh token for the client's session, as the phone gets one before sending."""
    return client.get("/api/csrf").get_json()["token"]
