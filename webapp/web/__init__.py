"""The web layer: screens in ``views/`` (one blueprint each), figure builders in
``charts/``, request parsing in ``forms/``; at this level the plumbing every screen shares
(CSRF, errors, template filters, htmx, Markdown, assets) and the review export writer."""

from __future__ import annotations

from flask import Flask


def register_web(app: Flask) -> None:
    from webapp.web import assets, csrf, errors, filters
    from webapp.web.views import (
        explain,
        home,
        imports,
        incidents,
        pages,
        peers,
        reviews,
        rules,
        series,
    )

    csrf.init_app(app)
    errors.init_app(app)
    filters.init_app(app)
    app.add_template_global(assets.plotly_version, "plotly_version")
    for module in (assets, home, imports, series, explain, peers, pages, incidents, rules, reviews):
        app.register_blueprint(module.bp)
