"""A starter case from a reaction equation: every datum from the library, sources as comments.

``uqthermo data --case "C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)" --T "150 degC"`` writes a complete,
valid case file: one ``[species.*]`` table per participant with ``cas``, ``name`` and ``formula``,
``library = "auto"`` for the formation enthalpy, standard entropy and heat capacity of each phase
the path needs (and the transition data where a phase has no formation enthalpy of its own and is
reached from another phase), the reaction, and a reaction-enthalpy output at the temperature(s)
given. Above every datum a comment gives the value the library selects now, its standard
uncertainty with its basis, and the other sources side by side; the case itself keeps
``library = "auto"`` so that results.json records the provenance of each datum.

Species in the equation may be written as names (``toluene(l)``), CAS numbers are not allowed
there (they are not names), or formulas. A Hill formula shared by several species (C7H14) is
resolved from the groups a condensed formula is written with (``C6H11CH3``: a cyclohexyl group and a
methyl group -> methylcyclohexane): the candidate whose name contains the most of the groups'
name fragments wins, and the file says so in a comment; a tie is an error listing the candidates.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from ..errors import InputError, Problem

__all__ = ["starter_case", "resolve_token"]

#: condensed-formula groups -> name fragments they suggest
_GROUPS = [
    ("C6H11", ("cyclohex",)), ("C6H5", ("benz", "phen", "tolu", "anilin", "styren")), ("C6H4", ("benz", "phen", "xyl")),
    ("C5H9", ("cyclopent",)), ("COOH", ("acid",)), ("COO", ("ate", "ester")), ("CHO", ("al",)), ("NO2", ("nitro",)),
    ("NH2", ("amin", "anilin")), ("OH", ("ol",)), ("CN", ("nitril", "cyan")), ("C2H5", ("ethyl",)), ("CH3", ("methyl", "tolu", "meth")),
    ("CH2", ("eth", "prop", "but")), ("Cl", ("chlor",)), ("Br", ("brom",)), ("CO", ("one", "ket")),
]


@dataclass
class _Sp:
    token: str
    phases: set = field(default_factory=set)
    ident: object = None
    note: str = ""


def _fragments(token: str) -> list[str]:
    frags, s = [], token
    while s:
        for g, names in _GROUPS:
            if s.startswith(g) and not (g == "CO" and s.startswith("COO")):
                frags.append(names)
                s = s[len(g):]
                break
        else:
            s = s[1:]
    return frags


def resolve_token(token: str):
    """The library species meant by an equation token (name, or formula: condensed groups break ties).

    Returns
    -------
    (Identity, note)

    Raises
    ------
    InputError
        Unknown name, or a formula the groups do not single out (candidates listed).
    """
    from .library.base import LibraryLookupError
    from .library.formula import try_hill
    from .library.identify import atct_only, identify

    hill = try_hill(token)
    if hill is None:
        return identify(name=token.replace("_", " ")), ""
    try:
        return identify(formula=token), ""
    except LibraryLookupError as e:
        if not e.candidates:
            raise
        cands = [m for m in e.candidates if m.cas not in atct_only()] or e.candidates
        frags = _fragments(token)
        if not frags:
            raise

        def score(m):
            nm = (m.name or "").lower()
            return sum(1 for names in frags if any(f in nm for f in names))

        scored = sorted(((score(m), m) for m in cands), key=lambda x: -x[0])
        best = scored[0][0]
        top = [m for s, m in scored if s == best]
        if best == 0 or len(top) > 1:
            listed = ", ".join(f"{m.name} (CAS {m.cas})" for m in top[:8])
            raise LibraryLookupError(f"{token}: formula {hill} is shared by {len(cands)} species and its groups do not "
                                     f"single one out ({listed}); write the species' name in the equation, e.g. "
                                     f"toluene(l)") from None
        m = top[0]
        ident = identify(cas=m.cas)
        from dataclasses import replace

        ident = replace(ident, how="the groups of its condensed formula")
        others = [c for c in cands if c.cas != m.cas]
        note = (f"{token}: formula {hill} is shared by {len(cands)} species in the library; read as {m.name} "
                f"(CAS {m.cas}) from its groups — check (others: "
                + ", ".join(f"{c.name} {c.cas}" for c in others[:6]) + (" ..." if len(others) > 6 else "") + ")")
        return ident, note


def _q(text: str) -> str:
    return '"' + str(text).replace("\\", "\\\\").replace('"', '\\"') + '"'


def _fmt_si(q: str, v: float) -> str:
    if q in ("formation_enthalpy", "vaporization_enthalpy", "fusion_enthalpy"):
        return f"{v / 1000:.6g} kJ/mol"
    if q in ("standard_entropy",):
        return f"{v:.6g} J/(mol*K)"
    return f"{v:.6g} K"


def _scalar_comment(sel) -> list[str]:
    from .library.selection import QUANTITY_LABELS

    u = sel.uncertainty
    q = sel.quantity
    head = (f"# {QUANTITY_LABELS[q]}: {_fmt_si(q, sel.value)} from {sel.chosen.source.label}"
            + (" (ESTIMATE)" if sel.estimate else "") + f"; u = {_fmt_si(q, u.u) if u.u else '0 (exact)'} "
            f"[{u.basis}{', ASSUMED: check it' if u.assumed else ''}]")
    lines = [head, f"#   why: {sel.reason}; u: {u.reason}"]
    others = [o for o in sel.considered if o is not sel.chosen]
    if others:
        lines.append("#   other sources: " + "; ".join(f"{o.source.label} {_fmt_si(q, o.value)}" for o in others))
    return lines


def _curve_comment(sel) -> list[str]:
    u = sel.uncertainty
    c = sel.chosen
    lo, hi = sel.window
    lines = [f"# heat capacity: {c.source.label} {c.form}, valid {c.t_min:g}-{c.t_max:g} K"
             + (" (ESTIMATE)" if sel.estimate else "")
             + f"; relative u = {100 * u.u:.3g} % [{u.basis}{', ASSUMED: check it' if u.assumed else ''}]",
             f"#   why: {sel.reason}",
             f"#   u: {u.reason}"]
    others = [o for o in sel.considered + sel.not_covering if o is not c]
    if others:
        lines.append(f"#   other curves (window {lo:g}-{hi:g} K): " + "; ".join(
            f"{o.source.key} {o.t_min:g}-{o.t_max:g} K{' (covers)' if (not o.single_point and o.covers(lo, hi)) else ''}"
            for o in others))
    return lines


def _check_balance(equation: str, parts: list, species: dict) -> None:
    """Refuse an equation whose elements do not balance (the reaction reader's check,
    :func:`uqthermo.thermo.reaction.check_balance`, on the formulas the library found)."""
    from ..errors import BalanceError, UqthermoError
    from ..thermo.reaction import Reaction, check_balance
    from ..thermo.species import Species

    eq = " ".join(equation.split())
    table = {tok: Species(name=tok, formula=(sp.ident.formula or tok)) for tok, sp in species.items()}
    try:
        check_balance(Reaction(name="R1", equation=eq, participants=list(parts)), table)
    except BalanceError as e:
        detail = e.message.split(" does not balance: ", 1)[-1]
        raise InputError(Problem("", "--case", f"the equation {eq!r} does not balance: {detail}; "
                                               "correct the stoichiometric numbers")) from None
    except UqthermoError:
        return      # a formula the element parser cannot read: the case reader reports it


def starter_case(equation: str, temperatures: tuple[float, ...], t_text: str, *, title: str | None = None) -> str:
    """Text of a starter case file for ``equation`` at ``temperatures`` (K; one value or (lo, hi)).

    Raises
    ------
    InputError
        Bad equation, unknown or ambiguous species, data missing for a phase the path needs
        (keyed ``--case`` / ``--T``, with the closest alternatives).
    """
    from ..thermo.reaction import parse_equation
    from .library.base import LibraryLookupError
    from .library.selection import select_curve, select_value

    try:
        parts = parse_equation(equation)
    except Exception as e:  # PhysicsError
        raise InputError(Problem("", "--case", getattr(e, "message", str(e)))) from None
    species: dict[str, _Sp] = {}
    for p in parts:
        if p.phase is None:
            raise InputError(Problem("", "--case", f"state the phase of {p.species} in the equation, e.g. {p.species}(l)"))
        species.setdefault(p.species, _Sp(p.species)).phases.add("s" if p.phase == "cr" else p.phase)
    t_ref = 298.15
    lo, hi = min((t_ref,) + tuple(temperatures)), max((t_ref,) + tuple(temperatures))
    problems: list[Problem] = []
    notes: list[str] = []
    blocks: list[str] = []
    for tok, sp in species.items():
        try:
            sp.ident, sp.note = resolve_token(tok)
        except LibraryLookupError as e:
            problems.append(Problem("", "--case", f"{tok}: {e.message}"))
    if problems:
        raise InputError(problems)
    _check_balance(equation, parts, species)
    for tok, sp in species.items():
        if sp.note:
            notes.append(sp.note)
        ident = sp.ident
        key = tok if re.match(r"^[A-Za-z][A-Za-z0-9_+\-]*$", tok) else re.sub(r"\W", "_", tok)
        out = [f"[species.{key}]", f"# {ident.label}, found by {ident.how}" + (f" — {sp.note}" if sp.note else "")]
        out += [f"cas = {_q(ident.cas)}", f"name = {_q(ident.name or tok)}", f"formula = {_q(ident.formula or tok)}"]
        phase_blocks: dict[str, list[str]] = {}
        transitions: list[str] = []
        for ph in sorted(sp.phases):
            route = None
            try:
                h = select_value(ident, "formation_enthalpy", ph)
            except LibraryLookupError as e:
                # reach the phase from another one through a transition
                for q_ph, pair, tq in (("l", "l-g", "boiling_temperature"), ("s", "s-l", "melting_temperature")):
                    if (pair.split("-")[1] == ph):
                        try:
                            hq = select_value(ident, "formation_enthalpy", q_ph)
                            tt = select_value(ident, tq, pair)
                            route = (q_ph, pair, hq, tt)
                            break
                        except LibraryLookupError:
                            continue
                if route is None:
                    problems.append(Problem("", "--case", f"{tok}({ph}): {e.message}"))
                    continue
            if route is None:
                windows = {ph: (lo, hi)}
                body = _scalar_comment(h) + ['formation_enthalpy = { library = "auto" }']
            else:
                q_ph, pair, hq, tt = route
                T_tr = tt.value
                windows = {q_ph: (t_ref, max(t_ref, T_tr)), ph: (min(T_tr, lo), max(T_tr, hi))}
                qb = phase_blocks.setdefault(q_ph, [])
                qb += _scalar_comment(hq) + ['formation_enthalpy = { library = "auto" }']
                body = [f"# no formation enthalpy of {ident.label} in phase {ph}: reached from {q_ph} through "
                        f"the transition at {T_tr:g} K"]
                try:
                    th = select_value(ident, "vaporization_enthalpy" if pair == "l-g" else "fusion_enthalpy", pair,
                                      T=T_tr)
                except LibraryLookupError as e2:
                    problems.append(Problem("", "--case", f"{tok}: {e2.message}"))
                    continue
                transitions += (["[[species.%s.transition]]" % key] + _scalar_comment(tt)
                                + _scalar_comment(th)
                                + [f"from = {_q(q_ph if q_ph != 's' else 'cr')}", f"to = {_q(ph)}",
                                   'temperature = { library = "auto" }', 'enthalpy = { library = "auto" }'])
            try:
                s0 = select_value(ident, "standard_entropy", ph if route is None else route[0])
                target = phase_blocks.setdefault(ph if route is None else route[0], [])
                target += _scalar_comment(s0) + ['standard_entropy = { library = "auto" }']
            except LibraryLookupError as e:
                notes.append(f"{tok}({ph}): no standard entropy in the library ({e.message}); ΔrG and K outputs "
                             "would need one")
            for wph, win in windows.items():
                try:
                    cs = select_curve(ident, wph, win)
                    extra = ""
                except LibraryLookupError as e:
                    try:
                        cs = select_curve(ident, wph, win, extrapolate=True)
                        extra = ", extrapolate = true"
                        notes.append(f"{tok}({wph}): {e.message} — the curve covering most of the window is used "
                                     "with extrapolate = true (flagged in the run)")
                    except LibraryLookupError as e3:
                        problems.append(Problem("", "--T", f"{tok}({wph}): {e3.message}"))
                        continue
                phase_blocks.setdefault(wph, [])
                phase_blocks[wph] += _curve_comment(cs) + ['heat_capacity = { library = "auto"%s }' % extra]
            if route is None:
                phase_blocks.setdefault(ph, [])
                phase_blocks[ph] = body + phase_blocks[ph]
            # a held phase beyond its normal transition: say so
            if route is None and ph == "l":
                try:
                    tb = select_value(ident, "boiling_temperature", "l-g").value
                    if hi > tb:
                        notes.append(f"{tok}(l) is held as a liquid up to {hi:g} K although it boils at {tb:g} K at "
                                     "1 atm (a liquid under pressure); write it as (g) for a vapour-phase path")
                except LibraryLookupError:
                    pass
        for ph, lines in phase_blocks.items():
            out.append("")
            out.append(f"[species.{key}.{'cr' if ph == 's' else ph}]")
            out += lines
        if transitions:
            out.append("")
            out += transitions
        blocks.append("\n".join(out))
    if problems:
        raise InputError(problems)
    eq = equation.strip()
    if len(temperatures) == 1:
        t_line = f"temperature = {_q(t_text)}"
    else:
        a, b = temperatures
        step = max((b - a) / 10.0, 1.0)
        t_line = f'temperatures = {{ from = "{a:g} K", to = "{b:g} K", step = "{step:.6g} K" }}'
    head = [
        f"# Starter case written by `uqthermo data --case` for {eq} at {t_text}.",
        "# Every datum is library = \"auto\": the library selects the best source whose range covers the",
        "# temperatures this case needs and records the source, the reason and the uncertainty's basis in",
        "# results.json. The comments show what it selects now and the other sources side by side.",
        "# Uncertainties marked ASSUMED (or ESTIMATE) are not stated by any source: check them; replace any",
        "# datum by your own value = \"...\" with its uncertainty where you have better data.",
    ]
    for n in notes:
        head.append(f"# NOTE: {n}")
    title = title or f"{eq} at {t_text}"
    doc = "\n".join(head) + f"\n\ntitle = {_q(title)}\n\n[settings]\nreference_temperature = \"298.15 K\"\n\n"
    doc += "\n\n".join(blocks)
    doc += f"\n\n[reaction.R1]\nequation = {_q(eq)}\n\n[[output]]\nname = \"reaction_enthalpy\"\n" \
           f"kind = \"reaction_enthalpy\"\nreaction = \"R1\"\n{t_line}\n"
    return doc
