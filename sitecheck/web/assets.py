"""Where the screens' templates and static files are.

They live at the project's top level (``templates/``, ``static/``). A wheel installs them
under ``<prefix>/share/sitecheck/`` (see ``[tool.setuptools.data-files]``), so an installed
package, not only a checkout, finds them.
"""

from __future__ import annotations

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
