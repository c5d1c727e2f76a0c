"""Nothing lost, ever (issue 15): output folders, races, killed runs, signals, permissions.

The tests that need two processes or a signal run ``python -m uqthermo.cli`` for real. To
make them fast and deterministic they use the documented test hook
``UQTHERMO_TEST_PAUSE="POINT:GOFILE"`` (uqthermo/pipeline/publish.py): the command stops at
a named point (``locked``, ``built``, ``commit``), writes ``GOFILE.paused`` and waits until
GOFILE exists. Every wait is bounded (``TIMEOUT``).

Items of the issue checked here: 1 (a folder created during the run is never replaced),
2 (``--force`` on folders with a foreign results.json/plan.json/fit.json; only manifest-listed
files are replaced), 3 (two runs racing for one folder), 4 (SIGKILL leaves a partial that the
next run removes; SIGHUP like SIGTERM; repeated SIGTERM exits 130), 10 (``--out`` under a
file, an over-long name, a mount point, a full disk), 15 (umask).
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from conftest import BASE_CASE, REPO, cli_env, main_in_process, write_case

TIMEOUT = 120
MANIFEST = ".uqthermo-manifest.json"
FAST = ["--samples", "1000", "--quiet", "--no-report"]


# --------------------------------------------------------------------------- helpers

class Cli:
    """A ``uqthermo`` process, optionally paused at a test point."""

    n = 0

    def __init__(self, tmp_path: Path, *args, pause: str | None = None):
        Cli.n += 1
        env = cli_env()
        self.go = tmp_path / f"go-{Cli.n}"
        if pause:
            env["UQTHERMO_TEST_PAUSE"] = f"{pause}:{self.go}"
        self.err_path = tmp_path / f"stderr-{Cli.n}.txt"
        self._err = open(self.err_path, "w+", encoding="utf-8")
        self.proc = subprocess.Popen([sys.executable, "-m", "uqthermo.cli", *map(str, args)], stdout=subprocess.DEVNULL,
                                     stderr=self._err, env=env, cwd=str(REPO))

    @property
    def stderr(self) -> str:
        return self.err_path.read_text(encoding="utf-8")

    def wait_paused(self) -> None:
        deadline = time.time() + TIMEOUT
        while not Path(str(self.go) + ".paused").exists():
            if self.proc.poll() is not None:
                raise AssertionError(f"exited {self.proc.returncode} before pausing: {self.stderr}")
            if time.time() > deadline:
                self.proc.kill()
                raise AssertionError("never paused")
            time.sleep(0.02)

    def resume(self) -> None:
        self.go.write_text("go")

    def finish(self) -> tuple[int, str]:
        try:
            code = self.proc.wait(timeout=TIMEOUT)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            raise
        self._err.close()
        return code, self.stderr


def _work(tmp_path: Path) -> tuple[Path, Path]:
    """(case file, folder that holds the outputs) — the folder holds nothing else."""
    case = write_case(tmp_path, BASE_CASE)
    work = tmp_path / "work"
    work.mkdir()
    return case, work


def _hidden(work: Path) -> list[str]:
    """Temporary folders, locks and backups left next to the outputs."""
    return sorted(p.name for p in work.iterdir() if p.name.startswith("."))


def _snapshot(folder: Path) -> dict:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


def _manifest_matches(folder: Path) -> None:
    doc = json.loads((folder / MANIFEST).read_text())
    assert doc["format"] == "uqthermo.manifest/1"
    for f in doc["files"]:
        assert hashlib.sha256((folder / f["path"]).read_bytes()).hexdigest() == f["sha256"], f["path"]


# --------------------------------------------------------------------------- 1: folder appearing during the run

@pytest.mark.parametrize("force", [False, True], ids=["plain", "force"])
def test_folder_created_during_the_run_is_left_alone(tmp_path, force):
    case, work = _work(tmp_path)
    late = work / "late"
    run = Cli(tmp_path, "run", case, "--out", late, *FAST, *(["--force"] if force else []), pause="built")
    run.wait_paused()                         # computed and built, not yet published
    late.mkdir()
    (late / "important.txt").write_text("x")
    run.resume()
    code, err = run.finish()
    assert code == 2, err
    assert f"{late}: --out: " in err and "appeared" in err and "Traceback" not in err
    assert sorted(p.name for p in late.iterdir()) == ["important.txt"]
    assert (late / "important.txt").read_text() == "x"
    assert _hidden(work) == []


def test_empty_folder_created_during_the_run_may_be_used(tmp_path):
    """An empty folder holds nothing to lose: the output takes its place."""
    case, work = _work(tmp_path)
    late = work / "late"
    run = Cli(tmp_path, "run", case, "--out", late, *FAST, pause="built")
    run.wait_paused()
    late.mkdir()
    run.resume()
    code, err = run.finish()
    assert code == 0, err
    assert (late / "results.json").is_file() and _hidden(work) == []


# --------------------------------------------------------------------------- 2: --force and the manifest

def _foreign_folder(folder: Path, marker: str) -> dict:
    folder.mkdir()
    (folder / marker).write_text('{"accuracy": 0.93}')
    (folder / "thesis.docx").write_text("years of work")
    (folder / "data").mkdir()
    (folder / "data" / "raw.csv").write_text("t,x\n1,2\n")
    return _snapshot(folder)


@pytest.mark.parametrize("command", ["run", "plan", "fit"])
def test_force_refuses_a_folder_that_merely_holds_a_results_file(tmp_path, command):
    case = write_case(tmp_path, BASE_CASE + '\n[[candidate]]\ndatum = "H2O.transition.l-g.enthalpy"\n'
                                            'u = "0.005 kJ/mol"\ncost = 100\n')
    out = tmp_path / "thesis"
    marker = {"run": "results.json", "plan": "plan.json", "fit": "fit.json"}[command]
    before = _foreign_folder(out, marker)
    if command == "run":
        args = ["run", case, "--out", out, "--force", *FAST]
    elif command == "plan":
        args = ["plan", case, "--budget", "1000", "--out", out, "--force"]
    else:
        data = tmp_path / "cp.csv"
        data.write_text("T [K],Cp [J/(mol*K)]\n" + "".join(f"{t},{29 + 0.004 * t}\n" for t in range(300, 1000, 50)))
        args = ["fit", data, "--out", out, "--force"]
    code, stdout, err = main_in_process(*args)
    assert code == 2, err
    assert f"{out}: --out: --force replaces only an earlier uqthermo output" in err and "manifest" in err
    assert _snapshot(out) == before
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


def test_force_replaces_only_the_files_the_manifest_lists(make_case, tmp_path):
    case = make_case()
    out = tmp_path / "out"
    code, _, err = main_in_process("run", case, "--out", out, "--samples", "1000", "--quiet")
    assert code == 0, err
    old = json.loads((out / MANIFEST).read_text())
    assert any(f["path"].startswith("figures/") for f in old["files"])
    (out / "notes.txt").write_text("mine")
    (out / "figures" / "sketch.png").write_bytes(b"mine too")
    (out / "empty-folder-of-mine").mkdir()
    code, _, err = main_in_process("run", case, "--out", out, "--force", *FAST)     # now without a report
    assert code == 0, err
    assert (out / "notes.txt").read_text() == "mine"
    assert (out / "figures" / "sketch.png").read_bytes() == b"mine too"
    assert (out / "empty-folder-of-mine").is_dir()
    assert not (out / "report.html").exists()                                       # the earlier run's file: replaced
    assert sorted(p.name for p in (out / "figures").iterdir()) == ["sketch.png"]     # its figures removed, mine kept
    assert "kept 3 item(s)" in err and "notes.txt" in err and "figures/sketch.png" in err
    assert "replaced the earlier uqthermo output" in err
    _manifest_matches(out)
    new = json.loads((out / MANIFEST).read_text())
    assert "notes.txt" not in {f["path"] for f in new["files"]}
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []
    # the figures folder the earlier run made goes once nothing of the user's is left in it
    (out / "figures" / "sketch.png").unlink()
    code, _, err = main_in_process("run", case, "--out", out, "--samples", "1000", "--quiet")
    assert code == 2                                                                 # not empty, no --force
    code, _, err = main_in_process("run", case, "--out", out, "--force", *FAST)
    assert code == 0, err


def test_force_refuses_changed_files_and_clashes(make_case, tmp_path):
    case = make_case()
    out = tmp_path / "out"
    code, _, err = main_in_process("run", case, "--out", out, *FAST)
    assert code == 0, err
    # a file the user edited after the run is partly the user's: refused, nothing touched
    with open(out / "results.json", "a") as fh:
        fh.write(" ")
    before = _snapshot(out)
    code, _, err = main_in_process("run", case, "--out", out, "--force", *FAST)
    assert code == 2 and "results.json changed since uqthermo wrote it" in err
    assert _snapshot(out) == before
    # a file of the user's where the new run would write one of its own: refused before writing
    code, _, err = main_in_process("run", case, "--out", tmp_path / "out2", *FAST)
    assert code == 0, err
    (tmp_path / "out2" / "report.html").write_text("my own report")
    before = _snapshot(tmp_path / "out2")
    code, _, err = main_in_process("run", case, "--out", tmp_path / "out2", "--force", "--samples", "1000", "--quiet")
    assert code == 2 and "report.html would be overwritten but was not written by uqthermo" in err
    assert _snapshot(tmp_path / "out2") == before
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


@pytest.mark.parametrize("path", ["../outside.txt", "/etc/hostname", "sub/../../outside.txt"])
def test_a_manifest_pointing_outside_the_folder_is_not_a_manifest(make_case, tmp_path, path):
    case = make_case()
    out = tmp_path / "out"
    out.mkdir()
    (tmp_path / "outside.txt").write_text("keep me")
    digest = hashlib.sha256(b"keep me").hexdigest()
    (out / MANIFEST).write_text(json.dumps({"format": "uqthermo.manifest/1", "files": [{"path": path, "sha256": digest}]}))
    code, _, err = main_in_process("run", case, "--out", out, "--force", *FAST)
    assert code == 2 and "has none" in err
    assert (tmp_path / "outside.txt").read_text() == "keep me"


# --------------------------------------------------------------------------- 3: races

def test_two_runs_racing_for_one_folder(tmp_path):
    case, work = _work(tmp_path)
    out = work / "out"
    first = Cli(tmp_path, "run", case, "--out", out, *FAST, pause="locked")
    first.wait_paused()                                   # holds the lock, before its computation
    lock = json.loads((work / ".out.uqthermo-lock").read_text())
    assert lock["pid"] == first.proc.pid and lock["format"] == "uqthermo.lock/1"
    second = Cli(tmp_path, "run", case, "--out", out, *FAST)
    code, err = second.finish()
    assert code == 2, err
    assert f"{out}: --out: another uqthermo command (process {first.proc.pid}" in err and "nothing was written" in err
    assert not out.exists()
    first.resume()
    code, err = first.finish()
    assert code == 0, err
    assert json.loads((out / "results.json").read_text())["run"]["samples"] == 1000
    assert _hidden(work) == []


# --------------------------------------------------------------------------- 4: killed runs and signals

def test_a_killed_run_leaves_nothing_the_next_run_does_not_clean(tmp_path):
    case, work = _work(tmp_path)
    out = work / "out"
    run = Cli(tmp_path, "run", case, "--out", out, *FAST, pause="built")
    run.wait_paused()
    run.proc.send_signal(signal.SIGKILL)
    run.finish()
    left = _hidden(work)
    assert ".out.uqthermo-lock" in left and any(n.endswith(".partial") for n in left), left
    # the lock's owner is dead: the next run takes it over, removes the partial and succeeds
    code, stdout, err = main_in_process("run", case, "--out", out, *FAST)
    assert code == 0, err
    assert _hidden(work) == []


def test_a_run_killed_while_replacing_is_rolled_back_by_the_next(tmp_path):
    """SIGKILL in the middle of a --force replacement (earlier files moved aside): the next command
    restores the earlier output exactly before doing anything else."""
    case, work = _work(tmp_path)
    out = work / "out"
    code, _, err = main_in_process("run", case, "--out", out, *FAST)
    assert code == 0, err
    (out / "mine.txt").write_text("mine")
    before = _snapshot(out)
    run = Cli(tmp_path, "run", case, "--out", out, "--force", "--seed", "3", *FAST, pause="commit")
    run.wait_paused()
    assert not (out / "results.json").exists()            # moved aside
    run.proc.send_signal(signal.SIGKILL)
    run.finish()
    code, _, err = main_in_process("run", case, "--out", out, *FAST)                  # no --force: refused ...
    assert code == 2 and "not empty" in err
    assert _snapshot(out) == before                                                    # ... after the roll-back
    assert _hidden(work) == []


@pytest.mark.parametrize("sig", ["SIGHUP"])   # SIGTERM and SIGINT: tests/test_reliability.py
def test_a_signal_stops_the_run_with_130_and_leaves_nothing(tmp_path, sig):
    case, work = _work(tmp_path)
    out = work / "out"
    run = Cli(tmp_path, "run", case, "--out", out, *FAST, pause="locked")
    run.wait_paused()
    run.proc.send_signal(getattr(signal, sig))
    code, err = run.finish()
    assert code == 130, err
    assert "interrupted; nothing was written" in err and "Traceback" not in err
    assert not out.exists() and _hidden(work) == []


def test_repeated_sigterm_still_exits_130_and_cleans_up(tmp_path):
    case, work = _work(tmp_path)
    out = work / "out"
    run = Cli(tmp_path, "run", case, "--out", out, *FAST, pause="built")
    run.wait_paused()                                     # the partial folder exists now
    for _ in range(4):
        run.proc.send_signal(signal.SIGTERM)
        time.sleep(0.01)
    code, err = run.finish()
    assert code == 130, err
    assert "Traceback" not in err
    assert not out.exists() and _hidden(work) == []


def test_a_signal_during_the_replacement_acts_after_it(tmp_path):
    """SIGTERM while a --force replacement moves files: the replacement completes (never a mix of
    old and new), then the command exits 130 saying the output was written."""
    case, work = _work(tmp_path)
    out = work / "out"
    code, _, err = main_in_process("run", case, "--out", out, *FAST)
    assert code == 0, err
    run = Cli(tmp_path, "run", case, "--out", out, "--force", "--seed", "3", *FAST, pause="commit")
    run.wait_paused()
    run.proc.send_signal(signal.SIGTERM)
    time.sleep(0.2)
    run.resume()
    code, err = run.finish()
    assert code == 130, err
    assert "interrupted after" in err and "written completely" in err
    assert json.loads((out / "results.json").read_text())["run"]["seed"] == 3
    _manifest_matches(out)
    assert _hidden(work) == []


# --------------------------------------------------------------------------- 10: bad places for --out

def test_out_under_a_file(make_case, tmp_path):
    (tmp_path / "afile").write_text("x")
    code, _, err = main_in_process("run", make_case(), "--out", tmp_path / "afile" / "sub" / "out", *FAST)
    assert code == 2 and "--out: " in err and "is a file, so no folder can be made under it" in err


def test_out_name_too_long(make_case, tmp_path):
    out = tmp_path / ("n" * 250)
    code, _, err = main_in_process("run", make_case(), "--out", out, *FAST)
    assert code == 2 and "--out: the folder name is 250 bytes long; at most 200" in err
    assert not out.exists()


def test_out_on_a_mount_point(make_case, tmp_path, monkeypatch):
    """An (empty) mount point cannot be replaced by a rename (EBUSY): refused before any work, and a
    mount point not recognised in advance gives the same kind of message at the rename."""
    from uqthermo.pipeline import publish

    out = tmp_path / "mnt"
    out.mkdir()
    monkeypatch.setattr(publish.os.path, "ismount", lambda p: Path(p) == out)
    code, _, err = main_in_process("run", make_case(), "--out", out, *FAST)
    assert code == 2 and "--out: is a mount point" in err
    monkeypatch.undo()
    real = os.rename

    def busy(src, dst):
        if Path(dst) == out:
            raise OSError(errno.EBUSY, "Device or resource busy", str(dst))
        return real(src, dst)

    monkeypatch.setattr(publish.os, "rename", busy)
    code, _, err = main_in_process("run", make_case(), "--out", out, *FAST)
    assert code == 2 and "--out: the folder is busy" in err
    assert list(out.iterdir()) == [] and sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


def test_full_disk(make_case, tmp_path, monkeypatch):
    import shutil

    from uqthermo.pipeline import publish
    from uqthermo.report import files

    out = tmp_path / "out"
    usage = shutil.disk_usage(tmp_path)
    monkeypatch.setattr(publish.shutil, "disk_usage", lambda p: usage._replace(free=1_000_000))
    code, _, err = main_in_process("run", make_case(), "--out", out, *FAST)
    assert code == 2 and "--out: only 1.0 MB free" in err                 # before any computation
    monkeypatch.undo()

    def full(path, data):
        raise OSError(errno.ENOSPC, "No space left on device", str(path))

    monkeypatch.setattr(files, "atomic_write", full)
    code, _, err = main_in_process("run", make_case(), "--out", out, "--samples", "1000", "--quiet")
    assert code == 2 and "--out: no space left on the device" in err and "Traceback" not in err
    assert not out.exists() and sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


# --------------------------------------------------------------------------- 15: umask

@pytest.mark.parametrize("mask", [0o022, 0o027, 0o002])
def test_modes_follow_the_umask(make_case, tmp_path, mask):
    case = make_case()
    out = tmp_path / "out"
    old = os.umask(mask)
    try:
        code, _, err = main_in_process("run", case, "--out", out, *FAST)
    finally:
        os.umask(old)
    assert code == 0, err
    for p in [out, *out.rglob("*")]:
        mode = p.stat().st_mode & 0o777
        assert mode == (0o777 & ~mask if p.is_dir() else 0o666 & ~mask), (p, oct(mode))


def test_leftover_lock_names_of_dead_processes_are_removed(make_case, tmp_path):
    """A run killed between creating its lock file and linking it into place leaves a temporary
    lock name; the next run removes it (the process id it names is not alive)."""
    case, work = _work(tmp_path)
    pid = 4_000_000                                     # above any pid_max: no such process
    (work / f".out.uqthermo-lock.{pid}-0123abcd").write_text("{}")
    (work / ".out.uqthermo-lock").write_text('{"pid": 4000000}')          # a stale lock nobody holds
    code, _, err = main_in_process("run", case, "--out", work / "out", *FAST)
    assert code == 0, err
    assert _hidden(work) == []
