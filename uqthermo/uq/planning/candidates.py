"""The planner's question: candidate measurements and the uncertainty target they must meet.

Each *candidate* (:class:`Candidate`) is a measurement one could buy for one datum: the
datum's standard uncertainty would become ``std`` (or be multiplied by ``factor``) at a
``cost`` (and an optional lead time); :func:`resolve_candidates` turns each into its factor
on the datum's uncertainty. The *target* (:class:`Target`, read by :func:`parse_target` from
text such as ``"U95 <= 2 kJ/mol"``) is an upper limit on the expanded or standard
uncertainty or on the coverage-interval half-width.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ...errors import InputError, StatisticsError

__all__ = ["Target", "parse_target", "Candidate", "resolve_candidates"]


@dataclass(frozen=True)
class Target:
    """An uncertainty target, e.g. ``U95 <= 2 kJ/mol``.

    Attributes
    ----------
    metric : str
        ``"U"`` expanded uncertainty, ``"u"`` standard uncertainty, ``"halfwidth"``
        half-width of the coverage interval (equal to U for the linear method; for Monte
        Carlo U is defined as that half-width too).
    probability : float or None
        Coverage probability for U / halfwidth (None: the run's coverage probability).
    comparator : str
        ``"<="`` or ``"<"``.
    value : float
        Threshold in the units the caller evaluates in (convert ``unit`` first).
    unit : str
        Unit text that followed the number ("" if none) — for the caller to convert.
    text : str
        The original text.
    """

    metric: str
    probability: float | None
    comparator: str
    value: float
    unit: str = ""
    text: str = ""

    def with_value(self, value: float, unit: str = "") -> "Target":
        """The same target with the threshold converted by the caller."""
        return Target(self.metric, self.probability, self.comparator, float(value), unit, self.text)

    def met(self, x: np.ndarray) -> np.ndarray:
        """Whether values ``x`` meet the target (vectorised).

        ``<=`` allows a relative rounding slack of 1e-10 (a value equal to the limit up to
        floating-point rounding of the variance sum meets it); ``<`` is strict.
        """
        x = np.asarray(x, dtype=float)
        if self.comparator == "<=":
            return x <= self.value * (1.0 + 1e-10)
        return x < self.value

    def to_dict(self) -> dict:
        return {"text": self.text, "metric": self.metric, "probability": self.probability,
                "comparator": self.comparator, "value": self.value, "unit": self.unit}


_TARGET_RE = re.compile(
    r"^\s*(?P<metric>U|u|ci[-_ ]?half[-_ ]?width|half[-_ ]?width)(?P<p>\d+(?:\.\d+)?)?\s*"
    r"(?:\(\s*(?P<p2>\d+(?:\.\d+)?)\s*%\s*\))?\s*"
    r"(?P<cmp><=|≤|=<|<|>=|≥|>)\s*"
    r"(?P<value>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>.*?)\s*$"
)


def parse_target(text: str, default_probability: float | None = None) -> Target:
    """Parse a target such as ``"U95 <= 2 kJ/mol"``.

    Grammar: ``METRIC[PP] COMPARATOR NUMBER [UNIT]`` where METRIC is ``U`` (expanded
    uncertainty), ``u`` (standard uncertainty) or ``ci-halfwidth`` / ``halfwidth``
    (coverage-interval half-width), PP an optional coverage probability in percent
    (``U95``, ``U99``, ``ci-halfwidth99``, or ``U(95 %)``) and COMPARATOR ``<=``/``≤``/``<``.
    Units are returned verbatim in ``Target.unit`` for the caller to convert.

    Raises
    ------
    InputError
        With key ``"target"`` for anything else (e.g. ``>=``: an uncertainty target is an
        upper limit; ``u95``: a standard uncertainty has no coverage probability).
    """
    if not isinstance(text, str):
        raise InputError(f"target must be text like 'U95 <= 2 kJ/mol', got {text!r}", key="target")
    m = _TARGET_RE.match(text)
    if not m:
        raise InputError(f"cannot read target {text!r}; write e.g. 'U95 <= 2 kJ/mol', 'u < 0.8 kJ/mol' "
                         "or 'ci-halfwidth99 <= 3 kJ/mol'", key="target")
    metric = m.group("metric")
    metric = "U" if metric == "U" else ("u" if metric == "u" else "halfwidth")
    cmp_ = {"≤": "<=", "=<": "<="}.get(m.group("cmp"), m.group("cmp"))
    if cmp_ in (">=", ">", "≥"):
        raise InputError(f"target {text!r}: an uncertainty target must be an upper limit (<= or <)", key="target")
    pct = m.group("p") or m.group("p2")
    if metric == "u" and pct:
        raise InputError(f"target {text!r}: a standard uncertainty u has no coverage probability; "
                         "use U95 or ci-halfwidth95", key="target")
    prob = None if metric == "u" else (float(pct) / 100.0 if pct else default_probability)
    if prob is not None and not (0.0 < prob < 1.0):
        raise InputError(f"target {text!r}: coverage probability must lie between 0 and 100 %", key="target")
    value = float(m.group("value"))
    if not math.isfinite(value) or value <= 0:
        raise InputError(f"target {text!r}: the limit must be a positive number", key="target")
    return Target(metric, prob, cmp_, value, m.group("unit"), text.strip())


@dataclass(frozen=True)
class Candidate:
    """A measurement that could be bought.

    Attributes
    ----------
    datum : str
        Datum id it improves.
    cost : float
        Cost (any currency/effort unit; ≥ 0).
    std : float, optional
        Achievable standard uncertainty (single-parameter data; input units).
    factor : float, optional
        Or a factor on the datum's standard uncertainties (e.g. 0.3).
    lead_time : float, optional
        Lead time (any unit; the selection's lead time is the largest of its members —
        measurements are assumed to run in parallel).
    label : str, optional
        Name in tables (default: derived from datum and std/factor).
    """

    datum: str
    cost: float
    std: float | None = None
    factor: float | None = None
    lead_time: float | None = None
    label: str | None = None

    @property
    def name(self) -> str:
        if self.label:
            return self.label
        if self.std is not None:
            return f"{self.datum} (u={self.std:g})"
        if self.factor is not None:
            return f"{self.datum} (x{self.factor:g})"
        return self.datum

    def to_dict(self) -> dict:
        return {"label": self.name, "datum": self.datum, "std": self.std, "factor": self.factor,
                "cost": self.cost, "lead_time": self.lead_time}


def resolve_candidates(cands: Sequence[Candidate], groups: Mapping[str, Sequence[int]],
                        stds: np.ndarray | None) -> tuple[np.ndarray, list[str]]:
    """(factor on its datum's standard uncertainty per candidate (K,), warnings).

    A stated achievable ``std`` becomes ``std / u_now`` (single-parameter data only); a factor
    above 1 would not improve the datum and is taken as 1 (no change) with a warning.

    Raises
    ------
    StatisticsError
        An unknown datum, a negative or non-finite cost, lead time, uncertainty or factor, or
        not exactly one of ``std`` and ``factor``.
    """
    factors = np.ones(len(cands))
    warns: list[str] = []
    for k, c in enumerate(cands):
        if not isinstance(c, Candidate):
            raise StatisticsError(f"candidates must be Candidate objects, got {type(c).__name__}")
        if c.datum not in groups:
            raise StatisticsError(f"candidate {c.name!r}: unknown datum {c.datum!r}", key=c.datum)
        cost = float(c.cost)
        if not math.isfinite(cost) or cost < 0:
            raise StatisticsError(f"candidate {c.name!r}: cost must be a finite number >= 0", key=c.datum)
        if c.lead_time is not None and (not math.isfinite(float(c.lead_time)) or float(c.lead_time) < 0):
            raise StatisticsError(f"candidate {c.name!r}: lead time must be >= 0", key=c.datum)
        if (c.std is None) == (c.factor is None):
            raise StatisticsError(f"candidate {c.name!r}: give exactly one of an achievable standard "
                                  "uncertainty or a factor", key=c.datum)
        if c.factor is not None:
            fac = float(c.factor)
        else:
            idx = list(groups[c.datum])
            if len(idx) != 1:
                raise StatisticsError(f"candidate {c.name!r}: datum {c.datum!r} has {len(idx)} parameters; "
                                      "give a factor on its uncertainty instead of a standard uncertainty",
                                      key=c.datum)
            if stds is None:
                raise StatisticsError("candidate standard uncertainties need the inputs' stds", key=c.datum)
            now = float(stds[idx[0]])
            u = float(c.std)
            if not math.isfinite(u) or u < 0:
                raise StatisticsError(f"candidate {c.name!r}: achievable uncertainty must be >= 0", key=c.datum)
            fac = 0.0 if (now == 0 or u == 0) else u / now
        if not math.isfinite(fac) or fac < 0:
            raise StatisticsError(f"candidate {c.name!r}: factor must be >= 0", key=c.datum)
        if fac > 1:
            warns.append(f"candidate {c.name!r} would not improve {c.datum} (factor {fac:.3g} > 1); "
                         "it is treated as no change")
            fac = 1.0
        factors[k] = fac
    return factors, warns
