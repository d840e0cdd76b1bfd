"""Names that users wrote (suite, instance, solver, label), made safe to print.

A terminal acts on control characters: a file name holding ESC sequences could recolour
or rewrite the screen, a newline could forge a table row, a bidirectional override could
reverse what follows.  :func:`plain` shows every character that is not printable as an
escape (``\\x1b``, ``\\n``, ``\\u202e``), so a console table shows exactly what was written.
HTML gets :func:`html.escape` instead (spinward/bench/page.py).
"""

from __future__ import annotations


def plain(text: object) -> str:
    """``str(text)`` with every non-printable character written as a backslash escape."""
    value = str(text)
    if value.isprintable():
        return value
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii") for c in value)
