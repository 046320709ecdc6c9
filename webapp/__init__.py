"""whyfired: explain why a page fired, replay its alert rule, write the review."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # Flask is imported inside create_app: `import webapp.analysis` stays light
    from flask import Flask

PACKAGE_DIR = Path(__file__).resolve().parent


def resource_dir(name: str) -> Path:
    """A shipped folder (templates, static, migrations): inside the package for a wheel,
    beside it for a source checkout or an editable install."""
    inside = PACKAGE_DIR / name
    if inside.is_dir():
        return inside
    return PACKAGE_DIR.parent / name


def create_app(test_config: dict[str, Any] | None = None) -> Flask:
    from flask import Flask

    from webapp import settings

    app = Flask(
        __name__,
        template_folder=str(resource_dir("templates")),
        static_folder=str(resource_dir("static")),
        instance_path=settings.instance_path(test_config),
    )
    app.config.update(settings.defaults())
    app.config.from_prefixed_env("WHYFIRED")
    if test_config:
        app.config.update(test_config)
    if not app.config.get("DATABASE_URL"):
        app.config["DATABASE_URL"] = settings.database_url()
    app.config["MAX_CONTENT_LENGTH"] = int(app.config["MAX_IMPORT_MB"]) * 1024 * 1024 + 65536

    from webapp.secret import secret_key
    from webapp.store import db
    from webapp.web import refusals, register_web, security

    security.init_app(app)
    refusals.init_app(app)
    db.init_app(app)
    app.config["SECRET_KEY"] = secret_key(app)
    register_web(app)
    return app
