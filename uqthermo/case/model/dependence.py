"""Which data each output of a case can depend on (so that Monte Carlo samples only those).

The rule follows how the builder evaluates an output (``case/model/builder.py``):

* the output's own data: every datum under ``output.<name>.`` (uncertain temperature, extents,
  feeds, conversions, amounts of a charge or mixture, limits, MTT/TD24, feed streams);
* the data of every reaction it uses (``reaction.<R>.…``, e.g. a measured enthalpy), the
  reaction itself for the reaction kinds and the adiabatic rise, each rate's reaction for
  ``heat_release``;
* every datum of every species those reactions, the heated species or mixture, the charge,
  the feed streams and the mass basis involve (formation data, heat capacities,
  transitions), except standard entropies
  for the outputs that are enthalpies (ΔrH, heating enthalpy, heat release, adiabatic rise:
  Kirchhoff's law and the energy balance use no entropy);
* any datum that fits none of these patterns (a kind of datum this rule does not know):
  always included.

Another output's own data (``output.<other>.…``) and the data of species and reactions the
output does not involve are left out. The Monte Carlo engine checks the declaration on a few
rows before it relies on it (``uq.trials.TrialDesign``).
"""

from __future__ import annotations

from ..schema import Case, OutputSpec

__all__ = ["output_data", "value_data", "model_columns"]

#: output kinds whose value involves no standard entropy
ENTHALPY_KINDS = ("reaction_enthalpy", "heating_enthalpy", "heat_release", "adiabatic_temperature_rise")


def output_data(case: Case, o: OutputSpec) -> set[str]:
    """Datum ids output ``o`` may depend on (see the module docstring)."""
    reactions = [r for r in [o.reaction, *o.extent_rates] if r]
    feeds = list(getattr(o, "feeds", []) or [])
    species = {p.species for r in reactions for p in case.reactions[r].participants}
    species |= {o.species, getattr(o, "mass_of", "")} | {sp for sp, _ in o.mixture} | {sp for sp, _ in o.charge}
    species |= {sp for f in feeds for sp, _ in f.flows}
    species.discard("")
    own = f"output.{o.name}."
    out = set()
    for did, d in case.data.items():
        if did.startswith("output."):
            if did.startswith(own):
                out.add(did)
        elif did.startswith("reaction."):
            if any(did.startswith(f"reaction.{r}.") for r in reactions):
                out.add(did)
        elif d.species:
            if d.species in species and not (o.kind in ENTHALPY_KINDS and d.quantity == "standard entropy"):
                out.add(did)
        else:
            out.add(did)
    extra = [o.temperature_datum, o.extent_datum, *o.mixture.values(), *o.charge.values(),
             *(did for dids in o.extent_rates.values() for did in dids),
             *(getattr(o, k, "") for k in ("limit_datum", "mtt_datum", "td24_datum", "initial_pressure_datum")),
             *(f.temperature_datum for f in feeds), *(did for f in feeds for did in f.flows.values())]
    return out | {did for did in extra if did}


def value_data(case: Case, o: OutputSpec) -> set[str]:
    """Datum ids the output's *value* may depend on: :func:`output_data` without the design thresholds
    it is only compared with (its limit or cooling capacity, MTT, TD24), which enter its probabilities
    but never y. Drivers and what-if rows of the output list these data only."""
    return output_data(case, o) - {did for did in (o.limit_datum, o.mtt_datum, o.td24_datum) if did}


def model_columns(case: Case, inputs) -> list[int]:
    """Input columns (of the model's ``InputSet``) that some output of the case may depend on."""
    cols: set[int] = set()
    for o in case.outputs:
        for did in output_data(case, o):
            cols.update(inputs.groups.get(did, []))
    return sorted(cols)
