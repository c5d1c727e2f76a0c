"""Checks of a built model before a run: every output at the best estimates and at the probes a run
will reach (validity ranges of the Cp correlations, non-finite values), and the plausibility
warnings on the result (:func:`check_model`)."""

from __future__ import annotations

import contextlib

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
    with _extrapolation_off(cps):
        strict_errors = _try_outputs(case, model, x0)
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
            texts = []
            for e in _every_extrapolation(case, model, x0, i, strict, cps):
                text = e.message if isinstance(e, UqthermoError) else str(e)
                text = text.removesuffix(" (extrapolation not allowed)")
                texts.append(text + (f" (datum {e.key})" if isinstance(e, UqthermoError) and e.key else ""))
            where = "a correlation's validity range" if len(texts) == 1 else f"the validity ranges of {len(texts)} correlations"
            warnings.append(f"{o.key}: extrapolated beyond {where}, as the case allows (extrapolate = true) — "
                            + "; ".join(texts))
    if problems:
        raise InputError(problems)
    y = model.evaluate(x0)
    bad = [case.outputs[c.output].key for j, c in enumerate(model.columns) if not np.isfinite(y[0, j])]
    if bad:
        raise InputError([Problem(case.path, k, "the model gives a non-finite value at the best estimates; check the data")
                          for k in dict.fromkeys(bad)])
    return warnings + model_warnings(case, model, y[0])


def _every_extrapolation(case: Case, model: Model, x0: np.ndarray, i: int, first: Exception, cps: list) -> list[Exception]:
    """Every heat-capacity curve output ``i`` takes beyond its range, not only the first one met:
    ``first`` (the error with extrapolation off everywhere), then the next one with that curve allowed
    again, and so on (for an output the case allows to extrapolate)."""
    by_key = {f"{sp}.{ph}.heat_capacity": cp for sp, ph, cp in cps}
    sub = Case(**{**case.__dict__, "outputs": [case.outputs[i]]})
    found = [first]
    with _extrapolation_off(cps):
        e = first
        while isinstance(e, ValidityError) and by_key.get(e.key) is not None and not by_key[e.key].allow_extrapolation:
            by_key[e.key].allow_extrapolation = True
            nxt = _try_outputs(sub, model, x0).get(0)
            if nxt is None or not isinstance(nxt[0], ValidityError):
                break
            e = nxt[0]
            if by_key.get(e.key) is not None and by_key[e.key].allow_extrapolation:
                break       # the same curve again (not expected): stop
            found.append(e)
    return found


@contextlib.contextmanager
def _extrapolation_off(cps: list):
    """Every heat-capacity curve of ``cps`` ((species, phase, curve) triples) without extrapolation
    inside the block; each curve's own setting back after it."""
    saved = [cp.allow_extrapolation for _, _, cp in cps]
    try:
        for _, _, cp in cps:
            cp.allow_extrapolation = False
        yield
    finally:
        for (_, _, cp), a in zip(cps, saved):
            cp.allow_extrapolation = a


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
