"""``uqthermo fit DATA.csv``: fit a heat-capacity curve with its coefficient covariance.

Reads measured (T, Cp[, u]) points (:func:`uqthermo.case.cp_csv.read_cp_csv`), fits a
polynomial or Shomate curve by weighted least squares (:func:`uqthermo.thermo.fitting.fit_cp`;
``--terms auto`` ranks the term subsets by BIC), prints the coefficients with their standard
uncertainties and correlation matrix, the residual table, the model ranking, warnings (stated u
inconsistent with the scatter; data not covering ``--range``) and the ``heat_capacity`` table to
paste into a case file. With ``--out DIR`` it also writes ``fit.toml`` (the table),
``fit.json`` (coefficients, covariance, residuals, ranking) and ``residuals.csv``, all at once
(the folder appears only when everything is written).
"""

from __future__ import annotations

import hashlib
import math
import re
import sys
from pathlib import Path

from ..errors import InputError, Problem

__all__ = ["execute", "fit_document", "residuals_csv"]

CRITERION = "bic"
_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_+\-]*$")


def _temperature_arg(text: str, which: str) -> float:
    """``--range`` value: a number (K) or a quantity such as ``"25 degC"``."""
    from ..case.units import UnitProblem, parse_quantity

    try:
        v = float(text)
    except ValueError:
        try:
            v = parse_quantity(text, "temperature")
        except UnitProblem as e:
            raise InputError(Problem("", f"--range {which}", str(e))) from None
    if not math.isfinite(v) or v <= 0:
        raise InputError(Problem("", f"--range {which}", f"{text!r} is not a positive absolute temperature (K)"))
    return v


def _rewrap(err: InputError, path: str) -> InputError:
    """Problems from the fitting layer without a file: data problems belong to the file,
    term/model problems to the option."""
    probs = []
    for p in err.problems:
        if p.file:
            probs.append(p)
        elif p.key.startswith("data") or not p.key:
            probs.append(Problem(path, "", p.message))
        else:
            probs.append(Problem("", f"--{p.key}", p.message))
    return InputError(probs)


def residuals_csv(outcome) -> str:
    """CSV text of the points, fitted values and residuals."""
    fit, data = outcome.fit, outcome.data
    rows = []
    head = ["line", "T [K]", "Cp [J/(mol*K)]", "fitted [J/(mol*K)]", "residual [J/(mol*K)]", "u(fit) [J/(mol*K)]"]
    if fit.u is not None:
        head += ["u [J/(mol*K)]", "residual/u"]
    fitted = fit.cp - fit.residuals
    ufit = fit.predict_uncertainty(fit.T)
    for i in range(fit.n_points):
        row = [data.lines[i], repr(float(fit.T[i])), repr(float(fit.cp[i])), f"{fitted[i]:.10g}",
               f"{fit.residuals[i]:.6g}", f"{ufit[i]:.4g}"]
        if fit.u is not None:
            row += [repr(float(fit.u[i])), f"{fit.normalized_residuals[i]:.4g}"]
        rows.append(row)
    from ..text_safety import csv_text

    return csv_text(head, rows)


def fit_document(outcome, *, species: str, phase: str, T_range, warnings: list[str], toml: str,
                 sha256: str = "") -> dict:
    """The ``fit.json`` document (format ``uqthermo.fit/1``)."""
    from .. import __version__

    fit, data = outcome.fit, outcome.data
    doc = {
        "format": "uqthermo.fit/1",
        "version": __version__,
        "data": {"file": data.path, "sha256": sha256, "n_points": fit.n_points, "T_min_K": fit.T_min,
                 "T_max_K": fit.T_max, "units": data.units, "u_given": fit.u is not None},
        "model": fit.model,
        "form": ("Cp = A + B*t + C*t^2 + D*t^3 + E/t^2, t = T/1000 K" if fit.model == "shomate"
                 else "Cp = a + b*T + c*T^2 + d*T^3 + e/T^2, T in K"),
        "terms": list(fit.terms),
        "coefficients": {t: float(v) for t, v in zip(fit.terms, fit.coefficients)},
        "coefficient_units": dict(zip(fit.terms, fit.coefficient_units())),
        "standard_uncertainty": {t: float(v) for t, v in zip(fit.terms, fit.standard_uncertainty)},
        "covariance": fit.covariance,
        "correlation": fit.correlation,
        "covariance_basis": "stated u, absolute" if fit.absolute_sigma else "scaled by the reduced chi-squared",
        "chi2": fit.chi2, "dof": fit.dof, "reduced_chi2": fit.reduced_chi2, "chi2_p_value": fit.chi2_p_value,
        "condition_number": fit.condition_number,
        "residuals": [
            {"line": int(data.lines[i]), "T_K": float(fit.T[i]), "cp": float(fit.cp[i]),
             "fitted": float(fit.cp[i] - fit.residuals[i]), "residual": float(fit.residuals[i]),
             "u": None if fit.u is None else float(fit.u[i]),
             "normalized": None if fit.normalized_residuals is None else float(fit.normalized_residuals[i])}
            for i in range(fit.n_points)],
        "selection": None if not outcome.ranking else {
            "criterion": outcome.criterion,
            "candidates": [{"terms": list(s.terms), "aic": s.aic, "aicc": s.aicc, "bic": s.bic,
                            "reduced_chi2": s.fit.reduced_chi2} for s in outcome.ranking]},
        "use_range_K": None if T_range is None else [float(T_range[0]), float(T_range[1])],
        "warnings": warnings,
        "case_toml": {"species": species, "phase": phase, "text": toml},
    }
    return doc


def execute(args) -> int:
    """Run ``uqthermo fit`` (arguments as parsed by :mod:`uqthermo.cli`); returns the exit code.

    Raises
    ------
    InputError
        Bad options or file (exit 2 via the CLI): ``file: line L, column C: problem``.
    """
    from ..case.cp_csv import fit_file, fit_warnings, ranking_lines
    from ..case.readers.fields import PHASE_SYMBOLS

    path = str(args.data)
    model = args.model or "polynomial"
    terms = args.terms if args.terms is not None else "auto"
    species = args.species or "X"
    phase = args.phase or "g"
    problems = []
    if not _NAME_RE.match(species):
        problems.append(Problem("", "--species", f"{species!r} must start with a letter and use only letters, digits, "
                                                 "'_', '+' or '-' (it becomes [species.NAME])"))
    if phase not in PHASE_SYMBOLS:
        problems.append(Problem("", "--phase", f"unknown phase {phase!r}; use one of {', '.join(PHASE_SYMBOLS)}"))
    T_range = None
    if args.range:
        try:
            lo = _temperature_arg(args.range[0], "T_LO")
            hi = _temperature_arg(args.range[1], "T_HI")
            if not hi > lo:
                problems.append(Problem("", "--range", f"T_HI must exceed T_LO ({lo:g} K .. {hi:g} K)"))
            else:
                T_range = (lo, hi)
        except InputError as e:
            problems += e.problems
    out = None
    if getattr(args, "out", None):
        from ..pipeline.target_checks import check_target

        try:
            check_target(args.out, force=bool(getattr(args, "force", False)), protected=(args.data,))
            out = Path(args.out)
        except InputError as e:
            problems += e.problems
    if problems:
        raise InputError(problems)

    try:
        oc = fit_file(path, model, terms, criterion=CRITERION)
    except InputError as e:
        raise _rewrap(e, path) from None
    fit = oc.fit
    warnings = fit_warnings(oc, T_range)
    toml = fit.to_case_toml(species, phase)

    lines = []
    how = (f"terms {','.join(fit.terms)} chosen by {CRITERION.upper()} among {len(oc.ranking)} candidates"
           if oc.ranking else f"terms {','.join(fit.terms)}")
    lines.append(f"uqthermo fit {Path(path).name}: {fit.model} curve, {how}")
    lines.append("")
    summary = fit.summary().splitlines()
    lines += [ln for ln in summary if not ln.startswith("warning: ")]
    if oc.ranking:
        lines.append("")
        lines += ranking_lines(oc)
    if warnings:
        lines.append("")
        lines += ["warning: " + w for w in warnings]
    if T_range is not None and fit.coverage_warning(*T_range) is None:
        lines.append(f"the data cover the range used ({T_range[0]:g}-{T_range[1]:g} K)")
    elif T_range is None:
        lines.append("")
        lines.append(f"note: the curve is valid over the data, {fit.T_min:g}-{fit.T_max:g} K; give --range T_LO T_HI "
                     "to check the range the case will use")
    lines.append("")
    lines.append(f"# paste into the case file, after [species.{species}] and [species.{species}.{phase}] "
                 "(or as a new table at the end):")
    text = "\n".join(lines) + "\n" + toml

    if out is not None:
        from ..pipeline.publish import OutputFolder
        from ..pipeline.output_files import write_json_atomic

        try:
            sha = hashlib.sha256(Path(path).read_bytes()).hexdigest()
        except OSError:
            sha = ""
        doc = fit_document(oc, species=species, phase=phase, T_range=T_range, warnings=warnings, toml=toml, sha256=sha)

        def build(tmp: Path):
            (tmp / "fit.toml").write_text(toml, encoding="utf-8")
            write_json_atomic(tmp / "fit.json", doc)
            (tmp / "residuals.csv").write_text(residuals_csv(oc), encoding="utf-8")
            (tmp / "fit.txt").write_text(text, encoding="utf-8")

        with OutputFolder(args.out, force=bool(getattr(args, "force", False)), protected=(args.data,),
                          command="fit") as folder:
            folder.publish(build)
    from ..text_safety import terminal_text

    print(terminal_text(text, limit=10 ** 7, keep_newlines=True), end="" if text.endswith("\n") else "\n")
    if out is not None:
        from .terminal import print_publish_notes

        print_publish_notes(folder)
        print(terminal_text(f"wrote {out}/fit.toml, {out}/fit.json, {out}/residuals.csv and {out}/fit.txt"),
              file=sys.stderr)
    return 0
