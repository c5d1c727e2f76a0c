"""Read measured heat-capacity points (CSV with units in the header) for ``uqthermo fit``.

The fitting itself is pure numerics in :mod:`uqthermo.thermo.fitting`; this module is the file
I/O around it: :func:`read_cp_csv` turns a CSV file into engine units (K, J/(mol K)) with one
``file: line L, column C: problem`` per bad cell, and :func:`fit_csv` reads, fits and composes
the printed report with the case-file ``heat_capacity`` table ready to paste.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError, Problem
from ..thermo.fitting import CpFit, compare_models, fit_cp
from .units import ureg as _ureg

__all__ = ["CpData", "FitOutcome", "read_cp_csv", "fit_file", "fit_csv", "ranking_lines", "fit_warnings"]


@dataclass(frozen=True)
class CpData:
    """Measured heat-capacity points in engine units.

    Attributes
    ----------
    T : ndarray
        Temperatures, K.
    cp : ndarray
        Molar heat capacities, J/(mol K).
    u : ndarray or None
        Standard uncertainties of cp, J/(mol K).
    path : str
        File read.
    units : dict
        Units as written in the header, by role (``"T"``, ``"cp"``, ``"u"``).
    lines : tuple of int
        File line number of each point.
    """

    T: np.ndarray
    cp: np.ndarray
    u: np.ndarray | None
    path: str
    units: dict
    lines: tuple


_ROLE_NAMES = {
    "T": {"t", "temperature", "temp"},
    "cp": {"cp", "c_p", "cpm", "cp,m", "heat capacity", "heat_capacity", "molar heat capacity"},
    "u": {"u", "u(cp)", "u_cp", "ucp", "u(c_p)", "uncertainty", "standard uncertainty", "sigma", "std"},
}
_TARGET = {"T": "K", "cp": "J/(mol*K)", "u": "J/(mol*K)"}


def _normalise_unit(text: str, role: str) -> str:
    t = text.strip().replace("°C", "degC").replace("℃", "degC").replace("°F", "degF").replace("°", "deg")
    t = t.replace("·", "*").replace("⋅", "*").replace("²", "^2")
    if role != "T":
        # a temperature inside a compound unit is a temperature difference
        t = re.sub(r"\bdeg(C|F)\b", r"delta_deg\1", t)
    return t


def _converter(unit_text: str, role: str, path: str, line: int, column: int):
    """Callable converting an array in ``unit_text`` to the engine unit of ``role``."""
    if role == "u" and unit_text.strip() == "%":
        return "percent"
    ureg = _ureg()
    try:
        unit = ureg.Unit(_normalise_unit(unit_text, role))
    except Exception:
        raise InputError(Problem(path, f"line {line}, column {column}",
                                 f"unknown unit {unit_text!r}")) from None
    target = ureg.Unit(_TARGET[role])
    if unit.dimensionality != target.dimensionality:
        hint = ""
        if role != "T" and unit.dimensionality == ureg.Unit("J/(kg*K)").dimensionality:
            hint = "; specific (per mass) heat capacities need converting to molar ones (J/(mol*K))"
        raise InputError(Problem(path, f"line {line}, column {column}",
                                 f"unit {unit_text!r} is not a {'temperature' if role == 'T' else 'molar heat capacity'}{hint}"))

    def conv(values: np.ndarray) -> np.ndarray:
        return np.asarray(ureg.Quantity(values, unit).to(target).magnitude, dtype=float)

    return conv


def read_cp_csv(path: str | Path) -> CpData:
    """Read measured heat capacities from a CSV file with units in the header.

    Format: a header line naming the columns with units in square brackets, e.g.
    ``T [K], Cp [J/(mol*K)], u [J/(mol*K)]`` (also ``degC``/``°C``, ``cal/(mol*K)``,
    ``kJ/(mol*K)``; ``u [%]`` for uncertainties relative to Cp), then one point per line.
    Columns may come in any order; the u column is optional. Delimiter: comma, semicolon or
    tab. Lines starting with ``#`` and blank lines are skipped.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    CpData
        Points in K and J/(mol K).

    Raises
    ------
    InputError
        One problem per bad cell: ``file: line L, column C: problem``.
    """
    p = Path(path)
    name = str(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError(Problem(name, "", "file not found")) from None
    except (OSError, UnicodeDecodeError) as e:
        raise InputError(Problem(name, "", f"cannot read the file ({e.__class__.__name__})")) from None

    raw_lines = text.splitlines()
    content = [(i + 1, ln) for i, ln in enumerate(raw_lines) if ln.strip() and not ln.lstrip().startswith("#")]
    if not content:
        raise InputError(Problem(name, "", "no header line; expected e.g. 'T [K], Cp [J/(mol*K)], u [J/(mol*K)]'"))
    head_no, head = content[0]
    delim = "\t" if "\t" in head else (";" if ";" in head else ",")
    header = next(csv.reader([head], delimiter=delim))
    roles: dict[str, int] = {}
    units: dict[str, str] = {}
    convs = {}
    for j, cell in enumerate(header):
        col = j + 1
        m = re.fullmatch(r"\s*([^\[\]]*?)\s*\[(.*)\]\s*", cell)
        label = (m.group(1) if m else cell).strip()
        role = next((r for r, names in _ROLE_NAMES.items() if label.lower() in names), None)
        if role is None:
            raise InputError(Problem(name, f"line {head_no}, column {col}",
                                     f"unknown column {label!r}; expected T, Cp and optionally u"))
        if role in roles:
            raise InputError(Problem(name, f"line {head_no}, column {col}", f"second {label!r} column"))
        if m is None or not m.group(2).strip():
            raise InputError(Problem(name, f"line {head_no}, column {col}",
                                     f"column {label!r} has no unit; write it as e.g. "
                                     f"'{label} [{_TARGET[role]}]'"))
        roles[role] = j
        units[role] = m.group(2).strip()
        convs[role] = _converter(units[role], role, name, head_no, col)
    for need in ("T", "cp"):
        if need not in roles:
            raise InputError(Problem(name, f"line {head_no}", f"missing the {'T' if need == 'T' else 'Cp'} column"))

    problems: list[Problem] = []
    cols = {r: [] for r in roles}
    line_nos = []
    ncol = len(header)
    for line_no, ln in content[1:]:
        cells = next(csv.reader([ln], delimiter=delim))
        if len(cells) != ncol:
            problems.append(Problem(name, f"line {line_no}", f"{len(cells)} values, expected {ncol}"))
            continue
        row = {}
        ok = True
        for r, j in roles.items():
            cell = cells[j].strip()
            try:
                v = float(cell)
                if not math.isfinite(v):
                    raise ValueError
            except ValueError:
                problems.append(Problem(name, f"line {line_no}, column {j + 1}",
                                        f"not a finite number: {cell!r}" if cell else "empty value"))
                ok = False
                continue
            row[r] = v
        if ok:
            for r, v in row.items():
                cols[r].append(v)
            line_nos.append(line_no)
    if problems:
        raise InputError(problems)
    if not line_nos:
        raise InputError(Problem(name, "", "no data rows after the header"))

    T = convs["T"](np.array(cols["T"]))
    cp = convs["cp"](np.array(cols["cp"]))
    u = None
    if "u" in roles:
        raw_u = np.array(cols["u"])
        u = np.abs(cp) * raw_u / 100.0 if convs["u"] == "percent" else convs["u"](raw_u)
    for i, ln_no in enumerate(line_nos):
        if T[i] <= 0:
            problems.append(Problem(name, f"line {ln_no}, column {roles['T'] + 1}",
                                    f"temperature {T[i]:g} K is not above absolute zero"))
        if cp[i] <= 0:
            problems.append(Problem(name, f"line {ln_no}, column {roles['cp'] + 1}",
                                    "heat capacity must be positive"))
        if u is not None and u[i] <= 0:
            problems.append(Problem(name, f"line {ln_no}, column {roles['u'] + 1}",
                                    "standard uncertainty must be positive"))
    if problems:
        raise InputError(problems)
    return CpData(T=T, cp=cp, u=u, path=name, units=units, lines=tuple(line_nos))


@dataclass
class FitOutcome:
    """A fit read from a file: the data, the chosen fit and (``terms="auto"``) the ranking.

    Attributes
    ----------
    data : CpData
    fit : CpFit
    ranking : list of ModelScore or None
        Candidates best first by ``criterion`` (only when the terms were chosen automatically).
    criterion : str
    """

    data: CpData
    fit: CpFit
    ranking: list | None
    criterion: str


def fit_file(path: str | Path, model: str = "polynomial", terms=None, *, criterion: str = "aicc",
             absolute_sigma: bool = True) -> FitOutcome:
    """Read a CSV file (:func:`read_cp_csv`) and fit it (:func:`~uqthermo.thermo.fitting.fit_cp`).

    Parameters
    ----------
    path : str or Path
    model : {"polynomial", "shomate"}
    terms : sequence of str, "auto" or None
        ``"auto"``: every subset with the constant term, ranked by ``criterion``
        (:func:`~uqthermo.thermo.fitting.compare_models`); None: the model's default terms.
    criterion : {"aicc", "aic", "bic"}
    absolute_sigma : bool
        Stated u are absolute standard uncertainties (True) or only relative weights.

    Returns
    -------
    FitOutcome

    Raises
    ------
    InputError
        Bad file (``file: line L, column C: problem``) or data the model cannot be fitted to.
    """
    data = read_cp_csv(path)
    label = Path(path).name
    ranking = None
    if isinstance(terms, str) and terms.strip().lower() == "auto":
        ranking = compare_models(data.T, data.cp, data.u, model, criterion=criterion,
                                 absolute_sigma=absolute_sigma, label=label)
        fit = ranking[0].fit
    else:
        fit = fit_cp(data.T, data.cp, data.u, model, terms, absolute_sigma=absolute_sigma, label=label)
    return FitOutcome(data, fit, ranking, criterion)


def ranking_lines(outcome: FitOutcome, limit: int = 8) -> list[str]:
    """Text lines of the model ranking (empty without one)."""
    if not outcome.ranking:
        return []
    out = [f"model ranking ({outcome.criterion}, best first; smaller is better):"]
    for s in outcome.ranking[:limit]:
        out.append(f"  {','.join(s.terms):<12} aic {s.aic:10.4g}  aicc {s.aicc:10.4g}  bic {s.bic:10.4g}"
                   f"  reduced chi2 {s.fit.reduced_chi2:.3g}")
    if len(outcome.ranking) > limit:
        out.append(f"  ... {len(outcome.ranking) - limit} more candidates")
    return out


def fit_warnings(outcome: FitOutcome, T_range: tuple[float, float] | None = None) -> list[str]:
    """Consistency (chi-squared) and temperature-coverage warnings of a fit."""
    out = []
    w = outcome.fit.consistency_warning()
    if w:
        out.append(w)
    if T_range is not None:
        w = outcome.fit.coverage_warning(*T_range)
        if w:
            out.append(w)
    return out


def fit_csv(path: str | Path, model: str = "polynomial", terms=None, *, species: str = "SPECIES",
            phase: str = "g", T_range: tuple[float, float] | None = None, criterion: str = "aicc",
            absolute_sigma: bool = True) -> tuple[CpFit, str]:
    """Read, fit, and compose the printed report of ``uqthermo fit DATA.csv``.

    Parameters
    ----------
    path : str or Path
        CSV file (see :func:`read_cp_csv`).
    model : {"polynomial", "shomate"}
    terms : sequence of str, "auto" or None
        Terms to fit; ``"auto"`` selects the subset by ``criterion``; None uses the model's default.
    species, phase : str
        Names for the case-file table header.
    T_range : (float, float), optional
        Temperature range (K) the case will use; a warning is added when the data do not
        cover it.

    Returns
    -------
    (CpFit, str)
        The fit and the report text (summary with the residuals, model ranking when
        ``terms="auto"``, warnings and the ``heat_capacity`` table ready to paste).
    """
    oc = fit_file(path, model, terms, criterion=criterion, absolute_sigma=absolute_sigma)
    parts = [oc.fit.summary()]
    parts += ranking_lines(oc)
    cw = oc.fit.consistency_warning()
    parts += ["warning: " + w for w in fit_warnings(oc, T_range) if w != cw]   # summary() already has cw
    parts.append("")
    parts.append("# paste into the case file:")
    parts.append(oc.fit.to_case_toml(species, phase))
    return oc.fit, "\n".join(parts)
