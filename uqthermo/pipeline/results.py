"""Assemble the results.json document (contract §3 plus extensions) from a finished run.

Pure bookkeeping: it takes the case, the model's column layout and the statistics
results and arranges them per output and point; the only computations here are the
cheap post-processing steps that need the column layout (driver ranking, what-if
scenarios, design margins, exceedance probabilities, criticality classes).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .. import __version__
from ..case.model.dependence import value_data
from ..case.model.layout import QUANTITY, Model
from ..case.schema import Case
from ..uq.margins import Margins, curve_band, level_key, margins_from_linear, margins_from_monte_carlo

ONE_SIDED = (0.01, 0.05, 0.95, 0.99)
HISTOGRAM_BINS = 48
SKEW_WARNING = 0.5
#: Monte Carlo what-if: trials (at most; never more than the run's) and independent replicates
#: behind each change's standard error (uqthermo.uq.whatif)
WHATIF_SAMPLES = 2**13
WHATIF_BATCHES = 8


def _f(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _describe(dist, factor: float, unit: str) -> str:
    """The distribution in report units, e.g. "rectangular, half-width 15 kJ/mol" (engine values × factor)."""
    kind = dist.describe().split(",")[0]
    if kind == "exact":
        return kind
    params = dist.parameters
    names = {"u": "u", "half_width": "half-width", "scale": "scale", "lower": "lower", "upper": "upper",
             "mode": "mode", "location": "location"}
    parts = []
    for k, v in params.items():
        if k in ("estimate", "location") and kind not in ("truncated normal",):
            continue
        if k == "dof":
            parts.append(f"{v:g} degrees of freedom")
            continue
        if kind == "student-t" and k == "scale":
            parts.append(f"u {dist.std * factor:.4g}")
            continue
        parts.append(f"{names.get(k, k)} {v * factor:.4g}")
    u_unit = "" if unit in ("1", "factor on the curve", "coefficients") else f" {unit}"
    return f"{kind}, " + ", ".join(parts) + u_unit if parts else kind


def _inputs_table(case: Case) -> list[dict]:
    rows = []
    for d in case.data.values():
        dist = d.distributions[0] if d.distributions else None
        single = len(d.distributions) == 1
        if d.kind == "scale":
            est, u, unit = 1.0, float(dist.std), "factor on the curve"
        elif d.kind == "coefficients" and not single:
            est, u, unit = None, None, "coefficients"
        else:
            est = float(dist.estimate) * d.to_report if single else None
            u = float(dist.std) * d.to_report if single else None
            unit = d.unit
            if d.kind == "coefficients":
                unit = "J/(mol*K)"
        rows.append({
            "datum": d.id, "quantity": d.quantity, "species": d.species, "phase": d.phase,
            "stated": d.stated,
            "distribution": (_describe(dist, d.to_report, unit) if single and dist is not None else
                             f"multivariate normal over {len(d.distributions)} coefficients"),
            "estimate": est, "standard_uncertainty": u, "unit": unit, "source": d.source,
            "n_parameters": len(d.distributions), "library": d.library or None, "assumed": bool(d.assumed),
            "uncertain": d.uncertain,
            **({"provenance": d.provenance} if getattr(d, "provenance", None) else {}),
            **({"as_written": d.as_written} if d.as_written is not None else {}),
            **({"u_as_written": d.u_as_written} if d.u_as_written is not None else {}),
        })
    return rows


def _phase_changes(case: Case, o, lo: float, hi: float) -> list[dict]:
    names: set[str] = set()
    if o.reaction:
        names |= {p.species for p in case.reactions[o.reaction].participants}
    if o.kind == "heat_release":
        for r in o.extent_rates:
            names |= {p.species for p in case.reactions[r].participants}
    if o.species:
        names.add(o.species)
    names |= {sp for sp, _ in o.mixture} | {sp for sp, _ in o.charge}
    out = []
    for n in sorted(names):
        for t in case.species[n].transitions:
            if lo - 1e-9 <= t.temperature <= hi + 1e-9:
                out.append({"species": n, "transition": f"{t.from_phase}-{t.to_phase}", "temperature_K": t.temperature})
    return out


def assemble(case: Case, model: Model, lin, mc, validation, y0: np.ndarray, warnings: list[str],
             duration: float, engine: str) -> dict:
    """Build the results.json document (see the module docstring)."""
    from .cautions import SAFETY_CAUTIONS

    s = case.settings
    p = s.coverage_probability
    inputs = model.inputs
    warnings = list(warnings)
    ranking = whatif = None
    lin_b = lin   # linear result behind the GUM budget (computed here for Monte-Carlo-only runs)
    if lin is not None or mc is not None:
        if lin_b is None:
            from ..uq.linear import propagate_linear

            lin_b = propagate_linear(model.f_reported, inputs, coverage=p)
        ranking, whatif = _drivers_and_whatif(case, model, lin_b, warnings, validation)
    budget_q = _budget_quantities(case, model) if lin_b is not None else None
    mc_q = None
    margins = None
    if mc is not None:
        margins = margins_from_monte_carlo(mc, s.design_probabilities)
    elif lin is not None:
        margins = margins_from_linear(lin, probabilities=s.design_probabilities)
    if mc is not None:
        mc_q = np.atleast_2d(mc.quantile(list(ONE_SIDED)))           # (4, M_all)
        warnings += [w for w in mc.warnings]
        from ..uq.interval_noise import interval_noise

        noise = interval_noise(mc)       # endpoint noise: the symmetry verdict of each point
    if mc is not None:
        warnings += negative_cp_warnings(case, model, mc.X_kept)
    from . import safety_data as safety

    lin_all = lin
    if lin_all is None and inputs.variables and any(o.limit is not None or o.mtt is not None or o.td24 is not None
                                                    for o in case.outputs):
        from ..uq.linear import propagate_linear   # sensitivities for the drivers of the exceedance margins

        lin_all = propagate_linear(model.f_reported, inputs, coverage=p)

    from .report_data import kirchhoff_terms

    breakdown = kirchhoff_terms(case, model)
    outputs = []
    for i, o in enumerate(case.outputs):
        cols = model.output_columns(i)
        temps = [model.columns[j].temperature for j in cols]
        out: dict[str, Any] = {"name": o.name, "kind": o.kind, "unit": model.units[i], "quantity": QUANTITY[o.kind],
                               "description": o.description, "reaction": o.reaction or None,
                               "equation": case.reactions[o.reaction].equation if o.reaction else None,
                               "linear_model": model.linear_in_inputs[i]}
        out.update(safety.output_fields(case, o, model.units[i]))
        if o.kind == "adiabatic_temperature_rise":
            out.update(start_temperature_K=o.start_temperature, limit_K=o.limit, process_temperature_K=o.process_temperature,
                       accumulation=o.accumulation, mtt_K=o.mtt, td24_K=o.td24)
            lo, hi = o.start_temperature, o.max_temperature
        elif o.kind == "heating_enthalpy":
            out.update(from_K=o.t_from, to_K=o.t_to, species=f"{o.species}({o.phase})" if o.species else None)
            lo, hi = min(o.t_from, o.t_to), max(o.t_from, o.t_to)
        else:
            lo, hi = min(temps + [s.reference_temperature]), max(temps)
        if o.temperature_datum:
            out["temperature_uncertain"] = o.temperature_datum
        out["phase_changes"] = _phase_changes(case, o, lo, hi)
        points = []
        own_data = value_data(case, o)
        for j in cols:
            pt: dict[str, Any] = {"temperature_K": model.columns[j].temperature}
            if lin is not None:
                pt["linear"] = {
                    "estimate": _f(lin.estimate[j]), "standard_uncertainty": _f(lin.standard_uncertainty[j]),
                    "coverage_interval": [_f(lin.coverage_interval[j, 0]), _f(lin.coverage_interval[j, 1])],
                    "expanded_uncertainty": _f(lin.expanded_uncertainty[j]), "coverage_factor": _f(lin.coverage_factor[j]),
                    "effective_dof": _f(lin.effective_dof[j]) if np.isfinite(lin.effective_dof[j]) else None,
                }
            elif inputs.variables == [] or len(inputs.variables) == 0:
                pt["linear"] = {"estimate": _f(y0[j]), "standard_uncertainty": 0.0,
                                "coverage_interval": [_f(y0[j]), _f(y0[j])], "expanded_uncertainty": 0.0,
                                "coverage_factor": None, "effective_dof": None}
            if mc is not None:
                kept = mc.Y_kept[:, j]
                kept = kept[np.isfinite(kept)]
                counts, edges = np.histogram(kept, bins=HISTOGRAM_BINS) if kept.size else (np.array([]), np.array([]))
                pt["monte_carlo"] = {
                    "mean": _f(mc.mean[j]), "standard_uncertainty": _f(mc.standard_uncertainty[j]),
                    "coverage_interval": [_f(mc.coverage_interval[j, 0]), _f(mc.coverage_interval[j, 1])],
                    "shortest_coverage_interval": [_f(mc.shortest_interval[j, 0]), _f(mc.shortest_interval[j, 1])],
                    "samples": int(mc.samples_used), "median": _f(mc.median[j]), "skewness": _f(mc.skewness[j]),
                    "coverage_interval_standard_errors": [_f(noise.low[j]), _f(noise.high[j])],
                    "asymmetry": {"value": _f(noise.asymmetry[j]), "standard_error": _f(noise.asymmetry_se[j]),
                                  "significant": bool(noise.significant_asymmetry()[j]), "basis": noise.basis},
                    "one_sided": {f"P{round(100 * q):02d}": _f(mc_q[k, j]) for k, q in enumerate(ONE_SIDED)},
                    "histogram": {"edges": edges.tolist(), "counts": counts.astype(int).tolist(),
                                  "samples": int(kept.size)},
                }
                # skewed beyond the rule of thumb and beyond its sampling noise √(6/N) (normal samples)
                if (mc.skewness[j] is not None and abs(mc.skewness[j]) > max(SKEW_WARNING, 3 * math.sqrt(6 / mc.samples_used))
                        and noise.significant_asymmetry()[j]):
                    warnings.append(f"output.{o.name} at {model.columns[j].temperature:.2f} K: the Monte Carlo distribution "
                                    f"is skewed (skewness {mc.skewness[j]:.2f}); use the Monte Carlo interval, not ±U")
            pt["coverage_probability"] = p
            if validation is not None:
                v = validation[j]
                pt["linear_validated"] = None if v.linear_validated is None else bool(v.linear_validated)
                pt["validation"] = v.as_dict()
                if v.linear_validated is None:
                    us = "" if model.units[i] in ("", "1") else f" {model.units[i]}"
                    warnings.append(f"output.{o.name} at {model.columns[j].temperature:.2f} K: linear (GUM) vs Monte Carlo "
                                    f"not decided: the Monte Carlo is not stable to δ = {v.tolerance:.2g}{us} at "
                                    f"{int(mc.samples_used)} trials (JCGM 101 §7.9); increase --samples or use adaptive; "
                                    "the linear result is reported")
                elif not v.linear_validated:
                    us = "" if model.units[i] in ("", "1") else f" {model.units[i]}"
                    worst = max(abs(v.d_low), abs(v.d_high))
                    warnings.append(f"output.{o.name} at {model.columns[j].temperature:.2f} K: the linear (GUM) interval "
                                    f"differs from the Monte Carlo interval by {worst:.2g}{us}, more than δ = {v.tolerance:.2g}{us} "
                                    "(JCGM 101 §8); the Monte Carlo result is reported")
            else:
                pt["linear_validated"] = None
            # the result stated: Monte Carlo where run, except where its comparison with the linear one is undecided
            pt["reported"] = ("linear" if "linear" in pt and ("monte_carlo" not in pt or pt["linear_validated"] is None
                                                              and validation is not None) else "monte_carlo")
            if budget_q is not None:
                pt["budget"] = _written_rows(case, _point_budget(lin_b, j, budget_q, model.units[i], inputs))
            if ranking is not None:
                pt.update(_driver_rows(ranking.point(j), pt.get("budget")))
            else:
                pt["drivers"] = []
            if whatif is not None:
                pt["whatif"] = whatif.rows(j)
            _own_data_only(pt, own_data)
            if margins is not None:
                pt["margins"] = _margins_point(margins, j, o.design_value)
            y_est = (pt.get("monte_carlo") or {}).get("mean", (pt.get("linear") or {}).get("estimate"))
            safety.limit_point(case, model, o, i, len(points), j, pt, mc, lin_all, y_est)
            if (i, len(points)) in breakdown:
                pt["kirchhoff_terms"] = breakdown[(i, len(points))]
            points.append(pt)
        if margins is not None and len(cols) > 1:
            sub = Margins(margins.method, margins.probabilities, margins.estimate[cols], margins.upper[:, cols],
                          margins.lower[:, cols])
            out["band"] = curve_band(sub, temps).to_dict()
        if o.kind == "adiabatic_temperature_rise" and points:
            safety.adiabatic_point(case, model, o, i, points[0], mc, lin_all, y0)
        outputs.append(out | {"points": points})
    convergence = {}
    if mc is not None:
        for i, o in enumerate(case.outputs):
            cols = model.output_columns(i)
            jmax = max(cols, key=lambda j: float(mc.standard_uncertainty[j]))
            convergence[o.name] = [[int(n), _f(u)] for n, u in mc.convergence[jmax]]
    run = {
        "seed": s.seed, "samples": int(mc.samples_used) if mc is not None else 0,
        "samples_requested": s.samples, "sampling": s.sampling, "version": __version__, "method": s.method,
        "engine": engine,
        "reference_temperature_K": s.reference_temperature, "coverage_probability": p,
        "adaptive": s.samples == "adaptive", "significant_digits": s.significant_digits,
        "adaptive_intervals": s.adaptive_intervals if s.samples == "adaptive" else None,
        "sobol_rotation": bool(mc.rotated_scores) if mc is not None else None,
        "n_variables": len(inputs.variables), "n_data": sum(1 for d in case.data.values() if d.uncertain),
    }
    if mc is not None:
        run.update(mc_converged=bool(mc.converged), mc_batches=int(mc.batches), quantile_method=mc.quantile_method)
        run.update(safety.run_fields(s.sampling))
    if ranking is not None:
        run["drivers_method"] = ranking.method
        run["drivers_reason"] = ranking.reason
    cautions = list(SAFETY_CAUTIONS) if case.safety_relevant else [SAFETY_CAUTIONS[2]]
    from .report_data import heat_capacity_curves

    doc = {
        "format": "uqthermo.results/1",
        "case": {"title": case.title, "sha256": case.sha256, "file": case.path, "description": case.description.strip()},
        "document": dict(case.document),
        "display_units": {"temperature": case.temperature_unit},
        "run": run,
        "inputs": _inputs_table(case),
        "correlations": [{"between": [a, b], "coefficient": r} for a, b, r in case.correlations],
        "reactions": [{"name": r.name, "equation": r.equation,
                       "anchor": "measured" if r.measured_enthalpy else "formation"} for r in case.reactions.values()],
        "outputs": outputs,
        "heat_capacity_curves": heat_capacity_curves(case, model, outputs),
        "convergence": convergence,
        "candidates": [{"datum": c.datum, "u": c.u, "factor": c.factor, "cost": c.cost, "lead_time": c.lead_time,
                        "note": c.note, "u_as_written": c.u_text or None} for c in case.candidates],
        "warnings": list(dict.fromkeys(warnings)),
        "cautions": cautions,
    }
    return doc


def negative_cp_warnings(case: Case, model: Model, X: np.ndarray) -> list[str]:
    """Warn when sampled heat-capacity curves go negative somewhere on the temperatures used.

    A curve with per-coefficient uncertainties can dip below zero at the ends of its range
    even though the nominal curve is positive; such samples are unphysical.
    """
    if X is None or not len(X):
        return []
    temps = [model.columns[j].temperature for j in range(model.n_reported)] + [case.settings.reference_temperature]
    for o in case.outputs:
        temps += [t for t in (o.t_from, o.t_to, o.start_temperature) if t]
        if o.kind == "adiabatic_temperature_rise":
            temps.append(o.max_temperature or 0.0)
    t_lo, t_hi = min(t for t in temps if t > 0), max(temps)
    out = []
    for did, cols in model.inputs.groups.items():
        d = case.data.get(did)
        if d is None or d.quantity != "heat capacity" or d.kind not in ("coefficients", "scale"):
            continue
        cp = case.species[d.species].phases[d.phase].cp
        lo, hi = max(t_lo, cp.t_min), min(t_hi, cp.t_max)
        if not hi > lo:
            continue
        coeffs = np.broadcast_to(np.asarray(d.nominal, dtype=float), (len(X), len(d.nominal))).copy()
        if d.kind == "coefficients":
            coeffs[:, d.positions] = X[:, cols]
        elif d.positions:                      # NASA-7: the factor scales a1..a5 only
            coeffs[:, d.positions] *= X[:, cols[0]][:, None]
        else:
            coeffs *= X[:, cols[0]][:, None]
        grid = np.linspace(lo, hi, 41)
        values = cp.cp(grid[None, :], coeffs[:, None, :], check=False)
        frac = float(np.mean(np.any(values <= 0, axis=1)))
        if frac > 0:
            out.append(f"{did}: {100 * frac:.2g} % of the sampled curves give Cp ≤ 0 between {lo:.0f} and {hi:.0f} K "
                       "(unphysical); check the stated coefficient uncertainties and their correlation")
    return out


def _budget_quantities(case: Case, model: Model) -> tuple[list, np.ndarray]:
    """The input quantities of the GUM budget in report units, and each column's factor to them.

    A single-parameter datum is one quantity named by its datum id; the coefficients of a curve
    with per-coefficient uncertainties are quantities ``DATUM.COEFFICIENT`` (engine units).
    """
    from ..uq.budget import BudgetQuantity

    qs, to_rep = [], []
    inputs = model.inputs
    for var in inputs.variables:
        d = case.data[var.datum]
        dist = var.distribution
        single = len(d.distributions) == 1
        name = var.datum if single else var.datum + "." + var.name[len(var.datum):].strip("[]")
        unit = d.unit if d.kind == "scalar" else ("1" if d.kind == "scale" else "coefficient")
        k = d.to_report if d.kind == "scalar" else 1.0
        qs.append(BudgetQuantity(name, var.datum, float(dist.estimate) * k, float(dist.std) * k, unit,
                                 float(getattr(dist, "dof", math.inf))))
        to_rep.append(k)
    return qs, np.asarray(to_rep, dtype=float)


def _point_budget(lin, j: int, budget_q, unit: str, inputs) -> dict:
    """The ``budget`` block of column ``j`` (uqthermo.uq.budget.gum_budget, JCGM 100 §5.2.2)."""
    from ..uq.budget import gum_budget

    qs, to_rep = budget_q
    c = np.asarray(lin.sensitivity, dtype=float)[j] / to_rep      # output unit per report unit of x_i
    return gum_budget(c, np.asarray(inputs.correlation, dtype=float), qs, unit)


def _written_rows(case: Case, budget: dict) -> dict:
    """Budget rows of amounts and flows carry the user's text beside x_i (``as_written``, ``u_as_written``)."""
    for r in budget.get("rows") or []:
        d = case.data.get(r.get("datum"))
        if d is not None and d.as_written is not None and r.get("quantity") == d.id:
            r["as_written"] = d.as_written
            if d.u_as_written is not None:
                r["u_as_written"] = d.u_as_written
    return budget


def _driver_rows(point: dict, budget: dict | None) -> dict:
    """Driver shares as fractions of u²(y), with covariance terms between data as signed rows.

    Linear drivers are each datum's own variance c_gᵀΣ_gg c_g / u²(y); the covariance terms
    between data (JCGM 100 §5.2.2) are listed as their own signed rows in ``covariance_terms``
    (``{"between": [datum_a, datum_b], "variance", "share"}``, taken from the point's GUM
    budget), so that Σ drivers + Σ covariance_terms = 1. When correlations between data remove
    variance (negative rows), a datum's share can exceed 1.
    """
    method = point.get("drivers_method")
    point["share_basis"] = "fraction of u²(y)" if method == "linear" else "first-order Sobol' index"
    terms: list[dict] = []
    if method == "linear" and budget is not None:
        from ..uq.budget import datum_terms

        _, terms = datum_terms(budget)
    point["covariance_terms"] = terms
    return point


def _own_data_only(point: dict, data: set[str]) -> None:
    """Drop from the point's drivers and what-if rows the data its output cannot depend on (another
    output's extents or limits, entropies for an enthalpy, its own limit): they are 0 by construction and
    would only pad the rankings and the "N other data" counts."""
    for key in ("drivers", "whatif"):
        rows = point.get(key)
        if isinstance(rows, list):
            point[key] = [r for r in rows if not isinstance(r, dict) or r.get("datum") is None or r["datum"] in data]


class _ByColumn:
    """Route per-column queries to the partial result (ranking or what-if) that covers the column.

    Linear and nonlinear outputs are ranked and what-if'ed separately, so an exactly linear
    output keeps the linear shares (and the analytic what-if) even when another output of
    the same case needs Sobol' indices (and Monte Carlo what-if).
    """

    def __init__(self, parts: list[tuple[list[int], Any]]):
        self.parts = [(cols, r) for cols, r in parts if cols and r is not None]

    def _find(self, j: int):
        for cols, r in self.parts:
            if j in cols:
                return r, cols.index(j)
        raise KeyError(j)

    def point(self, j: int) -> dict:
        r, k = self._find(j)
        return r.point(k)

    def rows(self, j: int, scale: float = 1.0) -> list[dict]:
        r, k = self._find(j)
        return r.rows(k, scale)

    @property
    def method(self) -> str:
        return " + ".join(dict.fromkeys(r.method for _, r in self.parts))

    @property
    def reason(self) -> str:
        return "; ".join(dict.fromkeys(r.reason for _, r in self.parts))

    @property
    def warnings(self) -> list[str]:
        return [w for _, r in self.parts for w in getattr(r, "warnings", [])]


def _drivers_and_whatif(case: Case, model: Model, lin, warnings: list[str], validation=None):
    from types import SimpleNamespace

    from ..uq.linear import propagate_linear
    from ..uq.sensitivity.ranking import rank_drivers
    from ..uq.whatif import Scenario, standard_scenarios, what_if

    s = case.settings
    inputs = model.inputs
    if lin is None:
        lin = propagate_linear(model.f_reported, inputs, coverage=s.coverage_probability)
    # what-if from the linear budget (exact) where the linear result is validated by Monte Carlo
    # (JCGM 101 §8); without a validation (one method only), where the output is exactly linear
    reported = range(model.n_reported)
    if validation is not None:
        linear_cols = [j for j in reported if validation[j].linear_validated or (
            validation[j].linear_validated is None and model.linear_in_inputs[model.columns[j].output])]
    else:
        linear_cols = [j for j in reported if model.linear_in_inputs[model.columns[j].output]]
    other_cols = [j for j in reported if j not in set(linear_cols)]

    def part(cols):
        def f(X, cols=cols):
            return model.f_reported(X)[:, cols]

        sub = SimpleNamespace(estimate=np.asarray(lin.estimate)[cols], sensitivity=np.asarray(lin.sensitivity)[cols])
        return f, sub

    ranking = None
    if s.sensitivity != "none":
        n_groups = max(1, len(inputs.groups))
        budget = int(s.samples) if s.samples != "adaptive" else s.max_samples
        n_base = int(min(s.sobol_samples, max(256, budget // (2 * n_groups + 2))))
        parts = []
        groups = [([j for j, col in enumerate(model.columns[:model.n_reported]) if col.output == i], None)
                  for i in range(len(case.outputs))]
        for cols, hint in groups:   # output by output: each is ranked on the inputs it depends on
            if cols:
                f, sub = part(cols)
                parts.append((cols, rank_drivers(f, inputs, linear=sub, method=s.sensitivity, n_base=n_base,
                                                 seed=s.seed, nonlinear_hint=hint)))
        ranking = _ByColumn(parts)
        warnings += list(dict.fromkeys(ranking.warnings))
    whatif = None
    if s.what_if:
        scenarios = list(standard_scenarios(inputs))
        for c in case.candidates:
            if c.datum not in inputs.groups:
                continue
            d = case.data[c.datum]
            if c.u is not None:
                scenarios.append(Scenario.stated(c.datum, c.u / d.to_report,
                                                 f"{c.datum} u = {c.u_text}" if c.u_text else None))
            elif c.factor is not None:
                scenarios.append(Scenario.scaled(c.datum, c.factor))
        parts = []
        if linear_cols:
            f, sub = part(linear_cols)
            parts.append((linear_cols, what_if(f, inputs, scenarios, method="linear", coverage=s.coverage_probability,
                                               linear=sub)))
        if other_cols:
            f, _ = part(other_cols)
            n = min(WHATIF_SAMPLES, int(s.samples) if s.samples != "adaptive" else WHATIF_SAMPLES)
            parts.append((other_cols, what_if(f, inputs, scenarios, method="monte-carlo",
                                              coverage=s.coverage_probability, samples=n,
                                              sampling="sobol" if s.sampling == "sobol" else "random", seed=s.seed,
                                              rotate=s.sobol_rotation, batches=WHATIF_BATCHES)))
        whatif = _ByColumn(parts)
    return ranking, whatif


def _margins_point(mg, j: int, design_value: float | None) -> dict:
    """The results.json ``margins`` of column ``j`` from a :class:`uqthermo.uq.margins.Margins`.

    Keys: ``upper_Pxx`` (P(Y ≤ bound) = xx %), ``lower_Pxx`` (P(Y ≥ bound) = xx %), their
    ``*_margin`` (distance from the estimate, positive), ``Pxx`` (= the upper bound) and ``basis``.
    """
    out: dict[str, Any] = {}
    for k, q in enumerate(mg.probabilities):
        key = level_key(q)
        up, lo = float(mg.upper[k, j]), float(mg.lower[k, j])
        out[f"upper_{key}"] = up
        out[f"upper_{key}_margin"] = up - float(mg.estimate[j])
        out[f"lower_{key}"] = lo
        out[f"lower_{key}_margin"] = float(mg.estimate[j]) - lo
        out[key] = up
    out["basis"] = "Monte Carlo quantiles" if mg.method == "monte-carlo" else "linear (normal/t) approximation"
    if design_value is not None:
        out["design_value"] = design_value
        out["design_value_exceeded_at"] = [level_key(q) for k, q in enumerate(mg.probabilities)
                                           if mg.upper[k, j] > design_value]
    return out
