"""``uqthermo run CASE``: propagate a case's uncertainties and publish results.json, the run log and the report."""

from __future__ import annotations

import sys

from ..pipeline.job import run_case
from ..pipeline.output_files import write_outputs
from ..pipeline.publish import OutputFolder
from .terminal import make_console, print_publish_notes, print_summary


def execute(args) -> int:
    """Run the case ``args.case`` into ``args.out``; returns the exit code."""
    # the output folder is checked and locked before any computation, released at the end
    folder = OutputFolder(args.out, force=args.force, protected=(args.case,), command="run").open()
    try:
        return _run_into(args, folder)
    finally:
        folder.close()


def _run_into(args, folder: OutputFolder) -> int:
    from ..text_safety import markup

    out = markup(folder.given)
    quiet = args.quiet or not sys.stderr.isatty()
    progress = None
    bar = None
    if not args.quiet:
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

        bar = Progress(TextColumn("Monte Carlo"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                       console=make_console(stderr=True), transient=True, disable=quiet)
        task = bar.add_task("mc", total=None)

        def progress(done: int, total: int | None) -> None:
            bar.update(task, completed=done, total=total)

    if bar is not None:
        bar.start()
    try:
        result = run_case(args.case, samples=args.samples, seed=args.seed, method=args.method, sampling=args.sampling,
                          engine=args.engine, scheduler=args.scheduler, progress=progress)
    finally:
        if bar is not None:
            bar.stop()
    write_outputs(result, folder, report=not args.no_report)
    print_publish_notes(folder)
    if not args.quiet:
        print_summary(result.results)
        from ..report.docx import INSTALL_HINT, available

        docx = available()
        make_console().print(f"wrote {out}/results.json, {out}/run-log.json" + (
            f" and {out}/tables/" if args.no_report else f", {out}/report.html, {out}/report.md, "
            + (f"{out}/report.docx, " if docx else "") + "figures/ and tables/"))
        if not args.no_report and not docx:
            make_console().print(f"report.docx not written: python-docx is not installed; for the Word file: {INSTALL_HINT}")
    return 0
