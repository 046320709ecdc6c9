"""Start-up stays light: the command line and light modules load no analysis stack, the
lazy package exports resolve, and the warm start pays the first request's costs."""

from __future__ import annotations

import subprocess
import sys

import pytest

import webapp.analysis
import webapp.imports

HEAVY = ("pandas", "scipy", "statsmodels", "plotly", "sqlalchemy", "flask")


def modules_loaded_by(code: str) -> set[str]:
    """Top-level packages a fresh interpreter has loaded after running ``code``."""
    probe = f"{code}\nimport sys\nprint(' '.join(sorted({{m.split('.')[0] for m in sys.modules}})))"
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True)
    return set(done.stdout.split())


def test_the_command_line_help_loads_no_heavy_library() -> None:
    code = (
        "from webapp.cli import cli\n"
        "try:\n    cli.main(args=['import', '--help'], prog_name='whyfired')\n"
        "except SystemExit:\n    pass"
    )
    assert modules_loaded_by(code).isdisjoint(HEAVY)


def test_the_markdown_export_command_loads_only_what_it_writes_with(demo_db_url, tmp_path) -> None:
    """No web server, no migrations on a current store, no analysis stack, no dataset layer."""
    args = ["export", "review", "1", "--format", "md", "-o", f"{tmp_path}/", "--db", demo_db_url]
    code = (
        "from webapp.cli import cli\n"
        f"try:\n    cli.main(args={args!r}, prog_name='whyfired')\n"
        "except SystemExit as done:\n    assert not done.code, done.code\n"
        "import sys\nassert 'pyarrow.dataset' not in sys.modules"
    )
    loaded = modules_loaded_by(code)
    assert (tmp_path / "review-1.md").is_file()
    assert "pandas" in loaded and "sqlalchemy" in loaded  # what a saved frame needs
    assert loaded.isdisjoint({"flask", "werkzeug", "alembic", "scipy", "statsmodels"})


def test_the_time_helpers_load_no_scipy_or_statsmodels() -> None:
    loaded = modules_loaded_by("import webapp.analysis.times, webapp.imports.formats")
    assert "scipy" not in loaded and "statsmodels" not in loaded


@pytest.mark.parametrize("package", [webapp.analysis, webapp.imports], ids=lambda p: p.__name__)
def test_every_listed_export_resolves(package) -> None:
    for name in package.__all__:
        assert getattr(package, name) is not None
    assert set(package.__all__) <= set(dir(package))
    with pytest.raises(AttributeError, match="has no attribute 'nothing_here'"):
        package.nothing_here  # noqa: B018


def test_the_warm_start_compiles_every_page_template(app) -> None:
    from webapp.warmup import warm_in_background

    warm_in_background(app).join(timeout=120)
    pages = app.jinja_env.list_templates(filter_func=lambda n: n.endswith(".html"))
    cached = {key[1] for key in app.jinja_env.cache.keys()}  # noqa: SIM118 (an LRU cache)
    assert pages and set(pages) <= cached


def test_the_warm_start_keeps_the_band_fits_of_paged_rules(app, app_session, make_parsed) -> None:
    import numpy as np
    import pandas as pd
    from sqlalchemy import select

    from webapp.store import db, rules
    from webapp.store.imports import record_import
    from webapp.store.models import BandFit, Page
    from webapp.store.series import series_by_keys
    from webapp.warmup import fit_ahead, warm_in_background

    key = "checkout.latency_p95{host=api-5}"  # invented: three weeks of a daily wave
    index = pd.date_range("2026-11-01", periods=3 * 7 * 288, freq="5min", tz="UTC")
    wave = 200 + 40 * np.sin(2 * np.pi * (index.hour * 60 + index.minute).to_numpy() / 1440)
    record_import(app_session, make_parsed([key] * len(index), index.as_unit("ms").asi8, wave))
    series_id = series_by_keys(app_session, [key])[key].id
    rule = rules.create_rule(app_session, name="p95 high", series_id=series_id, threshold=260.0)
    app_session.add(Page(series_id=series_id, alert_rule_id=rule.id, fired_at=index[-100]))
    app_session.commit()

    warm_in_background(app).join(timeout=300)
    with db.session_scope(db.get_engine(app), write=False) as reader:
        kept = reader.scalars(select(BandFit.series_id)).all()
    assert kept == [series_id]
    assert fit_ahead(app) == 0  # kept already: a restart fits nothing
