"""Alert rules in whyfired's own words (docs/design.md, vocabulary): the hold, checked
every, raised. Words another tool uses for the same things appear nowhere a reader sees."""

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PLACES = ["webapp", "templates", "static", "docs", "README.md", "DEVELOPERS.md"]
# Stored back to front so that this file does not itself carry the phrases it bans.
BACKWARDS = (("period", "pending"), ("every", "evaluated"), ("step", "evaluation"))
RETIRED = [f"{second} {first}" for first, second in BACKWARDS]
TEXT = {".py", ".html", ".md", ".js", ".css", ".txt", ".toml", ".json"}


def files():
    for place in PLACES:
        path = ROOT / place
        if path.is_file():
            yield path
        else:
            yield from (
                p
                for p in path.rglob("*")
                if p.is_file() and p.suffix in TEXT and "vendor" not in p.parts
            )


@pytest.mark.parametrize("phrase", RETIRED)
def test_retired_rule_words_are_gone(phrase: str) -> None:
    found = [
        f"{path.relative_to(ROOT)}:{number}"
        for path in files()
        for number, line in enumerate(path.read_text(errors="ignore").splitlines(), 1)
        if phrase in " ".join(line.lower().split())
    ]
    assert found == []


def test_the_scan_reads_the_places_it_names() -> None:
    names = {p.relative_to(ROOT).parts[0] for p in files()}
    assert {"webapp", "templates", "docs", "README.md", "DEVELOPERS.md"} <= names
