"""``uqthermo data SEARCH``: find species in the built-in data library.

Lists the species matching a formula, CAS number or (part of a) name in the datasets shipped by
the ``chemicals`` package (:mod:`uqthermo.case.library`: ATcT, JANAF 1998, NIST WebBook Shomate),
with which dataset has which quantity in which phase; shows the values (ΔfH° with its stated
uncertainty, S°, the Cp curves' ranges) for the first few matches; and prints how to refer to the
first match from a case file (``formation_enthalpy = { library = "ATcT" }`` ...).
"""

from __future__ import annotations

import re
import sys

from .errors import InputError, Problem

__all__ = ["run_data", "case_hint", "DETAILED"]

#: Number of matches whose values are shown.
DETAILED = 3
_MAX_LIMIT = 1000
_QUANTITIES = (("formation_enthalpy", "ΔfH°"), ("standard_entropy", "S°"), ("heat_capacity", "Cp"),
               ("formation_gibbs_energy", "ΔfG°"))
_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_+\-]*$")


def _console():
    from rich.console import Console

    wide = None if sys.stdout.isatty() else 140
    return Console(highlight=False, soft_wrap=False, width=wide)


def _cell(datasets: dict, quantity: str) -> str:
    d = datasets.get(quantity) or {}
    return "; ".join(f"{ds} {','.join(ph)}" for ds, ph in d.items()) or "—"


def _kj(x: float) -> str:
    return f"{x / 1000:.6g} kJ/mol"


def _values(m) -> list[tuple[str, str, str, str]]:
    """(quantity, dataset, phase, text) rows with the values of one match."""
    from .case import library as lib

    rows = []
    for ds, phases in (m.datasets.get("formation_enthalpy") or {}).items():
        for ph in phases:
            try:
                v = lib.lookup_formation_enthalpy(m.cas, ph, ds)
            except InputError as e:
                rows.append(("ΔfH°(298.15 K)", ds, ph, e.message))
                continue
            if v.expanded_uncertainty and v.coverage_factor:
                unc = (f"U = {_kj(v.expanded_uncertainty)} (k = {v.coverage_factor:g}), "
                       f"u = {_kj(v.u)}")
            elif v.u == 0.0:
                unc = "exact (zero by definition)"
            elif v.u is not None:
                unc = f"u = {_kj(v.u)}"
            else:
                unc = "no uncertainty stated — give u in the case"
            rows.append(("ΔfH°(298.15 K)", f"{ds} {v.version}", ph, f"{_kj(v.value)}; {unc}"))
    for ds, phases in (m.datasets.get("standard_entropy") or {}).items():
        for ph in phases:
            try:
                v = lib.lookup_standard_entropy(m.cas, ph, ds)
            except InputError as e:
                rows.append(("S°(298.15 K)", ds, ph, e.message))
                continue
            unc = "no uncertainty stated — give u in the case" if v.u is None else f"u = {v.u:g} J/(mol*K)"
            rows.append(("S°(298.15 K)", f"{ds} {v.version}", ph, f"{v.value:.6g} J/(mol*K); {unc}"))
    for ds, phases in (m.datasets.get("heat_capacity") or {}).items():
        for ph in phases:
            key = "shomate" if ds == "shomate" else "janaf"
            try:
                c = lib.lookup_heat_capacity(m.cas, ph, key)
            except InputError as e:
                rows.append(("Cp", ds, ph, e.message))
                continue
            if key == "shomate":
                rng = ", ".join(f"{lo:g}-{hi:g} K" for lo, hi, _ in c.ranges)
                cp298 = ""
                if c.t_min <= 298.15 <= c.t_max:
                    cp298 = f"; Cp(298.15 K) = {float(c.cp([298.15])[0]):.4g} J/(mol*K)"
                rows.append(("Cp", "NIST WebBook Shomate", ph,
                             f"{len(c.ranges)} range(s): {rng}{cp298}; no uncertainty stated — give relative_u"))
            else:
                rows.append(("Cp", f"JANAF {c.version} table", ph,
                             f"{c.note.replace('; no uncertainty stated', '')}; no uncertainty stated — give relative_u"))
    return rows


def case_hint(m) -> str:
    """Case-file lines referring to match ``m`` through the library (placeholders where the
    dataset states no uncertainty)."""
    from .case import library as lib

    name = m.formula if m.formula and _NAME_RE.match(m.formula) else "X"
    fh = m.datasets.get("formation_enthalpy") or {}
    se = m.datasets.get("standard_entropy") or {}
    cp = m.datasets.get("heat_capacity") or {}
    phases = [p for p in ("g", "l", "s") if any(p in v for d in (fh, se, cp) for v in d.values())]
    lines = [f"[species.{name}]", f'formula = "{m.formula or "..."}"', f'cas = "{m.cas}"']
    need_u = False
    for ph in phases:
        sym = "cr" if ph == "s" else ph
        body = []
        if ph in fh.get("ATcT", ()):
            try:
                v = lib.lookup_formation_enthalpy(m.cas, ph, "ATcT")
                stated = v.u is not None
            except InputError:
                stated = False
            if stated:
                body.append('formation_enthalpy = { library = "ATcT" }')
            else:
                body.append('formation_enthalpy = { library = "ATcT", u = "<your u> kJ/mol" }')
                need_u = True
        elif ph in fh.get("JANAF", ()):
            body.append('formation_enthalpy = { library = "JANAF", u = "<your u> kJ/mol" }')
            need_u = True
        if ph in se.get("JANAF", ()):
            body.append('standard_entropy = { library = "JANAF", u = "<your u> J/(mol*K)" }')
            need_u = True
        if ph in cp.get("shomate", ()):
            body.append('heat_capacity = { library = "shomate", relative_u = "<your u> %" }')
            need_u = True
        elif ph in cp.get("JANAF", ()):
            body.append('heat_capacity = { library = "janaf", relative_u = "<your u> %", T = ["298.15 K", "1500 K"] }')
            need_u = True
        if body:
            lines.append(f"[species.{name}.{sym}]")
            lines += body
    if need_u:
        lines.insert(0, "# replace each <your u> by your estimate: the dataset states no uncertainty there "
                        "(the value is then flagged as assumed)")
    return "\n".join(lines)


def run_data(args) -> int:
    """Run ``uqthermo data SEARCH [--limit N]``; returns the exit code.

    Raises
    ------
    InputError
        Empty search text, bad ``--limit`` or no match (exit 2 via the CLI).
    """
    from rich.table import Table

    from .case import library as lib

    text = (args.search or "").strip()
    limit = args.limit if args.limit is not None else 20
    if not text:
        raise InputError(Problem("", "SEARCH", "give a formula (CH4), a CAS number (74-82-8) or part of a name (methan)"))
    if isinstance(limit, bool) or not isinstance(limit, int) or not (1 <= limit <= _MAX_LIMIT):
        raise InputError(Problem("", "--limit", f"must be a whole number from 1 to {_MAX_LIMIT}, got {limit!r}"))
    matches = lib.search(text, limit=limit + 1)
    more = len(matches) > limit
    matches = matches[:limit]
    if not matches:
        raise InputError(Problem("", "SEARCH", f"no species matches {text!r} in ATcT, JANAF or the NIST WebBook Shomate "
                                               "tables (as shipped in chemicals); try a formula (C2H6O), a CAS number "
                                               "(64-17-5) or part of a name (ethan)"))
    console = _console()
    info = lib.DATASETS
    title = (f"{len(matches)}{'+' if more else ''} match{'es' if len(matches) != 1 else ''} for {text!r} "
             f"(phases per dataset: g gas, l liquid, s solid)")
    t = Table(title=title, title_justify="left", header_style="bold")
    t.add_column("CAS", no_wrap=True)
    t.add_column("name")
    t.add_column("formula", no_wrap=True)
    for _, label in _QUANTITIES:
        t.add_column(label)
    for m in matches:
        t.add_row(m.cas, m.name or "?", m.formula or "?", *(_cell(m.datasets, q) for q, _ in _QUANTITIES))
    console.print(t)
    if more:
        console.print(f"more matches exist; raise --limit (now {limit}) or search more precisely")

    for m in matches[:DETAILED]:
        vt = Table(title=f"{m.name or '?'} ({m.formula or '?'}, CAS {m.cas})", title_justify="left",
                   header_style="bold")
        for col in ("quantity", "dataset", "phase", "value"):
            vt.add_column(col, no_wrap=col != "value")
        for row in _values(m):
            vt.add_row(*row)
        console.print(vt)
    if len(matches) > DETAILED:
        console.print(f"(values shown for the first {DETAILED}; search by CAS number for the others)")

    console.print("datasets: " + "; ".join(f"{d.key} = {d.title} {d.version}" for d in info.values())
                  + f" (via chemicals {lib._chemicals_version()}). ATcT ± values are read as 95 % expanded "
                  "uncertainties (k = 2); JANAF and the WebBook state none.", markup=False)
    first = matches[0]
    ambiguous = sum(1 for m in matches if m.formula and m.formula == first.formula) > 1
    console.print("")
    console.print(f"in a case file{' (the formula is ambiguous: keep the cas line)' if ambiguous else ''}:",
                  markup=False)
    print(case_hint(first))
    return 0
