"""Tables and figures numbered in the order the reader meets them.

The report context numbers tables and figures as it builds them (appendix parts before the
concise section's extra tables, a figure shared by two sections numbered where it was built);
the templates then place them in another order. After rendering, :func:`renumber` reads the
order in which each numbered table and figure is *defined* in the page (HTML anchors
``id="table-N"``/``id="figure-N"``; Markdown captions ``**Table N.`` and ``![Figure N:``) and
rewrites every "Table N"/"Figure N" and ``#table-N``/``#figure-N`` so that the numbers run
1, 2, 3… in document order. Other text that merely looks alike ("Perry Table 2-153") is left
alone: a number followed by a hyphen, a digit or a decimal point is not a reference.
"""

from __future__ import annotations

import re

__all__ = ["renumber"]

_DEFINITIONS = {
    "html": {"Table": re.compile(r'id="table-(\d+)"'), "Figure": re.compile(r'id="figure-(\d+)"')},
    "md": {"Table": re.compile(r"\*\*Table (\d+)\."), "Figure": re.compile(r"!\[Figure (\d+):")},
}


def _mapping(page: str, pattern: re.Pattern) -> dict[str, str]:
    order: dict[str, str] = {}
    for m in pattern.finditer(page):
        if m.group(1) not in order:
            order[m.group(1)] = str(len(order) + 1)
    return order


def renumber(page: str, kind: str) -> str:
    """``page`` (``kind`` "html" or "md") with its tables and figures numbered in document order."""
    for word, pattern in _DEFINITIONS[kind].items():
        new = _mapping(page, pattern)
        if all(k == v for k, v in new.items()):
            continue
        low = word.lower()
        rx = re.compile(rf"(?<![\w-])({word}[ \u00a0]|{low}-)(\d+)(?![\d-]|\.\d)")
        page = rx.sub(lambda m: m.group(1) + new.get(m.group(2), m.group(2)), page)
    return page
