"""Hostile sizes, resource messages and the smaller reliability items of issue 15.

* item 8: cost proportional to what the outputs use (4000 species no output uses);
  the case-file limits themselves are bad-input cases in tests/test_bad_inputs.py ("sizes");
* item 9: out of memory says where and on what sizes; a service at --scheduler that is
  not a Dask scheduler is named as such (real TCP servers on localhost, bounded in time);
* item 10: ``plan --budget inf``;
* item 11: results.json holds nothing volatile; the report reads the date from run-log.json;
* item 12: the adaptive cap max_samples is never passed (whole batches) and a cap below
  two batches is refused;
* item 14: plan errors name the case file; library warnings become one line of the tool's;
* item 16: ``--no-report`` writes the CSV tables.
"""

from __future__ import annotations

import json
import socket
import threading
import time
import warnings

import pytest

from conftest import BASE_CASE, main_in_process, write_case

PLAN_TAIL = '\n[[candidate]]\ndatum = "H2O.transition.l-g.enthalpy"\nu = "0.005 kJ/mol"\ncost = 100\n'


# --------------------------------------------------------------------------- 8: cost follows what the outputs use

def _unused_species(n: int) -> str:
    return "".join(
        f'[species.X{i}]\nformula = "CH4"\n[species.X{i}.g]\n'
        f'formation_enthalpy = {{ value = "-74.5 kJ/mol", u = "0.1 kJ/mol" }}\n'
        'heat_capacity = { model = "shomate", relative_u = "1 %", ranges = [ { T = ["298 K", "1300 K"], '
        'coefficients = [-0.703029, 108.4773, -42.52157, 5.862788, 0.678565] } ] }\n' for i in range(n))


def test_species_no_output_uses_cost_almost_nothing(tmp_path):
    """4000 unused species (8000 uncertain data): ``check`` once took 206 s and 3.1 GB (a 8000 x 8000
    correlation matrix factorised three times); now the model has only the 9 columns the outputs use."""
    from uqthermo.case.model.layout import build_inputs, used_data
    from uqthermo.case.loader import load_case

    text = BASE_CASE.replace("[reaction.shift]", _unused_species(4000) + "[reaction.shift]")
    case_file = write_case(tmp_path, text)
    t0 = time.process_time()
    code, stdout, err = main_in_process("check", case_file)
    cpu = time.process_time() - t0
    assert code == 0, err
    assert "4004 species" in stdout and "(9 variables)" in stdout
    assert cpu < 60, f"check took {cpu:.0f} s of CPU"
    case = load_case(case_file)
    inputs, cols = build_inputs(case)
    assert set(cols) == {d for d in used_data(case) if case.data[d].uncertain}
    assert not any(d.startswith("X") for d in cols)


def test_data_named_in_a_correlation_stay_checked(tmp_path):
    """A datum no output uses still takes part in the check of the stated correlations."""
    text = BASE_CASE.replace("[reaction.shift]", _unused_species(2) + "[reaction.shift]") + (
        '[[correlation]]\nbetween = ["X0.g.formation_enthalpy", "X1.g.formation_enthalpy"]\ncoefficient = 0.9\n'
        '[[correlation]]\nbetween = ["X0.g.formation_enthalpy", "CO.g.formation_enthalpy"]\ncoefficient = 0.9\n'
        '[[correlation]]\nbetween = ["X1.g.formation_enthalpy", "CO.g.formation_enthalpy"]\ncoefficient = -0.9\n')
    code, _, err = main_in_process("check", write_case(tmp_path, text))
    assert code == 2 and "correlation" in err and "positive semidefinite" in err


def test_many_output_columns_use_small_monte_carlo_chunks(tmp_path, monkeypatch):
    """Chunks hold at most CHUNK_VALUES model values however many output points there are."""
    import uqthermo.uq.montecarlo as mcmod
    from uqthermo.pipeline import job as runmod

    seen = {}
    real = mcmod.propagate_monte_carlo

    def spy(f, inputs, **kw):
        seen.update(kw)
        return real(f, inputs, **kw)

    monkeypatch.setattr(mcmod, "propagate_monte_carlo", spy)
    text = BASE_CASE + ('[[output]]\nname = "curve"\nkind = "reaction_enthalpy"\nreaction = "shift"\n'
                        'temperatures = { from = "400 K", to = "2399 K", step = "1 K" }\n')
    runmod.run_case(write_case(tmp_path, text), samples=200)
    assert seen["chunk_size"] * 2002 <= runmod.CHUNK_VALUES


# --------------------------------------------------------------------------- 9: resource messages

def test_out_of_memory_names_the_stage_and_the_sizes(make_case, tmp_path, monkeypatch):
    import uqthermo.uq.montecarlo as mcmod

    def no_memory(*a, **kw):
        raise MemoryError()

    monkeypatch.setattr(mcmod, "propagate_monte_carlo", no_memory)
    code, _, err = main_in_process("run", make_case(), "--out", tmp_path / "out", "--samples", "5000000", "--quiet")
    assert code == 1
    assert ("out of memory while propagating by Monte Carlo (2 output points x 9 input variables x 5000000 trials); "
            "use fewer samples") in err
    assert not (tmp_path / "out").exists()


class _Server:
    """A TCP service on localhost that is not a Dask scheduler."""

    def __init__(self, greeting: bytes | None):
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(5)
        self.port = self.sock.getsockname()[1]
        self.greeting = greeting
        self.stop = False
        threading.Thread(target=self._serve, daemon=True).start()

    def _serve(self):
        self.sock.settimeout(0.2)
        while not self.stop:
            try:
                conn, _ = self.sock.accept()
            except OSError:
                continue
            if self.greeting:
                conn.sendall(self.greeting)
            threading.Timer(10, conn.close).start()

    def close(self):
        self.stop = True
        self.sock.close()


@pytest.mark.parametrize("greeting", [None, b"SSH-2.0-OpenSSH_9.2p1 Debian-2\r\n", b"HTTP/1.1 400 Bad Request\r\n\r\n"],
                         ids=["silent", "ssh-banner", "http"])
def test_a_service_that_is_not_a_dask_scheduler(make_case, tmp_path, monkeypatch, greeting):
    from uqthermo.uq import distributed

    monkeypatch.setattr(distributed, "PROBE_SECONDS", 1.0)
    server = _Server(greeting)
    try:
        t0 = time.time()
        code, _, err = main_in_process("run", make_case(), "--out", tmp_path / "out", "--samples", "1000", "--quiet",
                                       "--engine", "dask", "--scheduler", f"tcp://127.0.0.1:{server.port}")
    finally:
        server.close()
    assert code == 1, err
    assert f"the service at 'tcp://127.0.0.1:{server.port}' is not a Dask scheduler" in err
    assert "out of memory" not in err and time.time() - t0 < 60
    assert not (tmp_path / "out").exists()


def test_nothing_listening_at_the_scheduler_address(make_case, tmp_path):
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    code, _, err = main_in_process("run", make_case(), "--out", tmp_path / "out", "--engine", "dask",
                                   "--scheduler", f"tcp://127.0.0.1:{port}")
    assert code == 1 and "cannot reach the Dask scheduler" in err


# --------------------------------------------------------------------------- 10 and 14: plan

@pytest.mark.parametrize("budget", ["inf", "nan", "-1", "1e400"])
def test_plan_budget_must_be_finite(tmp_path, budget):
    case = write_case(tmp_path, BASE_CASE + PLAN_TAIL)
    code, _, err = main_in_process("plan", case, "--budget", budget)
    assert code == 2 and err.startswith(f"{case}: --budget: must be a finite non-negative number")


def test_plan_errors_name_the_case_file(tmp_path):
    case = write_case(tmp_path, BASE_CASE + PLAN_TAIL)
    for args, key in ((["--target", "garbage"], "--target"), (["--target", "U95 <= 2 K"], "--target"),
                      (["--budget", "10", "--output", "nope"], "--output")):
        code, _, err = main_in_process("plan", case, *args)
        assert code == 2 and err.startswith(f"{case}: {key}: "), err


def test_library_warnings_become_one_line_of_the_tools(make_case, tmp_path, monkeypatch):
    """A warning raised by a library during a run is printed as ``uqthermo: warning: …`` once, without
    the library's source path and line."""
    from uqthermo.pipeline import results

    real = results.assemble

    def noisy(*a, **kw):
        for _ in range(3):
            warnings.warn("overflow encountered in exp", RuntimeWarning)
        return real(*a, **kw)

    monkeypatch.setattr(results, "assemble", noisy)
    code, _, err = main_in_process("run", make_case(), "--out", tmp_path / "out", "--samples", "1000", "--quiet",
                                   "--no-report")
    assert code == 0, err
    assert err.count("uqthermo: warning: overflow encountered in exp") == 1
    assert ".py:" not in err and "RuntimeWarning" not in err


# --------------------------------------------------------------------------- 11: volatile fields

def test_report_reads_the_date_from_the_run_log(fast_run, tmp_path):
    out = fast_run["out"]
    results = json.loads((out / "results.json").read_text())
    log = json.loads((out / "run-log.json").read_text())
    assert "date" not in results["run"] and "duration_s" not in results["run"]
    assert log["format"] == "uqthermo.run-log/1" and log["date"] in (out / "report.html").read_text()
    # re-rendered beside its run log: same date; alone: no date, and nothing invented
    code, _, err = main_in_process("report", out / "results.json", "--out", tmp_path / "again")
    assert code == 0, err
    assert log["date"] in (tmp_path / "again" / "report.html").read_text()
    assert json.loads((tmp_path / "again" / "run-log.json").read_text()) == log
    alone = tmp_path / "alone"
    alone.mkdir()
    (alone / "results.json").write_text(json.dumps(results))
    code, _, err = main_in_process("report", alone / "results.json", "--out", tmp_path / "r2")
    assert code == 0, err
    assert "Run date" not in (tmp_path / "r2" / "report.html").read_text()


# --------------------------------------------------------------------------- 12: adaptive cap

def test_adaptive_cap_below_two_batches_is_refused(make_case, tmp_path):
    """Sobol' batches at p = 0.95 hold 8192 trials (JCGM 101 §7.9 with 2^m nets): a cap of 10 000 once
    ran to 16 384."""
    case = make_case(replace=[("samples = 20000", 'samples = "adaptive"\nmax_samples = 10000')])
    for cmd in (["check", case], ["run", case, "--out", tmp_path / "out"]):
        code, _, err = main_in_process(*cmd)
        assert code == 2 and f"{case}: settings.max_samples: 10000 trials are fewer than two adaptive batches" in err
        assert "at least 16384" in err
    code, _, err = main_in_process("run", make_case(replace=[("samples = 20000", "samples = 20000\nmax_samples = 12000")]),
                                   "--out", tmp_path / "out", "--samples", "adaptive")
    assert code == 2 and "settings.max_samples" in err and not (tmp_path / "out").exists()


def test_adaptive_cap_is_never_passed(make_case, tmp_path):
    case = make_case(replace=[("samples = 20000", 'samples = "adaptive"\nmax_samples = 25000\nsignificant_digits = 4'),
                              ('sampling = "sobol"', 'sampling = "random"')])
    code, _, err = main_in_process("run", case, "--out", tmp_path / "out", "--quiet", "--no-report")
    assert code == 0, err
    run = json.loads((tmp_path / "out" / "results.json").read_text())["run"]
    assert run["samples"] == 20000 and run["mc_converged"] is False      # two whole batches of 10 000 <= 25 000


# --------------------------------------------------------------------------- 16: --no-report

def test_no_report_writes_results_and_tables(make_case, tmp_path):
    out = tmp_path / "out"
    code, stdout, err = main_in_process("run", make_case(), "--out", out, "--samples", "1000", "--no-report")
    assert code == 0, err
    files = sorted(p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file())
    assert "results.json" in files and "run-log.json" in files
    assert {"tables/inputs.csv", "tables/drivers.csv"} <= set(files) and any(f.startswith("tables/results-") for f in files)
    assert not any(f.startswith("figures/") or f.startswith("report.") for f in files)
    assert "tables/" in stdout


def test_starter_case_file_is_never_written_over_a_folder_or_without_force(tmp_path):
    """``data --case … --out FILE`` (one file): a folder is refused, an existing file needs --force, and
    the file is written under a fresh temporary name then renamed, with the umask's permissions."""
    import os

    eq = "C6H5CH3(l) + 3 H2(g) -> C6H11CH3(l)"
    code, _, err = main_in_process("data", "--case", eq, "--T", "150 degC", "--out", tmp_path)
    assert code == 2 and f"{tmp_path}: --out: is a folder" in err
    mine = tmp_path / "mine.toml"
    mine.write_text("keep")
    code, _, err = main_in_process("data", "--case", eq, "--T", "150 degC", "--out", mine)
    assert code == 2 and "exists; give --force" in err and mine.read_text() == "keep"
    old = os.umask(0o027)
    try:
        code, _, err = main_in_process("data", "--case", eq, "--T", "150 degC", "--out", mine, "--force")
    finally:
        os.umask(old)
    assert code == 0, err
    assert mine.read_text().startswith(("title", "#")) and mine.stat().st_mode & 0o777 == 0o640
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mine.toml"]
