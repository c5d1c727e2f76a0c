"""Species with several phases, phase transitions and temperature paths.

Enthalpies are on the *formation scale* (elements in their reference states have
:math:`H^\\circ(T_\\mathrm{ref}) = 0`), so that a reaction enthalpy is
:math:`\\Delta_r H^\\circ(T) = \\sum_i \\nu_i H_i^\\circ(T)` (IUPAC Green Book, Cohen et al.,
Quantities, Units and Symbols in Physical Chemistry, 3rd ed. 2007, section 2.11).
Entropies are absolute (third-law) standard molar entropies.

Anchors and routes
------------------
A phase is *anchored* for enthalpy if it has a ``formation_enthalpy`` at ``T_ref``, or (when
none is given) NASA-7 data whose ``a6`` puts :math:`H^\\circ` on the formation scale; likewise
for entropy with ``standard_entropy`` or NASA-7 ``a7``. An anchored phase is held as written:

.. math:: H_p(T) = \\Delta_f H_p(T_\\mathrm{ref}) + \\int_{T_\\mathrm{ref}}^{T} C_{p,p}\\,dT

A phase without an anchor is reached from the nearest anchored phase through the
transition graph, crossing each transition at its temperature (a thermodynamic cycle,
Kirchhoff's law with latent heats; Atkins' Physical Chemistry, "Kirchhoff's law" and
"Phase transitions"):

.. math::
    H_\\mathrm{g}(T) = \\Delta_f H_\\mathrm{l}(T_\\mathrm{ref})
    + \\int_{T_\\mathrm{ref}}^{T_\\mathrm{b}} C_{p,\\mathrm{l}}\\,dT + \\Delta_\\mathrm{vap}H
    + \\int_{T_\\mathrm{b}}^{T} C_{p,\\mathrm{g}}\\,dT

and for entropy each crossing adds :math:`\\Delta_\\mathrm{trs}S = \\Delta_\\mathrm{trs}H/T_\\mathrm{trs}`.
Crossing a transition against its direction (to -> from) subtracts its enthalpy.

Heating
-------
:meth:`Species.heating_enthalpy` heats (or cools) a species from a start phase and follows
its transitions on the way: heating in phase *p* crosses the lowest transition leaving *p*
(``from_phase == p``) at or above the start temperature and below the end temperature;
cooling crosses transitions *into* *p* in reverse. A start above the first transition
temperature (a superheated/supercooled start) is held in its phase.

Uncertain data
--------------
``values`` is a mapping of sampled overrides keyed relative to the species:
``"{phase}.formation_enthalpy"``, ``"{phase}.standard_entropy"``, ``"{phase}.heat_capacity"``
(coefficient array ``(..., P)``), ``"transition.{from}-{to}.temperature"`` and
``"transition.{from}-{to}.enthalpy"``. Batch shapes broadcast with T. The *structure* of a path
(which transitions are crossed) is decided with the nominal transition temperatures; sampled
transition temperatures move the segment end points (per-sample arrays), which keeps the
result smooth in the data. Validity ranges are checked along the nominal path (with the
temperatures as passed in); sampled end points are then evaluated without a further check.

Units: K, J/mol, J/(mol K).
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from ..errors import PathError, ValidityError
from .cp import CpModel, Nasa7Cp, as_temperature, format_number
from .formula import parse_formula

__all__ = ["Phase", "Transition", "Species", "Segment"]

# phase symbols treated as the same state when the exact symbol is not present
_ALIASES = {"s": ("cr",), "cr": ("s",)}


@dataclass
class Phase:
    """Data of one phase of a species.

    Attributes
    ----------
    symbol : str
        State symbol, e.g. ``"g"``, ``"l"``, ``"cr"``, ``"s"``, ``"aq"``.
    cp : CpModel or None
        Heat-capacity model (needed wherever the phase is heated).
    formation_enthalpy : float or None
        Standard molar enthalpy of formation at ``T_ref``, J/mol.
    standard_entropy : float or None
        Standard molar entropy at ``T_ref``, J/(mol K).
    nasa_anchor : bool
        If True (default) a NASA-7 phase without a formation enthalpy (standard entropy)
        anchors itself with its a6 (a7) constants; set False to route it from another
        phase through the transitions instead.
    """

    symbol: str
    cp: CpModel | None = None
    formation_enthalpy: float | None = None
    standard_entropy: float | None = None
    nasa_anchor: bool = True

    def anchor(self, quantity: str = "enthalpy") -> str | None:
        """How this phase is anchored: ``"formation"`` (given value), ``"nasa7"`` (a6/a7) or None."""
        given = self.formation_enthalpy if quantity == "enthalpy" else self.standard_entropy
        if given is not None:
            return "formation"
        if self.nasa_anchor and isinstance(self.cp, Nasa7Cp):
            return "nasa7"
        return None


@dataclass
class Transition:
    """A phase transition ``from_phase -> to_phase`` on heating.

    Attributes
    ----------
    from_phase, to_phase : str
        Phase symbols (the low- and high-temperature phase).
    temperature : float
        Transition temperature, K.
    enthalpy : float
        Transition enthalpy from -> to, J/mol (positive on heating).
    """

    from_phase: str
    to_phase: str
    temperature: float
    enthalpy: float

    @property
    def label(self) -> str:
        """``"{from}-{to}"``, as used in datum ids (``H2O.transition.l-g.enthalpy``)."""
        return f"{self.from_phase}-{self.to_phase}"


@dataclass(frozen=True)
class Segment:
    """One piece of a temperature path.

    A heating segment has ``transition is None``: the phase ``phase`` goes from ``T_start``
    to ``T_end``. A crossing has ``transition`` set, ``T_start == T_end`` = the transition
    temperature, ``phase`` = the phase entered and ``sign`` = +1 (from -> to) or -1 (reverse).
    """

    phase: str
    T_start: float
    T_end: float
    transition: Transition | None = None
    sign: int = 0

    @property
    def kind(self) -> str:
        """``"heat"`` or ``"crossing"``."""
        return "heat" if self.transition is None else "crossing"

    def describe(self) -> str:
        if self.transition is None:
            return f"{self.phase} {format_number(self.T_start)} K -> {format_number(self.T_end)} K"
        tr = self.transition
        a, b = (tr.from_phase, tr.to_phase) if self.sign > 0 else (tr.to_phase, tr.from_phase)
        return f"{a} -> {b} at {format_number(tr.temperature)} K"


def _where(mask, a, b):
    return np.where(mask, a, b)


@dataclass
class Species:
    """A chemical species with one or more phases and the transitions between them.

    Attributes
    ----------
    name : str
        Name used in equations (e.g. ``"H2O"``).
    formula : str
        Chemical formula for the element balance (empty: the name).
    phases : dict of str to Phase
        Phase data keyed by state symbol.
    transitions : list of Transition
        Phase transitions (temperature and enthalpy on heating).
    """

    name: str
    formula: str = ""
    phases: dict[str, Phase] = field(default_factory=dict)
    transitions: list[Transition] = field(default_factory=list)

    # ------------------------------------------------------------------ structure
    @property
    def elements(self) -> dict[str, float]:
        """Element counts from the formula (e.g. ``{"H": 2, "O": 1}``)."""
        return parse_formula(self.formula or self.name)

    def _key(self, *parts: str) -> str:
        return ".".join((self.name,) + parts)

    def resolve_phase(self, phase: str | None) -> str:
        """The phase symbol to use for ``phase`` (None: the only phase; ``s``/``cr`` alias each other)."""
        if phase is None:
            if len(self.phases) == 1:
                return next(iter(self.phases))
            raise PathError(f"{self.name}: state the phase (has {', '.join(self.phases) or 'no phases'})",
                            key=self.name)
        if phase in self.phases:
            return phase
        for alt in _ALIASES.get(phase, ()):
            if alt in self.phases:
                return alt
        have = ", ".join(self.phases) or "none"
        raise PathError(f"{self.name} has no data for phase '{phase}' (phases given: {have})",
                        key=self._key(phase))

    def problems(self) -> list[PathError]:
        """Structural problems of the phase/transition data (empty list when consistent)."""
        out: list[PathError] = []
        seen: dict[frozenset, Transition] = {}
        for tr in self.transitions:
            key = self._key("transition", tr.label)
            for p in (tr.from_phase, tr.to_phase):
                if p not in self.phases:
                    out.append(PathError(f"transition {tr.label} of {self.name} refers to phase '{p}', "
                                         f"which has no data", key=key))
            if tr.from_phase == tr.to_phase:
                out.append(PathError(f"transition {tr.label} of {self.name} goes from a phase to itself", key=key))
                continue
            try:
                t, h = float(tr.temperature), float(tr.enthalpy)
            except (TypeError, ValueError):
                out.append(PathError(f"transition {tr.label} of {self.name}: temperature and enthalpy must be numbers",
                                     key=key))
                continue
            if not (np.isfinite(t) and t > 0):
                out.append(PathError(f"transition {tr.label} of {self.name}: temperature must be positive "
                                     f"(got {format_number(t)} K)", key=key + ".temperature"))
            if not np.isfinite(h) or h < 0:
                out.append(PathError(f"transition {tr.label} of {self.name}: enthalpy on heating "
                                     f"({tr.from_phase} -> {tr.to_phase}) must be >= 0 (got {format_number(h)} J/mol)",
                                     key=key + ".enthalpy"))
            pair = frozenset((tr.from_phase, tr.to_phase))
            if pair in seen:
                out.append(PathError(f"{self.name} has more than one transition between "
                                     f"{tr.from_phase} and {tr.to_phase}", key=key))
            seen[pair] = tr
        if out:
            return out
        # cycles in the (undirected) transition graph make the route ambiguous
        parent = {p: p for p in self.phases}

        def find(p):
            while parent[p] != p:
                parent[p] = parent[parent[p]]
                p = parent[p]
            return p

        for tr in self.transitions:
            a, b = find(tr.from_phase), find(tr.to_phase)
            if a == b:
                out.append(PathError(f"{self.name}: transitions form a cycle through {tr.label} "
                                     f"(circular transitions are ambiguous; drop one)",
                                     key=self._key("transition", tr.label)))
            else:
                parent[a] = b
        # a phase must be entered on heating below the temperature at which it is left
        for p in self.phases:
            into = [tr for tr in self.transitions if tr.to_phase == p]
            out_of = [tr for tr in self.transitions if tr.from_phase == p]
            for ti in into:
                for to in out_of:
                    if ti.temperature > to.temperature:
                        out.append(PathError(
                            f"{self.name}: inconsistent transitions: {ti.label} at {format_number(ti.temperature)} K "
                            f"is above {to.label} at {format_number(to.temperature)} K",
                            key=self._key("transition", to.label)))
        return out

    def validate(self) -> None:
        """Raise the first structural problem (see :meth:`problems`) as :class:`PathError`."""
        probs = self.problems()
        if probs:
            raise probs[0]

    # ------------------------------------------------------------------ sampled values
    @staticmethod
    def _v(values) -> Mapping:
        return values if values is not None else {}

    def _coeffs(self, p: str, vals: Mapping):
        return vals.get(f"{p}.heat_capacity")

    def _t(self, tr: Transition, vals: Mapping):
        return np.asarray(vals.get(f"transition.{tr.label}.temperature", tr.temperature), dtype=float)

    def _dh(self, tr: Transition, vals: Mapping):
        return np.asarray(vals.get(f"transition.{tr.label}.enthalpy", tr.enthalpy), dtype=float)

    # ------------------------------------------------------------------ elementary pieces
    def _F(self, q: str, p: str, x, vals: Mapping) -> np.ndarray:
        """Antiderivative value of Cp (q='H') or Cp/T (q='S') of phase p at x (no range check)."""
        cp = self.phases[p].cp
        c = self._coeffs(p, vals)
        if q == "H":
            return cp.enthalpy_antiderivative(x, c, check=False)
        return cp.entropy_antiderivative(x, c, check=False)

    def _delta(self, q: str, p: str, a, b, vals: Mapping) -> np.ndarray:
        """Integral of Cp (q='H') or Cp/T (q='S') of phase p from a to b (no range check).

        One contraction of the basis difference G(b) - G(a) with the coefficients (the
        bases of exact temperature grids are cached by the model).
        """
        cp = self.phases[p].cp
        if cp is None:
            return np.zeros(())
        c = self._coeffs(p, vals)
        if q == "H":
            return cp.enthalpy_change(a, b, c, check=False)
        return cp.entropy_change(a, b, c, check=False)

    def _cross(self, q: str, tr: Transition, sign: int, vals: Mapping) -> np.ndarray:
        dh = sign * self._dh(tr, vals)
        if q == "H":
            return dh
        return dh / self._t(tr, vals)

    def _check_heat(self, p: str, a_nom, b_nom, mask=None) -> None:
        """Check the nominal heating segment(s) a -> b of phase p (elements where mask)."""
        a = np.asarray(a_nom, dtype=float)
        b = np.asarray(b_nom, dtype=float)
        shape = np.broadcast_shapes(a.shape, b.shape, () if mask is None else np.shape(mask))
        a = np.broadcast_to(a, shape)
        b = np.broadcast_to(b, shape)
        if mask is not None:
            m = np.broadcast_to(mask, shape)
            a, b = a[m], b[m]
        if a.size == 0:
            return
        cp = self.phases[p].cp
        lo = float(min(a.min(), b.min()))
        hi = float(max(a.max(), b.max()))
        if cp is None:
            if np.any(a != b):
                raise PathError(f"{self.name}({p}) has no heat capacity, but the path heats it between "
                                f"{format_number(lo)} K and {format_number(hi)} K", key=self._key(p, "heat_capacity"))
            return
        msg = cp.out_of_range(lo, hi)
        if msg is not None and not cp.allow_extrapolation:
            raise ValidityError(f"{self.name}({p}): {msg} (extrapolation not allowed)",
                                key=self._key(p, "heat_capacity"))

    def _anchor_value(self, q: str, p: str, x, x_nom, T_ref: float, vals: Mapping) -> np.ndarray:
        ph = self.phases[p]
        kind = ph.anchor("enthalpy" if q == "H" else "entropy")
        if kind == "formation":
            name = "formation_enthalpy" if q == "H" else "standard_entropy"
            base = np.asarray(vals.get(f"{p}.{name}", getattr(ph, name)), dtype=float)
            self._check_heat(p, T_ref, x_nom)
            return base + self._delta(q, p, T_ref, x, vals)
        # NASA-7 absolute values (a6 / a7), range containing x
        self._check_heat(p, x_nom, x_nom)
        c = self._coeffs(p, vals)
        if q == "H":
            return ph.cp.absolute_enthalpy(x, c, check=False)
        return ph.cp.absolute_entropy(x, c, check=False)

    # ------------------------------------------------------------------ routes (formation scale)
    def _route(self, q: str, target: str) -> tuple[str, list[tuple[Transition, int, str]]]:
        """Nearest anchored phase and the crossings from it to ``target``."""
        quantity = "enthalpy" if q == "H" else "entropy"
        prev: dict[str, tuple[str, Transition] | None] = {target: None}
        queue = deque([target])
        while queue:
            p = queue.popleft()
            if self.phases[p].anchor(quantity):
                route = []
                cur = p
                while prev[cur] is not None:
                    nxt, tr = prev[cur]
                    sign = 1 if tr.from_phase == cur else -1
                    route.append((tr, sign, nxt))
                    cur = nxt
                return p, route
            for tr in self.transitions:
                if tr.from_phase == p:
                    nb = tr.to_phase
                elif tr.to_phase == p:
                    nb = tr.from_phase
                else:
                    continue
                if nb not in prev:
                    prev[nb] = (p, tr)
                    queue.append(nb)
        what = ("a formation enthalpy (or NASA-7 data)" if q == "H"
                else "a standard entropy (or NASA-7 data)")
        field_name = "formation_enthalpy" if q == "H" else "standard_entropy"
        raise PathError(f"{self.name}({target}): no phase reachable through the transitions has {what}",
                        key=self._key(target, field_name))

    def anchor_phase(self, phase: str | None, quantity: str = "enthalpy") -> str:
        """The anchored phase from which ``phase`` is reached (itself when anchored)."""
        self.validate()
        return self._route("H" if quantity == "enthalpy" else "S", self.resolve_phase(phase))[0]

    def _formation(self, q: str, phase, T, T_ref: float, values) -> np.ndarray:
        self.validate()
        vals = self._v(values)
        p = self.resolve_phase(phase)
        T = as_temperature(T)
        T_ref = float(T_ref)
        a, route = self._route(q, p)
        if not route:
            return np.asarray(self._anchor_value(q, p, T, T, T_ref, vals))
        t_n = [tr.temperature for tr, _, _ in route]
        t_s = [self._t(tr, vals) for tr, _, _ in route]
        total = self._anchor_value(q, a, t_s[0], t_n[0], T_ref, vals)
        for i, (tr, sign, nxt) in enumerate(route):
            total = total + self._cross(q, tr, sign, vals)
            last = i + 1 == len(route)
            end_s = T if last else t_s[i + 1]
            end_n = T if last else t_n[i + 1]
            self._check_heat(nxt, t_n[i], end_n)
            total = total + self._delta(q, nxt, t_s[i], end_s, vals)
        return np.asarray(total)

    def enthalpy(self, phase: str | None, T, T_ref: float = 298.15, values: Mapping | None = None) -> np.ndarray:
        """Standard molar enthalpy on the formation scale, J/mol.

        .. math:: H_p(T) = \\Delta_f H_a(T_\\mathrm{ref}) + \\int_{T_\\mathrm{ref}}^{T_1} C_{p,a}\\,dT
                  \\pm \\Delta_\\mathrm{trs}H_1 + \\dots + \\int_{T_k}^{T} C_{p,p}\\,dT

        from the nearest anchored phase *a* through the transitions to phase *p* (Kirchhoff's
        law with latent heats; Atkins' Physical Chemistry). A phase with its own anchor is
        held as written. A NASA-7 anchor without a formation enthalpy uses
        :math:`H^\\circ = RT(a_1 + \\dots + a_6/T)` (McBride, Zehe & Gordon, NASA/TP-2002-211556).

        Parameters
        ----------
        phase : str or None
            State symbol (None: the species' only phase).
        T : array_like
            Temperature(s), K.
        T_ref : float
            Reference temperature of the formation data, K.
        values : mapping, optional
            Sampled overrides (see module docstring).
        """
        return self._formation("H", phase, T, T_ref, values)

    def entropy(self, phase: str | None, T, T_ref: float = 298.15, values: Mapping | None = None) -> np.ndarray:
        """Standard molar (absolute) entropy, J/(mol K).

        .. math:: S_p(T) = S_a^\\circ(T_\\mathrm{ref}) + \\int_{T_\\mathrm{ref}}^{T_1}\\frac{C_{p,a}}{T}dT
                  \\pm \\frac{\\Delta_\\mathrm{trs}H_1}{T_1} + \\dots + \\int_{T_k}^{T}\\frac{C_{p,p}}{T}dT

        (Atkins' Physical Chemistry, entropy of phase transition :math:`\\Delta_\\mathrm{trs}S =
        \\Delta_\\mathrm{trs}H/T_\\mathrm{trs}`); NASA-7 anchor :math:`S^\\circ = R(a_1\\ln T + \\dots + a_7)`.
        """
        return self._formation("S", phase, T, T_ref, values)

    def enthalpy_path(self, phase: str | None, T: float, T_ref: float = 298.15,
                      quantity: str = "enthalpy") -> list[Segment]:
        """Nominal segments of the formation-scale route used by :meth:`enthalpy` (or entropy).

        The first segment is the anchor phase from ``T_ref`` (NASA-7 anchor: zero length at
        the point where its absolute value is taken).
        """
        self.validate()
        q = "H" if quantity == "enthalpy" else "S"
        p = self.resolve_phase(phase)
        T = float(T)
        a, route = self._route(q, p)
        kind = self.phases[a].anchor(quantity)
        x0 = route[0][0].temperature if route else T
        segs = [Segment(a, float(T_ref) if kind == "formation" else x0, x0)]
        for i, (tr, sign, nxt) in enumerate(route):
            t = tr.temperature
            segs.append(Segment(nxt, t, t, tr, sign))
            end = T if i + 1 == len(route) else route[i + 1][0].temperature
            segs.append(Segment(nxt, t, end))
        return segs

    # ------------------------------------------------------------------ heating with transitions
    def _chain(self, p: str, direction: int) -> list[tuple[Transition, int, str]]:
        """Transitions met when heating (direction +1) or cooling (-1) from phase p."""
        chain = []
        visited = {p}
        t_prev = -np.inf if direction > 0 else np.inf
        while True:
            if direction > 0:
                cands = [tr for tr in self.transitions if tr.from_phase == p and tr.temperature >= t_prev]
                tr = min(cands, key=lambda x: x.temperature) if cands else None
            else:
                cands = [tr for tr in self.transitions if tr.to_phase == p and tr.temperature <= t_prev]
                tr = max(cands, key=lambda x: x.temperature) if cands else None
            if tr is None:
                return chain
            nxt = tr.to_phase if direction > 0 else tr.from_phase
            if nxt in visited:  # guarded by validate(); kept for safety
                raise PathError(f"{self.name}: circular transitions through {tr.label}",
                                key=self._key("transition", tr.label))
            visited.add(nxt)
            chain.append((tr, direction, nxt))
            p, t_prev = nxt, tr.temperature

    def _crossings(self, chain, direction: int, T1, T2, sel, vals: Mapping | None = None) -> list[np.ndarray]:
        """Masks (broadcast shape of T1, T2) of the chain's crossings that are taken.

        By default the decision uses the nominal transition temperatures (the path structure
        is fixed, so ΔH stays smooth in the data). With sampled transition temperatures in
        ``vals`` (``sampled_crossings=True`` on the public methods) it is made per sample: a
        path that ends between the nominal and a sampled boiling point crosses (or not) as
        that sample's boiling point says — what an energy balance ending on a phase change
        (adiabatic temperature rise onto a boiling plateau) needs.
        """
        if not chain:
            return []
        t1 = chain[0][0].temperature if vals is None else self._t(chain[0][0], vals)
        start_ok = (T1 <= t1) if direction > 0 else (T1 >= t1)
        out = []
        for tr, _, _ in chain:
            t = tr.temperature if vals is None else self._t(tr, vals)
            taken = (t < T2) if direction > 0 else (t > T2)
            out.append(sel & start_ok & taken)
        return out

    def _run_chain(self, q: str, p0: str, direction: int, T1, T2, sel, vals: Mapping,
                   sampled_crossings: bool = False) -> np.ndarray:
        chain = self._chain(p0, direction)
        inc = self._crossings(chain, direction, T1, T2, sel, vals if sampled_crossings else None)
        phases = [p0] + [nxt for _, _, nxt in chain]
        t_n = [tr.temperature for tr, _, _ in chain]
        t_s = [self._t(tr, vals) for tr, _, _ in chain]
        k = len(chain)
        total = np.zeros(())
        for j in range(k + 1):
            inc_j = sel if j == 0 else inc[j - 1]
            if not np.any(inc_j):
                break
            nxt = inc[j] if j < k else None
            lower_n = T1 if j == 0 else t_n[j - 1]
            lower_s = T1 if j == 0 else t_s[j - 1]
            upper_n = T2 if nxt is None or not np.any(nxt) else _where(nxt, t_n[j], T2)
            self._check_heat(phases[j], lower_n, upper_n, inc_j)
            p = phases[j]
            if self.phases[p].cp is not None:
                F_T2 = self._F(q, p, T2, vals)
                F_up = F_T2 if nxt is None or not np.any(nxt) else _where(nxt, self._F(q, p, t_s[j], vals), F_T2)
                total = total + _where(inc_j, F_up - self._F(q, p, lower_s, vals), 0.0)
            if nxt is not None and np.any(nxt):
                tr, sign, _ = chain[j]
                total = total + _where(nxt, self._cross(q, tr, sign, vals), 0.0)
        return total

    def _heating(self, q: str, phase, T1, T2, values, sampled_crossings: bool = False) -> np.ndarray:
        self.validate()
        vals = self._v(values)
        p = self.resolve_phase(phase)
        T1 = as_temperature(T1, "T1")
        T2 = as_temperature(T2, "T2")
        up = np.broadcast_to(T2 >= T1, np.broadcast_shapes(T1.shape, T2.shape))
        heat = cool = None
        if np.any(up):
            heat = self._run_chain(q, p, +1, T1, T2, up, vals, sampled_crossings)
        if not np.all(up):
            cool = self._run_chain(q, p, -1, T1, T2, ~up, vals, sampled_crossings)
        if cool is None:
            return np.asarray(heat)
        if heat is None:
            return np.asarray(cool)
        return np.asarray(_where(up, heat, cool))

    def heating_enthalpy(self, phase: str | None, T1, T2, values: Mapping | None = None, *,
                         sampled_crossings: bool = False) -> np.ndarray:
        """Enthalpy to take the species from ``phase`` at T1 to T2, transitions included, J/mol.

        .. math:: \\Delta H = \\int_{T_1}^{T_\\mathrm{trs}} C_{p,1}\\,dT + \\Delta_\\mathrm{trs}H
                  + \\int_{T_\\mathrm{trs}}^{T_2} C_{p,2}\\,dT \\ (+\\dots)

        Heating crosses from -> to (+ΔH), cooling the reverse (-ΔH); see the module docstring
        for which transitions are met (Atkins' Physical Chemistry, heating curves and
        Kirchhoff's law). ``sampled_crossings=True`` decides per sample, with the sampled
        transition temperatures, which transitions the path meets (energy balances).
        """
        return self._heating("H", phase, T1, T2, values, sampled_crossings)

    def heating_entropy(self, phase: str | None, T1, T2, values: Mapping | None = None) -> np.ndarray:
        """Entropy change along the same path as :meth:`heating_enthalpy`, J/(mol K).

        .. math:: \\Delta S = \\int \\frac{C_p}{T}\\,dT + \\sum \\pm\\frac{\\Delta_\\mathrm{trs}H}{T_\\mathrm{trs}}
        """
        return self._heating("S", phase, T1, T2, values)

    def path(self, phase: str | None, T1: float, T2: float) -> list[Segment]:
        """Nominal heating (or cooling) path from ``phase`` at T1 to T2: segments and crossings."""
        self.validate()
        p = self.resolve_phase(phase)
        T1, T2 = float(T1), float(T2)
        direction = 1 if T2 >= T1 else -1
        chain = self._chain(p, direction)
        inc = self._crossings(chain, direction, np.asarray(T1), np.asarray(T2), np.asarray(True))
        segs: list[Segment] = []
        cur, Tc = p, T1
        for (tr, sign, nxt), taken in zip(chain, inc):
            if not bool(taken):
                break
            t = float(tr.temperature)
            if t != Tc:
                segs.append(Segment(cur, Tc, t))
            segs.append(Segment(nxt, t, t, tr, sign))
            cur, Tc = nxt, t
        if T2 != Tc or not segs:
            segs.append(Segment(cur, Tc, T2))
        return segs

    def final_phase(self, phase: str | None, T1: float, T2: float) -> str:
        """Phase reached when heating/cooling from ``phase`` at T1 to T2."""
        return self.path(phase, T1, T2)[-1].phase

    def out_of_range(self, segments: list[Segment]) -> list[tuple[str, str]]:
        """(datum id, message) for each heating segment that leaves its Cp validity range.

        Reports also segments of models that allow extrapolation (so callers can warn).
        """
        out = []
        for s in segments:
            if s.transition is not None:
                continue
            cp = self.phases[s.phase].cp
            if cp is None:
                continue
            msg = cp.out_of_range(min(s.T_start, s.T_end), max(s.T_start, s.T_end))
            if msg is not None:
                out.append((self._key(s.phase, "heat_capacity"), f"{self.name}({s.phase}): {msg}"))
        return out

    # ------------------------------------------------------------------ one phase, as written
    def _phase_cp(self, p: str) -> CpModel:
        cp = self.phases[p].cp
        if cp is None:
            raise PathError(f"{self.name}({p}) has no heat capacity", key=self._key(p, "heat_capacity"))
        return cp

    def cp(self, phase: str | None, T, values: Mapping | None = None) -> np.ndarray:
        """Heat capacity of one phase, J/(mol K) (validity enforced unless the model allows extrapolation)."""
        p = self.resolve_phase(phase)
        cp = self._phase_cp(p)
        T = as_temperature(T)
        self._check_heat(p, T, T)
        return cp.cp(T, self._coeffs(p, self._v(values)), check=False)

    def phase_enthalpy_change(self, phase: str | None, T1, T2, values: Mapping | None = None) -> np.ndarray:
        """:math:`\\int_{T_1}^{T_2} C_p\\,dT` in one phase held as written (no transitions), J/mol."""
        p = self.resolve_phase(phase)
        T1 = as_temperature(T1, "T1")
        T2 = as_temperature(T2, "T2")
        self._check_heat(p, T1, T2)
        return np.asarray(self._delta("H", p, T1, T2, self._v(values)) + 0.0 * (T1 + T2))

    def phase_entropy_change(self, phase: str | None, T1, T2, values: Mapping | None = None) -> np.ndarray:
        """:math:`\\int_{T_1}^{T_2} C_p/T\\,dT` in one phase held as written, J/(mol K)."""
        p = self.resolve_phase(phase)
        T1 = as_temperature(T1, "T1")
        T2 = as_temperature(T2, "T2")
        self._check_heat(p, T1, T2)
        return np.asarray(self._delta("S", p, T1, T2, self._v(values)) + 0.0 * (T1 + T2))
