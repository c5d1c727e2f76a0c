"""Read a TOML case file into a :class:`~uqthermo.case.schema.Case`, collecting every problem.

The loader never stops at the first problem: it walks the whole file, records one
:class:`~uqthermo.errors.Problem` per defect (file, key path, what is wrong and how to
fix it), and raises a single :class:`~uqthermo.errors.InputError` at the end, so
``uqthermo check`` can list them all at once. Case files are data: nothing in them is
ever evaluated as code.
"""

from __future__ import annotations

import hashlib
import re
import tomllib
from pathlib import Path
from typing import Any

from ..errors import InputError, Problem
from .limits import MAX_REACTIONS, toml_nesting_problem
from .readers.candidates import read_candidates
from .readers.correlations import read_correlations
from .readers.document import read_document, temperature_unit
from .readers.fields import Collector, is_table
from .readers.outputs import read_outputs
from .readers.plausibility import check_case
from .readers.reactions import read_reactions
from .readers.settings import read_settings
from .readers.species import library_data_warnings, read_species
from .readers.temperature_windows import species_demands
from .schema import Case, Datum

__all__ = ["load_case", "parse_case"]

#: largest case file (and reaction-set CSV) read
MAX_FILE_BYTES = 5 * 1024 * 1024


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
    settings = read_settings(c, raw.get("settings", {}))
    data: dict[str, Datum] = {}
    species = read_species(c, raw.get("species"), data, settings, library=library,
                           demands=species_demands(raw, settings.reference_temperature))
    reaction_node = raw.get("reaction", {})
    if "reaction_set" in raw and is_table(reaction_node):
        reaction_node = dict(reaction_node)
        reaction_node.update(_reaction_set(c, raw["reaction_set"], Path(fname).parent, set(reaction_node)))
    if is_table(reaction_node) and len(reaction_node) > MAX_REACTIONS:
        c.add("reaction", f"{len(reaction_node)} reactions; a case holds at most {MAX_REACTIONS}")
        reaction_node = {}
    reactions = read_reactions(c, reaction_node, species, data)
    outputs = read_outputs(c, raw.get("output"), species, reactions, data, settings)
    correlations = read_correlations(c, raw.get("correlation", []), data)
    candidates = read_candidates(c, raw.get("candidate", []), data)
    check_case(c, raw, species, data, settings, library)
    document = read_document(c, raw.get("document"))
    if abs(settings.reference_temperature - 298.15) > 1e-6:
        for d in data.values():
            if d.library:
                c.add(f"species.{d.species}.{d.phase}.{d.id.rsplit('.', 1)[-1]}",
                      f"library values ({d.library}) are stated at 298.15 K, but settings.reference_temperature is "
                      f"{settings.reference_temperature:g} K; give the value at the reference temperature or use 298.15 K")
    c.raise_if_any()
    case = Case(path=fname, sha256=sha, title=title.strip(), description=description, settings=settings,
                species=species, data=data, reactions=reactions, outputs=outputs, correlations=correlations,
                candidates=candidates, warnings=c.warnings, raw=raw, document=document,
                temperature_unit=temperature_unit(raw))
    # library notes only for the data the outputs use (a standard entropy no output needs says nothing)
    from .model.layout import used_data

    case.warnings.extend(library_data_warnings(data, used_data(case)))
    from .readers.boiling_points import liquid_boiling_warnings

    case.warnings.extend(liquid_boiling_warnings(case, library))
    return case


def _reaction_set(c: Collector, node: Any, folder: Path, existing: set[str]) -> dict[str, dict]:
    """``[reaction_set] file = "reactions.csv"``: a CSV of ``name,equation`` rows (path relative to
    the case file), added to the ``[reaction.NAME]`` tables — for large reaction sets."""
    import csv

    out: dict[str, dict] = {}
    if not is_table(node) or not isinstance(node.get("file"), str):
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
