"""Blueprint 'inspect' (being built)."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("inspect", __name__)
