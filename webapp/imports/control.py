"""Control characters in text: refused everywhere, so both stores keep the same text.

PostgreSQL cannot store NUL (U+0000) in text at all, and the other control characters
only ever arrive by accident (a binary paste, a broken export). Tab, line feed and
carriage return are ordinary text and allowed.
"""

from __future__ import annotations

import re

ALLOWED = "\t\n\r"
_CONTROL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")


def control_problem(what: str, text: str) -> str | None:
    """Why ``text`` (named ``what`` in the message) cannot be stored, or None if it can."""
    found = _CONTROL.search(text)
    if found is None:
        return None
    return (
        f"{what} contains a control character (U+{ord(found.group()):04X}) at character "
        f"{found.start() + 1}; only tab, line feed and carriage return are allowed. "
        "Remove it and try again."
    )


def check_text(what: str, text: str) -> None:
    """Raise ValueError with :func:`control_problem`'s message if ``text`` has one."""
    problem = control_problem(what, text)
    if problem is not None:
        raise ValueError(problem)
