"""Resolve ``{ library = "auto" }`` (and ``library = "<source>"``) references of a case file.

Every datum of a species may come from the library's selection rules
(:mod:`uqthermo.case.library.selection`, :mod:`uqthermo.case.library.uncertainty`)::

    [species.toluene]
    cas = "108-88-3"                   # or name = "toluene", or formula = "C7H8"; formula is filled in
    [species.toluene.l]
    formation_enthalpy = { library = "auto" }
    standard_entropy   = { library = "auto" }
    heat_capacity      = { library = "auto" }           # a curve whose range covers the case's path
    [[species.toluene.transition]]
    from = "l"
    to = "g"
    temperature = { library = "auto" }                  # normal boiling point
    enthalpy    = { library = "auto" }                  # ΔvapH at that temperature

``library`` may also name one source (``"CRC"``, ``"WebBook"``, ``"Zabransky"`` ... see
:data:`uqthermo.case.library.sources.SOURCE_KEYS`); ``"ATcT"``, ``"JANAF"`` and ``"shomate"`` keep
their earlier meaning (:mod:`uqthermo.case.readers.library_named`). An uncertainty written beside
``library`` (``u``, ``U`` with ``k``, ``half_width``, ``relative_u``) replaces the rule's. For a
heat capacity, ``T = [lo, hi]`` sets the window the curve must cover (default: the temperatures
the case's outputs need, :mod:`uqthermo.case.readers.temperature_windows`).

The tables returned are ordinary case tables (``value`` + uncertainty + ``source``, or
``model = "shomate"`` + ``ranges`` + ``relative_u``) with three private keys the species reader
consumes: ``_provenance`` (written to results.json), ``_assumed`` and ``_estimate``.
"""

from __future__ import annotations

from typing import Any

from ...errors import InputError
from .fields import Collector, read_temperature

__all__ = ["SpeciesLibrary", "is_auto_reference", "AUTO_SCALAR_KEYS", "AUTO_CP_KEYS", "restate_uncertainty"]


def _sig2(x: float) -> str:
    """Two significant digits without exponent for everyday magnitudes: 0.875665 → "0.88", 500 → "500"."""
    import math

    if x == 0 or not math.isfinite(x):
        return f"{x:g}"
    dec = max(0, 1 - math.floor(math.log10(abs(x))))
    s = f"{round(x, dec):.{dec}f}"
    return s if 1e-4 <= abs(x) < 1e7 else f"{x:.2g}"


def restate_uncertainty(d, node: dict) -> None:
    """The stated uncertainty of a datum the library chose (not the user's text): in the report unit
    of the datum (kJ/mol, not J/mol) and to two significant digits, as the report rounds u — the value
    used keeps its full precision. A u the user wrote is left as written."""
    if d.kind != "scalar" or len(d.distributions) != 1:
        return
    f = d.to_report
    if "U" in node and "k" in node and not any(k in node for k in ("u", "half_width", "relative_u")):
        try:
            U = float(str(node["U"]).split()[0]) * f if len(str(node["U"]).split()) == 2 else None
        except ValueError:
            U = None
        if U is not None:
            d.stated = f"U = {_sig2(U)} {d.unit} (k = {node['k']})"
    elif "u" in node and len(node) and not any(k in node for k in ("U", "half_width", "relative_u")):
        std = float(getattr(d.distributions[0], "std", 0.0))
        if std > 0:
            d.stated = f"u = {_sig2(std * f)} {d.unit}"

AUTO_SCALAR_KEYS = {"library", "u", "U", "k", "half_width", "relative_u", "distribution", "dof", "source", "note"}
AUTO_CP_KEYS = {"library", "relative_u", "extrapolate", "T", "source", "note"}
_USER_U = ("u", "U", "half_width", "relative_u")
_LEGACY = {"atct", "janaf", "shomate", "active thermochemical tables", "nist-janaf", "janaf1998", "janaf-1998",
           "webbook", "nist", "webbook-shomate", "nist-shomate"}
_QUANTITY = {"formation enthalpy": "formation_enthalpy", "standard entropy": "standard_entropy"}
_UNIT = {"formation_enthalpy": "J/mol", "standard_entropy": "J/(mol*K)", "boiling_temperature": "K",
         "melting_temperature": "K", "vaporization_enthalpy": "J/mol", "fusion_enthalpy": "J/mol"}
_PH = {"g": "g", "l": "l", "s": "s", "cr": "s"}


def is_auto_reference(node: Any) -> bool:
    """A ``{ library = ... }`` table handled here (auto or a source other than the three legacy ones)."""
    if not isinstance(node, dict) or "library" not in node:
        return False
    lib = node.get("library")
    return not (isinstance(lib, str) and lib.strip().lower() in _LEGACY)


def _source(c: Collector, node: dict, key: str) -> str | None:
    from ..library.sources import SOURCE_KEYS, source_key

    lib = node.get("library")
    if not isinstance(lib, str) or not lib.strip():
        c.add(f"{key}.library", "must be \"auto\" or a source name")
        return None
    if lib.strip().lower() == "auto":
        return "auto"
    k = source_key(lib)
    if k is None:
        import difflib

        close = difflib.get_close_matches(lib, list(SOURCE_KEYS) + ["auto"], n=3, cutoff=0.5)
        c.add(f"{key}.library", f"unknown data source {lib!r}; use \"auto\" or one of {', '.join(SOURCE_KEYS)}"
              + (f" (closest: {', '.join(close)})" if close else ""))
        return None
    return k


class SpeciesLibrary:
    """Library access for one ``[species.NAME]`` table: identification (once), selections.

    Parameters
    ----------
    c : Collector
    key : str
        ``species.NAME``.
    node : dict
        The raw species table.
    enabled : bool
        Library look-ups allowed (``load_case(library=...)``).
    """

    def __init__(self, c: Collector, key: str, name: str, node: dict, enabled: bool):
        self.c, self.key, self.name, self.node, self.enabled = c, key, name, node, enabled
        self._ident = None
        self._failed = False
        self.allow_extrapolation = False
        self.cache: dict = {}

    # ------------------------------------------------------------------ identity
    def identity(self, *, quiet: bool = False):
        """The library Identity (None after recording a problem, once)."""
        if self._ident is not None or self._failed:
            return self._ident
        from ..library.identify import identify

        sp = self.node
        cas, nm, formula, smiles = (sp.get(k) if isinstance(sp.get(k), str) and sp.get(k).strip() else None
                                    for k in ("cas", "name", "formula", "smiles"))
        where = "cas" if cas else "name" if nm else "formula" if formula else None
        if where is None and smiles is None:
            formula = self.name
        try:
            self._ident = identify(cas=cas, name=nm, formula=formula, smiles=smiles)
        except InputError as e:
            self._failed = True
            if not quiet:
                k = f"{self.key}.{where}" if where else self.key
                self.c.add(k, e.message + ("" if where else " (the species key was read as a formula)"))
        return self._ident

    # ------------------------------------------------------------------ scalars
    def scalar(self, node: dict, key: str, quantity: str, sym: str, T: float | None = None,
               transition: str | None = None) -> dict | None:
        """Table for :func:`read_uncertain` from a library reference (None after a problem)."""
        c = self.c
        if not self.enabled:
            c.add(key, "library look-ups are disabled here; give value = \"...\" with its uncertainty instead")
            return None
        c.unknown_keys(node, AUTO_SCALAR_KEYS, key)
        if any(k not in AUTO_SCALAR_KEYS for k in node):
            return None
        src = _source(c, node, key)
        if src is None:
            return None
        ident = self.identity()
        if ident is None:
            return None
        from ..library.selection import select_value

        q = _QUANTITY.get(quantity, quantity)
        phase = transition or _PH.get(sym)
        if phase is None:
            c.add(key, f"the data library has no data for phase {sym!r} (only g, l and s/cr); give value = \"...\"")
            return None
        try:
            sel = select_value(ident, q, phase, T=T, source=src)
        except InputError as e:
            c.add(key, e.message)
            return None
        return self._scalar_table(node, key, sel)

    def _scalar_table(self, node: dict, key: str, sel) -> dict:
        unit = _UNIT[sel.quantity]
        u = sel.uncertainty
        out: dict[str, Any] = {"value": f"{sel.value!r} {unit}"}
        prov = sel.provenance()
        user = [k for k in _USER_U if k in node]
        src_text = sel.source_text
        if user:
            for k in ("u", "U", "k", "half_width", "relative_u", "distribution", "dof"):
                if k in node:
                    out[k] = node[k]
            prov["uncertainty_basis"] = "user"
            prov["uncertainty_reason"] = f"given in the case (replaces the rule's {u.basis} u = {u.u:.4g} {unit})"
            prov["assumed"] = False
            src_text += "; uncertainty given in the case"
        elif u.u == 0.0:
            src_text += "; exact (zero by definition)"
        elif u.expanded is not None and u.k:
            out["U"] = f"{u.expanded:.15g} {unit}"
            out["k"] = int(u.k) if float(u.k).is_integer() else float(u.k)
        else:
            out["u"] = f"{u.u:.15g} {unit}"
        if not user and u.u > 0:
            src_text += f"; u: {u.basis} ({u.reason})"
        return self._with_provenance(out, node, src_text, prov, sel)

    def _with_provenance(self, out: dict, node: dict, src_text: str, prov: dict, sel) -> dict:
        """``out`` with its source text (the user's own ``source`` appended) and the private provenance
        fields the species reader reads back (provenance, assumed, estimate, label)."""
        if isinstance(node.get("source"), str) and node["source"].strip():
            src_text += "; " + node["source"].strip()
        out["source"] = src_text
        out["_provenance"] = prov
        out["_assumed"] = bool(prov["assumed"])
        out["_estimate"] = bool(sel.estimate)
        out["_label"] = self.label(sel)
        return out

    @staticmethod
    def label(sel) -> str:
        from ..library.base import chemicals_version

        mode = "auto" if sel.mode == "auto" else "named"
        est = ", estimate" if sel.estimate else ""
        return f"{sel.chosen.source.label} via chemicals {chemicals_version()} ({mode}{est})"

    # ------------------------------------------------------------------ transitions
    def transition(self, node: dict, key: str, fr: str, to: str, what: str, T: float | None = None) -> dict | None:
        """Transition temperature (``what="temperature"``) or enthalpy at ``T`` from the library."""
        pair = {("l", "g"): "l-g", ("s", "l"): "s-l", ("cr", "l"): "s-l"}.get((fr, to))
        if pair is None:
            self.c.add(key, f"the data library has transition data only for l -> g (boiling) and s/cr -> l "
                            f"(melting), not {fr} -> {to}; give value = \"...\"")
            return None
        if what == "temperature":
            q = "boiling_temperature" if pair == "l-g" else "melting_temperature"
            T = None
        else:
            q = "vaporization_enthalpy" if pair == "l-g" else "fusion_enthalpy"
        return self.scalar(node, key, q, fr, T=T, transition=pair)

    def nominal_transition_temperature(self, fr: str, to: str) -> float | None:
        """Quietly the library's nominal transition temperature (for temperature windows)."""
        pair = {("l", "g"): "l-g", ("s", "l"): "s-l", ("cr", "l"): "s-l"}.get((fr, to))
        if pair is None or not self.enabled:
            return None
        ident = self.identity(quiet=True)
        if ident is None:
            self._failed = False     # let the real read report it at its key
            return None
        from ..library.selection import select_value

        try:
            q = "boiling_temperature" if pair == "l-g" else "melting_temperature"
            return select_value(ident, q, pair).value
        except InputError:
            return None

    # ------------------------------------------------------------------ heat capacity
    def heat_capacity(self, node: dict, key: str, sym: str, window: tuple[float, float]) -> dict | None:
        c = self.c
        if not self.enabled:
            c.add(key, "library look-ups are disabled here; give the heat_capacity model and coefficients instead")
            return None
        bad = [k for k in node if k not in AUTO_CP_KEYS]
        if bad:
            for k in bad:
                c.add(f"{key}.{k}", "not used with a library curve (allowed: " + ", ".join(sorted(AUTO_CP_KEYS))
                      + "); a library curve takes one relative_u on the whole curve")
            return None
        src = _source(c, node, key)
        if src is None:
            return None
        if "T" in node:
            tn = node["T"]
            if not (isinstance(tn, list) and len(tn) == 2):
                c.add(f"{key}.T", "must be [lower, upper] temperatures the curve must cover, e.g. [\"298.15 K\", \"500 K\"]")
                return None
            lo = read_temperature(c, tn[0], f"{key}.T[0]")
            hi = read_temperature(c, tn[1], f"{key}.T[1]")
            if lo is None or hi is None:
                return None
            if hi < lo:
                c.add(f"{key}.T", "upper temperature must not be below the lower one")
                return None
            window = (lo, hi)
        ident = self.identity()
        if ident is None:
            return None
        phase = _PH.get(sym)
        if phase is None:
            c.add(key, f"the data library has no heat capacities for phase {sym!r} (only g, l and s/cr)")
            return None
        from ..library.selection import select_curve

        extrap = node.get("extrapolate", self.allow_extrapolation)
        try:
            sel = select_curve(ident, phase, window, source=src, extrapolate=extrap is True)
        except InputError as e:
            c.add(key, e.message)
            return None
        ranges, rep_note = sel.chosen.shomate()
        u = sel.uncertainty
        prov = sel.provenance()
        out: dict[str, Any] = {
            "model": "shomate",
            "ranges": [{"T": [f"{lo:.10g} K", f"{hi:.10g} K"], "coefficients": [float(x) for x in cf]}
                       for lo, hi, cf in ranges],
        }
        src_text = sel.source_text + f"; {rep_note}"
        if "relative_u" in node:
            out["relative_u"] = node["relative_u"]
            prov["uncertainty_basis"] = "user"
            prov["uncertainty_reason"] = f"given in the case (replaces the rule's {u.basis} {100 * u.u:.3g} %)"
            prov["assumed"] = False
            src_text += "; uncertainty given in the case"
        else:
            out["relative_u"] = f"{100 * u.u:.6g} %"
            src_text += f"; u: {u.basis} ({u.reason})"
        if "extrapolate" in node:
            out["extrapolate"] = node["extrapolate"]
        return self._with_provenance(out, node, src_text, prov, sel)
