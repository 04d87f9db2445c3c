"""The one place that decides who may see and do what on a site.

Another site's data answers 404 (its existence is not revealed); another role's action on
a site one belongs to answers 403 and writes a "refused" event.
"""

from __future__ import annotations

from flask import abort, g

from sitecheck import services, store, workflow
from sitecheck.web import get_db


def site_for(site_id: str, action: str) -> tuple[dict, str]:
    """The site and the user's role on it, if the user may do ``action`` there."""
    db = get_db()
    user = g.user
    if user is None:
        abort(401)
    role = store.role_of(db, user_id=user["id"], site_id=site_id)
    site = store.get_site(db, site_id) if role else None
    if site is None:
        abort(404)
    if not workflow.allowed(role, action):
        services.refused(db, user_id=user["id"], action=action, site_id=site_id, role=role)
        abort(
            403,
            description=f"As {role} on this site you may not {ACTION_WORDS.get(action, action)}.",
        )
    g.site, g.role = site, role
    return site, role


def require_may_make_sites() -> None:
    """Making sites is a permission of the account, not of a role on a site: without it,
    403 and a "refused" event (a site's maker becomes its engineer, who may invite)."""
    user = g.user
    if user is None:
        abort(401)
    if user.get("may_make_sites"):
        return
    services.refused(get_db(), user_id=user["id"], action="make-sites")
    abort(
        403,
        description=(
            "Your account may not make sites. Ask someone who may make sites to give you "
            "that, or the engineer of a site to invite you to it."
        ),
    )


def bearing_for(site: dict, bearing_id: str, *, with_result: bool = False) -> dict:
    """The site's bearing (``with_result``: with its design result, to show the calculation)."""
    bearing = store.get_bearing(
        get_db(), site_id=site["id"], bearing_id=bearing_id, with_result=with_result
    )
    if bearing is None:
        abort(404)
    return bearing


ACTION_WORDS = workflow.ACTION_WORDS
