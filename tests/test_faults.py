"""kill -9 of ``netopt run`` and ``netopt stress`` at several points: the previous result stays byte-identical,
no process is left behind, and an interrupted sweep resumes to the table of an uninterrupted one.

Each run is a real ``netopt`` process on the demo case (``cases/brackenholt``, one scenario for ``run``, two
local workers for ``stress``), killed with SIGKILL, the parent only, as a crash or the kernel's OOM killer
would.  Every process a run starts carries a marker in its environment, so whatever it started (forkserver,
resource tracker, pool workers) is found afterwards, whoever its parent is by then.

Facts of the trade checked (common practice, no source): results are replaced all at once or not at all
(write aside, rename into place), child processes end with the process that started them, and a journal
of finished work lets a killed batch resume without redoing it.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import subprocess
import sys
import time
import uuid
from collections.abc import Callable
from pathlib import Path

import pandas as pd
import pytest

from netopt.present.files import OUTPUT_MARK
from netopt.studies.sweep_exec import JOURNAL

psutil = pytest.importorskip("psutil")

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "cases" / "brackenholt"
MARK = "NETOPT_FAULT_TEST"
GONE_WITHIN_S = 15.0  # every process a killed run started has ended by then


def _netopt(*args: str, marker: str) -> subprocess.Popen:
    """``python -m netopt ARGS`` in a session of its own, its environment carrying ``marker``."""
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    env[MARK] = marker
    return subprocess.Popen(
        [sys.executable, "-m", "netopt", *args],
        cwd=ROOT,
        env=env,
        start_new_session=True,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )


def _marked(marker: str) -> list:
    """Live processes (zombies excepted) whose environment carries ``marker``."""
    found = []
    for p in psutil.process_iter():
        try:
            if p.status() != psutil.STATUS_ZOMBIE and p.environ().get(MARK) == marker:
                found.append(p)
        except (psutil.NoSuchProcess, psutil.AccessDenied, psutil.ZombieProcess):
            continue
    return found


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _kill_when(proc: subprocess.Popen, ready: Callable[[], bool], what: str, limit_s: float = 60.0) -> None:
    """SIGKILL ``proc`` (the parent only) as soon as ``ready()``; fail when it ends or times out first."""
    deadline = time.time() + limit_s
    while not ready():
        if proc.poll() is not None:
            err = proc.stderr.read().decode(errors="replace") if proc.stderr else ""
            pytest.fail(f"netopt ended (exit {proc.returncode}) before {what}: {err[-1500:]}")
        if time.time() > deadline:
            pytest.fail(f"netopt did not reach {what} within {limit_s:.0f} s")
        time.sleep(0.02)
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()


def _assert_nothing_left(marker: str) -> None:
    deadline = time.time() + GONE_WITHIN_S
    left = _marked(marker)
    while left and time.time() < deadline:
        time.sleep(0.1)
        left = _marked(marker)
    names = [f"{p.pid} {' '.join(p.cmdline())[:120]}" for p in left]
    for p in left:  # leave nothing behind for the next test either
        with contextlib.suppress(psutil.NoSuchProcess):
            p.kill()
    assert not left, f"processes left {GONE_WITHIN_S:.0f} s after kill -9 of their parent: {names}"


def _finish(proc: subprocess.Popen, marker: str) -> None:
    """In a test's ``finally``: end the run and everything it started (nothing else)."""
    if proc.poll() is None:
        proc.kill()
        proc.wait()
    if proc.stderr is not None:
        proc.stderr.close()
    for p in _marked(marker):
        with contextlib.suppress(psutil.NoSuchProcess):
            p.kill()


def _complete(proc: subprocess.Popen, timeout: float = 120) -> None:
    try:
        _, err = proc.communicate(timeout=timeout)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()
        raise
    assert proc.returncode == 0, err.decode(errors="replace")[-2000:]


def _temp_of(out: Path) -> Callable[[], bool]:
    return lambda: any(out.parent.glob(f".{out.name}.tmp-*"))


def _journal_rows(path: Path) -> int:
    try:
        return max(0, len(path.read_text(encoding="utf-8").splitlines()) - 1)
    except OSError:
        return 0


# --------------------------------------------------------------------------- run


def test_kill_9_of_run_keeps_the_previous_result_and_leaves_no_process(tmp_path):
    out = tmp_path / "results"
    args = ["run", str(DEMO), "--out", str(out), "--only", "dc_venlo_out", "--quiet"]
    first = _netopt(*args, "--no-report", marker=uuid.uuid4().hex)
    _complete(first)
    before = _snapshot(out)
    assert OUTPUT_MARK in before
    started = [0.0]
    points = {
        "early (starting up)": lambda: time.time() - started[0] > 0.3,
        "mid-solve": lambda: time.time() - started[0] > 4.0,
        "while writing": _temp_of(out),  # the temporary folder of the new result exists
    }
    for what, ready in points.items():
        marker = uuid.uuid4().hex
        started[0] = time.time()
        proc = _netopt(*args, marker=marker)  # with the report: the longest write
        try:
            _kill_when(proc, ready, what)
            _assert_nothing_left(marker)
        finally:
            _finish(proc, marker)
        assert _snapshot(out) == before, f"kill -9 {what} changed the previous result"


# --------------------------------------------------------------------------- stress


def test_kill_9_of_stress_keeps_the_old_result_leaves_no_worker_and_resumes(tmp_path):
    out = tmp_path / "stress"
    running = tmp_path / f".stress.{JOURNAL}"  # the sweep's journal while it runs, beside the result
    args = ["stress", str(DEMO), "--out", str(out), "--workers", "2", "--quiet", "--no-report"]
    _complete(_netopt(*args, marker=uuid.uuid4().hex))  # an uninterrupted sweep: the old result
    before = _snapshot(out)
    table = pd.read_csv(out / "spof_ranking.csv")

    # Killed early (the base solve), mid-sweep (pool workers running), each with --fresh: a new sweep pointed
    # at the old result; the old folder, its journal included, is never touched.
    done_at_kill = 0
    started = [0.0]
    for what, ready in {
        "early (base solve)": lambda: time.time() - started[0] > 1.5,
        "mid-sweep": lambda: _journal_rows(running) >= 5,
    }.items():
        marker = uuid.uuid4().hex
        started[0] = time.time()
        proc = _netopt(*args, "--fresh", marker=marker)
        try:
            _kill_when(proc, ready, what)
            done_at_kill = _journal_rows(running)
            _assert_nothing_left(marker)
        finally:
            _finish(proc, marker)
        assert _snapshot(out) == before, f"kill -9 {what} changed the old result"
    assert 5 <= done_at_kill < len(table), "the kill did not land mid-sweep"

    # The rerun resumes from the running journal and ends with the uninterrupted sweep's table.
    _complete(_netopt(*args, marker=uuid.uuid4().hex))
    facts = pd.read_json(out / "summary.json", typ="series")["facts"]
    assert facts["sweep_reused_from_journal"] >= done_at_kill
    assert facts["sweep_resolved_now"] == len(table) - facts["sweep_reused_from_journal"] > 0
    pd.testing.assert_frame_equal(pd.read_csv(out / "spof_ranking.csv"), table, check_exact=False, rtol=1e-9, atol=1e-6)
    assert not running.exists()  # its rows are in the result's journal now
    assert _journal_rows(out / JOURNAL) == len(table)

    # Killed while writing the result: the old one stays whole (or the new one is whole, if the rename won).
    before = _snapshot(out)
    marker = uuid.uuid4().hex
    proc = _netopt(*args, "--fresh", marker=marker)
    try:
        _kill_when(proc, _temp_of(out), "writing the result")
        _assert_nothing_left(marker)
    finally:
        _finish(proc, marker)
    if any(tmp_path.glob(".stress.tmp-*")):  # killed before the swap: the old result is untouched
        assert _snapshot(out) == before
    else:
        assert (out / OUTPUT_MARK).is_file() and (out / "summary.json").is_file()
    shutil.rmtree(out)
