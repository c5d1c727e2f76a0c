"""Checks of a built model before a run: every output at the best estimates and at the probes a run
will reach (validity ranges of the Cp correlations, non-finite values), and the plausibility
warnings on the result (:func:`check_model`)."""

from __future__ import annotations

import numpy as np

from ...errors import InputError, Problem, UqthermoError, ValidityError
from ..readers.plausibility import model_warnings
from ..schema import Case
from .builder import build_model
from .layout import Model
from .probes import first_failure, probe_rows

__all__ = ["check_model"]


def check_model(case: Case, model: Model) -> list[str]:
    """Evaluate the model at the best estimates, output by output, and at the probes a run will
    reach (:mod:`uqthermo.case.model.probes`: 1e-9 tails, candidate what-if variants).

    Raises :class:`InputError` for outputs whose path leaves a correlation's validity
    range (when extrapolation is not allowed) or that the physics cannot evaluate;
    returns warnings for extrapolated paths (when allowed) and non-finite results.
    """
    problems: list[Problem] = []
    warnings: list[str] = []
    x0 = np.asarray(model.inputs.estimates, dtype=float)[None, :]
    cps = [(sp, ph, p.cp) for sp, s in case.species.items() for ph, p in s.phases.items() if p.cp is not None]
    # 1) with extrapolation switched off everywhere: what would leave a validity range?
    saved = [cp.allow_extrapolation for _, _, cp in cps]
    try:
        for _, _, cp in cps:
            cp.allow_extrapolation = False
        strict_errors = _try_outputs(case, model, x0)
    finally:
        for (_, _, cp), a in zip(cps, saved):
            cp.allow_extrapolation = a
    allowed_errors = _try_outputs(case, model, x0) if strict_errors else {}
    for i, o in enumerate(case.outputs):
        err, key = allowed_errors.get(i, (None, None)) if strict_errors else (None, None)
        strict = strict_errors.get(i, (None, None))[0]
        if err is not None:
            msg = err.message if isinstance(err, UqthermoError) else str(err)
            if isinstance(err, ValidityError) and err.key:
                msg = f"{msg} (datum {err.key}; allow with extrapolate = true on that heat_capacity or settings.allow_extrapolation = true)"
            problems.append(Problem(case.path, key or o.key, msg))
        elif strict is not None:
            text = strict.message if isinstance(strict, UqthermoError) else str(strict)
            text = text.removesuffix(" (extrapolation not allowed)")
            datum = f" (datum {strict.key})" if isinstance(strict, UqthermoError) and strict.key else ""
            warnings.append(f"{o.key}: extrapolated beyond a correlation's validity range, as the case allows "
                            f"(extrapolate = true) — {text}{datum}")
    if problems:
        raise InputError(problems)
    y = model.evaluate(x0)
    bad = [case.outputs[c.output].key for j, c in enumerate(model.columns) if not np.isfinite(y[0, j])]
    if bad:
        raise InputError([Problem(case.path, k, "the model gives a non-finite value at the best estimates; check the data")
                          for k in dict.fromkeys(bad)])
    return warnings + model_warnings(case, model, y[0])


def _try_outputs(case: Case, model: Model, x0: np.ndarray) -> dict[int, tuple[Exception, str | None]]:
    """Evaluate each output alone at the best estimates, then at the probes a run will reach
    (:func:`uqthermo.case.model.probes.probe_rows`: input tails, the output's combined tail, candidate
    what-if variants); map output index → (the first error it raised, the key path that causes it)."""
    errors: dict[int, tuple[Exception, str | None]] = {}
    for i, o in enumerate(case.outputs):
        sub = Case(**{**case.__dict__, "outputs": [o]})
        try:
            m = build_model(sub)
            m.evaluate(np.asarray(m.inputs.estimates, dtype=float)[None, :])
        except UqthermoError as e:
            errors[i] = (e, None)
            continue
        except (ValueError, FloatingPointError, ZeroDivisionError) as e:
            errors[i] = (e, None)
            continue
        full = not (m.linear_in_inputs[0] and not o.temperature_datum)
        hit = first_failure(m, probe_rows(sub, m, o, full=full),
                            (UqthermoError, ValueError, FloatingPointError, ZeroDivisionError))
        if hit is not None:
            probe, e = hit
            if isinstance(e, UqthermoError):
                e = _annotated(e, f"{probe.note} (in {o.key})" if probe.key != o.key else probe.note)
            errors[i] = (e, probe.key)
    return errors


def _annotated(e: UqthermoError, note: str) -> UqthermoError:
    """The same error type with ``note`` appended to its message (key kept)."""
    try:
        return type(e)(f"{e.message}; {note}", key=e.key)
    except TypeError:   # an error type with another constructor: keep it as it is
        return e
