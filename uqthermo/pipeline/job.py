"""Orchestration of the main job: case → model → propagation → results → report.

:func:`run_case` loads and validates a case, builds the vectorised model, runs the GUM
linear method and/or the JCGM 101 Monte Carlo method, validates one against the other,
ranks the drivers, computes what-if scenarios and design margins, and returns a
:class:`RunResult` whose ``results`` dict is exactly what ``results.json`` holds
(contract §3 plus extensions). :func:`write_outputs` writes it — and the report —
atomically into a folder.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

from ..case.model.builder import build_model
from ..case.model.checks import check_model
from ..case.model.dependence import model_columns
from ..case.model.layout import QUANTITY, Model
from ..case.loader import load_case
from ..case.schema import Case
from ..errors import InputError, Problem, UqthermoError
from .output_files import run_log

FORMAT = "uqthermo.results/1"

@dataclass
class RunResult:
    """The outcome of one run; ``results`` is the results.json document."""

    results: dict
    case: Case
    model: Model
    linear: Any = None
    monte_carlo: Any = None
    extra: dict = field(default_factory=dict)
    #: date, duration, host and versions of this run (written as run-log.json beside results.json)
    run_log: dict = field(default_factory=dict)

    def _repr_html_(self) -> str:  # Jupyter
        from ..report.notebook import ResultsView

        return ResultsView(self.results)._repr_html_()

    def to_dataframe(self):
        """One row per output point (pandas DataFrame)."""
        from ..report.notebook import ResultsView

        return ResultsView(self.results).to_dataframe()


#: what run_case is doing, and on what sizes (for the out-of-memory message)
_STAGE: dict[str, Any] = {}

#: at most this many model values (trials x output columns) per Monte Carlo chunk
CHUNK_VALUES = 2**22


def run_case(path: str | Path, *, samples: int | str | None = None, seed: int | None = None,
             method: str | None = None, sampling: str | None = None, engine: str = "local",
             scheduler: str | None = None, progress: Callable[[int, int], None] | None = None,
             what_if: bool | None = None) -> RunResult:
    """Run the main job on a case file (see module docstring).

    Parameters override the case's ``[settings]``; ``progress(done, total)`` is called
    as Monte Carlo chunks complete.

    Raises
    ------
    InputError
        Bad input (exit 2).
    UqthermoError
        Other failures; running out of memory is reported with the stage and the sizes
        involved (output points, input variables, trials).
    """
    _STAGE.clear()
    _STAGE["stage"] = "reading the case"
    try:
        return _run_case(path, samples=samples, seed=seed, method=method, sampling=sampling, engine=engine,
                         scheduler=scheduler, progress=progress, what_if=what_if)
    except MemoryError:
        raise UqthermoError(_out_of_memory_text()) from None


def _out_of_memory_text() -> str:
    st = _STAGE
    sizes = []
    if st.get("points") is not None:
        sizes.append(f"{st['points']} output points")
    if st.get("inputs") is not None:
        sizes.append(f"{st['inputs']} input variables")
    if st.get("samples") is not None:
        sizes.append(f"{st['samples']} trials")
    what = f" ({' x '.join(sizes)})" if sizes else ""
    advice = "use fewer output points (fewer outputs or a larger temperatures.step)"
    if isinstance(st.get("samples"), int) and st.get("points") and st["samples"] > 100 * st["points"]:
        advice = "use fewer samples, or samples = \"adaptive\""
    elif st.get("inputs") and st.get("points") and st["inputs"] > st["points"]:
        advice = "use fewer uncertain inputs (species or data not needed by the outputs can be removed)"
    return f"out of memory while {st.get('stage', 'running')}{what}; {advice}"


def _run_case(path: str | Path, *, samples, seed, method, sampling, engine, scheduler, progress,
              what_if) -> RunResult:
    t0 = time.perf_counter()
    case = load_case(path)
    s = case.settings
    if samples is not None:
        s.samples = samples
    if seed is not None:
        s.seed = seed
    if method is not None:
        s.method = method
    if sampling is not None:
        s.sampling = sampling
    if what_if is not None:
        s.what_if = what_if
    from ..case.readers.settings import adaptive_cap_problem

    cap = adaptive_cap_problem(s)
    if cap is not None:
        raise InputError([Problem(case.path, "settings.max_samples", cap)])
    if engine == "dask" and isinstance(scheduler, str):     # a wrong address fails now, not after the linear method
        from ..uq.distributed import check_scheduler

        check_scheduler(scheduler)
    _STAGE.update(stage="building the model", points=sum(len(o.temperatures) if o.temperatures is not None else 1
                                                          for o in case.outputs))
    model, model_warnings = prepare_model(case)
    warnings = list(case.warnings) + model_warnings
    if case.candidates and (s.plan_target or s.plan_budget is not None) and len(model.inputs.variables):
        from .purchase_plan import resolve_plan_request   # a plan that cannot be made is an input error, before any work

        resolve_plan_request(case, model, target=s.plan_target, budget=s.plan_budget,
                             key="settings.plan_target" if s.plan_target else "settings.plan_budget")
    try:
        return _propagate(case, model, warnings, t0, engine, scheduler, progress)
    except (InputError, KeyboardInterrupt):
        raise
    except UqthermoError as e:
        if not e.key:
            raise
        # a corner the probes before the run did not reach: still one line naming the key, nothing written
        key = e.key if e.key.startswith(("output", "candidate", "species", "reaction", "settings")) else \
            (f"species.{e.key}" if e.key.split(".")[0] in case.species else e.key)
        raise InputError([Problem(case.path, key, f"{e.message} (met during the run, beyond the probes of "
                                                  "'uqthermo check')")]) from None


def _propagate(case: Case, model: Model, warnings: list[str], t0: float, engine: str, scheduler, progress) -> RunResult:
    """Linear and Monte Carlo propagation, validation and results assembly (see :func:`run_case`)."""
    from ..uq.linear import propagate_linear
    from ..uq.montecarlo import propagate_monte_carlo
    from ..uq.interval_noise import interval_noise
    from ..uq.validation import validate_linear

    s = case.settings
    inputs = model.inputs
    p = s.coverage_probability
    D = len(inputs.variables)
    _STAGE.update(stage="propagating by the linear method", inputs=D)
    lin = mc = None
    validation = None
    if D == 0:
        warnings.append("no input is uncertain: every result is exact")
    if s.method in ("linear", "both") and D > 0:
        lin = propagate_linear(model.f_reported, inputs, coverage=p)
    if s.method in ("monte-carlo", "both") and D > 0:
        mc_kwargs = dict(samples=s.samples, sampling=s.sampling, seed=s.seed, coverage=p,
                         ndigits=s.significant_digits, progress=progress, rotate=s.sobol_rotation,
                         affine=model.affine, depends_on=model_columns(case, inputs),
                         stop_columns=model.n_reported)   # auxiliary indicators do not stop an adaptive run
        if s.samples == "adaptive":
            mc_kwargs["max_samples"] = s.max_samples
            mc_kwargs["check_shortest"] = s.adaptive_intervals == "both"
        n_cols = len(model.columns) + len(model.aux)
        if n_cols > 64:     # many output columns: smaller chunks keep a chunk's values within CHUNK_VALUES
            mc_kwargs["chunk_size"] = max(256, min(65_536, CHUNK_VALUES // max(n_cols, D)))
        _STAGE.update(stage="propagating by Monte Carlo", samples=s.samples if isinstance(s.samples, int)
                      else s.max_samples)
        if engine == "dask":
            from ..uq.distributed import propagate_monte_carlo_dask

            mc = propagate_monte_carlo_dask(model.f, inputs, scheduler=scheduler, **mc_kwargs)
        else:
            mc = propagate_monte_carlo(model.f, inputs, **mc_kwargs)
    if lin is not None and mc is not None:
        from types import SimpleNamespace

        m = model.n_reported   # auxiliary indicator columns have no linear counterpart
        reported = SimpleNamespace(mean=mc.mean[:m], coverage_interval=mc.coverage_interval[:m],
                                   shortest_interval=mc.shortest_interval[:m],
                                   standard_uncertainty=mc.standard_uncertainty[:m],
                                   coverage_probability=mc.coverage_probability)
        validation = validate_linear(lin, reported, ndigits=s.significant_digits, noise=interval_noise(mc).subset(m))
    y0 = model.evaluate(np.asarray(inputs.estimates, dtype=float)[None, :] if D else np.zeros((1, 0)))[0]
    _STAGE.update(stage="ranking drivers and assembling the results")
    from .results import assemble

    results = assemble(case, model, lin, mc, validation, y0, warnings, time.perf_counter() - t0, engine)
    if case.candidates and (s.plan_target or s.plan_budget is not None) and D > 0:
        from .purchase_plan import compute_plan

        results["plan"] = compute_plan(case, model, target=s.plan_target, budget=s.plan_budget, linear=lin)
    return RunResult(results=results, case=case, model=model, linear=lin, monte_carlo=mc,
                     run_log=run_log(time.perf_counter() - t0))


def prepare_model(case: Case) -> tuple[Model, list[str]]:
    """Build the model and check it at the best estimates; physics problems become input errors.

    A physics error raised while building (e.g. a phase path that needs data the case does
    not give) is reported against the outputs that use the species it names, or the case.
    """
    from ..errors import PhysicsError, ValidityError

    try:
        model = build_model(case)
    except PhysicsError as e:
        keys = [o.key for o in case.outputs if _output_mentions(case, o, e)] or [e.key or "case"]
        msg = e.message
        if isinstance(e, ValidityError):
            msg += (f" (datum {e.key}; " if e.key else " (") + \
                "allow with extrapolate = true on that heat_capacity or settings.allow_extrapolation = true)"
        raise InputError([Problem(case.path, k, msg) for k in keys]) from None
    return model, check_model(case, model)


def _output_mentions(case: Case, o, err) -> bool:
    names = set()
    if o.reaction:
        names |= {p.species for p in case.reactions[o.reaction].participants}
    for r in o.extent_rates:
        names |= {p.species for p in case.reactions[r].participants}
    names |= {o.species} | {sp for sp, _ in o.mixture} | {sp for sp, _ in o.charge}
    text = f"{err.key or ''} {err.message}"
    return any(n and (n + "(" in text or n + "." in text or text.startswith(n)) for n in names)


__all__ = ["run_case", "prepare_model", "RunResult", "FORMAT", "QUANTITY", "CHUNK_VALUES"]
