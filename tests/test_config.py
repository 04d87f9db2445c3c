"""One data folder and every setting: from the command line, the environment, the folder's
sitecheck.toml or the default, in that order; never relative to the current directory."""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest
from flask import Flask

from kit.servers import SITECHECK
from sitecheck import cli
from sitecheck.config import SETTINGS, ConfigError, default_home, load_settings
from sitecheck.web import create_app

README = Path(__file__).resolve().parent.parent / "README.md"


def test_the_default_data_folder_is_the_instance_folder_not_the_current_one(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    settings = load_settings(environ={})
    assert settings.home == Path(Flask("sitecheck").instance_path).resolve() == default_home()
    assert settings.sources["home"] == "default"
    assert not settings.home.is_relative_to(tmp_path)
    assert settings.database == settings.home / "sitecheck.db"


def test_each_setting_comes_from_the_first_place_that_gives_it(tmp_path):
    (tmp_path / "sitecheck.toml").write_text(
        'port = 9000\nthreads = 2\nphotos = "pictures"\nlog_json = true\n', encoding="utf-8"
    )
    env = {"SITECHECK_PORT": "9100", "SITECHECK_WORKERS": "3"}
    s = load_settings(home=tmp_path, environ=env, overrides={"port": 9200})
    assert (s.port, s.sources["port"]) == (9200, "command line")
    assert (s.workers, s.sources["workers"]) == (3, "SITECHECK_WORKERS")
    assert (s.threads, s.sources["threads"]) == (2, "sitecheck.toml")
    assert (s.log_json, s.sources["log_json"]) == (True, "sitecheck.toml")
    assert (s.host, s.sources["host"]) == ("127.0.0.1", "default")
    # A relative path is inside the data folder, whatever folder the command ran in.
    assert s.photos == tmp_path.resolve() / "pictures"
    assert s.records == tmp_path.resolve() / "records"


def test_the_home_comes_from_the_environment_when_not_given(tmp_path):
    s = load_settings(environ={"SITECHECK_HOME": str(tmp_path), "SITECHECK_DB": "main.db"})
    assert s.home == tmp_path.resolve() and s.sources["home"] == "SITECHECK_HOME"
    assert s.database == tmp_path.resolve() / "main.db"


@pytest.mark.parametrize(
    ("toml", "env", "message"),
    [
        ("prot = 9000\n", {}, r"unknown setting 'prot'; did you mean 'port'\?"),
        ('port = "http"\n', {}, r"port in .*sitecheck.toml is 'http'; expected a whole number"),
        ("port = [\n", {}, r"is not valid TOML"),
        (
            "",
            {"SITECHECK_PORT": "80000"},
            r"SITECHECK_PORT is '80000'; expected a whole number from 1 to 65535",
        ),
        (
            "",
            {"SITECHECK_LOG_JSON": "perhaps"},
            r"SITECHECK_LOG_JSON is 'perhaps'; expected 1 or 0",
        ),
        ("workers = true\n", {}, r"workers in .* is True; expected a whole number"),
    ],
)
def test_a_setting_that_cannot_be_used_is_named_with_its_source(tmp_path, toml, env, message):
    (tmp_path / "sitecheck.toml").write_text(toml, encoding="utf-8")
    with pytest.raises(ConfigError, match=message):
        load_settings(home=tmp_path, environ=env)


def test_a_command_refuses_bad_settings_in_a_sentence(tmp_path, capsys):
    (tmp_path / "sitecheck.toml").write_text("thread = 4\n", encoding="utf-8")
    assert cli.main(["settings", "--home", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert "unknown setting 'thread'; did you mean 'threads'?" in err
    assert "Traceback" not in err


def test_the_settings_command_shows_every_value_and_where_it_came_from(tmp_path):
    (tmp_path / "sitecheck.toml").write_text('secret_key = "do not print me"\n', encoding="utf-8")
    done = subprocess.run(
        [SITECHECK, "settings", "--home", str(tmp_path)],
        capture_output=True,
        text=True,
        env={"SITECHECK_THREADS": "6", "PATH": "/usr/bin:/bin"},
        check=True,
    )
    lines = {line.split()[0]: line for line in done.stdout.splitlines()[1:]}
    assert set(lines) == {"home"} | {s.name for s in SETTINGS}
    assert re.search(r"^threads\s+6\s+SITECHECK_THREADS$", lines["threads"])
    assert "(set, hidden)" in lines["secret_key"] and "do not print" not in done.stdout
    assert lines["database"].split()[1] == str(tmp_path.resolve() / "sitecheck.db")


def test_the_app_keeps_its_files_in_the_data_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    home = tmp_path / "deployment"
    app = create_app(settings=load_settings(home=home, environ={}))
    assert app.config["DB_PATH"] == str(home / "sitecheck.db")
    assert Path(app.config["PHOTO_DIR"]) == home / "photos"
    assert Path(app.config["RECORD_DIR"]) == home / "records"
    assert (home / "secret_key").stat().st_mode & 0o777 == 0o600
    assert sorted(p.name for p in tmp_path.iterdir()) == ["deployment"]


def test_every_setting_is_in_the_readme_with_its_default():
    text = README.read_text(encoding="utf-8")
    for s in SETTINGS:
        default = "" if s.default is None else str(s.default).lower()
        row = re.search(rf"^\| `{s.name}` \| `{s.env}` \| ([^|]*) \|", text, re.M)
        assert row, f"README lacks the row of setting {s.name} ({s.env})"
        assert default in row.group(1).lower(), f"README's default of {s.name} is not {default!r}"
    assert "`SITECHECK_HOME`" in text


def test_every_command_is_documented():
    shown = subprocess.run([SITECHECK, "--help"], capture_output=True, text=True, check=True)
    commands = re.search(r"\{([a-z,-]+)\}", shown.stdout).group(1).split(",")
    assert "backup" in commands and "maintain" in commands
    docs = README.read_text(encoding="utf-8") + (README.parent / "DEVELOPERS.md").read_text(
        encoding="utf-8"
    )
    missing = [name for name in commands if f"sitecheck {name}" not in docs]
    assert missing == [], f"commands not in README.md or DEVELOPERS.md: {missing}"
