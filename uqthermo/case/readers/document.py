"""Document control and display preferences of a case: ``[document]`` and the temperature unit.

``[document]`` (all optional) carries what a design or safety file's header block needs:

* ``reference`` — document or calculation number (e.g. ``"CALC-0417"``);
* ``revision`` — e.g. ``"B"`` or ``2``;
* ``prepared_by``, ``checked_by`` — names or initials;
* ``date`` — a TOML date (``2026-03-14``) or a string.

Values are text, printed as written in the report's header block (escaped there).

:func:`temperature_unit` finds the temperature unit the case's outputs are written in
(``"degC"``, ``"degF"`` or ``"K"``), so the report can show temperatures as the user wrote
them (°C stays °C), with kelvin in the appendix.
"""

from __future__ import annotations

import datetime as _dt
import re
from collections import Counter
from typing import Any

DOCUMENT_KEYS = ("reference", "revision", "prepared_by", "checked_by", "date")
MAX_TEXT = 200

#: output keys that hold a temperature
_TEMPERATURE_KEYS = ("temperature", "from", "to", "start_temperature", "limit", "process_temperature", "mtt", "td24")
_UNIT_RE = (
    ("degC", re.compile(r"(degC|°C|℃|celsius|deg_C)\s*$", re.IGNORECASE)),
    ("degF", re.compile(r"(degF|°F|℉|fahrenheit|deg_F)\s*$", re.IGNORECASE)),
    ("K", re.compile(r"(?<![A-Za-z])(K|kelvin)\s*$")),
)


def read_document(c, node: Any) -> dict[str, str]:
    """Validate ``[document]`` (problems go to the collector ``c``); return its values as text."""
    if node is None:
        return {}
    if not isinstance(node, dict):
        c.add("document", "must be a table ([document]) with reference, revision, prepared_by, checked_by, date")
        return {}
    c.unknown_keys(node, set(DOCUMENT_KEYS), "document")
    out: dict[str, str] = {}
    for k in DOCUMENT_KEYS:
        if k not in node:
            continue
        v = node[k]
        key = f"document.{k}"
        if isinstance(v, bool) or isinstance(v, (dict, list)):
            c.add(key, "must be text (a string)" + (", a number" if k == "revision" else "")
                  + (" or a TOML date such as 2026-03-14" if k == "date" else ""))
            continue
        if isinstance(v, (_dt.date, _dt.datetime)):
            if k != "date":
                c.add(key, "must be text (a string)")
                continue
            v = v.isoformat()
        elif isinstance(v, (int, float)):
            if k != "revision":
                c.add(key, "must be text (a string), e.g. \"CALC-0417\"" if k == "reference" else "must be text (a string)")
                continue
            v = f"{v:g}"
        elif not isinstance(v, str):
            c.add(key, "must be text (a string)")
            continue
        v = " ".join(v.split())
        if not v:
            c.add(key, "is empty; leave the key out or give a value")
            continue
        if len(v) > MAX_TEXT:
            c.add(key, f"is longer than {MAX_TEXT} characters")
            continue
        out[k] = v
    return out


def _unit_of(text: Any) -> str | None:
    if isinstance(text, dict):
        text = text.get("value")
    if not isinstance(text, str):
        return None
    for unit, rx in _UNIT_RE:
        if rx.search(text.strip()):
            return unit
    return None


def temperature_unit(raw: dict) -> str:
    """The temperature unit most used in the outputs' temperatures (ties: the first met); "K" by default."""
    seen: list[str] = []
    outputs = raw.get("output") if isinstance(raw, dict) else None
    for o in outputs if isinstance(outputs, list) else []:
        if not isinstance(o, dict):
            continue
        for k in _TEMPERATURE_KEYS:
            u = _unit_of(o.get(k))
            if u:
                seen.append(u)
        ts = o.get("temperatures")
        if isinstance(ts, dict):
            for k in ("from", "to"):
                u = _unit_of(ts.get(k))
                if u:
                    seen.append(u)
    if not seen:
        return "K"
    counts = Counter(seen)
    best = max(counts.values())
    return next(u for u in seen if counts[u] == best)
