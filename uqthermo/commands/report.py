"""``uqthermo report RESULTS``: render the report again from a results.json (checked before it is read)."""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import InputError, Problem
from ..pipeline.output_files import RUN_LOG, read_run_log, with_run_log, write_json_atomic
from ..pipeline.publish import OutputFolder
from ..pipeline.results_check import results_shape_problems, results_value_problems
from .terminal import make_console, print_publish_notes


def execute(args) -> int:
    """Render ``args.results`` into ``args.out``; returns the exit code."""
    path = Path(args.results)
    if path.exists() and not path.is_file():   # a folder, pipe or device
        raise InputError([Problem(str(path), "", "is not a regular file; give the results.json written by 'uqthermo run'")])
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError([Problem(str(path), "", "file not found")]) from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as e:
        raise InputError([Problem(str(path), "", f"not a readable results.json ({e})")]) from None
    except RecursionError:
        raise InputError([Problem(str(path), "", "not a readable results.json (nested too deep)")]) from None
    if not isinstance(doc, dict) or doc.get("format") != "uqthermo.results/1":
        raise InputError([Problem(str(path), "format", "not a uqthermo results file (format uqthermo.results/1)")])
    problems = results_shape_problems(doc, str(path))
    if not problems:
        problems = results_value_problems(doc, str(path))
    if problems:
        raise InputError(problems)
    log = read_run_log(path.with_name(RUN_LOG))
    from ..report import write_report
    from ..text_safety import markup

    def build(tmp: Path):
        write_json_atomic(tmp / "results.json", doc)
        if log:
            write_json_atomic(tmp / RUN_LOG, log)
        try:
            return write_report(with_run_log(doc, log), tmp)
        except (TypeError, ValueError, KeyError, IndexError, AttributeError, OverflowError, ZeroDivisionError) as e:
            # the file passed the checks above but still holds something the report cannot draw: it is the
            # input that is wrong (a hand-edited value), not the run
            raise InputError([Problem(str(path), "", f"cannot render this results.json ({type(e).__name__}: {e}); was "
                                                     "it edited by hand? (if it was written by uqthermo unchanged, "
                                                     "please report it)")]) from None

    with OutputFolder(args.out, force=args.force, protected=(args.results,), command="report") as folder:
        folder.publish(build)
    print_publish_notes(folder)
    from ..report.docx import INSTALL_HINT, available

    if available():
        make_console().print(f"wrote {markup(args.out)}/report.html, {markup(args.out)}/report.md and {markup(args.out)}/report.docx")
    else:
        make_console().print(f"wrote {markup(args.out)}/report.html and {markup(args.out)}/report.md "
                         f"(report.docx needs python-docx: {INSTALL_HINT})")
    return 0
