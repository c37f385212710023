"""Text from a mission file made safe to show: no terminal control codes, no live formulas.

A mission file, and the data files it names, may come from someone else. Their text (a
mission, stage or leg name, a description, a motor's name, a file name, an error message
that quotes any of these) is shown in a terminal and written into spreadsheets. A terminal
acts on control codes: ``ESC [ 31 m`` colours the rest of the screen, ``ESC ] 0 ; … BEL``
sets the window title, and some terminals answer queries by typing into the shell. A
spreadsheet program runs a cell that begins with ``=`` as a formula.

:func:`printable` removes the control codes from a text, :class:`SafeConsole` does so for
every piece of text a rich console writes (its own styles stay), and :func:`spreadsheet_text`
also neutralises a text that a spreadsheet would read as a formula.
"""

from __future__ import annotations

from collections.abc import Iterable

from rich.console import Console, ConsoleOptions, RenderableType
from rich.segment import Segment

from propulsion.text import CONTROL_RE, printable

__all__ = ["FORMULA_LEADS", "SafeConsole", "printable", "spreadsheet_text"]

_CONTROL_RE = CONTROL_RE

FORMULA_LEADS = ("=", "+", "-", "@", "\t", "\r")
"""The first characters that make a spreadsheet program read a cell as a formula (OWASP,
"CSV Injection", owasp.org/www-community/attacks/CSV_Injection)."""


def spreadsheet_text(text: str) -> str:
    """A text cell that no spreadsheet program reads as a formula.

    Parameters
    ----------
    text : str
        The cell's text.

    Returns
    -------
    str
        :func:`printable` of the text, with a single quote put in front when it then begins
        with one of :data:`FORMULA_LEADS` (``=``, ``+``, ``-``, ``@``, tab, carriage
        return). The quote is kept in the file: it shows that the cell was changed, and it
        makes the cell plain text in every program that opens the file.

    References
    ----------
    .. [1] OWASP Foundation, "CSV Injection", owasp.org/www-community/attacks/CSV_Injection
       (prefix such cells with a single quote).
    """
    clean = printable(text)
    if clean.startswith(FORMULA_LEADS):
        return "'" + clean
    return clean


class SafeConsole(Console):
    """A rich console that removes control codes from every text it writes.

    Rich's own styles and cursor controls are separate segments (a style, or a control
    code) and pass unchanged; only the text of the segments is cleaned with
    :func:`printable`, so nothing a view or an error message quotes can reach the terminal
    as a control code. Tables, status lines and progress bars are all rendered through
    :meth:`render`.
    """

    def render(
        self, renderable: RenderableType, options: ConsoleOptions | None = None
    ) -> Iterable[Segment]:
        """Render like :meth:`rich.console.Console.render`, with the text cleaned."""
        for segment in super().render(renderable, options):
            text, style, control = segment
            if control is None and _CONTROL_RE.search(text):
                yield Segment(printable(text), style)
            else:
                yield segment
