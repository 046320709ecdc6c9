"""Team mode: sign-in, sign-out and the one check every request passes.

In team mode (``TEAM_MODE``) nobody reaches a page without signing in, a viewer only reads,
an editor also writes, and an admin also undoes imports (and manages accounts with
``whyfired user``). The rules live here, in one ``before_request`` hook, not in the views.
The signed-in person is handed to the store's audit trail for the request. Local mode has
no accounts and none of this applies.
"""

from __future__ import annotations

import time
from collections import defaultdict, deque
from typing import Any

from flask import (
    Blueprint,
    Flask,
    abort,
    current_app,
    g,
    redirect,
    render_template,
    request,
    session,
    url_for,
)
from werkzeug.wrappers import Response

from webapp.store import audit, db, users
from webapp.store.models import User
from webapp.web.htmx import is_htmx

bp = Blueprint("auth", __name__)

READ_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})
OPEN_ENDPOINTS = frozenset({"auth.sign_in", "static", "assets.plotly_js"})
ADMIN_ENDPOINTS = frozenset({"imports.delete"})  # undoing an import removes data
TRIES_PER_MINUTE = 10  # sign-in tries per client address, on top of the per-account wait
TRIES_KEY = "whyfired_sign_in_tries"


def current_user() -> User | None:
    return g.get("user")


def check_access() -> Response | None:
    if not current_app.config.get("TEAM_MODE"):
        return None
    g.user = _signed_in_user()
    if request.endpoint in OPEN_ENDPOINTS:
        return None
    if g.user is None:
        if request.method in READ_METHODS:
            return _to_sign_in()
        abort(401, description="Sign in first: this whyfired is shared by a team.")
    g.audit_token = audit.acting.set(g.user.name)
    if request.endpoint == "auth.sign_out":
        return None
    endpoint = request.endpoint or ""
    if _changing(endpoint) and not may(endpoint):
        abort(403, description=refusal(endpoint))
    return None


def _changing(endpoint: str) -> bool:
    """A change, an admin-only endpoint, or the form of a change: a GET of a URL that also
    takes a POST (a new or edit form) is refused to whoever may not send it."""
    if request.method not in READ_METHODS or endpoint in ADMIN_ENDPOINTS:
        return True
    rule = request.url_rule
    return rule is not None and bool((rule.methods or set()) - READ_METHODS)


def may(endpoint: str) -> bool:
    """Whether the person signed in may use this changing endpoint (anyone, in local mode);
    templates ask it to leave out the buttons that would be refused."""
    if not current_app.config.get("TEAM_MODE"):
        return True
    user = current_user()
    if user is None:
        return False
    if endpoint in ADMIN_ENDPOINTS:
        return user.role == "admin"
    return user.role != "viewer"


def refusal(endpoint: str) -> str:
    """Why the person signed in may not use this endpoint, in one line: the 403's message,
    and the line a screen shows where the refused form would be."""
    user = current_user()
    role = user.role if user is not None else "none"
    if endpoint in ADMIN_ENDPOINTS and role != "viewer":
        return f"Only an admin can do this (your role: {role})."
    return f"Your account can read but not change this (role: {role})."


def _signed_in_user() -> User | None:
    user_id = session.get("user_id")
    if user_id is None:
        return None
    user = db.get_session().get(User, user_id)
    if user is None or session.get("stamp") != users.session_stamp(user):
        return None  # removed, or the password was reset since
    return user


def _to_sign_in() -> Response:
    target = url_for("auth.sign_in", next=request.full_path.rstrip("?"))
    if is_htmx():
        response = Response(status=204)
        response.headers["HX-Redirect"] = target
        return response
    return redirect(target)


def _forget_actor(_exc: BaseException | None = None) -> None:
    token = g.pop("audit_token", None)
    if token is not None:
        audit.acting.reset(token)


@bp.route("/sign-in", methods=["GET", "POST"])
def sign_in() -> Any:
    if not current_app.config.get("TEAM_MODE"):
        return redirect(url_for("home.index"))
    next_path = _safe_next(request.values.get("next", ""))
    if request.method == "GET":
        return render_template("auth/sign_in.html", next=next_path, message=None)
    if _too_many_tries(request.remote_addr or "?"):
        return _refused("Too many sign-in tries from here; wait a minute and try again.", 429)
    store = db.get_session()
    outcome = users.sign_in(store, request.form.get("name", ""), request.form.get("password", ""))
    store.commit()  # keeps the count of wrong passwords
    if outcome.user is None:
        message = "That name and password do not match an account."
        if outcome.wait is not None:
            message += f" Too many wrong passwords: try again in {_seconds(outcome.wait)}."
        return _refused(message, 401)
    session.clear()
    session["user_id"] = outcome.user.id
    session["stamp"] = users.session_stamp(outcome.user)
    return redirect(next_path or url_for("home.index"))


@bp.route("/sign-out", methods=["POST"])
def sign_out() -> Response:
    session.clear()
    return redirect(url_for("auth.sign_in"))


def _refused(message: str, status: int) -> tuple[str, int]:
    next_path = _safe_next(request.form.get("next", ""))
    return render_template("auth/sign_in.html", next=next_path, message=message), status


def _too_many_tries(address: str) -> bool:
    now = time.monotonic()
    tries = current_app.extensions[TRIES_KEY][address]
    while tries and now - tries[0] > 60:
        tries.popleft()
    tries.append(now)
    return len(tries) > TRIES_PER_MINUTE


def _safe_next(path: str) -> str:
    """Only a path on this site (no scheme, no host) is followed after signing in."""
    ok = path.startswith("/") and not path.startswith("//") and "\\" not in path
    return path if ok else ""


def _seconds(wait: Any) -> str:
    seconds = max(1, int(wait.total_seconds() + 0.999))
    return f"{seconds} s" if seconds < 120 else f"{seconds // 60} min"


def init_app(app: Flask) -> None:
    """Register before the CSRF check, so an anonymous change is refused as such."""
    app.extensions[TRIES_KEY] = defaultdict(deque)
    app.before_request(check_access)
    app.teardown_request(_forget_actor)
    app.add_template_global(current_user, "current_user")
    app.add_template_global(may, "may")
    app.add_template_global(refusal, "refusal")
    app.register_blueprint(bp)
