"""Where the screens' templates and static files are.

They live at the project's top level (``templates/``, ``static/``). A wheel installs them
under ``<prefix>/share/sitecheck/`` (see ``[tool.setuptools.data-files]``), so an installed
package, not only a checkout, finds them.
"""

from __future__ import annotations

import hashlib
import sys
from pathlib import Path

_CHECKOUT = Path(__file__).resolve().parents[2]
_INSTALLED = Path(sys.prefix) / "share" / "sitecheck"


def _find(name: str) -> Path:
    for base in (_CHECKOUT, _INSTALLED):
        if (base / name).is_dir():
            return base / name
    raise RuntimeError(f"sitecheck cannot find its {name}/ folder in {_CHECKOUT} or {_INSTALLED}")


TEMPLATE_DIR = _find("templates")
STATIC_DIR = _find("static")


_SHELL_PATTERNS = ("*.js", "*.css", "*.png", "*.webmanifest")
_SHELL_TEMPLATES = ("base.html", "_macros.html", "offline", "inspect/_fields.html")


def shell_digest(*extra: str) -> str:
    """A digest of every file the phone's offline shell is made of: the service worker
    carries it as its version, so a change to any of them reaches every phone (a new
    worker installs, fetches the new shell and drops the old) without anyone having to
    remember to bump a number."""
    files = {
        f"static/{p.relative_to(STATIC_DIR)}": p
        for pattern in _SHELL_PATTERNS
        for p in STATIC_DIR.rglob(pattern)
    }
    for name in _SHELL_TEMPLATES:
        path = TEMPLATE_DIR / name
        for p in path.rglob("*.html") if path.is_dir() else [path]:
            files[f"templates/{p.relative_to(TEMPLATE_DIR)}"] = p
    digest = hashlib.sha256()
    for text in extra:  # shell files the server writes itself (the phone's words)
        digest.update(text.encode())
    for label in sorted(files):
        digest.update(label.encode())
        digest.update(files[label].read_bytes())
    return digest.hexdigest()[:16]
