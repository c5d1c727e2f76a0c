"""What an engineer would write by hand for the side-by-side scripts (benchmark 6), without uqthermo.

Reads the methanation species data straight from a case file (TOML) and gives closed-form
enthalpy and entropy changes:

* Shomate (NIST Chemistry WebBook form, t = T/1000 K):
  H(T) − H(T_ref) = 1000 [A t + B t²/2 + C t³/3 + D t⁴/4 − E/t] from t_ref to t  (J/mol),
  S(T) − S(T_ref) = [A ln t + B t + C t²/2 + D t³/3 − E/(2t²)] from t_ref to t  (J/(mol K));
* NASA-7 (Cp/R = a1 + a2 T + a3 T² + a4 T³ + a5 T⁴; McBride, Gordon & Reno, NASA TM-4513, 1993):
  H(T) − H(T_ref) = R [a1 T + a2 T²/2 + a3 T³/3 + a4 T⁴/4 + a5 T⁵/5] from T_ref to T,
  S(T) − S(T_ref) = R [a1 ln T + a2 T + a3 T²/2 + a4 T³/3 + a5 T⁴/4] from T_ref to T;

each over the range that holds the temperatures asked for here (250-450 °C and 25 °C lie in one
Shomate range, and 298-723 K in the low NASA-7 range of H2O). A relative Cp uncertainty is one
scale factor s on the curve (mean 1, u = the relative u), so ΔrH = Σ ν (ΔfH + s ∫Cp dT). Inputs
are (estimate, standard uncertainty) pairs; U with k is U/k; a rectangular half width a has
u = a/√3 (GUM 4.3.7).
"""

from __future__ import annotations

import math
import re
import tomllib
from pathlib import Path

import numpy as np

R = 8.314462618          # J/(mol K), CODATA 2018 exact
LN10 = math.log(10.0)
T_REF = 298.15
UNITS = {"kJ/mol": 1e3, "J/mol": 1.0, "J/(mol*K)": 1.0, "K": 1.0, "kmol/h": 1000.0 / 3600.0, "%": 0.01, "": 1.0}


def number(text) -> float:
    """'-393.474 kJ/mol' -> -393474.0 (SI); '350 degC' -> 623.15; plain numbers as they are."""
    if isinstance(text, (int, float)):
        return float(text)
    m = re.fullmatch(r"\s*([-+0-9.eE]+)\s*(.*?)\s*", text)
    value, unit = float(m.group(1)), m.group(2)
    if unit == "degC":
        return value + 273.15
    return value * UNITS[unit]


def uncertain(spec) -> tuple[float, float]:
    """(estimate, standard uncertainty) of a case-file quantity."""
    if not isinstance(spec, dict):
        return number(spec), 0.0
    x = number(spec["value"])
    if "u" in spec:
        return x, number(spec["u"])
    if "U" in spec:
        return x, number(spec["U"]) / float(spec["k"])
    if "half_width" in spec:
        return x, number(spec["half_width"]) / math.sqrt(3.0)
    if "relative_u" in spec:
        return x, abs(x) * number(spec["relative_u"])
    return x, 0.0


class Species:
    """One gas-phase species: ΔfH, S°, Cp curve (Shomate or NASA-7) and its relative u."""

    def __init__(self, name: str, node: dict):
        g = node["g"]
        self.name = name
        self.hf = uncertain(g.get("formation_enthalpy", "0 J/mol"))
        self.s0 = uncertain(g.get("standard_entropy", "0 J/(mol*K)"))
        cp = g["heat_capacity"]
        self.model = cp["model"]
        self.ranges = [(number(r["T"][0]), number(r["T"][1]), [float(c) for c in r["coefficients"]])
                       for r in cp["ranges"]]
        self.scale_u = number(cp.get("relative_u", "0 %"))

    def _coeffs(self, T):
        T = np.asarray(T, dtype=float)
        for lo, hi, c in self.ranges:
            if np.all((T >= lo - 2.0) & (T <= hi)):
                return c
        raise ValueError(f"{self.name}: temperatures span two Cp ranges")

    def dH(self, T):
        """H(T) − H(298.15 K), J/mol (T scalar or array)."""
        T = np.asarray(T, dtype=float)
        c = self._coeffs(np.append(T.ravel(), T_REF))
        if self.model == "shomate":
            A, B, C, D, E = c[:5]

            def h(t):
                return A * t + B * t * t / 2 + C * t**3 / 3 + D * t**4 / 4 - E / t
            return 1000.0 * (h(T / 1000.0) - h(T_REF / 1000.0))
        a = c[:5]

        def h(t):
            return a[0] * t + a[1] * t * t / 2 + a[2] * t**3 / 3 + a[3] * t**4 / 4 + a[4] * t**5 / 5
        return R * (h(T) - h(T_REF))

    def dS(self, T):
        """S(T) − S(298.15 K), J/(mol K)."""
        T = np.asarray(T, dtype=float)
        c = self._coeffs(np.append(T.ravel(), T_REF))
        if self.model == "shomate":
            A, B, C, D, E = c[:5]

            def s(t):
                return A * np.log(t) + B * t + C * t * t / 2 + D * t**3 / 3 - E / (2 * t * t)
            return s(T / 1000.0) - s(T_REF / 1000.0)
        a = c[:5]

        def s(t):
            return a[0] * np.log(t) + a[1] * t + a[2] * t * t / 2 + a[3] * t**3 / 3 + a[4] * t**4 / 4
        return R * (s(T) - s(T_REF))


def load(path) -> dict:
    raw = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    return {name: Species(name, node) for name, node in raw["species"].items()}


def equation(text: str) -> dict[str, float]:
    """'CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)' -> {CO2: -1, H2: -4, CH4: 1, H2O: 2}."""
    left, right = text.split("->")
    nu: dict[str, float] = {}
    for side, sign in ((left, -1.0), (right, 1.0)):
        for term in side.split("+"):
            m = re.fullmatch(r"\s*([0-9.]*)\s*([A-Za-z0-9]+)\(g\)\s*", term)
            nu[m.group(2)] = nu.get(m.group(2), 0.0) + sign * float(m.group(1) or 1)
    return nu


def linear_enthalpy(species: dict, nu: dict, temperatures) -> dict:
    """ΔrH(T) = Σ ν (ΔfH + s ∫Cp) (kJ/mol) as y = y0 + z @ A over the normal scores z of its
    uncertain inputs (ΔfH of each participant, then the Cp scale factors)."""
    T = np.atleast_1d(np.asarray(temperatures, dtype=float))
    y0 = sum(n * (species[k].hf[0] + species[k].dH(T)) for k, n in nu.items()) / 1e3
    rows, names = [], []
    for k, n in nu.items():
        if species[k].hf[1] > 0:
            rows.append(np.full(T.size, n * species[k].hf[1] / 1e3))
            names.append(f"{k}.hf")
    for k, n in nu.items():
        if species[k].scale_u > 0:
            rows.append(n * species[k].scale_u * species[k].dH(T) / 1e3)
            names.append(f"{k}.cp")
    return {"y0": np.asarray(y0).tolist(), "A": np.array(rows).tolist(), "inputs": names}


def linear_log10k(species: dict, nu: dict, temperatures) -> dict:
    """log10 K(T) = −[ΔrH − T ΔrS]/(R T ln 10) with ΔrS = Σ ν (S° + s ∫Cp/T), as y = y0 + z @ A."""
    T = np.atleast_1d(np.asarray(temperatures, dtype=float))
    f = -1.0 / (R * T * LN10)
    y0 = sum(n * (species[k].hf[0] + species[k].dH(T) - T * (species[k].s0[0] + species[k].dS(T)))
             for k, n in nu.items()) * f
    rows, names = [], []
    for k, n in nu.items():
        if species[k].hf[1] > 0:
            rows.append(f * n * species[k].hf[1])
            names.append(f"{k}.hf")
    for k, n in nu.items():
        if species[k].s0[1] > 0:
            rows.append(-f * T * n * species[k].s0[1])
            names.append(f"{k}.s0")
    for k, n in nu.items():
        if species[k].scale_u > 0:
            rows.append(f * n * species[k].scale_u * (species[k].dH(T) - T * species[k].dS(T)))
            names.append(f"{k}.cp")
    return {"y0": np.asarray(y0).tolist(), "A": np.array(rows).tolist(), "inputs": names}
