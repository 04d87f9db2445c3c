"""Blueprint 'review' (being built)."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("review", __name__)


@bp.get("/review")
def queue():
    return "to do", 501
