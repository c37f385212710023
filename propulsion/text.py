"""Text read from files, cleaned of control codes before anything keeps it.

A mission file, and the data files it names, may come from someone else. A name or a
description holding terminal control codes (``ESC [ 31 m`` colours a screen, ``ESC ] 0 ; …
BEL`` retitles a window) or directional formatting characters (which make a text show other
than it reads) would carry them into every table, picture, report and export. The loader
cleans every text field with :func:`printable` at the boundary; the consoles clean whatever
else they print (:mod:`propulsion.report.safe_text`).
"""

from __future__ import annotations

import re

__all__ = ["CONTROL_RE", "plural", "printable"]

# C0 controls except tab and line feed, DEL, the C1 controls (ECMA-48, 5th ed., 1991,
# sections 5.2 and 5.3: 0x00-0x1F, 0x7F and 0x80-0x9F), and the Unicode directional
# formatting characters that can make a text show other than it reads (Unicode Standard
# Annex #9, The Unicode Bidirectional Algorithm, section 2: U+200E, U+200F, U+202A to
# U+202E, U+2066 to U+2069).
CONTROL_RE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def printable(text: str) -> str:
    """The text without terminal control codes.

    Parameters
    ----------
    text : str
        Any text, for example a mission name read from a file.

    Returns
    -------
    str
        The text with every C0 control except tab and line feed, DEL, every C1 control and
        the directional formatting characters removed. What an escape sequence leaves behind
        (``[31m``) stays visible, as a hint that the text held something odd; on its own it
        does nothing.

    References
    ----------
    .. [1] ECMA-48, Control Functions for Coded Character Sets, 5th ed., 1991, sections 5.2
       (C0) and 5.3 (C1), and 8.3.16 (CSI).
    .. [2] Unicode Standard Annex #9, The Unicode Bidirectional Algorithm, section 2.
    """
    return CONTROL_RE.sub("", text)


def plural(count: int, noun: str, many: str | None = None) -> str:
    """A count with its noun in the right number: ``1 stage``, ``2 stages``, ``1,000 samples``.

    Parameters
    ----------
    count : int
        How many [count]; shown with thousands separators.
    noun : str
        The singular noun.
    many : str, optional
        The plural when it is not the noun with an ``s`` (``"ellipses"``).

    Returns
    -------
    str
        The count, a space and the noun: singular for exactly one, plural otherwise
        (zero included: ``0 samples``).
    """
    word = noun if count == 1 else (many if many is not None else noun + "s")
    return f"{count:,} {word}"
