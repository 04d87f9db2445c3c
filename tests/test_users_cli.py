"""``sitecheck users``: the accounts, and disabling one, which ends its sessions at once on a
running server, whichever worker process answers next."""

from __future__ import annotations

import subprocess

import pytest

from kit.client import Client
from kit.data_folder import prepare_home
from kit.servers import SITECHECK, Served
from kit.web import PASSWORD
from sitecheck import cli, store

pytestmark = pytest.mark.timeout(120)


@pytest.fixture
def home(tmp_path):
    home = tmp_path / "data"
    prepare_home(home, inspectors=2)
    return home


def _users(home, *args) -> subprocess.CompletedProcess:
    return subprocess.run(
        [SITECHECK, "users", *args, "--home", str(home)], capture_output=True, text=True
    )


def test_list_shows_every_account_with_its_state(home):
    done = _users(home, "list")
    assert done.returncode == 0, done.stderr
    rows = done.stdout.splitlines()[2:-1]
    assert [r.split()[0] for r in rows] == [
        "engineer@example.test",
        "inspector0@example.test",
        "inspector1@example.test",
    ]
    assert all(" active " in r and "never" in r for r in rows)
    assert done.stdout.splitlines()[-1] == f"3 accounts in {home / 'sitecheck.db'}"


def test_disabling_ends_the_sessions_at_once_on_every_worker(home):
    server = Served(home, workers=2)
    try:
        ann, bob = Client(server.url), Client(server.url)
        assert ann.log_in("inspector0@example.test", PASSWORD).status == 302
        assert bob.log_in("inspector1@example.test", PASSWORD).status == 302
        assert ann.get("/").status == 200

        done = _users(home, "disable", "Inspector0@Example.test")
        assert done.returncode == 0, done.stderr
        assert (
            done.stdout.strip()
            == "inspector0@example.test is disabled: 1 sessions ended, log-in refused"
        )
        for _ in range(10):  # whichever worker answers
            assert ann.get("/").status == 302
            assert ann.get("/api/sites/x/pack").status == 401
            assert bob.get("/").status == 200  # nobody else is touched
        assert ann.try_log_in("inspector0@example.test", PASSWORD).status == 401
        listed = _users(home, "list").stdout
        assert "inspector0@example.test" in listed and " disabled " in listed

        assert _users(home, "enable", "inspector0@example.test").returncode == 0
        assert ann.log_in("inspector0@example.test", PASSWORD).status == 302
        assert ann.get("/").status == 200
    finally:
        server.stop()
    db = store.open_db(home / "sitecheck.db")
    try:
        events = [
            e["kind"] for e in db.query("SELECT kind FROM events WHERE kind LIKE 'user %abled'")
        ]
    finally:
        db.conn.close()
    assert events == ["user disabled", "user enabled"]


def test_an_unknown_address_or_folder_is_refused_in_a_sentence(home, tmp_path, capsys):
    assert cli.main(["users", "disable", "nobody@example.test", "--home", str(home)]) == 2
    assert "no account for 'nobody@example.test'; 'sitecheck users list' shows them" in (
        capsys.readouterr().err
    )
    empty = tmp_path / "no-data-here"
    assert cli.main(["users", "list", "--home", str(empty)]) == 2
    assert f"no database at {empty / 'sitecheck.db'}" in capsys.readouterr().err
    assert not empty.exists()  # no empty database made where it was pointed by mistake


def test_disabling_twice_changes_nothing_the_second_time(home, capsys):
    assert cli.main(["users", "disable", "inspector1@example.test", "--home", str(home)]) == 0
    capsys.readouterr()
    assert cli.main(["users", "disable", "inspector1@example.test", "--home", str(home)]) == 0
    assert "already disabled; nothing changed" in capsys.readouterr().out
