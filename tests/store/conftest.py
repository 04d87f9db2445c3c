"""Fixtures of the store's tests: a real SQLite file opened by the store alone (no app, no
background threads writing beside the test), and a site on it (kit/store_rows.py)."""

import pytest

from kit.store_rows import make_world, release_after_a_decision
from sitecheck import store


@pytest.fixture
def db(tmp_path):
    """The store's own connection to tmp_path/site.db; this folder's tests need no app."""
    db = store.open_db(tmp_path / "site.db")
    yield db
    db.close()


@pytest.fixture
def world(db):
    """Mill Lane: a member per role and bearing B1, awaiting survey."""
    return make_world(db)


@pytest.fixture
def released(world):
    """B1 measured, needing a decision, accepted, released."""
    return release_after_a_decision(world)
