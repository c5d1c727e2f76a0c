"""Read ``[[candidate]]``: measurements or data purchases that could lower a datum's uncertainty, with
their cost (the input of purchase planning)."""

from __future__ import annotations

import difflib
import math
from typing import Any

from ..schema import Candidate, Datum
from .fields import Collector, is_table, read_fraction, read_quantity

__all__ = ["read_candidates"]


def read_candidates(c: Collector, node: Any, data: dict[str, Datum]) -> list[Candidate]:
    """Read ``[[candidate]]`` (achievable standard uncertainty ``u`` or ``factor``, and cost)."""
    out: list[Candidate] = []
    if not isinstance(node, list):
        c.add("candidate", "must be an array of tables ([[candidate]])")
        return out
    for i, item in enumerate(node):
        key = f"candidate[{i}]"
        if not is_table(item):
            c.add(key, "must be a table with datum, u (or factor) and cost")
            continue
        c.unknown_keys(item, {"datum", "u", "factor", "cost", "lead_time", "note", "name"}, key)
        d = item.get("datum")
        if not isinstance(d, str) or d not in data:
            close = difflib.get_close_matches(str(d), list(data), n=1)
            c.add(f"{key}.datum", f"unknown datum {d!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
            continue
        cost = item.get("cost")
        if isinstance(cost, bool) or not isinstance(cost, (int, float)) or not math.isfinite(cost) or cost < 0:
            c.add(f"{key}.cost", f"must be a non-negative number, got {cost!r}")
            continue
        u = factor = None
        datum = data[d]
        if "u" in item and "factor" in item:
            c.add(key, "give either u (achievable standard uncertainty) or factor, not both")
            continue
        if "u" in item:
            if datum.kind == "scale" or len(datum.distributions) != 1:
                c.add(f"{key}.u", "for a heat-capacity curve with several coefficients or a relative_u, give 'factor' "
                                  "(e.g. 0.5 halves its uncertainty)")
                continue
            dim = {"kJ/mol": "molar_energy", "J/(mol*K)": "molar_entropy", "K": "temperature", "mol": "amount",
                   "mol/s": "amount_rate", "1": "dimensionless", "kW": "power", "kJ": "energy",
                   "kJ/kg": "specific_energy", "kPa": "pressure"}[datum.unit]
            # an amount written as a mass where the datum itself may be (extent with extent_species,
            # a charge, a feed flow, a feed with key): the datum's molar mass converts it
            val = read_quantity(c, item["u"], f"{key}.u", dim, difference=True, molar_mass=datum.molar_mass
                                if datum.molar_mass else "this datum has no molar mass to convert a mass with; give u in mol")
            if val is None:
                continue
            if not val > 0:
                c.add(f"{key}.u", "must be positive")
                continue
            u = val * datum.to_report
        elif "factor" in item:
            factor = read_fraction(c, item["factor"], f"{key}.factor", 0.0, 1.0, high_open=True,
                                   example="0.3 or \"30 %\" of the present uncertainty")
            if factor is None:
                continue
        else:
            c.add(key, "give u (achievable standard uncertainty) or factor")
            continue
        lead = item.get("lead_time", "")
        u_text = "" if u is None else (item["u"].strip() if isinstance(item["u"], str) else f"{item['u']:g} {datum.unit}")
        out.append(Candidate(datum=d, u=u, factor=factor, cost=float(cost), lead_time=str(lead),
                             note=str(item.get("note", "")), u_text=u_text))
    return out
