"""The ``uqthermo`` command line.

Commands: ``run`` (the main job), ``check``, ``plan``, ``fit``, ``data``, ``report``.
Exit codes: 0 success; 2 bad input (one line per problem on stderr: file, key path,
message; nothing written); 1 any other failure; 130 interrupted (nothing half-written).

Signals: SIGINT (Ctrl-C), SIGTERM and SIGHUP stop a command the same way — clean-up runs
(temporary folders removed, the output-folder lock released) and the exit code is 130.
A repeated signal during that clean-up is ignored, so it can neither cut the clean-up
short nor change the exit code; a signal during the few renames that publish an output
folder acts right after them (:mod:`uqthermo.pipeline.publish`). Everything echoed to the
terminal — error lines included — passes through :mod:`uqthermo.text_safety`. Warnings
raised by libraries (numpy, matplotlib, …) are printed as one ``uqthermo: warning:`` line
each, without their source paths.
"""

from __future__ import annotations

import argparse
import os
import signal
import sys

from . import __version__
from .errors import InputError, Interrupted, UqthermoError

EXIT_OK, EXIT_FAIL, EXIT_INPUT, EXIT_INTERRUPT = 0, 1, 2, 130
#: same as uqthermo.case.readers.settings.MAX_SAMPLES_LIMIT (not imported: argument parsing stays free of pint)
MAX_SAMPLES_LIMIT = 1_000_000_000
#: same as uqthermo.case.limits.MAX_SEED: one range for --seed and settings.seed
MAX_SEED = 2**63 - 1
SEED_RANGE_TEXT = "a whole number from 0 to 2^63 - 1 (9223372036854775807)"

#: the signals that stop a command (exit 130)
STOP_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))
_SIGNALS: dict = {"first": None}

#: kept for code that imported the old name
_Terminated = Interrupted


def _on_signal(signum, frame):  # pragma: no cover - exercised through subprocess tests
    from .pipeline.interrupts import defer_signal

    if defer_signal(signum):        # inside the renames that publish a folder: acts right after them
        return
    if _SIGNALS["first"] is not None:
        return                      # a repeated signal: clean-up is already running, exit code stays 130
    _SIGNALS["first"] = signum
    raise Interrupted(signum)


def _install_signals() -> dict:
    old = {}
    for sig in STOP_SIGNALS:
        try:
            old[sig] = signal.signal(sig, _on_signal)
        except (ValueError, OSError):   # not the main thread
            return {}
    return old


def _show_warning(message, category, filename, lineno, file=None, line=None):
    """Library warnings as one line of the tool's own (no source path, control characters escaped)."""
    from .text_safety import terminal_text

    text = f"uqthermo: warning: {terminal_text(str(message), limit=400)}"
    if text not in _SHOWN:
        _SHOWN.add(text)
        print(text, file=sys.stderr)


_SHOWN: set = set()


def _samples_arg(text: str):
    if text == "adaptive":
        return "adaptive"
    try:
        n = int(float(text)) if "e" in text.lower() else int(text)
    except (ValueError, OverflowError):
        raise argparse.ArgumentTypeError(f"--samples must be a whole number or 'adaptive', got {text!r}") from None
    if n < 100:
        raise argparse.ArgumentTypeError("--samples must be at least 100")
    if n > MAX_SAMPLES_LIMIT:
        raise argparse.ArgumentTypeError(f"--samples {n:.3g} exceeds the limit of {MAX_SAMPLES_LIMIT:.0e}; "
                                         "use 'adaptive' or --engine dask")
    return n


def _seed_arg(text: str) -> int:
    try:
        s = int(text)
    except ValueError:
        s = None
    if s is None or not 0 <= s <= MAX_SEED:
        from .text_safety import terminal_text

        raise argparse.ArgumentTypeError(f"--seed must be {SEED_RANGE_TEXT}, got {terminal_text(text, limit=60)}")
    return s


FORCE_HELP = ("replace an earlier uqthermo output in --out: only the files its manifest lists are replaced, "
              "other files stay")


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="uqthermo",
        description="Reaction enthalpy at operating temperature with a defensible uncertainty: Kirchhoff's law "
                    "with phase changes, GUM linear propagation and JCGM 101 Monte Carlo, driver ranking, "
                    "data-purchase planning and report sections.",
    )
    p.add_argument("--version", action="version", version=f"uqthermo {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    r = sub.add_parser("run", help="run a case: results.json, report.html/md, figures and tables",
                       description="Run a case file and write results.json, report.html, report.md, figures (PNG, SVG) "
                                   "and CSV tables into --out.")
    r.add_argument("case", help="case file (TOML)")
    r.add_argument("--out", required=True, help="output folder (must not exist or be empty, unless --force); locked "
                                                 "while the command runs")
    r.add_argument("--samples", type=_samples_arg, help="Monte Carlo trials, or 'adaptive' (JCGM 101 7.9)")
    r.add_argument("--seed", type=_seed_arg, help="random seed (recorded in results.json)")
    r.add_argument("--method", choices=["linear", "monte-carlo", "both"], help="propagation method (default: both)")
    r.add_argument("--sampling", choices=["random", "latin-hypercube", "sobol"], help="sampling scheme")
    r.add_argument("--engine", choices=["local", "dask"], default="local", help="where Monte Carlo runs")
    r.add_argument("--scheduler", help="Dask scheduler address (with --engine dask; default: a local cluster)")
    r.add_argument("--force", action="store_true", help=FORCE_HELP)
    r.add_argument("--no-report", action="store_true", help="write results.json, run-log.json and the CSV tables only")
    r.add_argument("--quiet", action="store_true", help="no progress bar or summary table")

    c = sub.add_parser("check", help="validate case files without running them",
                       description="Validate one or more case files and list every problem found.")
    c.add_argument("cases", nargs="+", help="case file(s)")

    pl = sub.add_parser("plan", help="cheapest data purchases that meet an uncertainty target",
                        description="Find the cheapest set of candidate measurements ([[candidate]] in the case) that "
                                    "meets a target on the expanded uncertainty, and the cost–uncertainty Pareto front.")
    pl.add_argument("case", help="case file (TOML) with [[candidate]] entries")
    pl.add_argument("--target", action="append",
                    help="e.g. \"U95 <= 2 kJ/mol\" (U95: expanded uncertainty at 95 %%; also u, halfwidth); "
                         "\"U95 <= 5 %%\" relative to the estimate; \"NAME: U95 <= 2 kJ/mol\" for one output "
                         "(repeat --target for several outputs)")
    pl.add_argument("--budget", type=float, help="spend at most this much; with no target, minimise the worst "
                                                 "expanded uncertainty (outputs of one unit, or --relative)")
    pl.add_argument("--relative", action="store_true",
                    help="with --budget and no target: compare U as %% of each point's estimate")
    pl.add_argument("--output", dest="output_name", help="plan for this output only (default: all outputs)")
    pl.add_argument("--out", help="folder for plan.json, plan.csv and the front figure")
    pl.add_argument("--force", action="store_true", help=FORCE_HELP)

    f = sub.add_parser("fit", help="fit a heat-capacity curve with coefficient covariance to measured points",
                       description="Fit Cp(T) to measured (T, Cp[, u]) points by weighted least squares and print the "
                                   "heat_capacity table (with coefficient uncertainties and correlation) for a case.")
    f.add_argument("data", help="CSV with columns T, Cp[, u]; units in the header, e.g. 'T [K],Cp [J/(mol*K)],u [J/(mol*K)]'")
    f.add_argument("--model", choices=["polynomial", "shomate"], default="polynomial")
    f.add_argument("--terms", default="auto", help="polynomial terms, e.g. a,b,c (default: choose by BIC)")
    f.add_argument("--species", default="X", help="species name for the printed table")
    f.add_argument("--phase", default="g", help="phase symbol for the printed table")
    f.add_argument("--range", nargs=2, metavar=("T_LO", "T_HI"), help="temperature range the curve will be used over")
    f.add_argument("--out", help="write the TOML snippet and fit report here (a folder)")
    f.add_argument("--force", action="store_true", help=FORCE_HELP)

    d = sub.add_parser("data", help="search the built-in data library, or write a starter case from an equation",
                       description="List species matching SEARCH (formula, name or CAS number) with every source's "
                                   "values side by side and each heat-capacity curve's range (which cover the --T "
                                   "window, which one library = \"auto\" selects); or, with --case, write a starter "
                                   "case file for a reaction with every datum from the library.")
    d.add_argument("search", nargs="?", default="", help="formula, name or CAS number")
    d.add_argument("--limit", type=int, default=20)
    d.add_argument("--T", help="temperature or window, e.g. \"150 degC\" or \"298.15K..700K\"")
    d.add_argument("--case", metavar="EQUATION",
                   help="write a starter case for this reaction, e.g. \"C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)\" (needs --T)")
    d.add_argument("--out", help="with --case: write the case file here (default: print it)")
    d.add_argument("--force", action="store_true", help="with --case --out: replace an existing file")

    rp = sub.add_parser("report", help="re-render a report from results.json",
                        description="Render report.html, report.md, figures and tables from an existing results.json.")
    rp.add_argument("results", help="results.json written by 'uqthermo run'")
    rp.add_argument("--out", required=True, help="output folder")
    rp.add_argument("--force", action="store_true", help=FORCE_HELP)
    return p


def _print_problems(err: InputError) -> None:
    from .text_safety import terminal_text

    for prob in err.problems:
        print(terminal_text(str(prob)), file=sys.stderr)


def main(argv: list[str] | None = None, *, restore_signals: bool = True) -> int:
    """Run one command; returns the exit code.

    ``restore_signals=False`` (the program's entry point) leaves the tool's signal handlers
    in place until the process ends, so that a late signal cannot end it with 143.
    """
    import warnings

    from .pipeline import publish

    _SIGNALS["first"] = None
    _SHOWN.clear()
    publish.published_paths.clear()
    old = _install_signals()
    with warnings.catch_warnings():
        warnings.showwarning = _show_warning
        try:
            return _main(argv)
        finally:
            if restore_signals:
                for sig, handler in old.items():
                    signal.signal(sig, handler)


def _interrupted_text() -> str:
    from .pipeline.publish import published_paths
    from .text_safety import terminal_text

    if published_paths:
        return (f"uqthermo: interrupted after {terminal_text(published_paths[-1])} was written completely; "
                "anything else was removed")
    return "uqthermo: interrupted; nothing was written (any partial output was removed)"


def _main(argv: list[str] | None) -> int:
    from .text_safety import terminal_text

    try:   # signals during start-up (argument parsing imports) are handled like later ones
        parser = build_parser()
        try:
            args = parser.parse_args(argv)
        except SystemExit as e:  # argparse: --help (0) or usage error (2)
            return int(e.code or 0)
        if not args.command:
            parser.print_help()
            return EXIT_INPUT
        import importlib

        command = importlib.import_module(f"{__package__}.commands.{args.command}")
        return command.execute(args)
    except InputError as e:
        _print_problems(e)
        return EXIT_INPUT
    except UqthermoError as e:
        print(f"uqthermo: error: {terminal_text(e.message)}", file=sys.stderr)
        return EXIT_FAIL
    except (KeyboardInterrupt, Interrupted):
        if _SIGNALS["first"] is None:
            _SIGNALS["first"] = signal.SIGINT
        print(_interrupted_text(), file=sys.stderr)
        return EXIT_INTERRUPT
    except MemoryError:
        print("uqthermo: error: out of memory (no estimate of what was too big was available); use fewer output "
              "points, outputs or samples, or 'adaptive'", file=sys.stderr)
        return EXIT_FAIL
    except Exception as e:  # noqa: BLE001 - last line of defence: never a traceback for users
        if os.environ.get("UQTHERMO_DEBUG"):
            raise
        print(terminal_text(f"uqthermo: internal error: {type(e).__name__}: {e} (set UQTHERMO_DEBUG=1 for a traceback; "
                            "please report it)"), file=sys.stderr)
        return EXIT_FAIL


def entry() -> None:  # pragma: no cover - the installed ``uqthermo`` program
    """The program: :func:`main`, then exit with its code (130 whenever a signal stopped it)."""
    try:
        code = main(restore_signals=False)
    except Interrupted:             # a signal after the command returned
        code = EXIT_INTERRUPT
    for sig in STOP_SIGNALS:        # from here on a signal cannot change the outcome
        try:
            signal.signal(sig, signal.SIG_IGN)
        except (ValueError, OSError):
            pass
    if _SIGNALS["first"] is not None:
        code = EXIT_INTERRUPT
    sys.exit(code)


if __name__ == "__main__":  # pragma: no cover
    entry()
