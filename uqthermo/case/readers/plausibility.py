"""Warnings for input that is valid but probably a slip (never refused).

Each warning names the key and the likely slip. Checked here, on the whole parsed case:

* ``settings.reference_temperature`` written in °C with a number that is a usual kelvin value
  (``"298.15 degC"`` = 571.3 K), or in K with a usual Celsius number (``"25 K"``);
* a formation enthalpy about 1000× smaller (or larger) than the data library's value for the same
  formula and phase: J/mol written for kJ/mol (or the reverse). The library is consulted only for
  values of a suspicious size (below 5 kJ/mol or above 3000 kJ/mol in magnitude, for a compound).

Checked where the value is read (:func:`uqthermo.case.readers.fields.read_uncertain`): a standard
uncertainty larger than the value, a coverage factor k outside 1…13, a relative uncertainty on a
temperature written in °C or °F. Checked on the model at the best estimates
(:func:`model_warnings`): a negative heat to remove (a reaction written backwards?) and a
temperature drop of an adiabatic output.
"""

from __future__ import annotations

import re
from typing import Any

from ...errors import UqthermoError
from .fields import Collector

_NUM_UNIT = re.compile(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*(.*?)\s*$")
#: |ΔfH| range (kJ/mol) outside which a compound's formation enthalpy is compared with the library
SMALL_KJ, LARGE_KJ = 5.0, 3000.0


def check_case(c: Collector, raw: dict, species: dict, data: dict, settings, library: bool) -> None:
    """Add the case-level warnings of the module docstring to ``c``."""
    _reference_temperature(c, raw)
    if library:
        _formation_magnitudes(c, species, data)


def _reference_temperature(c: Collector, raw: dict) -> None:
    node = (raw.get("settings") or {}).get("reference_temperature") if isinstance(raw.get("settings"), dict) else None
    if not isinstance(node, str):
        return
    m = _NUM_UNIT.match(node.replace("°C", "degC").replace("℃", "degC"))
    if not m:
        return
    try:
        x = float(m.group(1))
    except ValueError:
        return
    unit = m.group(2).replace(" ", "")
    key = "settings.reference_temperature"
    if unit in ("degC", "celsius") and 200.0 <= x <= 400.0:
        c.warn(key, f"{node!r} is {x + 273.15:g} K; {x:g} looks like a kelvin value (the usual reference is "
                    "298.15 K = 25 degC): write \"298.15 K\" if that was meant")
    elif unit == "K" and 0.0 < x <= 100.0:
        c.warn(key, f"{node!r} is {x:g} K, far below any tabulated reference; {x:g} looks like a Celsius value: "
                    f"write \"{x:g} degC\" if that was meant")


def _formation_magnitudes(c: Collector, species: dict, data: dict) -> None:
    for d in data.values():
        if d.quantity != "formation enthalpy" or d.library or not d.species:
            continue
        v_kj = float(d.nominal) * 1e-3
        if v_kj == 0 or SMALL_KJ <= abs(v_kj) <= LARGE_KJ:
            continue
        sp = species.get(d.species)
        if sp is None:
            continue
        try:
            elements = sp.elements
        except UqthermoError:
            continue
        if sum(elements.values()) <= 1 or d.phase not in ("g", "l"):
            continue
        lib = _library_value(sp.formula or sp.name, d.phase)
        if lib is None or lib == 0:
            continue
        ratio = v_kj / (lib * 1e-3)
        key = f"species.{d.id}"
        if 1 / 2000 < ratio < 1 / 500:
            c.warn(key, f"{v_kj:.6g} kJ/mol is about 1000 times smaller than the library's {lib * 1e-3:.6g} kJ/mol "
                        f"for {sp.formula or sp.name}({d.phase}): J/mol written for kJ/mol? It is used as stated")
        elif 500 < ratio < 2000:
            c.warn(key, f"{v_kj:.6g} kJ/mol is about 1000 times larger than the library's {lib * 1e-3:.6g} kJ/mol "
                        f"for {sp.formula or sp.name}({d.phase}): kJ/mol written for J/mol? It is used as stated")


def _library_value(formula: str, phase: str) -> float | None:
    """Formation enthalpy (J/mol) of a formula in ATcT, else JANAF; None when not found."""
    try:
        from ..library import lookup_formation_enthalpy
    except ImportError:   # pragma: no cover - the library is part of the package
        return None
    for ds in ("ATcT", "JANAF"):
        try:
            return float(lookup_formation_enthalpy(formula, phase, ds).value)
        except Exception:   # noqa: BLE001 - any look-up failure just means "no comparison"
            continue
    return None


def model_warnings(case, model, y0: Any) -> list[str]:
    """Warnings from the outputs at the best estimates (a negative duty, a temperature drop)."""
    out = []
    for i, o in enumerate(case.outputs):
        cols = model.output_columns(i)
        if not cols:
            continue
        y = float(y0[cols[0]])
        if o.kind == "heat_release" and y < 0:
            out.append(f"{o.key}: the heat to remove is negative ({y:.4g} kW at the best estimates): the system takes "
                       "up heat. If this is a cooling duty, check that each equation is written the way the reaction "
                       "runs (reactants -> products) and that the extent rates are positive")
        if o.kind == "adiabatic_temperature_rise" and y < 0:
            out.append(f"{o.key}: the temperature drops by {-y:.3g} K at the best estimates (an endothermic step); "
                       "if a rise was expected, check the direction of the equation and the sign of the extent")
    return out
