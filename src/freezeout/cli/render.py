"""Console and text helpers shared by every command: safe text, wide logs, sentence numbers.

Every string that came from a file (headers, names, notes, paths, messages quoting them) is
printed through :func:`text` or :func:`say`: never parsed as rich markup, and stripped of
control characters and terminal escape sequences so a file cannot move the cursor, clear
the screen or recolour the terminal.
"""

from __future__ import annotations

import math
import os
import re
import sys

#: Terminal escape sequences (CSI ``ESC [ ... final``, OSC ``ESC ] ... BEL/ST``, any other
#: ``ESC x``) and C0/C1 control characters except newline and tab.
_CONTROL = re.compile(
    r"\x1b\[[0-?]*[ -/]*[@-~]?"        # CSI
    r"|\x1b\][^\x07\x1b]*(?:\x07|\x1b\\)?"  # OSC
    r"|\x1b[@-_]?"                     # other two-character escapes, or a lone ESC
    r"|\x9b[0-?]*[ -/]*[@-~]?"         # 8-bit CSI
    r"|[\x00-\x08\x0b-\x1f\x7f-\x9f]"  # the remaining controls (keeps \t \n)
)

#: Width of the console when stdout is not a terminal (CI logs, pipes, ``| less``).
LOG_WIDTH = 200


def clean(value: object) -> str:
    """``str(value)`` without control characters or terminal escape sequences.

    Parameters
    ----------
    value
        Anything; None gives ``""``.

    Returns
    -------
    str
        The text, keeping newlines and tabs.
    """
    return "" if value is None else _CONTROL.sub("", str(value))


def text(value: object, style: str = ""):
    """A :class:`rich.text.Text` of ``value``, cleaned, never read as markup."""
    from rich.text import Text

    return Text(clean(value), style=style)


def num(x: float | None, digits: int = 4) -> str:
    """A number for a sentence: ``378.8``, ``1e15``, ``-2.5e-3``; ``—`` for None.

    Parameters
    ----------
    x
        The number.
    digits
        Significant digits (at most).
    """
    if x is None:
        return "—"
    x = float(x)
    if not math.isfinite(x):
        return str(x)
    s = f"{x:.{digits}g}"
    mant, sep, exp = s.partition("e")
    if not sep:
        return s
    return f"{mant}e{int(exp)}"


def console(stderr: bool = False):
    """A rich Console; wide (no truncated cells) when the stream is not a terminal.

    Parameters
    ----------
    stderr
        Write to stderr instead of stdout.
    """
    from rich.console import Console

    stream = sys.stderr if stderr else sys.stdout
    try:
        tty = stream.isatty()
    except (AttributeError, ValueError):
        tty = False
    if tty:
        return Console(stderr=stderr)
    try:
        columns = int(os.environ.get("COLUMNS", "0"))
    except ValueError:
        columns = 0
    return Console(stderr=stderr, width=max(LOG_WIDTH, columns))


def show(con, renderable) -> None:
    """Print a table (or other renderable); off a terminal, widen so nothing is cut.

    Parameters
    ----------
    con
        From :func:`console`.
    renderable
        A rich renderable, e.g. a Table whose cells are :func:`text` values.
    """
    if not con.is_terminal:
        need = con.measure(renderable, options=con.options.update_width(100_000)).maximum
        if need > con.width:
            con.width = need
    con.print(renderable)


def say(con, value: object, style: str = "") -> None:
    """Print one line of text: cleaned, no markup, no automatic highlighting.

    Parameters
    ----------
    con
        From :func:`console`.
    value
        The text (a :class:`rich.text.Text` is printed as it is, after its parts were made
        with :func:`text`).
    style
        A rich style for the whole line.
    """
    from rich.text import Text

    body = value if isinstance(value, Text) else text(value, style)
    con.print(body, soft_wrap=not con.is_terminal, highlight=False)


def markup_safe(value: object) -> str:
    """Cleaned text escaped for a place that reads rich markup (e.g. a progress column)."""
    from rich.markup import escape

    return escape(clean(value))
