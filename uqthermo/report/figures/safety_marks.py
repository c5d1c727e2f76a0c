"""Marks on the distribution of an adiabatic temperature rise: the boiling pile-up, MTT and T_D24.

When the charge reaches a phase change before the heat is absorbed (e.g. the solvent
boils), the final temperature stops at the transition temperature and the rest of the
heat goes into the latent heat: the rise has an *atom* (a probability mass at one value)
at the plateau. A histogram smears it into its last bin; here it is taken out of the
histogram and drawn as a spike with its probability (``p_phase_change`` of the point).

MTT and T_D24 (Stoessel's criticality assessment) are compared with the MTSR =
T_process + accumulation·ΔT_ad; on the rise axis they sit at
ΔT_ad = (T − T_process)/accumulation. A second axis on top gives the final temperature
T_start + ΔT_ad in the case's display unit.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .. import style
from ..style import ROLE, mpl_text
from ..fields import num
from ..rounding import fmt_probability
from ..units import OFFSET, fmt_T, symbol, temperature_unit


def split_plateau(output: Mapping, point: Mapping, edges: np.ndarray, counts: np.ndarray) -> tuple[np.ndarray, float | None, float]:
    """``(counts without the atom, atom position on the rise axis or None, atom probability)``.

    The atom sits at the largest rise (the plateau); its mass ``p_phase_change`` is taken
    out of the last bin (never below zero).
    """
    p = num(point.get("p_phase_change"))
    if output.get("kind") != "adiabatic_temperature_rise" or not p or edges.size < 2 or counts.sum() <= 0:
        return counts, None, 0.0
    if "boiling_limited" in point or point.get("mtsr_basis"):
        return counts, None, 0.0        # the rise is computed without evaporative cooling: no atom at the boiling point
    total = counts.sum()
    c = counts.astype(float).copy()
    c[-1] = max(c[-1] - p * total, 0.0)
    return c, float(edges[-1]), p


def _rise_of(T: float | None, output: Mapping, process: bool) -> float | None:
    """A temperature (K) on the rise axis: via the MTSR relation (``process``) or the start temperature."""
    if T is None:
        return None
    if process and num(output.get("process_temperature_K")) is not None:
        acc = num(output.get("accumulation"))
        acc = 1.0 if acc is None or acc <= 0 else acc
        return (T - num(output["process_temperature_K"])) / acc
    start = num(output.get("start_temperature_K"))
    return None if start is None else T - start


def draw_marks(ax, results: Mapping, output: Mapping, point: Mapping, atom: tuple[float | None, float], ymax: float,
               x_range: tuple[float, float]) -> tuple[float, float]:
    """Draw the atom, MTT, T_D24 and the final-temperature axis; return the x-range to show."""
    tunit = temperature_unit(results)
    lo_x, hi_x = x_range
    x_atom, p_atom = atom
    if x_atom is not None and p_atom > 0:
        ax.vlines([x_atom], 0, ymax * 0.92, color=ROLE["phase"], linewidth=3.0)
        ax.plot([x_atom], [ymax * 0.92], marker="^", color=ROLE["phase"], markersize=7, linestyle="none")
        hi_x = max(hi_x, x_atom + 0.03 * (hi_x - lo_x))
        start = num(output.get("start_temperature_K"))
        at = f" at {fmt_T(start + x_atom, tunit)}" if start is not None else ""
        ax.plot([], [], color=ROLE["phase"], linewidth=3.0,
                label=mpl_text(f"phase change{at}: {fmt_probability(p_atom, point.get('p_phase_change_standard_error'))} "
                               "of trials pile up there (spike)"))
    span = max(hi_x - lo_x, 1e-9)
    bl = point.get("boiling_limited")
    if isinstance(bl, Mapping):        # rise without evaporative cooling: mark where the solvent starts to boil
        from ..style import probability_text

        seen = set()
        for ev in bl.get("evaporated") or []:
            tb = num(ev.get("boiling_point_K"))
            x = _rise_of(tb, output, process=False)
            if x is None or tb in seen or not (lo_x - 0.6 * span <= x <= hi_x + 0.6 * span):
                continue
            seen.add(tb)
            ax.axvline(x, color=ROLE["phase"], linewidth=2.2, linestyle="-")
            ptxt = probability_text(bl.get("p_tempering_point_reached"), bl.get("p_tempering_point_reached_upper_bound"),
                                    bl.get("trials"))
            ax.plot([], [], color=ROLE["phase"], linewidth=2.2,
                    label=mpl_text(f"{ev.get('species')} boils at {fmt_T(tb, tunit)}: reached in {ptxt}"))
            lo_x, hi_x = min(lo_x, x - 0.02 * span), max(hi_x, x + 0.02 * span)
    for key, name, ls in (("mtt_K", "MTT", (0, (5, 2))), ("td24_K", "T_D24", (0, (1, 1.5)))):
        T = num(output.get(key))
        x = _rise_of(T, output, process=True)
        if x is None:
            continue
        label = f"{name} {fmt_T(T, tunit)}"
        acc = num(output.get("accumulation"))
        acc = 1.0 if acc is None or acc <= 0 else acc
        u_x = threshold_u(output.get(key[:-2])) / acc        # on the rise axis: ΔT_ad = (T − T_process)/accumulation
        tp = num(output.get("process_temperature_K"))
        where = (f"MTSR = T_process {fmt_T(tp, tunit)} + {acc:g}·ΔT_ad reaches {name}" if tp is not None
                 else f"the final temperature reaches {name}")
        if x <= hi_x + 0.6 * span and x >= lo_x - 0.6 * span:
            draw_threshold(ax, x, u_x, style.INK, ls, 1.3)
            ax.plot([], [], color=style.INK, linewidth=1.3, linestyle=ls,
                    label=mpl_text(f"{label}: {where} at ΔT_ad = {x:.0f} K{band_text(u_x, 'K')}"))
            lo_x, hi_x = min(lo_x, x - 2 * u_x - 0.02 * span), max(hi_x, x + 2 * u_x + 0.02 * span)
        else:
            u_T = threshold_u(output.get(key[:-2]))
            ax.plot([], [], color="none", label=mpl_text(f"{label}{f' (u = {u_T:g} K)' if u_T else ''}: off scale; "
                                                         f"{where} at ΔT_ad = {x:.0f} K"))
    start = num(output.get("start_temperature_K"))
    if start is not None:
        a, b = OFFSET.get(tunit, (1.0, 0.0))
        top = ax.secondary_xaxis("top", functions=(lambda r: a * (start + r) + b, lambda t: (t - b) / a - start))
        top.set_xlabel(f"final temperature T_start + ΔT_ad / {symbol(tunit)}", fontsize=8.5)
        top.tick_params(labelsize=8)
    return lo_x, hi_x


def threshold_u(block) -> float:
    """The standard uncertainty of a limit/MTT/TD24 block of results.json (0 when exact or missing)."""
    u = num(block.get("standard_uncertainty")) if isinstance(block, Mapping) else None
    return u if u is not None and u > 0 else 0.0


def draw_threshold(ax, x: float, u: float, color, linestyle, linewidth: float) -> None:
    """A threshold on the axis: a sharp line when exact, a band x ± 2u (≈ 95 % for a normal
    uncertainty) with a thin line at x when uncertain."""
    if u > 0:
        ax.axvspan(x - 2 * u, x + 2 * u, color=color, alpha=0.16, linewidth=0)
        ax.axvline(x, color=color, linewidth=0.8, linestyle=linestyle, alpha=0.9)
    else:
        ax.axvline(x, color=color, linewidth=linewidth, linestyle=linestyle)


def band_text(u_axis: float, unit: str) -> str:
    """" (band ± 2u = ± 4 K)" for an uncertain threshold, "" when exact."""
    if u_axis <= 0:
        return ""
    return f" (band ± 2u = ± {2 * u_axis:.2g}{'' if unit in ('', '1') else ' ' + unit})"


__all__ = ["split_plateau", "draw_marks", "draw_threshold", "threshold_u", "band_text"]
