"""Probes of the model before a run: the same corners a run will reach, tried at once.

A Monte Carlo run draws inputs far into their tails, the what-if studies of ``[[candidate]]``
measurements draw from *other* (possibly wider) distributions, and the Sobol' indices sample the
same inputs again. If the model cannot be evaluated there (an energy balance that leaves the
heat-capacity data, a path beyond a validity range), ``check`` must say so, and ``run`` must stop
before the Monte Carlo, naming the key that causes it. :func:`probe_rows` lists the input rows to
try for one output:

* **marginal tails** — each uncertain input alone at its 10⁻⁹ and 1 − 10⁻⁹ quantiles (every input
  for outputs that are not affine in their inputs; uncertain temperatures for all outputs);
* **directional tails** — the output's linear direction in the space of the independent normal
  scores (:meth:`~uqthermo.uq.inputs.InputSet.from_scores`), at ±Φ⁻¹(1 − 10⁻⁹) ≈ ±6.0: where the
  combined deviation of all inputs pushes the output furthest (the projection of the scores on a
  unit vector is standard normal, so this point has the same tail probability);
* **candidate variants** — the same for each ``[[candidate]]`` whose stated uncertainty is larger
  than the present one (its what-if draws from the wider distribution).

Evaluating all rows of an output is one model call; only when it fails are rows tried one by one
to name the culprit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: tail probability of the probes (the loader's absolute-zero check on temperatures uses the same)
TAIL_PROBABILITY = 1e-9


@dataclass
class Probe:
    x: np.ndarray          # input row (D,)
    key: str               # key path of the problem if the model fails here
    note: str              # what the row is, appended to the physics message


def datum_key(case, did: str) -> str:
    """Key path of a datum in the case file (for a problem line)."""
    d = case.data.get(did)
    if d is None or not d.species or did.startswith(("output.", "reaction.")):
        return did
    if ".transition." in did:
        sp = case.species.get(d.species)
        label, field = did.split(".transition.", 1)[1].rsplit(".", 1)
        for i, t in enumerate(getattr(sp, "transitions", [])):
            if f"{t.from_phase}-{t.to_phase}" == label:
                return f"species.{d.species}.transition[{i}].{field}"
    return f"species.{did}"


def _fmt(x: float) -> str:
    return f"{x:.6g}"


def _marginal(case, inputs, datums=None, scenario: str = "", key_of=None) -> list[Probe]:
    x0 = np.asarray(inputs.estimates, dtype=float)
    out = []
    for j, v in enumerate(inputs.variables):
        if datums is not None and v.datum not in datums:
            continue
        if not v.distribution.std > 0:
            continue
        d = case.data.get(v.datum)
        unit = d.unit if d is not None else ""
        for p in (TAIL_PROBABILITY, 1.0 - TAIL_PROBABILITY):
            t = v.distribution.ppf_at(p)
            if not np.isfinite(t):
                continue
            x = x0.copy()
            x[j] = t
            shown = t * (d.to_report if d is not None else 1.0)
            out.append(Probe(x, key_of(v.datum) if key_of else datum_key(case, v.datum),
                             f"reached when {v.datum} = {_fmt(shown)} {unit}".rstrip() +
                             f" (its {p:g} tail quantile{scenario}, which a Monte Carlo run can draw); "
                             "give a smaller or bounded uncertainty, or widen the data's range"))
    return out


def _directional(model, inputs, key: str, scenario: str = "") -> list[Probe]:
    """Rows at ±z along each reported column's linear direction in score space (module docstring)."""
    from scipy.special import ndtri

    unc = np.flatnonzero(np.asarray(inputs.stds, dtype=float) > 0)
    k = len(unc)
    if k == 0:
        return []
    S = np.vstack([np.eye(k), -np.eye(k)])
    X = inputs.from_scores(S)
    try:
        with np.errstate(all="ignore"):
            Y = np.asarray(model.f_reported(X), dtype=float)
    except Exception:   # the marginal probes or the run itself report the model's error with its key
        return []
    G = 0.5 * (Y[:k] - Y[k:])
    z = float(ndtri(1.0 - TAIL_PROBABILITY))
    out = []
    names = [inputs.variables[int(i)].datum for i in unc]
    for c in range(G.shape[1]):
        g = G[:, c]
        norm = float(np.linalg.norm(g))
        if not (np.isfinite(norm) and norm > 0):
            continue
        u = g / norm
        top = [names[i] for i in np.argsort(-np.abs(u))[:3] if abs(u[i]) > 0.05]
        for sgn in (1.0, -1.0):
            x = inputs.from_scores((sgn * z * u)[None, :])[0]
            out.append(Probe(x, key, f"reached at the {TAIL_PROBABILITY:g} tail of the output's combined input "
                                     f"deviation{scenario} (mainly {', '.join(dict.fromkeys(top))}), which a Monte "
                                     "Carlo run can draw; check these data and their uncertainties"))
    return out


def probe_rows(case, model, output, *, full: bool) -> list[Probe]:
    """Input rows to try for one output's (sub-)model (module docstring).

    Parameters
    ----------
    full : bool
        Marginal tails of every uncertain input, directional tails and candidate variants
        (for outputs not affine in their inputs); otherwise only uncertain temperatures.
    """
    inputs = model.inputs
    if not full:
        temps = {v.datum for v in inputs.variables
                 if case.data.get(v.datum) is not None and "temperature" in case.data[v.datum].quantity}
        return _marginal(case, inputs, temps)
    rows = _marginal(case, inputs) + _directional(model, inputs, output.key)
    for ci, cand in enumerate(case.candidates):
        if cand.u is None or cand.datum not in inputs.groups:
            continue
        d = case.data[cand.datum]
        now = float(d.distributions[0].std) * d.to_report if d.distributions else 0.0
        if not (now > 0 and cand.u > now):
            continue
        wide = inputs.with_scaled_uncertainty({cand.datum: cand.u / now})
        what = f", in the what-if study of candidate[{ci}] (u = {_fmt(cand.u)} {d.unit})"
        key = f"candidate[{ci}].u"
        rows += _marginal(case, wide, {cand.datum}, what, key_of=lambda _d, key=key: key)
        rows += [Probe(p.x, key, p.note) for p in _directional(model, wide, key, what)]
    return rows


def first_failure(model, probes: list[Probe], errors: tuple) -> tuple[Probe, Exception] | None:
    """Evaluate every probe row in one call; on failure find the first failing row (and its error)."""
    if not probes:
        return None
    X = np.vstack([p.x[None, :] for p in probes])
    try:
        with np.errstate(all="ignore"):
            model.evaluate(X)
        return None
    except errors:
        pass
    for p in probes:
        try:
            with np.errstate(all="ignore"):
                model.evaluate(p.x[None, :])
        except errors as e:
            return p, e
    return None
