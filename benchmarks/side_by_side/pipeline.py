"""The tool as a user runs it (benchmark 6): `uqthermo run CASE --out DIR --force --method monte-carlo
--no-report --quiet --samples N --sampling S --seed SEED`, timed after the imports and after one
warm-up run of 2000 trials (which pays the lazy imports and first-use set-ups once, so that the
fixed cost that the marginal cost per trial subtracts is less noisy).

    python pipeline.py N SEED CASE.toml SAMPLING OUT     -> one JSON line (seconds, results, peak memory)
"""
import json
import resource
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
from uqthermo import cli  # noqa: E402

n, seed, case, sampling, out = sys.argv[1], sys.argv[2], sys.argv[3], sys.argv[4], sys.argv[5]
argv = ["run", case, "--out", out, "--force", "--method", "monte-carlo", "--no-report", "--quiet",
        "--samples", n, "--sampling", sampling, "--seed", seed]
warm = argv[:]
warm[warm.index("--samples") + 1] = "2000"
warm[warm.index("--out") + 1] = out + "-warm-up"
cli.main(warm)
t0 = time.process_time()
rc = cli.main(argv)
seconds = time.process_time() - t0
res = json.loads((Path(out) / "results.json").read_text(encoding="utf-8"))
pts = [p for o in res["outputs"] for p in o["points"]]
mc = [p["monte_carlo"] for p in pts]
print(json.dumps({"seconds": seconds, "rc": rc, "mean": [m["mean"] for m in mc],
                  "u": [m["standard_uncertainty"] for m in mc],
                  "low": [m["coverage_interval"][0] for m in mc], "high": [m["coverage_interval"][1] for m in mc],
                  "peak_rss_MiB": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
