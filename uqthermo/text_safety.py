"""User text leaving the tool: safe for a terminal, for terminal markup and for spreadsheets.

Case files, results files and command lines are written by people (or copied from
elsewhere) and may hold anything. Whatever the tool echoes goes through one of these
helpers:

* :func:`terminal_text` — for every line printed to a terminal (summaries, warnings,
  ``FILE: KEY: message`` error lines). Control characters cannot act on the terminal:
  C0 controls (ESC, CR, LF, BEL, …), DEL, C1 controls (U+0080–U+009F, e.g. the one-byte
  CSI) and the Unicode bidirectional controls (U+202A–U+202E, U+2066–U+2069, U+200E,
  U+200F, U+061C) are replaced by a visible escape (``\\x1b``, ``\\n``, ``\\u202e``), so
  a title cannot clear the screen, plant a hyperlink, forge a second error line or
  reorder what follows it. Very long text is shortened (``…`` and the full length).
* :func:`markup` — :func:`terminal_text`, then escaped for the ``rich`` console
  (``rich.markup.escape``) so that ``[bold]`` or ``[kJ/mol]`` in user text is printed as
  written and never read as a style tag.
* :func:`csv_cell` and :func:`csv_text` — the only CSV writer of the tool. Following
  the OWASP guidance on CSV injection, a text cell whose first visible character is
  ``=``, ``+``, ``-``, ``@``, a tab, CR or LF — also after leading spaces, no-break spaces
  and other Unicode spaces, and in the full-width and small forms (``＝ ＋ － ＠``, …) — gets
  a leading apostrophe so that a spreadsheet shows it as text instead of evaluating
  it; a plain number such as ``-205.3`` stays a number. Every cell holding a comma,
  a quote, CR or LF is quoted (RFC 4180), so a bare carriage return can never start
  a new row.

This module is light on purpose (standard library only; ``rich`` only inside
:func:`markup`): the command line uses it on its error path.
"""

from __future__ import annotations

import math
import re
import unicodedata
from typing import Any, Iterable, Sequence

__all__ = ["terminal_text", "markup", "markup_view", "shorten", "csv_cell", "csv_text", "csv_frame_text", "MAX_ECHO"]

#: longest user text echoed in one piece (characters); longer text is shortened
MAX_ECHO = 2000

_BIDI = {0x061C, 0x200E, 0x200F, *range(0x202A, 0x202F), *range(0x2066, 0x206A)}
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _visible(ch: str) -> str:
    if ch in _NAMED:
        return _NAMED[ch]
    o = ord(ch)
    return f"\\x{o:02x}" if o < 0x100 else f"\\u{o:04x}"


def _unsafe(ch: str) -> bool:
    o = ord(ch)
    return o < 0x20 or 0x7F <= o <= 0x9F or o in _BIDI


def shorten(s: str, limit: int = MAX_ECHO) -> str:
    """``s`` itself, or its start with ``… (N characters)`` when longer than ``limit``."""
    if len(s) <= limit:
        return s
    return f"{s[:limit]}… ({len(s)} characters)"


def terminal_text(value: Any, *, limit: int = MAX_ECHO, keep_newlines: bool = False) -> str:
    """``value`` as text that is safe to print on a terminal (see the module docstring).

    Parameters
    ----------
    limit : int
        Longest text kept (characters, counted before escaping); longer text is shortened.
    keep_newlines : bool
        Keep ``\\n`` as a line break (for multi-line blocks the tool composes itself);
        by default it is shown as ``\\n`` so one message stays one line.
    """
    s = shorten(str(value), limit)
    if not any(_unsafe(ch) for ch in s):
        return s
    return "".join(ch if not _unsafe(ch) or (keep_newlines and ch == "\n") else _visible(ch) for ch in s)


def markup(value: Any, *, limit: int = MAX_ECHO) -> str:
    """``value`` for a ``rich`` console: :func:`terminal_text`, then markup-escaped."""
    from rich.markup import escape

    return escape(terminal_text(value, limit=limit))


def markup_view(value: Any) -> Any:
    """A copy of a results-like structure (dicts, lists, scalars) with every string passed
    through :func:`markup`, for code that composes ``rich`` markup from user data."""
    if isinstance(value, str):
        return markup(value)
    if isinstance(value, dict):
        return {k: markup_view(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [markup_view(v) for v in value]
    return value


# ----------------------------------------------------------------------------- CSV

#: first characters a spreadsheet may read as the start of a formula (OWASP), with the
#: full-width and small forms of = + - @ that some spreadsheets normalise
_FORMULA_START = frozenset("=+-@\t\r\n\uff1d\uff0b\uff0d\uff20\ufe66\ufe62\ufe63\ufe6b\u2212")
_NEEDS_QUOTES = frozenset(',"\r\n')


def _leading_space(ch: str) -> bool:
    return ch == " " or ch == "\ufeff" or ch == "\u200b" or unicodedata.category(ch) == "Zs"


_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def _is_plain_number(s: str) -> bool:
    return _PLAIN_NUMBER.fullmatch(s) is not None


def csv_cell(value: Any) -> Any:
    """Neutralise a text cell that a spreadsheet could read as a formula (OWASP CSV injection).

    Non-text values are returned unchanged. A text cell whose first character after
    leading (Unicode) spaces is one of ``= + - @``, tab, CR, LF or their full-width/small
    forms gets a leading ``'``; a plain number written as text (``"-205.3"``) does not.
    """
    if not isinstance(value, str) or not value:
        return value
    i = 0
    while i < len(value) and _leading_space(value[i]):
        i += 1
    if i < len(value) and value[i] in _FORMULA_START:
        if value[i] in "+-" and i == 0 and _is_plain_number(value):
            return value
        return "'" + value
    return value


def _cell_text(value: Any) -> str:
    if value is None or type(value).__name__ in ("NAType", "NaTType"):
        return ""
    if isinstance(value, bool):
        return "True" if value else "False"
    if isinstance(value, float) or type(value).__module__ == "numpy" and hasattr(value, "dtype") and value.dtype.kind == "f":
        v = float(value)
        return "" if math.isnan(v) else repr(v)
    if type(value).__module__ == "numpy" and hasattr(value, "item"):
        return _cell_text(value.item())
    s = value if isinstance(value, str) else str(value)
    s = csv_cell(s)
    if any(c in _NEEDS_QUOTES for c in s):
        return '"' + s.replace('"', '""') + '"'
    return s


def csv_text(header: Sequence[Any] | None, rows: Iterable[Sequence[Any]]) -> str:
    """CSV text (comma-separated, ``\\n`` line ends) with every cell neutralised and quoted as needed.

    Numbers are written as Python writes them (``repr`` of a float: shortest round-trip
    form), ``None`` and NaN as empty cells, booleans as ``True``/``False``.
    """
    lines = []
    if header is not None:
        lines.append(",".join(_cell_text(h) for h in header))
    for row in rows:
        lines.append(",".join(_cell_text(v) for v in row))
    return "".join(line + "\n" for line in lines)


def csv_frame_text(df) -> str:
    """:func:`csv_text` of a pandas DataFrame (its columns as the header, no index)."""
    return csv_text(list(df.columns), df.itertuples(index=False, name=None))
