"""Settings are data: every one is documented in DEVELOPERS.md and reaches the app config."""

from pathlib import Path

import pytest

from webapp import create_app, settings

GUIDE = Path(__file__).resolve().parents[1] / "DEVELOPERS.md"


@pytest.mark.parametrize("setting", settings.SETTINGS, ids=lambda s: s.name)
def test_every_setting_is_documented(setting):
    assert f"| `{setting.name}` |" in GUIDE.read_text()
    assert setting.help.strip()


def test_environment_overrides_a_setting(monkeypatch, tmp_path):
    monkeypatch.setenv("WHYFIRED_MAX_IMPORT_MB", "7")
    app = create_app({"DATABASE_URL": f"sqlite:///{tmp_path / 'x.sqlite'}", "TESTING": True})
    assert app.config["MAX_IMPORT_MB"] == 7
    assert app.config["MAX_CONTENT_LENGTH"] > 7 * 1024 * 1024
