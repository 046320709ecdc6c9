"""The web layer: one blueprint per screen, registered by :func:`register_web`."""

from __future__ import annotations

from flask import Flask


def register_web(app: Flask) -> None:
    from webapp.web import explain, home, imports, pages, reviews, rules, series

    for module in (home, imports, series, explain, pages, rules, reviews):
        app.register_blueprint(module.bp)
