"""The web layer: one blueprint per screen, registered by :func:`register_web`."""

from __future__ import annotations

from flask import Flask


def register_web(app: Flask) -> None:
    from webapp.web import (
        assets,
        auth,
        csrf,
        errors,
        explain,
        filters,
        home,
        imports,
        pages,
        peers,
        reviews,
        rules,
        series,
        textcheck,
    )

    auth.init_app(app)
    csrf.init_app(app)
    textcheck.init_app(app)
    errors.init_app(app)
    filters.init_app(app)
    app.add_template_global(assets.plotly_version, "plotly_version")
    for module in (assets, home, imports, series, explain, peers, pages, rules, reviews):
        app.register_blueprint(module.bp)
