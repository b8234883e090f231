"""Text that leaves the program for a terminal (presentation layer).

Kept apart from :mod:`pipeopt.outputs` so that the command line can print an error without
importing the result-set machinery (the answer to an invalid study file is start-up time).
"""

from __future__ import annotations

import re

__all__ = ["printable"]

_ESCAPE_SEQUENCE = re.compile(
    r"\x1b\[[0-?]*[ -/]*[@-~]"              # CSI: cursor moves, colours, clear screen
    r"|\x1b\][^\x07\x1b]*(?:\x07|\x1b\\)?"   # OSC: window title, hyperlinks, clipboard
    r"|\x1b[PX^_][^\x1b]*(?:\x1b\\)?"        # DCS, SOS, PM, APC strings
    r"|\x1b[ -/]*[0-~]?"                     # any other escape
    r"|\x9b[0-?]*[ -/]*[@-~]")               # the one-byte CSI of C1
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def printable(text: str, one_line: bool = False) -> str:
    """Text safe to print on a terminal: escape sequences and control characters removed.

    Tabs and newlines stay (a newline becomes a space when ``one_line``); bidirectional
    overrides, which can make a line read differently from what it holds, are removed too.

    >>> printable("pipe \\x1b[2Jname\\x07")
    'pipe name'
    >>> printable("two\\nlines", one_line=True)
    'two lines'
    """
    text = _CONTROL.sub("", _ESCAPE_SEQUENCE.sub("", str(text)))
    return text.replace("\n", " ").replace("\t", " ") if one_line else text
