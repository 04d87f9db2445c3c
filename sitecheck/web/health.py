"""``GET /healthz``: can this server take an inspector's record right now?

For a load balancer, a process supervisor or a person with curl: no log-in, and nothing in
the answer about sites, people or records. 200 when every check passes, 503 with the reason
of each failing one.
"""

from __future__ import annotations

import shutil
from pathlib import Path

from flask import Blueprint, current_app, jsonify

from sitecheck import store

bp = Blueprint("health", __name__)


def _database() -> str | None:
    return store.database_problem(current_app.config["DB_PATH"])


def _disk() -> str | None:
    folder = Path(current_app.config["PHOTO_DIR"])
    # The photo store may not exist before the first photo; its disk is the data folder's.
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent
    try:
        free_mb = shutil.disk_usage(folder).free // (1024 * 1024)
    except OSError as error:
        return f"the photo store's disk cannot be read ({error.strerror or error})"
    wanted = current_app.config["MIN_FREE_DISK_MB"]
    if free_mb < wanted:
        return (
            f"{free_mb} MB free on the photo store's disk, less than the {wanted} MB "
            "asked for (min_free_disk_mb)"
        )
    return None


def _jobs() -> str | None:
    jobs = current_app.extensions.get("record_jobs")
    problem = jobs.problem() if jobs is not None else None
    sender = current_app.extensions.get("mail_sender")
    if problem is None and sender is not None and not sender.alive():
        problem = "the mail sender of this process has stopped"
    return problem


CHECKS = (("database", _database), ("disk", _disk), ("jobs", _jobs))


@bp.get("/healthz")
def healthz():
    checks, failing = {}, []
    for name, check in CHECKS:
        try:
            problem = check()
        except Exception as error:  # a check that breaks is a failing check, never a 500
            current_app.logger.exception("health check %s failed", name)
            problem = f"the check itself failed ({type(error).__name__})"
        checks[name] = "ok" if problem is None else problem
        if problem is not None:
            failing.append(f"{name}: {problem}")
    body = {"status": "ok" if not failing else "failing", "checks": checks}
    if failing:
        body["reason"] = "; ".join(failing)
    response = jsonify(body)
    response.status_code = 200 if not failing else 503
    response.headers["Cache-Control"] = "no-store"
    return response
