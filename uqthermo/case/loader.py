"""Read a TOML case file into a :class:`~uqthermo.case.schema.Case`, collecting every problem.

The loader never stops at the first problem: it walks the whole file, records one
:class:`~uqthermo.errors.Problem` per defect (file, key path, what is wrong and how to
fix it), and raises a single :class:`~uqthermo.errors.InputError` at the end, so
``uqthermo check`` can list them all at once. Case files are data: nothing in them is
ever evaluated as code.
"""

from __future__ import annotations

import difflib
import hashlib
import math
import re
import tomllib
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError, Problem, UqthermoError
from . import distributions_adapter as dist
from .schema import (
    METHODS,
    OUTPUT_KINDS,
    SAMPLING_METHODS,
    Candidate,
    Case,
    Datum,
    OutputSpec,
    Settings,
)
from .limits import MAX_NAME_LENGTH, MAX_REACTIONS, MAX_SEED, SEED_RANGE_TEXT, short_key, toml_nesting_problem
from .units import UnitProblem, parse_quantity

__all__ = ["load_case", "Collector", "MAX_SAMPLES_LIMIT", "adaptive_cap_problem"]

#: Hard cap on a fixed sample count: beyond this a run would take hours on one machine
#: (the distributed engine raises it explicitly).
MAX_SAMPLES_LIMIT = 1_000_000_000
MAX_FILE_BYTES = 5 * 1024 * 1024

PHASE_SYMBOLS = ("g", "l", "s", "cr", "aq")
PHASE_ALIASES = {"s": "cr", "cr": "s", "c": "cr"}
QUANTITY_KEYS = {"value", "u", "U", "k", "half_width", "distribution", "relative_u", "dof",
                 "lower", "upper", "source", "note", "library", "id", "name"}
DISTRIBUTIONS = ("normal", "rectangular", "uniform", "triangular", "lognormal", "student-t", "truncated-normal")
CP_MODELS = ("constant", "polynomial", "shomate", "nasa7")
POLY_TERMS = ("a", "b", "c", "d", "e")
POLY_POWERS = {"a": 0, "b": 1, "c": 2, "d": 3, "e": -2}

_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_+\-]*$")


class Collector:
    """Accumulates problems for one file."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []
        self.warnings: list[str] = []
        self.skipped: set[str] = set()    # keys of items not built because of problems elsewhere

    def add(self, key: str, message: str) -> None:
        self.problems.append(Problem(self.file, key, message))

    def warn(self, key: str, message: str) -> None:
        self.warnings.append(f"{key}: {message}" if key else message)

    def unknown_keys(self, node: dict, allowed, key: str) -> None:
        for k in node:
            if k not in allowed:
                close = difflib.get_close_matches(str(k), list(allowed), n=1)
                hint = f" (did you mean {close[0]!r}?)" if close else f" (allowed: {', '.join(sorted(allowed))})"
                self.add(f"{key}.{k}" if key else str(k), f"unknown key{hint}")

    def has_problem(self, key: str) -> bool:
        """True if a problem was already recorded at ``key`` or below it (to avoid follow-on noise)."""
        return key in self.skipped or any(p.key == key or p.key.startswith((key + ".", key + "["))
                                          for p in self.problems)

    def raise_if_any(self) -> None:
        if self.problems:
            err = InputError(self.problems)
            err.warnings = list(self.warnings)   # shown by `check` beside the problems
            raise err


# ----------------------------------------------------------------------------- helpers

def _fmt(x: float) -> str:
    return f"{x:.6g}"


def _is_table(x: Any) -> bool:
    return isinstance(x, dict)


#: the mass dimension an amount (rate) may be written in, converted with a molar mass
MASS_OF = {"amount": "mass", "amount_rate": "mass_rate"}


def _quantity(c: Collector, value: Any, key: str, dimension: str, *, difference: bool = False,
              molar_mass: float | str | None = None) -> float | None:
    """Parse ``value`` as ``dimension``; an amount (rate) may also be a mass (rate) when ``molar_mass``
    (kg/mol) is given — a string there is the hint shown when a mass cannot be converted."""
    try:
        return parse_quantity(value, dimension, difference=difference)
    except UnitProblem as e:
        if dimension in MASS_OF and molar_mass is not None:
            try:
                m = parse_quantity(value, MASS_OF[dimension], difference=difference)
            except UnitProblem:
                pass
            else:
                if isinstance(molar_mass, str):
                    c.add(key, f"{value!r} is a mass; {molar_mass}")
                    return None
                return m / molar_mass
        c.add(key, str(e))
        return None


def _temperature(c: Collector, value: Any, key: str) -> float | None:
    t = _quantity(c, value, key, "temperature")
    if t is not None and t <= 0:
        c.add(key, f"temperature {value!r} is at or below absolute zero; give a positive absolute temperature")
        return None
    if t is not None and t > 1e5:
        c.add(key, f"temperature {value!r} is beyond any thermochemical data ({_fmt(t)} K)")
        return None
    return t


def _percent(c: Collector, value: Any, key: str) -> float | None:
    r = _quantity(c, value, key, "dimensionless")
    if r is None:
        return None
    if not (r > 0):
        c.add(key, "relative uncertainty must be positive (write the quantity as a plain string to make it exact)")
        return None
    if r >= 1:
        c.add(key, f"relative uncertainty {value!r} is 100 % or more; check the value (e.g. \"2 %\" or 0.02)")
        return None
    if not isinstance(value, str) and r >= 0.05:
        c.warn(key, f"the plain number {value!r} is read as a fraction, {100 * r:g} %; write \"{value!r} %\" if per cent was meant")
    return r


_REPORT = {
    "molar_energy": ("kJ/mol", 1e-3),
    "molar_entropy": ("J/(mol*K)", 1.0),
    "temperature": ("K", 1.0),
    "amount": ("mol", 1.0),
    "amount_rate": ("mol/s", 1.0),
    "dimensionless": ("1", 1.0),
    "power": ("kW", 1e-3),
    "energy": ("kJ", 1e-3),
    "specific_energy": ("kJ/kg", 1e-3),
    "pressure": ("kPa", 1e-3),
}


def read_uncertain(c: Collector, node: Any, key: str, dimension: str, *, positive: bool = False,
                   temperature: bool = False, molar_mass: float | str | None = None) -> tuple[float, Any, str, str] | None:
    """Read an uncertain quantity: a plain string (exact) or a table (contract §2).

    Returns ``(estimate, distribution, stated, source)`` in engine units, or ``None``
    after recording the problem. ``molar_mass`` (kg/mol): an amount (rate) may be written
    as a mass (rate), e.g. ``"252 kg"`` or ``"900 kg/h"`` (see :func:`_quantity`).
    """
    reader = (lambda v, k: _temperature(c, v, k)) if temperature else (
        lambda v, k: _quantity(c, v, k, dimension, molar_mass=molar_mass))
    if not _is_table(node):
        v = reader(node, key)
        if v is None:
            return None
        if positive and v <= 0:
            c.add(key, f"must be positive, got {node!r}")
            return None
        return v, dist.exact(v), "exact", ""
    c.unknown_keys(node, QUANTITY_KEYS, key)
    if "value" not in node:
        c.add(key, "missing 'value' (e.g. value = \"1.0 " + {"molar_energy": "kJ/mol", "temperature": "K"}.get(dimension, "unit") + "\")")
        return None
    v = reader(node["value"], f"{key}.value")
    if v is None:
        return None
    if positive and v <= 0:
        c.add(f"{key}.value", f"must be positive, got {node['value']!r}")
        return None
    source = node.get("source", "")
    if not isinstance(source, str):
        c.add(f"{key}.source", "must be a string")
        source = ""
    kinds = [k for k in ("u", "U", "half_width", "relative_u") if k in node]
    if len(kinds) > 1:
        c.add(key, f"give only one of u, U (with k), half_width or relative_u; found {', '.join(kinds)}")
        return None
    dname = node.get("distribution", "normal")
    if not isinstance(dname, str) or dname not in DISTRIBUTIONS:
        c.add(f"{key}.distribution", f"unknown distribution {dname!r}; use one of {', '.join(DISTRIBUTIONS)}")
        return None
    if dname == "uniform":
        dname = "rectangular"
    if not kinds:
        if dname != "normal":
            c.add(key, f"distribution {dname!r} needs an uncertainty (u, U with k, half_width or relative_u)")
            return None
        return v, dist.exact(v), "exact", source

    def _diff(val: Any, k: str) -> float | None:
        # uncertainties are differences: "5 degC" means 5 K
        x = _quantity(c, val, k, dimension, difference=True, molar_mass=molar_mass)
        if x is None:
            return None
        if not (x > 0):
            c.add(k, "uncertainty must be positive (write the quantity as a plain string to make it exact)")
            return None
        return x

    kind = kinds[0]
    stated = ""
    std = None
    half = None
    if kind == "u":
        std = _diff(node["u"], f"{key}.u")
        stated = f"u = {node['u']}"
    elif kind == "U":
        if "k" not in node:
            c.add(f"{key}.k", "an expanded uncertainty U needs its coverage factor k (e.g. k = 2)")
            return None
        kf = node["k"]
        if isinstance(kf, bool) or not isinstance(kf, (int, float)) or not math.isfinite(kf) or kf <= 0:
            c.add(f"{key}.k", f"coverage factor must be a positive number, got {kf!r}")
            return None
        U = _diff(node["U"], f"{key}.U")
        if U is not None:
            std = U / float(kf)
        stated = f"U = {node['U']} (k = {kf})"
        if kf > 13 or kf < 1:   # t_0.975 with one degree of freedom is 12.7; k < 1 makes U smaller than u
            c.warn(f"{key}.k", f"coverage factor k = {kf:g} is outside anything in use (about 1 to 3; up to 12.7 for a "
                               "95 % t-interval with one degree of freedom); was a confidence level (e.g. 95) or a "
                               f"count written as k? It is used as stated: u = U/k")
    elif kind == "half_width":
        half = _diff(node["half_width"], f"{key}.half_width")
        stated = f"half-width {node['half_width']}"
        if dname not in ("rectangular", "triangular"):
            c.add(f"{key}.distribution", "half_width goes with distribution = \"rectangular\" or \"triangular\"")
            return None
    elif kind == "relative_u":
        r = _percent(c, node["relative_u"], f"{key}.relative_u")
        if r is not None:
            if v == 0:
                c.add(f"{key}.relative_u", "a relative uncertainty of a zero value is zero; give u instead")
                return None
            std = abs(v) * r
            if temperature and isinstance(node["value"], str) and re.search(r"deg\s*[CF]|°|℃", node["value"]):
                c.warn(f"{key}.relative_u", f"a relative uncertainty of a temperature is taken of the absolute value: "
                                            f"{node['relative_u']} of {_fmt(v)} K = {_fmt(std)} K, not of the "
                                            f"{node['value']!r} number; give u in K if that was meant")
        stated = f"relative u = {node['relative_u']}"
    if std is None and half is None:
        return None
    if kind != "half_width" and dname in ("rectangular", "triangular"):
        # u given with a rectangular/triangular shape: convert to the half-width (GUM 4.3.7, 4.3.9)
        half = std * (math.sqrt(3.0) if dname == "rectangular" else math.sqrt(6.0))
    try:
        if dname == "normal":
            d = dist.normal(v, std)
        elif dname in ("rectangular", "triangular"):
            d = dist.rectangular(v, half) if dname == "rectangular" else dist.triangular(v, half)
        elif dname == "lognormal":
            if v <= 0:
                c.add(f"{key}.distribution", "a lognormal quantity must have a positive value")
                return None
            d = dist.lognormal(v, std)
        elif dname == "student-t":
            dof = node.get("dof")
            if isinstance(dof, bool) or not isinstance(dof, (int, float)) or not (dof > 2) or not math.isfinite(dof):
                c.add(f"{key}.dof", "student-t needs degrees of freedom dof > 2 (so that u is finite)")
                return None
            d = dist.student_t(v, std, float(dof))
            stated += f", t with {dof:g} dof"
        else:  # truncated-normal
            lo = node.get("lower")
            hi = node.get("upper")
            lo_v = reader(lo, f"{key}.lower") if lo is not None else -math.inf
            hi_v = reader(hi, f"{key}.upper") if hi is not None else math.inf
            if lo_v is None or hi_v is None:
                return None
            if lo is None and hi is None:
                c.add(key, "truncated-normal needs lower and/or upper bounds")
                return None
            if not (lo_v < v < hi_v):
                c.add(key, "the value must lie strictly between lower and upper")
                return None
            d = dist.truncated_normal(v, std, lo_v, hi_v)
    except UqthermoError as e:
        c.add(key, e.message)
        return None
    sd = float(getattr(d, "std", 0.0))
    if v != 0 and sd > abs(v):
        c.warn(key, f"the standard uncertainty is {100 * sd / abs(v):.0f} % of the value; a relative uncertainty written "
                    "as u (use relative_u = \"… %\"), or a unit slip in u? It is used as stated")
    if temperature and getattr(d, "std", 0.0) > 0:
        lo = float(np.asarray(d.ppf(np.array([1e-9])), dtype=float).reshape(-1)[0])
        if not lo > 0:
            c.add(key, f"this distribution reaches {_fmt(lo)} K (at probability 1e-9), at or below absolute zero; "
                       "give a smaller uncertainty, or a bounded one (rectangular, or truncated-normal with lower)")
            return None
    return v, d, stated, source


def _check_name(c: Collector, name: str, key: str) -> bool:
    if isinstance(name, str) and len(name) > MAX_NAME_LENGTH:
        c.add(key.replace(name, short_key(name)), f"name is {len(name)} characters long; at most {MAX_NAME_LENGTH}")
        return False
    if not isinstance(name, str) or not _NAME_RE.match(name):
        c.add(key, f"name {name!r} must start with a letter and use only letters, digits, '_', '+' or '-'")
        return False
    return True


# ----------------------------------------------------------------------------- main entry

def load_case(path: str | Path, *, library: bool = True) -> Case:
    """Parse and validate a case file.

    Parameters
    ----------
    path : str or Path
        The TOML case file.
    library : bool
        Resolve ``{ library = "..." }`` references through the built-in data library.

    Returns
    -------
    Case
        Everything in engine units, with one :class:`~uqthermo.case.schema.Datum` per
        sourced property.

    Raises
    ------
    InputError
        Listing every problem found (file, key path, message).
    """
    p = Path(path)
    fname = str(path)
    if not p.exists():
        raise InputError([Problem(fname, "", "file not found")])
    if p.is_dir():
        raise InputError([Problem(fname, "", "is a directory, not a case file")])
    if not p.is_file():   # a pipe, socket or device (/dev/zero) would block or never end
        raise InputError([Problem(fname, "", "is not a regular file; give the path of a case file (TOML)")])
    try:
        with open(p, "rb") as fh:
            raw_bytes = fh.read(MAX_FILE_BYTES + 1)
    except OSError as e:
        raise InputError([Problem(fname, "", f"cannot read the file ({e.strerror})")]) from None
    if len(raw_bytes) > MAX_FILE_BYTES:
        size = p.stat().st_size
        raise InputError([Problem(fname, "", f"file is {size / 1e6:.1f} MB; a case file is at most 5 MB")])
    sha = hashlib.sha256(raw_bytes).hexdigest()
    try:
        text = raw_bytes.decode("utf-8")
    except UnicodeDecodeError as e:
        raise InputError([Problem(fname, "", f"not UTF-8 text (byte {e.start}); save the case file as UTF-8")]) from None
    deep = toml_nesting_problem(text)
    if deep is not None:
        raise InputError([Problem(fname, *deep)])
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        key, msg = _toml_error(text, str(e))
        raise InputError([Problem(fname, key, msg)]) from None
    except RecursionError:
        raise InputError([Problem(fname, "", "TOML nesting too deep")]) from None
    return parse_case(raw, fname, sha, library=library)


_TOML_AT = re.compile(r"\(at line (\d+), column \d+\)|\(at end of document\)")
_TOML_HEADER = re.compile(r"^\s*\[\[?\s*([^\[\]#]+?)\s*\]\]?\s*(?:#.*)?$")
_TOML_KEY = re.compile(r"^\s*((?:[A-Za-z0-9_\-]+|\"[^\"]*\"|'[^']*')(?:\s*\.\s*(?:[A-Za-z0-9_\-]+|\"[^\"]*\"|'[^']*'))*)\s*=")


def _toml_key_text(k: str) -> str:
    return ".".join(part.strip().strip("\"'") for part in re.split(r"\.(?=(?:[^\"']*[\"'][^\"']*[\"'])*[^\"']*$)", k))


def _toml_error(text: str, message: str) -> tuple[str, str]:
    """Key path (best effort) and a one-line message for a TOML syntax error.

    tomllib reports a position; the key path is the last table header above it plus
    the key written on that line, so a duplicated key reads e.g.
    ``species.CO.g.formation_enthalpy: TOML syntax error: key given twice (line 12)``.
    """
    lines = text.splitlines()
    m = _TOML_AT.search(message)
    lineno = None
    if m and m.group(1):
        lineno = int(m.group(1))
    elif m:  # at end of document: the last non-empty line
        lineno = next((i + 1 for i in range(len(lines) - 1, -1, -1) if lines[i].strip()), None)
    key = ""
    declared = re.search(r"Cannot declare \(([^)]*)\) twice", message)
    if declared:
        key = ".".join(part.strip().strip("'\"") for part in declared.group(1).split(",") if part.strip())
    elif lineno is not None and 1 <= lineno <= len(lines):
        header = ""
        for line in lines[:lineno - 1]:
            h = _TOML_HEADER.match(line)
            if h:
                header = _toml_key_text(h.group(1))
        km = _TOML_KEY.match(lines[lineno - 1])
        if lines[lineno - 1].lstrip().startswith("["):   # the header itself is broken
            key = _toml_key_text(lines[lineno - 1].strip().strip("[]").split("#")[0].strip().strip("[]"))
        elif km:
            k = _toml_key_text(km.group(1))
            key = f"{header}.{k}" if header else k
        else:
            key = header
    detail = message.replace("Cannot overwrite a value", "key given twice (keep one)")
    if declared:
        detail = _TOML_AT.sub("", f"table [{key}] declared twice (merge the two tables) " + message[declared.end():]).strip()
    detail = _TOML_AT.sub("", detail).strip()
    snippet = ""
    if lineno is not None and 1 <= lineno <= len(lines):
        detail += f" (line {lineno})"
        snippet = lines[lineno - 1].strip()[:80]
    return key, f"TOML syntax error: {detail}" + (f": {snippet}" if snippet else "")


def parse_case(raw: dict, fname: str, sha: str = "", *, library: bool = True) -> Case:
    """Validate an already-parsed TOML document (see :func:`load_case`)."""
    c = Collector(fname)
    c.unknown_keys(raw, {"title", "description", "settings", "species", "reaction", "reaction_set", "output", "correlation",
                         "candidate", "format", "author", "notes", "document"}, "")
    title = raw.get("title", "")
    if not isinstance(title, str) or not title.strip():
        c.add("title", "give the case a title (a non-empty string)")
        title = str(title) if isinstance(title, str) else ""
    description = raw.get("description", "")
    if not isinstance(description, str):
        c.add("description", "must be a string")
        description = ""
    settings = _settings(c, raw.get("settings", {}))
    data: dict[str, Datum] = {}
    from .species_reader import read_species  # local import keeps the module graph one-way

    from .temperature_windows import species_demands

    species = read_species(c, raw.get("species"), data, settings, library=library,
                           demands=species_demands(raw, settings.reference_temperature))
    from .reactions_reader import read_reactions

    reaction_node = raw.get("reaction", {})
    if "reaction_set" in raw and _is_table(reaction_node):
        reaction_node = dict(reaction_node)
        reaction_node.update(_reaction_set(c, raw["reaction_set"], Path(fname).parent, set(reaction_node)))
    if _is_table(reaction_node) and len(reaction_node) > MAX_REACTIONS:
        c.add("reaction", f"{len(reaction_node)} reactions; a case holds at most {MAX_REACTIONS}")
        reaction_node = {}
    reactions = read_reactions(c, reaction_node, species, data)
    from .outputs_reader import read_outputs

    outputs = read_outputs(c, raw.get("output"), species, reactions, data, settings)
    correlations = _correlations(c, raw.get("correlation", []), data)
    candidates = _candidates(c, raw.get("candidate", []), data)
    from .plausibility import check_case

    check_case(c, raw, species, data, settings, library)
    from .document_reader import read_document, temperature_unit

    document = read_document(c, raw.get("document"))
    if abs(settings.reference_temperature - 298.15) > 1e-6:
        for d in data.values():
            if d.library:
                c.add(f"species.{d.species}.{d.phase}.{d.id.rsplit('.', 1)[-1]}",
                      f"library values ({d.library}) are stated at 298.15 K, but settings.reference_temperature is "
                      f"{settings.reference_temperature:g} K; give the value at the reference temperature or use 298.15 K")
    c.raise_if_any()
    return Case(path=fname, sha256=sha, title=title.strip(), description=description, settings=settings,
                species=species, data=data, reactions=reactions, outputs=outputs, correlations=correlations,
                candidates=candidates, warnings=c.warnings, raw=raw, document=document,
                temperature_unit=temperature_unit(raw))


def _reaction_set(c: Collector, node: Any, folder: Path, existing: set[str]) -> dict[str, dict]:
    """``[reaction_set] file = "reactions.csv"``: a CSV of ``name,equation`` rows (path relative to
    the case file), added to the ``[reaction.NAME]`` tables — for large reaction sets."""
    import csv

    out: dict[str, dict] = {}
    if not _is_table(node) or not isinstance(node.get("file"), str):
        c.add("reaction_set", "must be a table with file = \"reactions.csv\" (columns name, equation)")
        return out
    c.unknown_keys(node, {"file", "source", "note"}, "reaction_set")
    path = (folder / node["file"]).resolve()
    key = "reaction_set.file"
    if not path.is_file():
        c.add(key, f"file {node['file']!r} not found (relative to the case file)")
        return out
    if path.stat().st_size > MAX_FILE_BYTES:
        c.add(key, f"{node['file']!r} is larger than 5 MB")
        return out
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as e:
        c.add(key, f"cannot read {node['file']!r} as UTF-8 text ({e})")
        return out
    rows = list(csv.reader(line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")))
    if not rows or [h.strip().lower() for h in rows[0][:2]] != ["name", "equation"]:
        c.add(key, f"{node['file']!r} must start with the header row: name,equation")
        return out
    source = node.get("source", f"reaction set {node['file']}")
    for line_no, row in enumerate(rows[1:], start=2):
        if len(row) < 2 or not row[0].strip() or not row[1].strip():
            c.add(f"{key}: line {line_no}", "needs a name and an equation")
            continue
        name, eq = row[0].strip(), row[1].strip()
        if name in existing or name in out:
            c.add(f"{key}: line {line_no}", f"reaction {name!r} is defined twice")
            continue
        out[name] = {"equation": eq, "source": str(source)}
    return out


def _choice(c: Collector, node: dict, s: Settings, key: str, allowed) -> None:
    """Set ``s.<key>`` from ``node[key]`` when it is one of ``allowed``; record a problem otherwise."""
    if key not in node:
        return
    m = node[key]
    if not isinstance(m, str) or m not in allowed:
        c.add(f"settings.{key}", f"unknown {key} {m!r}; use one of {', '.join(allowed)}")
    else:
        setattr(s, key, m)


def _settings(c: Collector, node: Any) -> Settings:
    s = Settings()
    if not _is_table(node):
        c.add("settings", "must be a table ([settings])")
        return s
    allowed = {"reference_temperature", "coverage_probability", "samples", "sampling", "seed", "method",
               "allow_extrapolation", "significant_digits", "max_samples", "sensitivity", "sobol_samples",
               "design_probabilities", "what_if", "plan_target", "plan_budget", "adaptive_intervals",
               "sobol_rotation"}
    c.unknown_keys(node, allowed, "settings")
    if "reference_temperature" in node:
        t = _temperature(c, node["reference_temperature"], "settings.reference_temperature")
        if t is not None:
            s.reference_temperature = t
    if "coverage_probability" in node:
        p = node["coverage_probability"]
        if isinstance(p, bool) or not isinstance(p, (int, float)) or not (0.5 <= p < 1):
            c.add("settings.coverage_probability", f"must be a number in [0.5, 1), e.g. 0.95; got {p!r}")
        else:
            s.coverage_probability = float(p)
    if "samples" in node:
        n = node["samples"]
        if n == "adaptive":
            s.samples = "adaptive"
        elif isinstance(n, bool) or not isinstance(n, int):
            c.add("settings.samples", f"must be a whole number or \"adaptive\", got {n!r}")
        elif n < 100:
            c.add("settings.samples", f"{n} samples are too few for a coverage interval; use at least 10000 (or \"adaptive\")")
        elif n > MAX_SAMPLES_LIMIT:
            c.add("settings.samples", f"{n:.3g} samples exceed the limit of {MAX_SAMPLES_LIMIT:.0e}; use \"adaptive\" or --engine dask")
        else:
            s.samples = n
    _choice(c, node, s, "sampling", SAMPLING_METHODS)
    if "seed" in node:
        seed = node["seed"]
        if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed <= MAX_SEED:
            c.add("settings.seed", f"must be {SEED_RANGE_TEXT}, got {short_key(repr(seed), 60)}")
        else:
            s.seed = seed
    _choice(c, node, s, "method", METHODS)
    for key in ("allow_extrapolation", "what_if", "sobol_rotation"):
        if key in node:
            if not isinstance(node[key], bool):
                c.add(f"settings.{key}", "must be true or false")
            else:
                setattr(s, key, node[key])
    for key, lo, hi in (("significant_digits", 1, 4), ("max_samples", 10_000, MAX_SAMPLES_LIMIT),
                        ("sobol_samples", 64, 1 << 20)):
        if key in node:
            v = node[key]
            if isinstance(v, bool) or not isinstance(v, int) or not (lo <= v <= hi):
                c.add(f"settings.{key}", f"must be a whole number from {lo} to {hi}, got {v!r}")
            else:
                setattr(s, key, v)
    _choice(c, node, s, "sensitivity", ("auto", "linear", "sobol", "none"))
    _choice(c, node, s, "adaptive_intervals", ("both", "symmetric"))
    if "plan_target" in node:
        t = node["plan_target"]
        if not (isinstance(t, str) or (isinstance(t, list) and t and all(isinstance(x, str) for x in t))):
            c.add("settings.plan_target", "must be text such as \"U95 <= 2 kJ/mol\", or a list of per-output "
                                          "targets such as [\"dH: U95 <= 2 kJ/mol\", \"duty: U95 <= 50 kW\"]")
        else:
            s.plan_target = node["plan_target"]
    if "plan_budget" in node:
        b = node["plan_budget"]
        if isinstance(b, bool) or not isinstance(b, (int, float)) or not math.isfinite(b) or b < 0:
            c.add("settings.plan_budget", "must be a non-negative number")
        else:
            s.plan_budget = float(b)
    cap = adaptive_cap_problem(s)
    if cap is not None and "max_samples" in node:
        c.add("settings.max_samples", cap)
    if "design_probabilities" in node:
        v = node["design_probabilities"]
        if not isinstance(v, list) or not v or not all(isinstance(x, (int, float)) and not isinstance(x, bool)
                                                       and 0.5 < x < 1 for x in v):
            c.add("settings.design_probabilities", "must be a list of probabilities between 0.5 and 1, e.g. [0.95, 0.99]")
        else:
            s.design_probabilities = [float(x) for x in v]
    return s


def adaptive_cap_problem(s: Settings) -> str | None:
    """Why ``max_samples`` cannot work with adaptive Monte Carlo (None if it can).

    The JCGM 101 §7.9 procedure runs in whole batches (:func:`uqthermo.uq.montecarlo.adaptive_batch_size`)
    and needs at least two to test stability; a cap below two batches could only be honoured
    by stopping before the first test (or passed by finishing the batch), so it is refused.
    """
    if s.samples != "adaptive":
        return None
    from ..uq.montecarlo import adaptive_batch_size

    batch = adaptive_batch_size(s.coverage_probability, s.sampling)
    if s.max_samples >= 2 * batch:
        return None
    return (f"{s.max_samples} trials are fewer than two adaptive batches: with {s.sampling} sampling and coverage "
            f"probability {s.coverage_probability:g} a batch has {batch} trials (JCGM 101 §7.9) and at least two are "
            f"needed; give max_samples of at least {2 * batch}")


def _correlations(c: Collector, node: Any, data: dict[str, Datum]) -> list[tuple[str, str, float]]:
    out: list[tuple[str, str, float]] = []
    if not isinstance(node, list):
        c.add("correlation", "must be an array of tables ([[correlation]])")
        return out
    seen: set[frozenset] = set()
    for i, item in enumerate(node):
        key = f"correlation[{i}]"
        if not _is_table(item):
            c.add(key, "must be a table with 'between' and 'coefficient'")
            continue
        c.unknown_keys(item, {"between", "coefficient", "rank_coefficient", "source", "note"}, key)
        between = item.get("between")
        rank = "rank_coefficient" in item
        if rank == ("coefficient" in item):
            c.add(key, "give either coefficient (Pearson correlation, as in the GUM) or rank_coefficient (Spearman)")
            continue
        r = item.get("rank_coefficient" if rank else "coefficient")
        ckey = f"{key}.{'rank_coefficient' if rank else 'coefficient'}"
        if not (isinstance(between, list) and len(between) == 2 and all(isinstance(b, str) for b in between)):
            c.add(f"{key}.between", "must list exactly two datum ids, e.g. [\"CO2.g.formation_enthalpy\", \"H2O.g.formation_enthalpy\"]")
            continue
        ok = True
        for b in between:
            if b not in data:
                close = difflib.get_close_matches(b, list(data), n=1)
                c.add(f"{key}.between", f"unknown datum {b!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
                ok = False
            elif not data[b].uncertain:
                c.add(f"{key}.between", f"datum {b!r} is exact; a correlation needs two uncertain data")
                ok = False
            elif len(data[b].distributions) != 1:
                c.add(f"{key}.between", f"datum {b!r} has {len(data[b].distributions)} coefficients; correlate whole curves through relative_u, or give a covariance inside the datum")
                ok = False
        if between[0] == between[1]:
            c.add(f"{key}.between", "a datum cannot be correlated with itself")
            ok = False
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r):
            c.add(ckey, f"must be a number in [-1, 1], got {r!r}")
            ok = False
        elif abs(r) > 1:
            c.add(ckey, f"correlation coefficient {r} lies outside [-1, 1]")
            ok = False
        pair = frozenset(between) if isinstance(between, list) and all(isinstance(b, str) for b in between) else None
        if ok and pair in seen:
            c.add(f"{key}.between", "this pair is correlated twice")
            ok = False
        if ok and rank:
            # Spearman ρ_S → the Gaussian copula's normal-score r = 2 sin(π ρ_S/6) → the Pearson correlation
            # of these two marginals (what the linear method and the input table use)
            from ..uq.correlation import normal_score_from_spearman, pearson_from_normal_score

            r = pearson_from_normal_score(data[between[0]].distributions[0], data[between[1]].distributions[0],
                                          normal_score_from_spearman(float(r)))
        if ok:
            seen.add(pair)
            out.append((between[0], between[1], float(r)))
    return out


def _candidates(c: Collector, node: Any, data: dict[str, Datum]) -> list[Candidate]:
    out: list[Candidate] = []
    if not isinstance(node, list):
        c.add("candidate", "must be an array of tables ([[candidate]])")
        return out
    for i, item in enumerate(node):
        key = f"candidate[{i}]"
        if not _is_table(item):
            c.add(key, "must be a table with datum, u (or factor) and cost")
            continue
        c.unknown_keys(item, {"datum", "u", "factor", "cost", "lead_time", "note", "name"}, key)
        d = item.get("datum")
        if not isinstance(d, str) or d not in data:
            close = difflib.get_close_matches(str(d), list(data), n=1)
            c.add(f"{key}.datum", f"unknown datum {d!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
            continue
        cost = item.get("cost")
        if isinstance(cost, bool) or not isinstance(cost, (int, float)) or not math.isfinite(cost) or cost < 0:
            c.add(f"{key}.cost", f"must be a non-negative number, got {cost!r}")
            continue
        u = factor = None
        datum = data[d]
        if "u" in item and "factor" in item:
            c.add(key, "give either u (achievable standard uncertainty) or factor, not both")
            continue
        if "u" in item:
            if datum.kind == "scale" or len(datum.distributions) != 1:
                c.add(f"{key}.u", "for a heat-capacity curve with several coefficients or a relative_u, give 'factor' "
                                  "(e.g. 0.5 halves its uncertainty)")
                continue
            dim = {"kJ/mol": "molar_energy", "J/(mol*K)": "molar_entropy", "K": "temperature", "mol": "amount",
                   "mol/s": "amount_rate", "1": "dimensionless", "kW": "power", "kJ": "energy",
                   "kJ/kg": "specific_energy", "kPa": "pressure"}[datum.unit]
            val = _quantity(c, item["u"], f"{key}.u", dim, difference=True)
            if val is None:
                continue
            if not val > 0:
                c.add(f"{key}.u", "must be positive")
                continue
            u = val * datum.to_report
        elif "factor" in item:
            f = item["factor"]
            if isinstance(f, bool) or not isinstance(f, (int, float)) or not (0 <= f < 1):
                c.add(f"{key}.factor", f"must be a number in [0, 1), got {f!r}")
                continue
            factor = float(f)
        else:
            c.add(key, "give u (achievable standard uncertainty) or factor")
            continue
        lead = item.get("lead_time", "")
        out.append(Candidate(datum=d, u=u, factor=factor, cost=float(cost), lead_time=str(lead),
                             note=str(item.get("note", ""))))
    return out


def report_unit(dimension: str) -> tuple[str, float]:
    """Report unit and the factor engine → report for a dimension."""
    return _REPORT[dimension]


def make_datum(id: str, quantity: str, dimension: str, parsed: tuple[float, Any, str, str], *, species: str = "",
               phase: str = "", library: str = "") -> Datum:
    """A single-variable datum from :func:`read_uncertain`'s result."""
    v, d, stated, source = parsed
    unit, f = report_unit(dimension)
    return Datum(id=id, quantity=quantity, unit=unit, to_report=f, kind="scalar", distributions=[d],
                 variable_names=[id], correlation=None, stated=stated, source=source, species=species,
                 phase=phase, library=library, nominal=v)


def register(c: Collector, data: dict[str, Datum], datum: Datum, key: str) -> None:
    if datum.id in data:
        c.add(key, f"datum {datum.id!r} is defined twice")
        return
    data[datum.id] = datum


def matrix(c: Collector, node: Any, n: int, key: str) -> np.ndarray | None:
    """Read an n×n numeric matrix (list of lists)."""
    if not (isinstance(node, list) and len(node) == n and all(isinstance(r, list) and len(r) == n for r in node)):
        c.add(key, f"must be a {n}×{n} matrix (a list of {n} lists of {n} numbers)")
        return None
    try:
        m = np.array(node, dtype=float)
    except (TypeError, ValueError):
        c.add(key, "matrix entries must be numbers")
        return None
    if not np.all(np.isfinite(m)):
        c.add(key, "matrix entries must be finite numbers")
        return None
    return m
