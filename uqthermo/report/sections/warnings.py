"""Warnings as a reader should see them: one line per output for per-temperature repeats.

A run over a temperature window can raise the same warning at every point (the linear
interval not validated at 11 temperatures, a skewed distribution at 9). :func:`grouped`
folds those into one line per output with the count of points, the temperature range and
the range of the number involved; every other warning passes through unchanged. The
terminal summary and the report use the same function; results.json keeps every warning.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from ..fields import outputs, points
from ..rounding import fmt_temperature

# the run's wording (results.py), old and new
_NOT_VALIDATED = re.compile(
    r"^output\.(?P<name>.+?) at (?P<T>[-+\d.eE]+) K: the linear \(GUM\) interval (?:is not validated by Monte Carlo "
    r"\(JCGM 101 §8, δ = (?P<tol>[^)]+)\); report the Monte Carlo result|differs from the Monte Carlo interval by "
    r"(?P<d>[-+\d.eE]+)(?: (?P<unit>[^,]+))?, more than δ = (?P<tol2>[-+\d.eE]+)(?: [^(;]+)? \(JCGM 101 §8\); "
    r"the Monte Carlo result is reported)\s*$")
_SKEWED = re.compile(
    r"^output\.(?P<name>.+?) at (?P<T>[-+\d.eE]+) K: the Monte Carlo distribution is skewed \(skewness (?P<s>[-+\d.eE]+)\);"
    r" use the Monte Carlo interval, not ±U\s*$")

_UNDECIDED = re.compile(
    r"^output\.(?P<name>.+?) at (?P<T>[-+\d.eE]+) K: linear \(GUM\) vs Monte Carlo not decided: the Monte Carlo is not "
    r"stable to δ = (?P<d>[-+\d.eE]+)(?: (?P<unit>.+?))? at (?P<n>\d+) trials \(JCGM 101 §7\.9\); increase --samples "
    r"or use adaptive; the linear result is reported\s*$")


def _range(values: Sequence[float], fmt) -> str:
    lo, hi = min(values), max(values)
    return fmt(lo) if fmt(lo) == fmt(hi) else f"{fmt(lo)}–{fmt(hi)}"


def grouped(results: Mapping, warnings: Sequence[Any] | None = None) -> list[str]:
    """The run's warnings with per-temperature repeats folded into one line per output (order kept)."""
    ws = [str(w) for w in (results.get("warnings") if warnings is None else warnings) or [] if str(w).strip()]
    n_points = {str(o.get("name")): len(points(o)) for o in outputs(results)}
    groups: dict[tuple[str, str], dict] = {}
    out: list[Any] = []
    for w in ws:
        m = _NOT_VALIDATED.match(w)
        kind = "nv"
        if not m:
            m = _SKEWED.match(w)
            kind = "skew"
        if not m:
            m = _UNDECIDED.match(w)
            kind = "nd"
        if not m:
            out.append(w)
            continue
        key = (kind, m.group("name"))
        g = groups.get(key)
        if g is None:
            g = groups[key] = {"kind": kind, "name": m.group("name"), "T": [], "x": [], "tol": None, "unit": ""}
            out.append(g)
        g["T"].append(float(m.group("T")))
        if kind == "skew":
            g["x"].append(float(m.group("s")))
        elif kind == "nd":
            g["x"].append(float(m.group("d")))
            g["unit"], g["tol"] = m.group("unit") or "", m.group("n")
        else:
            g["tol"] = m.group("tol") or m.group("tol2")
            g["unit"] = m.group("unit") or ""
            if m.group("d"):
                g["x"].append(float(m.group("d")))
    lines = []
    for item in out:
        if isinstance(item, str):
            lines.append(item)
            continue
        name, Ts = item["name"], item["T"]
        total = n_points.get(name)
        where = (f"at {fmt_temperature(Ts[0])} K" if len(Ts) == 1 else
                 f"at {len(Ts)}{f' of {total}' if total else ''} temperatures ({_range(Ts, fmt_temperature)} K)")
        if item["kind"] == "nv":
            unit = f" {item['unit']}" if item["unit"] else ""
            by = f"by {_range(item['x'], lambda v: f'{v:.2g}')}{unit}, " if item["x"] else "by "
            lines.append(f"output.{name} {where}: the linear (GUM) interval differs from the Monte Carlo interval {by}more "
                         f"than the numerical tolerance δ = {item['tol']}{unit if item['x'] else ''} (JCGM 101 §8); the Monte "
                         f"Carlo result{'s are' if len(Ts) > 1 else ' is'} reported")
        elif item["kind"] == "nd":
            unit = f" {item['unit']}" if item["unit"] else ""
            lines.append(f"output.{name} {where}: linear (GUM) vs Monte Carlo not decided: the Monte Carlo is not stable "
                         f"to δ = {_range(item['x'], lambda v: f'{v:.2g}')}{unit} at {item['tol']} trials (JCGM 101 §7.9); "
                         f"increase --samples or use adaptive; the linear result{'s are' if len(Ts) > 1 else ' is'} reported")
        else:
            lines.append(f"output.{name} {where}: the Monte Carlo distribution is skewed (skewness "
                         f"{_range(item['x'], lambda v: f'{v:.2f}')}); use the Monte Carlo intervals, not ±U")
    return lines


__all__ = ["grouped"]
