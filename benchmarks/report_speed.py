"""What the report costs next to the computation, measured side by side (not part of the tests).

    python benchmarks/report_speed.py             # both demos, 200 000 trials as the cases ask
    python benchmarks/report_speed.py --quick     # 20 000 trials

For each demo case in ``inputs/`` this times, in fresh subprocesses and alternating so that
the machine's load hits both alike:

* ``uqthermo run CASE --out DIR --no-report`` (the computation: results.json and the CSV tables);
* ``uqthermo run CASE --out DIR`` (the same plus report.html, report.md, report.docx and the figures);

best of ``--repeats`` each. The report's cost is the difference; the target (issue #18) is at
most half the computation's time. It also times the figures alone in this process: drawn one
after the other and by the forked workers of ``uqthermo.report.figures.parallel`` (PNG and SVG of each
figure from one drawing either way), with the CPU time they take, so that the effect of the
workers can be told from the machine's load. The results are printed and appended to
``benchmarks/RESULTS.md`` (section "Report speed") unless ``--no-write``.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import json
import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

DEMOS = {"methanation": ROOT / "inputs" / "methanation_reactor.toml",
         "epoxide": ROOT / "inputs" / "epoxide_hydration_batch.toml"}


def _run(case: Path, out: Path, samples: int | None, report: bool) -> float:
    cmd = [sys.executable, "-m", "uqthermo.cli", "run", str(case), "--out", str(out), "--force", "--quiet"]
    if samples:
        cmd += ["--samples", str(samples)]
    if not report:
        cmd.append("--no-report")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    t = time.perf_counter()
    subprocess.run(cmd, check=True, cwd=str(ROOT), env=env, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t


def _figures(results: dict) -> dict[str, float]:
    """Wall and CPU seconds of drawing every figure, serially and with the forked workers."""
    from uqthermo.report.figures.assembly import render_figures
    from uqthermo.report.figures.parallel import workers

    render_figures(results, processes=1)          # warm the font caches
    out = {}
    for label, procs in (("serial", 1), ("workers", None)):
        t, c = time.perf_counter(), time.process_time()
        figs = render_figures(results, processes=procs)
        out[label] = time.perf_counter() - t
        out[label + "_cpu_parent"] = time.process_time() - c
    out["n_figures"] = len(figs)
    out["n_workers"] = workers(len(figs))
    return out


def load_average() -> str:
    try:
        return " / ".join(f"{x:.1f}" for x in os.getloadavg())
    except OSError:
        return "n/a"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="20 000 trials instead of the cases' 200 000")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--no-write", action="store_true")
    args = ap.parse_args(argv)
    samples = 20000 if args.quick else None
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for name, case in DEMOS.items():
            bare, full = [], []
            for r in range(args.repeats):
                bare.append(_run(case, Path(tmp) / f"{name}-bare", samples, report=False))
                full.append(_run(case, Path(tmp) / f"{name}-full", samples, report=True))
            res = json.loads((Path(tmp) / f"{name}-full" / "results.json").read_text(encoding="utf-8"))
            figs = _figures(res)
            b, f = min(bare), min(full)
            rows.append({"case": name, "trials": res["run"]["samples"], "no_report_s": b, "run_s": f,
                         "report_s": f - b, "ratio": (f - b) / b, **figs})
            print(json.dumps(rows[-1]), flush=True)
    lines = ["", "## Report speed (benchmarks/report_speed.py)", "",
             f"{_dt.date.today().isoformat()}, {platform.platform()}, {os.cpu_count()} CPUs, load average "
             f"{load_average()} (1/5/15 min) at the end; best of {args.repeats} runs each, alternating.", "",
             "| case | trials | run --no-report / s | run / s | report / s | report ÷ computation | figures | "
             "figures serial / s | figures, workers / s |",
             "|---|---|---|---|---|---|---|---|---|"]
    for r in rows:
        lines.append(f"| {r['case']} | {r['trials']} | {r['no_report_s']:.1f} | {r['run_s']:.1f} | {r['report_s']:.1f} | "
                     f"{r['ratio']:.2f} | {r['n_figures']} | {r['serial']:.1f} | {r['workers']:.1f} "
                     f"({r['n_workers']} processes) |")
    lines += ["", "Target: the report adds at most half the computation's time (ratio ≤ 0.5). `run --no-report` "
              "includes the interpreter start and the imports; the figures columns are measured in one process "
              "after a warm-up drawing."]
    text = "\n".join(lines) + "\n"
    print(text)
    if not args.no_write:
        with open(ROOT / "benchmarks" / "RESULTS.md", "a", encoding="utf-8") as fh:
            fh.write(text)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
