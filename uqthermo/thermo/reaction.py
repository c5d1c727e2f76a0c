"""Chemical formulas, reaction equations and standard reaction properties.

Reaction properties follow the IUPAC Green Book (Cohen et al., Quantities, Units and Symbols
in Physical Chemistry, 3rd ed. 2007, section 2.11): for a reaction
:math:`0 = \\sum_i \\nu_i B_i` (reactants :math:`\\nu_i < 0`, products :math:`\\nu_i > 0`)

.. math::
    \\Delta_r H^\\circ(T) = \\sum_i \\nu_i H_i^\\circ(T), \\quad
    \\Delta_r S^\\circ(T) = \\sum_i \\nu_i S_i^\\circ(T), \\quad
    \\Delta_r G^\\circ = \\Delta_r H^\\circ - T\\Delta_r S^\\circ, \\quad
    \\ln K^\\circ = -\\frac{\\Delta_r G^\\circ}{RT}

with species enthalpies on the formation scale (see :mod:`uqthermo.thermo.species`), which
is Kirchhoff's law :math:`\\Delta_r H^\\circ(T_2) = \\Delta_r H^\\circ(T_1) + \\int_{T_1}^{T_2}\\Delta_r C_p^\\circ dT`
including latent heats where a species is routed through a phase change (Atkins' Physical
Chemistry, "Kirchhoff's law"). Units: K, J/mol, J/(mol K).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Iterable, Mapping, Sequence

import numpy as np

from ..errors import BalanceError, PathError, PhysicsError
from .cp import R, as_temperature
from .formula import STATE_SUFFIX_RE, formula_charge

if TYPE_CHECKING:  # pragma: no cover
    from .species import Species

__all__ = [
    "Participant", "Reaction", "parse_equation", "participant_key",
    "check_balance", "reaction_enthalpy", "reaction_entropy", "reaction_gibbs_energy",
    "ln_equilibrium_constant", "reaction_heat_capacity", "stoichiometric_matrix",
    "batch_reaction_property", "stoichiometric_product", "species_enthalpies", "species_entropies",
]

# --------------------------------------------------------------------------- equations

@dataclass(frozen=True)
class Participant:
    """One species in a reaction: signed stoichiometric number (reactants < 0), name, state."""

    nu: float
    species: str
    phase: str | None = None

    @property
    def key(self) -> str:
        """``"NAME(phase)"`` (or ``"NAME"`` without a state symbol)."""
        return participant_key(self.species, self.phase)


def participant_key(species: str, phase: str | None) -> str:
    """Key of a species in a given phase: ``"H2O(g)"`` (``"H2O"`` when phase is None)."""
    return species if phase is None else f"{species}({phase})"


_ARROW_RE = re.compile(r"<=>|<->|⇌|⇄|<-->|-->|->|=>|→|⟶|=")
_COEF_RE = re.compile(
    r"^(?:\(\s*(?P<pfrac>\d+(?:\.\d+)?\s*/\s*\d+(?:\.\d+)?)\s*\)"
    r"|(?P<num>\d+(?:\.\d+)?(?:\s*/\s*\d+(?:\.\d+)?)?|\.\d+))"
    r"(?:\s+|(?=[A-Za-z\[]))"
)


def _coef_value(text: str) -> float:
    if "/" in text:
        a, b = (float(x) for x in text.split("/"))
        if b == 0:
            raise PhysicsError(f"stoichiometric coefficient '{text}' divides by zero")
        return a / b
    return float(text)


# a '+' that is a charge sign, not a separator: followed by '(' (state), another '+', the end,
# or digits then '(' / end ("Fe+3(aq)")
_SEP_PLUS_RE = re.compile(r"\+(?!\s*$)(?!\(|\+|\d+(?:\.\d+)?\s*(?:\(|$))")


def _split_side(side: str, equation: str) -> list[str]:
    s = side.strip()
    if re.search(r"(^|\s)\+$", s) or re.match(r"^\+(\s|$)", s):
        raise PhysicsError(f"equation '{equation}': empty term (check the '+' signs)")
    if re.search(r"\s\+\s", s):
        return re.split(r"\s+\+\s+", s)
    return _SEP_PLUS_RE.split(s)


def _parse_term(term: str, equation: str) -> tuple[float, str, str | None]:
    t = term.strip()
    if not t:
        raise PhysicsError(f"equation '{equation}': empty term (check the '+' signs)")
    coef = 1.0
    m = _COEF_RE.match(t)
    if m:
        coef = _coef_value(m.group("pfrac") or m.group("num"))
        t = t[m.end():].strip()
    if not coef > 0:
        raise PhysicsError(f"equation '{equation}': coefficient of '{term.strip()}' must be positive")
    phase = None
    ms = STATE_SUFFIX_RE.search(t)
    if ms and ms.start() > 0:
        phase = ms.group(1)
        t = t[:ms.start()].strip()
    if not t:
        raise PhysicsError(f"equation '{equation}': term '{term.strip()}' has no species name")
    if re.search(r"\s", t):
        raise PhysicsError(f"equation '{equation}': cannot read '{term.strip()}' "
                           f"(species names contain no spaces; write e.g. '2 H2O(g)')")
    return coef, t, phase


def parse_equation(text: str) -> list[Participant]:
    """Parse ``"CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)"`` into participants.

    Arrows ``->``, ``=``, ``=>``, ``→``, ``<=>``, ``⇌``; coefficients integer, decimal
    (``0.5 O2(g)``) or fractional (``1/2 O2(g)``), separated by a space or written in front
    of a name starting with a letter (``2H2O(l)``); the state symbol is a trailing
    lower-case parenthesis (``g``, ``l``, ``s``, ``cr``, ``aq``, ...), so names like
    ``CH2(S)`` or ``Fe(OH)3`` are kept. With ions, put spaces around the ``+`` separators.

    Returns
    -------
    list of Participant
        Reactants with negative, products with positive stoichiometric numbers.
    """
    if not isinstance(text, str) or not text.strip():
        raise PhysicsError("equation must be a non-empty string")
    arrows = list(_ARROW_RE.finditer(text))
    if len(arrows) != 1:
        raise PhysicsError(f"equation '{text}' needs exactly one arrow ('->', '=', '<=>' or '→'), "
                           f"found {len(arrows)}")
    a = arrows[0]
    left, right = text[:a.start()], text[a.end():]
    out: list[Participant] = []
    for side, sign in ((left, -1.0), (right, 1.0)):
        if not side.strip():
            raise PhysicsError(f"equation '{text}' has an empty {'left' if sign < 0 else 'right'} side")
        for term in _split_side(side, text):
            coef, name, phase = _parse_term(term, text)
            out.append(Participant(sign * coef, name, phase))
    return out


@dataclass
class Reaction:
    """A reaction: name, equation text, participants and an optional measured anchor.

    Attributes
    ----------
    name : str
    equation : str
    participants : list of Participant
        Parsed from ``equation`` when left empty.
    measured_enthalpy : (float, float) or None
        ``(ΔrH in J/mol, temperature in K)``: measured reaction enthalpy used as the anchor
        instead of formation enthalpies.
    """

    name: str
    equation: str
    participants: list[Participant] = field(default_factory=list)
    measured_enthalpy: tuple[float, float] | None = None

    def __post_init__(self):
        if not self.participants:
            try:
                self.participants = parse_equation(self.equation)
            except PhysicsError as exc:
                raise PhysicsError(exc.message, key=f"reaction.{self.name}.equation") from None

    @property
    def anchor(self) -> str:
        """``"measured"`` or ``"formation"``."""
        return "measured" if self.measured_enthalpy is not None else "formation"


# --------------------------------------------------------------------------- balance

def _species_of(reaction: Reaction, species: Mapping[str, "Species"], p: Participant) -> "Species":
    try:
        return species[p.species]
    except KeyError:
        raise PhysicsError(f"reaction {reaction.name}: unknown species '{p.species}'",
                           key=f"reaction.{reaction.name}.equation") from None


def check_balance(reaction: Reaction, species: Mapping[str, "Species"], tolerance: float = 1e-9) -> None:
    """Check that elements (and charge) balance: :math:`\\sum_i \\nu_i n_{ij} = 0` for every element j.

    Raises
    ------
    BalanceError
        Naming each unbalanced element with its net amount (products minus reactants),
        key ``reaction.NAME.equation``.
    """
    net: dict[str, float] = {}
    scale: dict[str, float] = {}
    for p in reaction.participants:
        sp = _species_of(reaction, species, p)
        formula = sp.formula or sp.name
        try:
            els = sp.elements
            charge = formula_charge(formula)
        except PhysicsError as exc:
            raise PhysicsError(f"species {sp.name}: {exc.message}", key=f"{sp.name}.formula") from None
        if charge:
            els = dict(els, charge=charge)
        for el, n in els.items():
            net[el] = net.get(el, 0.0) + p.nu * n
            scale[el] = scale.get(el, 0.0) + abs(p.nu * n)
    bad = {el: v for el, v in net.items() if abs(v) > tolerance * max(1.0, scale[el])}
    if bad:
        parts = ", ".join(f"{el} {v:+g}" for el, v in bad.items())
        raise BalanceError(f"reaction {reaction.name} does not balance: {parts} "
                           f"(net amount, products minus reactants)", key=f"reaction.{reaction.name}.equation")


# --------------------------------------------------------------------------- properties

def _phase(reaction: Reaction, sp: "Species", p: Participant) -> str:
    try:
        return sp.resolve_phase(p.phase)
    except PathError as exc:
        raise PathError(f"reaction {reaction.name}: {exc.message}", key=exc.key) from None


def _sum(terms) -> np.ndarray:
    total = np.zeros(())
    for t in terms:
        total = total + t
    return np.asarray(total)


def reaction_enthalpy(reaction: Reaction, species: Mapping[str, "Species"], T, T_ref: float = 298.15,
                      values: Mapping | None = None) -> np.ndarray:
    """Standard reaction enthalpy :math:`\\Delta_r H^\\circ(T)`, J/mol.

    From formation data: :math:`\\Delta_r H^\\circ(T) = \\sum_i \\nu_i H_i^\\circ(T)` (species on
    the formation scale, latent heats included where a phase is routed through a
    transition). With a measured anchor :math:`(\\Delta_r H_m, T_m)` (Kirchhoff's law, Atkins'
    Physical Chemistry):

    .. math:: \\Delta_r H^\\circ(T) = \\Delta_r H_m + \\sum_i \\nu_i\\,[H_i(T) - H_i(T_m)]
              = \\Delta_r H_m + \\int_{T_m}^{T} \\Delta_r C_p\\,dT

    with each species held in its stated phase.

    Parameters
    ----------
    values : mapping, optional
        ``{species_name: {relative key: array}}`` plus optionally
        ``"reaction.NAME.measured_enthalpy"`` (and ``"reaction.NAME.measured_temperature"``).
    """
    vals = values if values is not None else {}
    T = as_temperature(T)
    if reaction.measured_enthalpy is not None:
        dH_m, T_m = reaction.measured_enthalpy
        dH_m = np.asarray(vals.get(f"reaction.{reaction.name}.measured_enthalpy", dH_m), dtype=float)
        T_m = vals.get(f"reaction.{reaction.name}.measured_temperature", T_m)
        terms = []
        for p in reaction.participants:
            sp = _species_of(reaction, species, p)
            terms.append(p.nu * sp.phase_enthalpy_change(_phase(reaction, sp, p), T_m, T, vals.get(p.species)))
        return np.asarray(dH_m + _sum(terms))
    terms = []
    for p in reaction.participants:
        sp = _species_of(reaction, species, p)
        terms.append(p.nu * sp.enthalpy(_phase(reaction, sp, p), T, T_ref, vals.get(p.species)))
    return _sum(terms) + 0.0 * T


def reaction_entropy(reaction: Reaction, species: Mapping[str, "Species"], T, T_ref: float = 298.15,
                     values: Mapping | None = None) -> np.ndarray:
    """Standard reaction entropy :math:`\\Delta_r S^\\circ(T) = \\sum_i \\nu_i S_i^\\circ(T)`, J/(mol K)
    (IUPAC Green Book 2.11; absolute species entropies, needed also with a measured enthalpy anchor)."""
    vals = values if values is not None else {}
    T = as_temperature(T)
    terms = []
    for p in reaction.participants:
        sp = _species_of(reaction, species, p)
        terms.append(p.nu * sp.entropy(_phase(reaction, sp, p), T, T_ref, vals.get(p.species)))
    return _sum(terms) + 0.0 * T


def reaction_gibbs_energy(reaction: Reaction, species: Mapping[str, "Species"], T, T_ref: float = 298.15,
                          values: Mapping | None = None) -> np.ndarray:
    """Standard reaction Gibbs energy :math:`\\Delta_r G^\\circ = \\Delta_r H^\\circ - T\\Delta_r S^\\circ`, J/mol
    (IUPAC Green Book 2.11)."""
    T = as_temperature(T)
    return (reaction_enthalpy(reaction, species, T, T_ref, values)
            - T * reaction_entropy(reaction, species, T, T_ref, values))


def ln_equilibrium_constant(reaction: Reaction, species: Mapping[str, "Species"], T, T_ref: float = 298.15,
                            values: Mapping | None = None) -> np.ndarray:
    """Natural log of the standard equilibrium constant,
    :math:`\\ln K^\\circ = -\\Delta_r G^\\circ/(RT)` (dimensionless; IUPAC Green Book 2.11)."""
    T = as_temperature(T)
    return -reaction_gibbs_energy(reaction, species, T, T_ref, values) / (R * T)


def reaction_heat_capacity(reaction: Reaction, species: Mapping[str, "Species"], T,
                           values: Mapping | None = None) -> np.ndarray:
    """:math:`\\Delta_r C_p^\\circ(T) = \\sum_i \\nu_i C_{p,i}(T)`, J/(mol K), species in their stated phases
    (the integrand of Kirchhoff's law)."""
    vals = values if values is not None else {}
    T = as_temperature(T)
    terms = []
    for p in reaction.participants:
        sp = _species_of(reaction, species, p)
        terms.append(p.nu * sp.cp(_phase(reaction, sp, p), T, vals.get(p.species)))
    return _sum(terms) + 0.0 * T


# --------------------------------------------------------------------------- batch form

def _key_of(k) -> str:
    if isinstance(k, tuple):
        return participant_key(k[0], k[1])
    return str(k)


def stoichiometric_matrix(reactions: Sequence[Reaction], species_keys: Iterable) -> np.ndarray:
    """Stoichiometric matrix :math:`\\nu_{rs}`, shape ``(R, S)``.

    ``species_keys`` are ``"NAME(phase)"`` strings (as :attr:`Participant.key`) or
    ``(name, phase)`` tuples; a key without a phase matches participants written without a
    state symbol. A species on both sides of one equation nets out.
    """
    keys = [_key_of(k) for k in species_keys]
    index = {k: i for i, k in enumerate(keys)}
    if len(index) != len(keys):
        raise PhysicsError("stoichiometric_matrix: duplicate species keys")
    nu = np.zeros((len(reactions), len(keys)))
    for r, rx in enumerate(reactions):
        for p in rx.participants:
            j = index.get(p.key)
            if j is None:
                raise PhysicsError(f"reaction {rx.name}: '{p.key}' is not among the species keys",
                                   key=f"reaction.{rx.name}.equation")
            nu[r, j] += p.nu
    return nu


#: ν is used as a sparse matrix when it has at least this many entries and this fill
_SPARSE_MIN_SIZE = 10_000
_SPARSE_MAX_FILL = 0.1


def stoichiometric_product(nu, H) -> np.ndarray:
    """Reaction properties from species properties in species-major layout:
    :math:`Y_{r\\dots} = \\sum_s \\nu_{rs} H_{s\\dots}`.

    One matrix product ``nu @ H.reshape(S, -1)``; for a large, mostly empty ν (a
    mechanism: each reaction involves a handful of the species) the product is sparse
    (``scipy.sparse``), so its cost grows with the number of participants, not R x S.

    Parameters
    ----------
    nu : array_like, shape (R, S)
        Stoichiometric matrix (:func:`stoichiometric_matrix`).
    H : array_like, shape (S, ...)
        Species property samples, species first (e.g. ``(S, N, M)``).

    Returns
    -------
    numpy.ndarray, shape (R, ...)
    """
    nu = np.asarray(nu, dtype=float)
    H = np.asarray(H, dtype=float)
    if nu.ndim != 2 or H.ndim < 1 or H.shape[0] != nu.shape[1]:
        raise PhysicsError(f"stoichiometric_product: shapes {nu.shape} and {H.shape} do not match "
                           f"(need (R, S) and (S, ...))")
    flat = H.reshape(H.shape[0], -1)
    if nu.size >= _SPARSE_MIN_SIZE and np.count_nonzero(nu) <= _SPARSE_MAX_FILL * nu.size:
        from scipy import sparse

        out = np.asarray(sparse.csr_matrix(nu) @ flat)
    else:
        out = nu @ flat
    return out.reshape((nu.shape[0],) + H.shape[1:])


def batch_reaction_property(H_species, nu) -> np.ndarray:
    """Many reactions at once from shared species samples:
    :math:`Y_{\\dots rm} = \\sum_s \\nu_{rs} H_{\\dots sm}`.

    Parameters
    ----------
    H_species : array_like, shape (..., S, M)
        Species property samples (e.g. formation-scale enthalpies, J/mol) for S species at M
        temperatures; using the same samples for every reaction correlates the reactions.
    nu : array_like, shape (R, S)
        Stoichiometric matrix (:func:`stoichiometric_matrix`).

    Returns
    -------
    numpy.ndarray, shape (..., R, M)

    See :func:`stoichiometric_product` for the species-major layout ``(S, ...)``, which
    avoids the transposes done here.
    """
    H = np.asarray(H_species, dtype=float)
    nu = np.asarray(nu, dtype=float)
    if H.ndim < 2 or nu.ndim != 2 or H.shape[-2] != nu.shape[1]:
        raise PhysicsError(f"batch_reaction_property: shapes {H.shape} and {nu.shape} do not match "
                           f"(need (..., S, M) and (R, S))")
    if H.ndim == 2:
        return stoichiometric_product(nu, H)
    return np.moveaxis(stoichiometric_product(nu, np.moveaxis(H, -2, 0)), 0, -2)


def _stack(species: Mapping[str, "Species"], keys, fn) -> np.ndarray:
    out = []
    for k in keys:
        if isinstance(k, tuple):
            name, phase = k
        else:
            m = re.match(r"^(.*?)(?:\(([a-z][a-z0-9,]*)\))?$", str(k))
            name, phase = m.group(1), m.group(2)
        try:
            sp = species[name]
        except KeyError:
            raise PhysicsError(f"unknown species '{name}'", key=name) from None
        out.append(fn(sp, phase))
    out = np.broadcast_arrays(*out)
    return np.stack(out, axis=-2)


def species_enthalpies(species: Mapping[str, "Species"], keys, T, T_ref: float = 298.15,
                       values: Mapping | None = None) -> np.ndarray:
    """Formation-scale enthalpies of several species, shape ``(..., S, M)`` for ``T`` of shape ``(M,)``
    (feed to :func:`batch_reaction_property`). ``values`` as for :func:`reaction_enthalpy`."""
    vals = values if values is not None else {}
    T = np.atleast_1d(as_temperature(T))
    return _stack(species, keys, lambda sp, ph: sp.enthalpy(ph, T, T_ref, vals.get(sp.name)))


def species_entropies(species: Mapping[str, "Species"], keys, T, T_ref: float = 298.15,
                      values: Mapping | None = None) -> np.ndarray:
    """Absolute entropies of several species, shape ``(..., S, M)``."""
    vals = values if values is not None else {}
    T = np.atleast_1d(as_temperature(T))
    return _stack(species, keys, lambda sp, ph: sp.entropy(ph, T, T_ref, vals.get(sp.name)))
