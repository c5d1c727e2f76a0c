"""Species amounts in ``[[output]]`` tables: a species written with its state (``"S(l)"``) and tables
of amounts or flows by species, each an uncertain quantity in mol (or kmol/h, mol/s) or as a mass
(kg, kg/h) converted with the species' molar mass (docs/case-format.md §11).

One parser serves the charge of an adiabatic rise and the mixture of a heating enthalpy
(``{ "S(l)" = "8 mol" }``, data ``output.NAME.charge.S.l``) and the flows of a feed stream
(``{ "CO2(g)" = "100 kmol/h", "H2O(l)" = "900 kg/h" }``, data ``output.NAME.feed[i].CO2.g``).
"""

from __future__ import annotations

import difflib
import math
import re
from typing import Any

from ...errors import UqthermoError
from ...thermo.composition import formula_molar_mass
from ..schema import Datum
from .fields import Collector, is_table, make_datum, read_uncertain, register
from .reactions import resolve_phase

__all__ = ["molar_mass", "species_ref", "read_species_amounts", "written_texts", "written_datum", "AMOUNT_KINDS"]

_REF = re.compile(r"^\s*([A-Za-z][A-Za-z0-9_+\-]*)\s*\(\s*([a-z]+)\s*\)\s*$")


def molar_mass(c: Collector | None, sp, key: str) -> float | None:
    """Molar mass of a species from its formula, kg/mol (IUPAC standard atomic weights), or None."""
    try:
        return formula_molar_mass(sp.formula or sp.name)
    except UqthermoError as e:
        if c is not None:
            c.add(key, f"{sp.name}: {e.message}")
        return None


def _text(x: Any) -> str:
    return " ".join(x.split()) if isinstance(x, str) else str(x)


def written_texts(node: Any, stated: str) -> tuple[str, str | None]:
    """The user's text of an amount and of its uncertainty (``stated``: :func:`read_uncertain`'s statement).

    ``"881 kg"`` → ``("881 kg", None)``; ``{ value = "4600 kg/h", u = "50 kg/h" }`` → ``("4600 kg/h", "50 kg/h")``.
    An uncertainty given otherwise than as ``u`` keeps its form, so that it is never read as u:
    ``"U = 100 kg/h (k = 2)"``, ``"half-width 20 kg"``, ``"relative u = 2 %"``.
    """
    if not is_table(node):
        return _text(node), None
    value = _text(node.get("value", ""))
    if "u" in node:
        return value, _text(node["u"])
    return value, (stated if stated and stated != "exact" else None)


def written_datum(node: Any, id: str, quantity: str, dimension: str, parsed: tuple, **kw) -> Datum:
    """:func:`~uqthermo.case.readers.fields.make_datum` of an amount or flow read from ``node``, keeping
    the user's text of it (``as_written``, ``u_as_written``: :func:`written_texts`)."""
    datum = make_datum(id, quantity, dimension, parsed, **kw)
    datum.as_written, datum.u_as_written = written_texts(node, parsed[2])
    return datum


def species_ref(c: Collector, text: Any, key: str, species: dict) -> tuple[str, str] | None:
    """``"H2O(l)"`` → ``("H2O", "l")`` for a species of the case and one of its phases (None after a problem)."""
    if not isinstance(text, str):
        c.add(key, "write a species with its state, e.g. \"H2O(l)\"")
        return None
    m = _REF.match(text)
    if not m:
        c.add(key, f"cannot read {text!r}; write a species with its state, e.g. \"H2O(l)\"")
        return None
    name, ph = m.group(1), m.group(2)
    if name not in species and c.has_problem(f"species.{name}"):
        return None
    if name not in species:
        close = difflib.get_close_matches(name, list(species), n=1)
        c.add(key, f"unknown species {name!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
        return None
    phase = resolve_phase(species[name], ph)
    if phase not in species[name].phases:
        c.add(key, f"{name}({ph}) has no phase data; known phases: {', '.join(species[name].phases)}")
        return None
    return name, phase


#: what each kind of table reads: dimension, datum quantity, and its messages (the largest plausible
#: value in mol or mol/s, None: no check)
AMOUNT_KINDS = {
    "amount": {"dimension": "amount", "quantity": "amount", "what": "an amount",
               "table": "must be a table of amounts, e.g. { \"S(l)\" = \"8 mol\" }",
               "no_mass": "the species' formula has no standard atomic weights, so give the amount in mol",
               "negative": "amount must not be negative", "twice": "species listed twice",
             "all_zero": "every amount is 0: give what is present (in mol, kmol or kg)",
               "largest": (1e9, "amount is implausibly large (> 1e9 mol); give the charge per batch in mol or kmol")},
    "flow": {"dimension": "amount_rate", "quantity": "feed flow", "what": "a feed flow",
             "table": "must be a table of flows, e.g. { \"CO2(g)\" = \"100 kmol/h\", \"H2O(l)\" = \"900 kg/h\" }",
             "no_mass": "the species' formula has no standard atomic weights, so give the flow in mol/s or kmol/h",
             "negative": "a feed flow must not be negative", "twice": "species listed twice in one stream",
             "all_zero": "every flow of this stream is 0: give the flows fed (in kmol/h, mol/s or kg/h), or leave the stream out",
             "largest": None},
}


def read_species_amounts(c: Collector, node: Any, key: str, species: dict, data: dict, prefix: str,
                         kind: str = "amount") -> dict[tuple[str, str], str] | None:
    """Read a table of amounts (``kind="amount"``, mol) or flows (``kind="flow"``, mol/s) by species.

    Each entry ``"SP(ph)" = quantity`` (any uncertain-quantity form; a mass or mass flow is converted
    with the species' molar mass) becomes the datum ``PREFIX.SP.PH``, registered in ``data``.
    Problems are recorded at ``KEY.SP(ph)``; a species listed twice is one problem.

    Returns
    -------
    dict or None
        ``{(species, phase): datum id}`` in the order written; None after any problem.
    """
    spec = AMOUNT_KINDS[kind]
    if not is_table(node) or not node:
        c.add(key, spec["table"])
        return None
    out: dict[tuple[str, str], str] = {}
    ok = True
    total = 0.0
    for ref, amount in node.items():
        k = f"{key}.{ref}"
        sp = species_ref(c, ref, k, species)
        if sp is None:
            ok = False
            continue
        m = molar_mass(None, species[sp[0]], k)
        parsed = read_uncertain(c, amount, k, spec["dimension"], molar_mass=m if m is not None else spec["no_mass"],
                                bounds=(0.0, math.inf), what=spec["what"])
        if parsed is None:
            ok = False
            continue
        if parsed[0] < 0:
            c.add(k, spec["negative"])
            ok = False
            continue
        if spec["largest"] is not None and parsed[0] > spec["largest"][0]:
            c.add(k, spec["largest"][1])
            ok = False
            continue
        if sp in out:
            c.add(k, spec["twice"])
            ok = False
            continue
        did = f"{prefix}.{sp[0]}.{sp[1]}"
        register(c, data, written_datum(amount, did, spec["quantity"], spec["dimension"], parsed, species=sp[0],
                                        phase=sp[1], molar_mass=m), k)
        out[sp] = did
        total += parsed[0]
    if ok and total == 0.0:
        c.add(key, spec["all_zero"])
        ok = False
    return out if ok else None
