"""The docs say what the code does: the README's Quickstart, CI's test line, the CLI guide."""

from __future__ import annotations

import re
from pathlib import Path

import click
import pytest

from webapp.cli import cli

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text()
GUIDE = (ROOT / "DEVELOPERS.md").read_text()


def quickstart_lines() -> list[str]:
    section = README.split("## Quickstart", 1)[1]
    block = re.search(r"```sh\n(.*?)```", section, re.S).group(1)
    return [line for line in block.splitlines() if line.strip()]


def commands(group: click.Group, path: tuple[str, ...] = ()):
    for name, command in group.commands.items():
        if isinstance(command, click.Group):
            yield from commands(command, (*path, name))
        else:
            yield (*path, name), command


def test_readme_opens_with_the_job_then_two_quickstart_lines():
    first = README.split("\n\n")[1]
    assert "paged" in first and "review" in first and "alert" in first
    lines = quickstart_lines()
    assert len(lines) == 2
    assert "whyfired demo" in lines[0] and "pytest" in lines[1]


def test_ci_runs_the_quickstart_test_line_verbatim():
    ci = (ROOT / ".ci" / "run").read_text().splitlines()
    assert quickstart_lines()[1] in ci


@pytest.mark.parametrize(
    "path, command", list(commands(cli)), ids=lambda v: " ".join(v) if isinstance(v, tuple) else ""
)
def test_every_cli_command_and_option_is_in_the_guide(path, command):
    usage = "whyfired " + " ".join(path)
    assert usage in GUIDE, f"DEVELOPERS.md does not show `{usage}`"
    line = next(line for line in GUIDE.splitlines() if line.startswith(usage + " "))
    options = [opt for p in command.params for opt in p.opts if opt.startswith("--")]
    missing = [opt for opt in options if opt not in line and opt != "--help"]
    assert missing == [], f"`{usage}` in DEVELOPERS.md does not mention {missing}"
