"""The web layer: screens in ``views/`` (one blueprint each), figure builders in
``charts/``, request parsing in ``forms/``; at this level the plumbing every screen shares
(CSRF, errors, template filters, htmx, Markdown, assets) and the review export writer."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the export writer, run from the command line, needs no Flask
    from flask import Flask


def register_web(app: Flask) -> None:
    from webapp.web import assets, auth, csrf, errors, facts, filters, textcheck
    from webapp.web.views import (
        explain,
        home,
        imports,
        incidents,
        pages,
        peers,
        reviews,
        rule_kinds,
        rules,
        screening,
        series,
    )

    auth.init_app(app)
    csrf.init_app(app)
    textcheck.init_app(app)
    errors.init_app(app)
    filters.init_app(app)
    app.add_template_global(assets.plotly_version, "plotly_version")
    app.add_template_global(facts.fact_groups, "fact_groups")
    app.add_template_global(facts.parameter_rows, "parameter_rows")
    for module in (
        assets,
        home,
        imports,
        series,
        explain,
        peers,
        screening,
        pages,
        incidents,
        rules,
        rule_kinds,
        reviews,
    ):
        app.register_blueprint(module.bp)
