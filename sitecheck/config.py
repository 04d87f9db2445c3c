"""Where sitecheck keeps its data, and every setting it reads.

Everything a deployment owns lives in one **data folder**: the database, the photos, the
site records made in the background and the cookie key. The folder is ``--home`` on the
command line, else ``$SITECHECK_HOME``, else the Flask instance folder of the installed
package (``instance/`` beside a checkout). Nothing depends on the directory a command is
started from.

Each setting below is taken from the first of: the command line (where it has an option),
the environment (``SITECHECK_<NAME>``), the file ``sitecheck.toml`` in the data folder, the
default. A relative path is relative to the data folder. ``sitecheck settings`` prints every
value with where it came from; the README lists them all (a test keeps the two equal).
"""

from __future__ import annotations

import difflib
import os
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

__all__ = [
    "CONFIG_FILE",
    "SETTINGS",
    "ConfigError",
    "Setting",
    "Settings",
    "default_home",
    "load_settings",
]

CONFIG_FILE = "sitecheck.toml"
HOME_ENV = "SITECHECK_HOME"


class ConfigError(ValueError):
    """A setting that cannot be used: the message names it, where it came from and what
    was expected."""


def _text(value: Any, where: str) -> str:
    if isinstance(value, str):
        return value
    raise ConfigError(f"{where} is {value!r}; expected text in quotes")


def _optional_text(value: Any, where: str) -> str | None:
    text = _text(value, where).strip()
    return text or None


def _whole(low: int, high: int, expected: str | None = None) -> Callable[[Any, str], int]:
    expected = expected or f"a whole number from {low} to {high}"

    def parse(value: Any, where: str) -> int:
        number = value
        if isinstance(value, str):
            try:
                number = int(value.strip())
            except ValueError:
                number = None
        if isinstance(number, bool) or not isinstance(number, int) or not low <= number <= high:
            raise ConfigError(f"{where} is {value!r}; expected {expected}")
        return number

    return parse


_TRUE = {"1", "true", "yes", "on"}
_FALSE = {"0", "false", "no", "off", ""}


def _flag(value: Any, where: str) -> bool:
    if isinstance(value, bool):
        return value
    if isinstance(value, str) and value.strip().lower() in _TRUE | _FALSE:
        return value.strip().lower() in _TRUE
    raise ConfigError(f"{where} is {value!r}; expected 1 or 0 (true or false in {CONFIG_FILE})")


def _path(value: Any, where: str) -> str:
    text = _text(value, where).strip()
    if not text:
        raise ConfigError(f"{where} is empty; expected a file or folder name")
    return text


@dataclass(frozen=True)
class Setting:
    """One setting: its name in ``sitecheck.toml``, its environment variable, its default
    and what it means (the README's table is made from the same words)."""

    name: str
    default: Any
    parse: Callable[[Any, str], Any]
    meaning: str
    secret: bool = False
    is_path: bool = False
    env_name: str | None = None

    @property
    def env(self) -> str:
        return self.env_name or "SITECHECK_" + self.name.upper()


SETTINGS: tuple[Setting, ...] = (
    Setting(
        "database",
        "sitecheck.db",
        _path,
        "the SQLite database file",
        is_path=True,
        env_name="SITECHECK_DB",
    ),
    Setting("photos", "photos", _path, "the photo store (files named by their hash)", is_path=True),
    Setting("records", "records", _path, "site records (PDF) made in the background", is_path=True),
    Setting(
        "secret_key_file",
        "secret_key",
        _path,
        "the cookie key, made on first start if missing",
        is_path=True,
    ),
    Setting(
        "secret_key",
        None,
        _optional_text,
        "the cookie key itself, instead of the file (every worker must have the same)",
        secret=True,
    ),
    Setting(
        "secure_cookies",
        False,
        _flag,
        "send the log-in cookie over HTTPS only, with HSTS (set it behind an HTTPS proxy)",
    ),
    Setting("host", "127.0.0.1", _text, "the address `sitecheck serve` listens on"),
    Setting("port", 8000, _whole(1, 65535), "the port `sitecheck serve` listens on"),
    Setting(
        "workers",
        0,
        _whole(0, 64),
        "worker processes of `sitecheck serve`; 0 means one per core",
    ),
    Setting("threads", 4, _whole(1, 64), "threads in each worker process"),
    Setting(
        "log_json",
        False,
        _flag,
        "write each log line as one JSON object (for a log collector) instead of text",
    ),
    Setting(
        "min_free_disk_mb",
        500,
        _whole(0, 10**9),
        "/healthz answers 503 when the photo store's disk has less free space than this, MB",
    ),
    Setting("max_request_mb", 40, _whole(1, 1024), "the largest request accepted, MB"),
    Setting(
        "record_pdf_per_hour",
        10,
        _whole(1, 10_000),
        "site records (PDF) one person may start in an hour (a finished one handed out again "
        "is not counted)",
    ),
    Setting(
        "trusted_proxies",
        0,
        _whole(
            0,
            10,
            "the number of proxies in front of sitecheck that add X-Forwarded-For, 0 to 10 "
            "(0 when browsers reach it directly, 1 behind one HTTPS proxy)",
        ),
        "proxies in front of sitecheck that add X-Forwarded-For (1 behind one HTTPS proxy)",
    ),
    Setting(
        "smtp_host", None, _optional_text, "the mail server; none: no mail, links are handed over"
    ),
    Setting(
        "smtp_port",
        None,
        _optional_text,
        "the mail server's port: 587 (STARTTLS) if none, 465 for TLS",
    ),
    Setting("smtp_user", None, _optional_text, "the mail server's user (with smtp_password)"),
    Setting("smtp_password", None, _optional_text, "the mail server's password", secret=True),
    Setting(
        "smtp_ca_file",
        None,
        _optional_text,
        "a CA certificate file for a mail server with a private certificate",
    ),
    Setting(
        "mail_from",
        None,
        _optional_text,
        "the address messages come from, e.g. sitecheck@firm.example",
    ),
    Setting(
        "base_url",
        None,
        _optional_text,
        "the address people open sitecheck at; links in e-mails are built on it",
    ),
)
# The mail settings, under the names sitecheck.mail reads them by.
MAIL_SETTINGS = (
    "smtp_host",
    "smtp_port",
    "smtp_user",
    "smtp_password",
    "smtp_ca_file",
    "mail_from",
    "base_url",
)
_BY_NAME = {s.name: s for s in SETTINGS}


@dataclass(frozen=True)
class Settings:
    """The settings in force, every path absolute."""

    home: Path
    database: Path
    photos: Path
    records: Path
    secret_key_file: Path
    secret_key: str | None
    secure_cookies: bool
    host: str
    port: int
    workers: int
    threads: int
    log_json: bool
    min_free_disk_mb: int
    max_request_mb: int
    record_pdf_per_hour: int
    trusted_proxies: int
    smtp_host: str | None
    smtp_port: str | None
    smtp_user: str | None
    smtp_password: str | None
    smtp_ca_file: str | None
    mail_from: str | None
    base_url: str | None
    # name -> where the value came from: "default", "SITECHECK_PORT", "sitecheck.toml", ...
    sources: Mapping[str, str] = field(default_factory=dict, compare=False)

    @property
    def config_file(self) -> Path:
        return self.home / CONFIG_FILE

    def mail_environment(self) -> dict[str, str]:
        """The mail settings as ``sitecheck.mail.MailSettings.from_env`` reads them; a CA
        file named relative to the data folder is found there."""
        found = {}
        for name in MAIL_SETTINGS:
            value = getattr(self, name)
            if value is None:
                continue
            if name == "smtp_ca_file":
                value = str(self.home / Path(value).expanduser())
            found[_BY_NAME[name].env] = value
        return found

    def worker_count(self) -> int:
        """``workers``, with 0 read as one per core."""
        return self.workers or os.cpu_count() or 1

    def described(self) -> list[tuple[str, str, str]]:
        """(name, value as text, where it came from) for every setting; secrets hidden."""
        rows = [("home", str(self.home), self.sources.get("home", "default"))]
        for s in SETTINGS:
            value = getattr(self, s.name)
            text = "" if value is None else str(value)
            if s.secret and value:
                text = "(set, hidden)"
            rows.append((s.name, text, self.sources.get(s.name, "default")))
        return rows


def default_home() -> Path:
    """The Flask instance folder of the sitecheck package: ``instance/`` beside a checkout,
    ``<prefix>/var/sitecheck-instance`` for an installed package."""
    from flask import Flask

    return Path(Flask("sitecheck").instance_path)


def load_settings(
    *,
    home: str | os.PathLike | None = None,
    overrides: Mapping[str, Any] | None = None,
    environ: Mapping[str, str] | None = None,
) -> Settings:
    """The settings in force: ``overrides`` (the command line's options, already parsed),
    then the environment, then ``sitecheck.toml`` in the data folder, then the defaults.

    ``home`` is the data folder; without it ``$SITECHECK_HOME``, else :func:`default_home`.
    Raises ConfigError naming the setting and its source for anything it cannot use.
    """
    env = os.environ if environ is None else environ
    sources: dict[str, str] = {}
    if home is not None:
        home_path, sources["home"] = Path(home), "command line"
    elif env.get(HOME_ENV, "").strip():
        home_path, sources["home"] = Path(env[HOME_ENV].strip()), HOME_ENV
    else:
        home_path, sources["home"] = default_home(), "default"
    home_path = home_path.expanduser().resolve()

    from_file = _read_file(home_path / CONFIG_FILE)
    overrides = dict(overrides or {})
    unknown = set(overrides) - set(_BY_NAME)
    if unknown:
        raise ConfigError(f"no such setting: {', '.join(sorted(unknown))}")

    values: dict[str, Any] = {}
    for s in SETTINGS:
        if overrides.get(s.name) is not None:
            values[s.name], sources[s.name] = overrides[s.name], "command line"
        elif s.env in env:
            values[s.name] = s.parse(env[s.env], s.env)
            sources[s.name] = s.env
        elif s.name in from_file:
            values[s.name] = s.parse(from_file[s.name], f"{s.name} in {home_path / CONFIG_FILE}")
            sources[s.name] = CONFIG_FILE
        else:
            values[s.name], sources[s.name] = s.default, "default"
        if s.is_path:
            values[s.name] = (home_path / Path(values[s.name]).expanduser()).resolve()
    return Settings(home=home_path, sources=sources, **values)


def _read_file(path: Path) -> dict[str, Any]:
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        return {}
    except OSError as error:
        raise ConfigError(f"cannot read {path}: {error.strerror or error}") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise ConfigError(f"{path} is not UTF-8 text; save it as UTF-8") from None
    except tomllib.TOMLDecodeError as error:
        raise ConfigError(f"{path} is not valid TOML: {error}") from None
    for key in data:
        if key not in _BY_NAME:
            near = difflib.get_close_matches(key, list(_BY_NAME), n=1)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            known = ", ".join(_BY_NAME)
            raise ConfigError(
                f"{path} names an unknown setting {key!r}{hint} The settings are: {known}"
            )
    return data
