"""Blueprint 'release' (being built)."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("release", __name__)
