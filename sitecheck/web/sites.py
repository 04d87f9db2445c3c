"""Blueprint 'sites' (being built)."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("sites", __name__)


@bp.get("/sites/new")
def new():
    return "to do", 501


@bp.get("/sites/<site_id>")
def show(site_id):
    return "to do", 501
