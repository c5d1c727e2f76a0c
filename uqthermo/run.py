"""Orchestration of the main job: case → model → propagation → results → report.

:func:`run_case` loads and validates a case, builds the vectorised model, runs the GUM
linear method and/or the JCGM 101 Monte Carlo method, validates one against the other,
ranks the drivers, computes what-if scenarios and design margins, and returns a
:class:`RunResult` whose ``results`` dict is exactly what ``results.json`` holds
(contract §3 plus extensions). :func:`write_outputs` writes it — and the report —
atomically into a folder.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
import os
import platform
import shutil
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

from .case.builder import QUANTITY, Model, build_model, check_model
from .case.dependence import model_columns
from .case.loader import load_case
from .case.schema import Case
from .errors import InputError, Problem

FORMAT = "uqthermo.results/1"

SAFETY_CAUTIONS = [
    "These figures are estimates from tabulated data and correlations. They support, and never replace, "
    "reaction calorimetry (e.g. heat-flow or adiabatic calorimetry of the actual reaction mass) and a hazard "
    "review by qualified people.",
    "Design and relief decisions must follow the applicable local codes, standards and licensed engineering "
    "practice; the margins shown here are statistical, not regulatory, margins.",
    "The Monte Carlo result is only as good as the stated input uncertainties and the model (Kirchhoff's law "
    "along the stated phase path, ideal mixing, no side reactions unless modelled).",
]


@dataclass
class RunResult:
    """The outcome of one run; ``results`` is the results.json document."""

    results: dict
    case: Case
    model: Model
    linear: Any = None
    monte_carlo: Any = None
    extra: dict = field(default_factory=dict)

    def _repr_html_(self) -> str:  # Jupyter
        from .report.notebook import ResultsView

        return ResultsView(self.results)._repr_html_()

    def to_dataframe(self):
        """One row per output point (pandas DataFrame)."""
        from .report.notebook import ResultsView

        return ResultsView(self.results).to_dataframe()


def _jsonable(x):
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return _jsonable(x.tolist())
    if isinstance(x, (np.floating, float)):
        v = float(x)
        return v if math.isfinite(v) else None
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    return x


def run_case(path: str | Path, *, samples: int | str | None = None, seed: int | None = None,
             method: str | None = None, sampling: str | None = None, engine: str = "local",
             scheduler: str | None = None, progress: Callable[[int, int], None] | None = None,
             what_if: bool | None = None) -> RunResult:
    """Run the main job on a case file (see module docstring).

    Parameters override the case's ``[settings]``; ``progress(done, total)`` is called
    as Monte Carlo chunks complete.
    """
    from .uq.linear import propagate_linear
    from .uq.montecarlo import propagate_monte_carlo
    from .uq.validation import validate_linear

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
    model, model_warnings = prepare_model(case)
    warnings = list(case.warnings) + model_warnings
    if case.candidates and (s.plan_target or s.plan_budget is not None) and len(model.inputs.variables):
        from .plan import resolve_plan_request   # a plan that cannot be made is an input error, before any work

        resolve_plan_request(case, model, target=s.plan_target, budget=s.plan_budget,
                             key="settings.plan_target" if s.plan_target else "settings.plan_budget")
    inputs = model.inputs
    p = s.coverage_probability
    D = len(inputs.variables)
    lin = mc = None
    validation = None
    if D == 0:
        warnings.append("no input is uncertain: every result is exact")
    if s.method in ("linear", "both") and D > 0:
        lin = propagate_linear(model.f_reported, inputs, coverage=p)
    if s.method in ("monte-carlo", "both") and D > 0:
        mc_kwargs = dict(samples=s.samples, sampling=s.sampling, seed=s.seed, coverage=p,
                         ndigits=s.significant_digits, progress=progress, rotate=s.sobol_rotation,
                         affine=model.affine, depends_on=model_columns(case, inputs))
        if s.samples == "adaptive":
            mc_kwargs["max_samples"] = s.max_samples
            mc_kwargs["check_shortest"] = s.adaptive_intervals == "both"
        if engine == "dask":
            from .uq.distributed import propagate_monte_carlo_dask

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
        validation = validate_linear(lin, reported, ndigits=s.significant_digits)
    y0 = model.evaluate(np.asarray(inputs.estimates, dtype=float)[None, :] if D else np.zeros((1, 0)))[0]
    from .results import assemble

    results = assemble(case, model, lin, mc, validation, y0, warnings, time.perf_counter() - t0, engine)
    if case.candidates and (s.plan_target or s.plan_budget is not None) and D > 0:
        from .plan import compute_plan

        results["plan"] = compute_plan(case, model, target=s.plan_target, budget=s.plan_budget, linear=lin)
    results["run"]["duration_s"] = round(time.perf_counter() - t0, 3)
    return RunResult(results=results, case=case, model=model, linear=lin, monte_carlo=mc)


def prepare_model(case: Case) -> tuple[Model, list[str]]:
    """Build the model and check it at the best estimates; physics problems become input errors.

    A physics error raised while building (e.g. a phase path that needs data the case does
    not give) is reported against the outputs that use the species it names, or the case.
    """
    from .errors import PhysicsError, ValidityError

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


# ----------------------------------------------------------------------------- writing

#: files that mark a folder as an earlier uqthermo output (which --force may replace)
OUTPUT_MARKERS = ("results.json", "plan.json", "fit.json")


def guard_force(out: str | Path, force: bool, protected: tuple = ()) -> None:
    """Refuse ``--force`` on a folder whose replacement would destroy user files.

    ``--force`` replaces the whole folder. It is accepted only for an empty folder or an
    earlier uqthermo output folder (holding results.json, plan.json or fit.json), and never
    for a folder that contains the input file (or another protected path), the working
    directory or the home folder.
    """
    o = Path(out)
    if not force or not o.is_dir() or not any(o.iterdir()):
        return
    o = o.resolve()
    for p in [*protected, Path.cwd(), Path.home()]:
        p = Path(p).resolve()
        if p == o or o in p.parents:
            what = "the working folder" if p == Path.cwd().resolve() else (
                "your home folder" if p == Path.home().resolve() else f"{p.name}")
            raise InputError([Problem(str(out), "--out", f"--force would replace this folder and delete {what}; "
                                                         "choose a new output folder")])
    if not any((o / m).is_file() for m in OUTPUT_MARKERS):
        raise InputError([Problem(str(out), "--out", "--force replaces only an earlier uqthermo output folder (one with "
                                                     "results.json); this folder holds other files — choose another folder")])


def prepare_out_dir(out: str | Path, force: bool, protected: tuple = ()) -> Path:
    """Check that ``out`` may be written (before any work is done); see :func:`guard_force`."""
    guard_force(out, force, protected)
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError([Problem(str(out), "--out", "exists and is not a folder")])
    if out.exists() and any(out.iterdir()) and not force:
        raise InputError([Problem(str(out), "--out", "folder exists and is not empty; choose another folder or add --force "
                                                     "(the old content is replaced only after the new run succeeds)")])
    parent = out.resolve().parent
    if not parent.exists():
        raise InputError([Problem(str(out), "--out", f"parent folder {parent} does not exist")])
    if not os.access(parent, os.W_OK):
        raise InputError([Problem(str(out), "--out", f"parent folder {parent} is not writable")])
    return out


def write_json_atomic(path: Path, doc: dict) -> None:
    """Write JSON to a temporary file in the same folder, then rename it into place."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(_jsonable(doc), fh, indent=2, ensure_ascii=False, allow_nan=False)
            fh.write("\n")
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def publish_dir(build: Callable[[Path], Any], out: str | Path, force: bool) -> Any:
    """Build a folder's content in a temporary sibling, then move it to ``out`` in one rename.

    An interrupted or failed build leaves ``out`` as it was (no half-written report);
    with ``force`` an existing ``out`` is replaced only after the build succeeded.
    """
    out = Path(out).resolve()
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.", suffix=".partial", dir=out.parent))
    old = None
    try:
        value = build(tmp)
        if out.exists():
            old = out.with_name(f".{out.name}.old-{os.getpid()}-{int(time.time() * 1000)}")
            os.replace(out, old)
        os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if old is not None and old.exists() and not out.exists():
            os.replace(old, out)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return value


def write_outputs(result: RunResult, out: str | Path, *, force: bool = False, report: bool = True) -> list[Path]:
    """Write results.json, the report, figures and tables into ``out`` atomically."""

    def build(tmp: Path):
        write_json_atomic(tmp / "results.json", result.results)
        written = [tmp / "results.json"]
        if report:
            from .report import write_report

            paths = write_report(result.results, tmp)
            written += [Path(v) for v in (paths.values() if isinstance(paths, dict) else paths)]
        else:
            from .report import tables

            if hasattr(tables, "write_tables"):
                written += list(tables.write_tables(result.results, tmp))
        return written

    publish_dir(build, out, force)
    out = Path(out)
    return sorted(p for p in out.rglob("*") if p.is_file())


def environment() -> dict[str, str]:
    return {"python": platform.python_version(), "numpy": np.__version__, "platform": platform.platform()}


def now_iso() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


__all__ = ["run_case", "write_outputs", "RunResult", "publish_dir", "prepare_out_dir", "write_json_atomic",
           "SAFETY_CAUTIONS", "FORMAT", "QUANTITY"]
