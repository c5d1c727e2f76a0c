"""``uqthermo data``: look species up in the built-in data library, or write a starter case.

``uqthermo data SEARCH [--T 298.15K..700K]`` lists the species matching a formula, CAS number or
(part of a) name in every source of the library (:mod:`uqthermo.case.library`), then, for the
first matches, every source's value of each quantity side by side (ΔfH°, S°, phase-change data)
and every heat-capacity curve with its validity range, marking which ranges cover the
temperature window and which source ``library = "auto"`` selects, with the uncertainty and its
basis. It ends with the case-file lines that take the first match from the library.

``uqthermo data --case "C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)" --T "150 degC" [--out FILE]`` writes
a starter case (:mod:`uqthermo.case.starter`) to FILE (or prints it).
"""

from __future__ import annotations

import os
import re
import sys

from ..errors import InputError, Problem
from ..text_safety import markup

__all__ = ["execute", "case_hint", "parse_window", "DETAILED"]

#: Number of matches whose values are shown.
DETAILED = 3
_MAX_LIMIT = 1000
_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_+\-]*$")
_Q = (("formation_enthalpy", "ΔfH°"), ("standard_entropy", "S°"), ("heat_capacity", "Cp"),
      ("vaporization_enthalpy", "ΔvapH"))


def _console():
    from rich.console import Console

    wide = None if sys.stdout.isatty() else 160
    return Console(highlight=False, soft_wrap=False, width=wide)


def parse_window(text: str | None, key: str = "--T") -> tuple[tuple[float, ...], str]:
    """``"150 degC"`` -> ((423.15,), text); ``"298.15K..700K"`` -> ((298.15, 700.0), text).

    Raises
    ------
    InputError
        Unreadable temperature (keyed ``--T``).
    """
    from ..case.units import parse_quantity

    if text is None:
        return (298.15,), "298.15 K"
    parts = [p.strip() for p in text.split("..")]
    if len(parts) not in (1, 2) or not all(parts):
        raise InputError(Problem("", key, f"cannot read {text!r}; give a temperature (\"150 degC\") or a window "
                                          "(\"298.15K..700K\")"))
    out = []
    for p in parts:
        p2 = re.sub(r"^([-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?)(?=[A-Za-z°])", r"\1 ", p)
        try:
            v = parse_quantity(p2, "temperature")
        except Exception as e:
            raise InputError(Problem("", key, f"cannot read temperature {p!r}: {getattr(e, 'args', [''])[0]}")) from None
        if not (v > 0) or v > 1e5:
            raise InputError(Problem("", key, f"temperature {p!r} is not a positive absolute temperature"))
        out.append(v)
    if len(out) == 2 and out[1] < out[0]:
        out = [out[1], out[0]]
    return tuple(out), text


def _fmt(q: str, v: float | None) -> str:
    if v is None:
        return "—"
    if q in ("formation_enthalpy", "vaporization_enthalpy", "fusion_enthalpy"):
        return f"{v / 1000:.6g} kJ/mol"
    if q == "standard_entropy":
        return f"{v:.6g} J/(mol*K)"
    return f"{v:.6g} K"


def _scalar_rows(ident, window) -> list[list[str]]:
    from ..case.library.base import LibraryLookupError
    from ..case.library.selection import QUANTITY_LABELS, select_value

    rows = []
    items = [("formation_enthalpy", p, None) for p in ("g", "l", "s")]
    items += [("standard_entropy", p, None) for p in ("g", "l", "s")]
    items += [("boiling_temperature", "l-g", None), ("melting_temperature", "s-l", None)]
    tb = None
    for q, ph, T in items:
        try:
            sel = select_value(ident, q, ph, T=T)
        except LibraryLookupError:
            continue
        if q == "boiling_temperature":
            tb = sel.value
        _rows_of(rows, sel, QUANTITY_LABELS[q], ph, q)
    if tb is not None:
        try:
            sel = select_value(ident, "vaporization_enthalpy", "l-g", T=tb)
            _rows_of(rows, sel, f"ΔvapH at {tb:g} K", "l-g", "vaporization_enthalpy")
        except LibraryLookupError:
            pass
    try:
        sel = select_value(ident, "fusion_enthalpy", "s-l")
        _rows_of(rows, sel, "ΔfusH at Tm", "s-l", "fusion_enthalpy")
    except LibraryLookupError:
        pass
    return rows


#: appended to the chosen source's uncertainty when the sources disagree widely without a majority
#: (``library.uncertainty.wide_spread_limit``); :data:`_WIDE_NOTE` is printed under the table
_WIDE_MARK = "WIDE SPREAD"
_WIDE = " " + _WIDE_MARK + " (u > {})"
_WIDE_NOTE = (_WIDE_MARK + ": the sources disagree widely without a majority, so u (half their spread) is beyond "
              "{:g} times the uncertainty assumed for a compilation (our rule); check the primary literature or "
              "measure it before relying on this datum")


def _rows_of(rows, sel, label, ph, q):
    from ..case.library.uncertainty import wide_spread_limit

    u = sel.uncertainty
    for o in sel.considered:
        chosen = o is sel.chosen
        unc = ""
        if chosen:
            unc = (f"u = {_fmt(q, u.u)} [{u.basis}]" if u.u else "exact") + (" ESTIMATE" if sel.estimate else "")
            wide = wide_spread_limit(q, u, o.value)
            if wide is not None:
                unc += _WIDE.format(_fmt(q, wide))
        elif o.u is not None:
            unc = f"u = {_fmt(q, o.u)} (stated)" if o.u_basis == "stated" else f"u = {_fmt(q, o.u)} ({o.u_basis})"
        out = next((x for x in u.outliers if x["source"] == o.source.label), None)
        if out is not None and not chosen:
            unc = f"outlier: {'+' if out['deviation'] > 0 else '-'}{_fmt(q, abs(out['deviation']))} from ★, left out of u"
        rows.append([label if chosen else "", ph if chosen else "", ("★ " if chosen else "  ") + o.source.label,
                     _fmt(q, o.value), unc])


def _curve_rows(ident, window) -> list[list[str]]:
    from ..case.library.base import LibraryLookupError
    from ..case.library.selection import select_curve
    from ..case.library.sources import curve_candidates
    from ..case.library.uncertainty import wide_spread_limit

    lo, hi = window
    rows = []
    for ph in ("g", "l", "s"):
        from ..case.library.selection import rank_of

        cands = sorted(curve_candidates(ident.cas, ph), key=lambda c: rank_of("heat_capacity", ph, c.source.key))
        if not cands:
            continue
        try:
            sel = select_curve(ident, ph, (lo, hi))
            pick, unc = sel.chosen, sel.uncertainty
        except LibraryLookupError:
            pick, unc = None, None
        for c in cands:
            if c.single_point:
                rng, cov = "298.15 K only", "—"
            else:
                rng = f"{c.t_min:g}-{c.t_max:g} K"
                cov = "yes" if c.covers(lo, hi) else "no"
            pts = [t for t in ((lo, hi) if hi > lo else (lo,)) if c.t_min - 1e-3 <= t <= c.t_max + 1e-3]
            cp = ", ".join(f"{float(c.cp([t])[0]):.4g}" for t in pts) or "—"
            star = pick is not None and (c.source.key, c.form, c.t_min, c.t_max) == (
                pick.source.key, pick.form, pick.t_min, pick.t_max)
            u = (f"u = {100 * unc.u:.2g} % [{unc.basis}]" if star else
                 (f"{100 * c.relative_u:.2g} % ({c.u_basis})" if c.relative_u else ""))
            wide = wide_spread_limit("heat_capacity", unc) if star else None
            if wide is not None:
                u += _WIDE.format(f"{100 * wide:.3g} %")
            out = next((o for o in (unc.outliers if unc is not None else ()) if o["source"] == c.source.label), None)
            if out is not None and not star:
                u = f"outlier: {out['deviation_percent']:+.0f} % from ★, left out of u"
            rows.append([ph, ("★ " if star else "  ") + c.source.key + (" (estimate)" if c.estimate else ""),
                         c.form, rng, cov, cp, u])
    return rows


def case_hint(m, window=(298.15, 298.15)) -> str:
    """Case-file lines taking species ``m`` from the library with ``library = "auto"``."""
    from ..case.library.base import LibraryLookupError
    from ..case.library.identify import identify
    from ..case.library.selection import select_curve, select_value

    ident = identify(cas=m.cas)
    name = m.formula if m.formula and _NAME_RE.match(m.formula) else "X"
    lines = [f"[species.{name}]", f'cas = "{m.cas}"']
    for ph in ("g", "l", "s"):
        body = []
        for q in ("formation_enthalpy", "standard_entropy"):
            try:
                select_value(ident, q, ph)
                body.append(f'{q} = {{ library = "auto" }}')
            except LibraryLookupError:
                pass
        if not body:
            continue
        try:
            select_curve(ident, ph, window)
            body.append('heat_capacity = { library = "auto" }')
        except LibraryLookupError as e:
            body.append(f"# heat_capacity: {e.message}")
        lines.append(f"[species.{name}.{'cr' if ph == 's' else ph}]")
        lines += body
    try:
        select_value(ident, "boiling_temperature", "l-g")
        if any(line.endswith(".l]") for line in lines) and any(line.endswith(".g]") for line in lines):
            lines += [f"[[species.{name}.transition]]", 'from = "l"', 'to = "g"', 'temperature = { library = "auto" }',
                      'enthalpy = { library = "auto" }']
    except LibraryLookupError:
        pass
    return "\n".join(lines)


def _write_case(args) -> int:
    from ..case.starter import starter_case

    temps, text = parse_window(args.T)
    if args.T is None:
        raise InputError(Problem("", "--T", "give the temperature of the reaction, e.g. --T \"150 degC\" or a window "
                                            "--T \"300K..500K\""))
    doc = starter_case(args.case, temps, text)
    if args.out:
        import tempfile

        from ..pipeline.publish import file_mode
        from ..text_safety import terminal_text

        if os.path.isdir(args.out):
            raise InputError(Problem(args.out, "--out", "is a folder; give the name of the case file to write"))
        if os.path.lexists(args.out) and not args.force:
            raise InputError(Problem(args.out, "--out", "exists; give --force to replace it"))
        folder = os.path.dirname(os.path.abspath(args.out))
        if not os.path.isdir(folder):
            raise InputError(Problem(args.out, "--out", f"folder {folder} does not exist"))
        # written beside the target under a fresh name, then renamed: never half a file, never another file
        fd, tmp = tempfile.mkstemp(prefix=f".{os.path.basename(args.out)}.", suffix=".tmp", dir=folder)
        try:
            with os.fdopen(fd, "w", encoding="utf-8") as f:
                f.write(doc)
            os.chmod(tmp, file_mode())
            os.replace(tmp, args.out)
        except BaseException:
            if os.path.exists(tmp):
                os.unlink(tmp)
            raise
        print(terminal_text(f"wrote {args.out}: check it with `uqthermo check {args.out}`, run it with "
                            f"`uqthermo run {args.out} --out DIR`"))
    else:
        sys.stdout.write(doc)
    return 0


def execute(args) -> int:
    """Run ``uqthermo data``; returns the exit code.

    Raises
    ------
    InputError
        Empty search text, bad ``--limit`` or ``--T``, no match, or a starter case that cannot be
        built (exit 2 via the CLI).
    """
    if getattr(args, "case", None):
        return _write_case(args)
    from rich.table import Table

    from ..case.library.base import chemicals_version
    from ..case.library.identify import identify, search

    text = (args.search or "").strip()
    limit = args.limit if args.limit is not None else 20
    if not text:
        raise InputError(Problem("", "SEARCH", "give a formula (CH4), a CAS number (74-82-8) or part of a name (methan), "
                                               "or --case \"EQUATION\" --T TEMPERATURE for a starter case"))
    if isinstance(limit, bool) or not isinstance(limit, int) or not (1 <= limit <= _MAX_LIMIT):
        raise InputError(Problem("", "--limit", f"must be a whole number from 1 to {_MAX_LIMIT}, got {limit!r}"))
    temps, ttext = parse_window(getattr(args, "T", None))
    window = (min(temps), max(temps)) if len(temps) == 2 else (min(298.15, temps[0]), max(298.15, temps[0]))
    matches = search(text, limit=limit + 1)
    more = len(matches) > limit
    matches = matches[:limit]
    if not matches:
        from ..case.library.identify import suggest_names

        close = suggest_names(text)
        raise InputError(Problem("", "SEARCH", f"no species matches {text!r} in the library"
                                               + (f"; closest names: {', '.join(close)}" if close else "")
                                               + "; try a formula (C2H6O), a CAS number (64-17-5) or part of a name (ethan)"))
    console = _console()
    t = Table(title=f"{len(matches)}{'+' if more else ''} match{'es' if len(matches) != 1 else ''} for {text!r} "
                    "(phases with data: g gas, l liquid, s solid; l-g boiling, s-l melting)",
              title_justify="left", header_style="bold")
    for col in ("CAS", "name", "formula") + tuple(lbl for _, lbl in _Q):
        t.add_column(col, no_wrap=col in ("CAS", "formula"))
    for m in matches:
        cells = [",".join(v for d in [m.datasets.get(q, {})] for ph in d.values() for v in ph) or "—" for q, _ in _Q]
        t.add_row(m.cas, m.name or "?", m.formula or "?", *cells)
    console.print(t)
    if more:
        console.print(f"more matches exist; raise --limit (now {limit}) or search more precisely")
    wtxt = f"{window[0]:g}-{window[1]:g} K" if window[1] > window[0] else f"{window[0]:g} K"
    for m in matches[:DETAILED]:
        ident = identify(cas=m.cas)
        st = Table(title=f"{m.name or '?'} ({m.formula or '?'}, CAS {m.cas}): values by source (★ = library = \"auto\")",
                   title_justify="left", header_style="bold")
        for col in ("quantity", "phase", "source", "value", "uncertainty"):
            st.add_column(col)
        srow = _scalar_rows(ident, window)
        for row in srow:
            st.add_row(*(markup(x) for x in row))      # "[assumed]" is text, not rich markup
        console.print(st)
        wide = any(_WIDE_MARK in row[-1] for row in srow)       # the uncertainty cell carries the mark
        ct = Table(title=f"heat-capacity curves: which ranges cover {wtxt} (--T sets the window)",
                   title_justify="left", header_style="bold")
        for col in ("phase", "source", "equation", "range", f"covers {wtxt}", "Cp J/(mol*K) at window ends", "u"):
            ct.add_column(col)
        crow = _curve_rows(ident, window)
        for row in crow:
            ct.add_row(*(markup(x) for x in row))
        if crow:
            console.print(ct)
        if wide or any(_WIDE_MARK in row[-1] for row in crow):
            from ..case.library.uncertainty import OUTLIER_FACTOR

            console.print(_WIDE_NOTE.format(OUTLIER_FACTOR), markup=False)
    if len(matches) > DETAILED:
        console.print(f"(values shown for the first {DETAILED}; search by CAS number for the others)")
    console.print(f"sources via chemicals {chemicals_version()}; uncertainty basis: stated by the source, published for "
                  "the method, half the spread of the sources, or assumed (check it) — see docs/case-format.md",
                  markup=False)
    console.print("")
    console.print(f"in a case file (window {wtxt}):", markup=False)
    print(case_hint(matches[0], window))
    return 0
