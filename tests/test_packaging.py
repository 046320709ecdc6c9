"""A real wheel, installed into a fresh virtual environment, serves pages.

``templates/``, ``static/`` and ``migrations/`` live at the top of the repository; the
wheel must carry them inside the package, or an installed whyfired cannot start.
"""

from __future__ import annotations

import importlib.util
import os
import site
import subprocess
import sys
import sysconfig
import textwrap
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

CHECK = textwrap.dedent(
    """
    import sys
    from pathlib import Path

    import webapp
    from webapp import create_app, resource_dir

    prefix = Path(sys.prefix).resolve()
    package = Path(webapp.__file__).resolve().parent
    assert prefix in package.parents, f"webapp imported from {package}, not the venv"
    for name in ("templates", "static", "migrations"):
        assert resource_dir(name) == package / name, f"{name} not shipped in the wheel"

    app = create_app({"TESTING": True, "DATABASE_URL": "sqlite:///" + sys.argv[1]})
    client = app.test_client()
    page = client.get("/")
    assert page.status_code == 200, page.status_code
    assert b"<html" in page.data.lower()
    css = client.get("/static/whyfired.css")
    assert css.status_code == 200 and len(css.data) > 100, css.status_code
    print("served", len(page.data), "bytes of HTML")
    """
)


def run(*args: str | Path, cwd: Path) -> subprocess.CompletedProcess[str]:
    # Without PYTHONPATH: a checkout on the path would hide whether the wheel works.
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    result = subprocess.run(
        [str(a) for a in args], cwd=cwd, capture_output=True, text=True, timeout=180, env=env
    )
    assert result.returncode == 0, f"{args} failed:\n{result.stdout}\n{result.stderr}"
    return result


def lend_dependencies(python: Path, cwd: Path) -> None:
    """Let the new environment import the dependencies of the running one, whether the
    suite runs in a virtual environment or not: a ``.pth`` file naming this interpreter's
    site-packages. Paths named in a ``.pth`` are searched after the environment's own
    site-packages, and the ``.pth`` files inside them are not read, so an editable install
    of whyfired here cannot shadow the wheel there."""
    paths = {sysconfig.get_paths()[name] for name in ("purelib", "platlib")}
    paths |= set(site.getsitepackages())  # a venv made with --system-site-packages sees these
    found = run(python, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])", cwd=cwd)
    site_packages = Path(found.stdout.strip())
    (site_packages / "lent-dependencies.pth").write_text("\n".join(sorted(paths)) + "\n")


@pytest.mark.slow
def test_an_installed_wheel_ships_templates_static_and_migrations(tmp_path):
    dist = tmp_path / "dist"
    # Build offline with the installed backend when there is one; else let build fetch it.
    isolation = () if importlib.util.find_spec("hatchling") is None else ("--no-isolation",)
    run(sys.executable, "-m", "build", "--wheel", *isolation, "--outdir", dist, ROOT, cwd=ROOT)
    (wheel,) = dist.glob("whyfired-*.whl")
    names = zipfile.ZipFile(wheel).namelist()
    for shipped in ("webapp/templates/base.html", "webapp/migrations/env.py"):
        assert shipped in names, f"{shipped} missing from {wheel.name}"

    venv = tmp_path / "venv"
    run(sys.executable, "-m", "venv", venv, cwd=tmp_path)
    python = venv / "bin" / "python"
    lend_dependencies(python, tmp_path)
    run(python, "-m", "pip", "install", "--no-deps", "--no-index", "--quiet", wheel, cwd=tmp_path)

    elsewhere = tmp_path / "elsewhere"  # not the checkout, so only the wheel can be imported
    elsewhere.mkdir()
    served = run(python, "-c", CHECK, tmp_path / "store.sqlite", cwd=elsewhere)
    assert "served" in served.stdout
    helped = run(venv / "bin" / "whyfired", "--help", cwd=elsewhere)
    assert "import" in helped.stdout and "demo" in helped.stdout
