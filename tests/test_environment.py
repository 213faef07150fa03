"""The environment netopt runs in: an unwritable or full disk, bad option values, an unreachable scheduler,
Ctrl-C while starting up.  Each ends with a message and an exit code, never a traceback, and checks what it
can before the solve.

Facts of the trade checked (common practice, no source): a tool checks that it can write its output before
hours of work, reports a failed write (ENOSPC, EROFS, EACCES) without losing the earlier output, a command
line option gets the same range check as the same value in a settings file, Ctrl-C ends a command with exit
code 130 (128 + SIGINT), and a new folder gets the mode ``mkdir`` gives (0o777 less the umask).
"""

from __future__ import annotations

import errno
import os
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from casekit import make_case_dir

import netopt.cli.verbs as verbs
import netopt.present.files as files
import netopt.present.stress as stress_mod
from netopt.cli import main
from netopt.data.coerce import coerce_setting
from netopt.data.io import load_case
from netopt.data.limits import MAX_FRONTIER_POINTS, MAX_WORKERS
from netopt.data.settings_schema import SETTINGS
from netopt.present.files import OUTPUT_MARK, atomic_folder
from netopt.present.stress import stress
from netopt.studies.resilience import run_sweep
from netopt.studies.sweep_exec import JOURNAL

ROOT = Path(__file__).resolve().parents[1]


def _run(argv, capsys):
    with pytest.raises(SystemExit) as e:
        main(argv)
    out = capsys.readouterr()
    return e.value.code, out.err


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _no_solve(*args, **kwargs):
    raise AssertionError("the solve ran although the results could not be written")


# --------------------------------------------------------------------------- unwritable and full disks


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0, reason="root writes into a read-only folder")
def test_a_read_only_parent_is_refused_before_solving(tmp_path, capsys, monkeypatch):
    case = make_case_dir(tmp_path)
    parent = tmp_path / "locked"
    parent.mkdir()
    parent.chmod(0o555)
    monkeypatch.setattr(verbs, "solve", _no_solve)
    try:
        code, err = _run(["solve", str(case), "--out", str(parent / "results"), "--quiet"], capsys)
    finally:
        parent.chmod(0o755)
    assert code == 2 and "cannot write in" in err and "Traceback" not in err
    assert list(parent.iterdir()) == []


@pytest.mark.parametrize("err", [errno.EROFS, errno.EACCES])
def test_a_parent_that_refuses_writes_is_refused_before_solving(tmp_path, capsys, monkeypatch, err):
    """A read-only file system or a folder without permission, simulated (root ignores folder modes): every
    creation of a file or folder in the parent fails as the kernel would; netopt refuses before the solve."""
    case = make_case_dir(tmp_path)
    parent = tmp_path / "mounted"
    parent.mkdir()
    real_open, real_mkdir = os.open, os.mkdir

    def refuse(real):
        def call(path, *args, **kwargs):
            if Path(os.fsdecode(path)).resolve().parent == parent.resolve():
                raise OSError(err, os.strerror(err), os.fsdecode(path))
            return real(path, *args, **kwargs)

        return call

    monkeypatch.setattr(os, "open", refuse(real_open))
    monkeypatch.setattr(os, "mkdir", refuse(real_mkdir))
    monkeypatch.setattr(verbs, "solve", _no_solve)
    code, err_text = _run(["solve", str(case), "--out", str(parent / "results"), "--quiet"], capsys)
    assert code == 2, err_text
    assert f"cannot write in {parent.resolve()}" in err_text and os.strerror(err) in err_text
    assert "Traceback" not in err_text


def test_a_full_disk_while_writing_keeps_the_earlier_results(tmp_path, capsys, monkeypatch):
    case = make_case_dir(tmp_path)
    out = tmp_path / "results"
    code, err = _run(["solve", str(case), "--out", str(out), "--quiet", "--no-report"], capsys)
    assert code == 0, err
    before = _snapshot(out)

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(args[1]))

    monkeypatch.setattr(files, "write_workbook", full)  # the workbook is written after the CSVs
    code, err = _run(["solve", str(case), "--out", str(out), "--quiet", "--no-report"], capsys)
    assert code == 2 and "Traceback" not in err
    assert os.strerror(errno.ENOSPC) in err and "earlier results there are kept" in err
    assert _snapshot(out) == before
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".results")] == []  # no temporary folder left


def test_a_full_disk_while_stress_journals_ends_cleanly(tmp_path, capsys, monkeypatch):
    case = make_case_dir(tmp_path)

    def full(fh, row):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), fh.name)

    monkeypatch.setattr("netopt.studies.resilience.append_row", full)
    code, err = _run(["stress", str(case), "--out", str(tmp_path / "st"), "--workers", "0", "--quiet"], capsys)
    assert code == 2 and os.strerror(errno.ENOSPC) in err and "Traceback" not in err
    assert not (tmp_path / "st").exists()


@pytest.mark.parametrize("mask", [0o022, 0o027, 0o077])
def test_a_results_folder_gets_the_mode_of_mkdir(tmp_path, mask):
    old = os.umask(mask)
    try:
        with atomic_folder(tmp_path / "results") as tmp:
            (tmp / "flows.csv").write_text("x\n")
    finally:
        os.umask(old)
    assert (tmp_path / "results").stat().st_mode & 0o777 == 0o777 & ~mask
    assert (tmp_path / "results" / OUTPUT_MARK).is_file()


def test_leftovers_of_a_killed_write_are_tidied(tmp_path):
    """A write killed mid-way leaves a temporary folder, or (between the two renames of the swap) the earlier
    result set aside as ``.NAME.old-PID``; the next write removes the first and moves the second back."""
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()  # a process id that no longer runs
    out = tmp_path / "results"
    (tmp_path / f".results.tmp-{dead.pid}-abc").mkdir()
    aside = tmp_path / f".results.old-{dead.pid}"
    aside.mkdir()
    (aside / OUTPUT_MARK).write_text("x")
    (aside / "flows.csv").write_text("earlier")
    with pytest.raises(RuntimeError), atomic_folder(out):
        raise RuntimeError("interrupted")  # the next write fails too: the earlier result is back in place
    assert (out / "flows.csv").read_text() == "earlier"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results"]


# --------------------------------------------------------------------------- options checked like settings


def _setting(section, name):
    return next(s for s in SETTINGS if (s.section, s.name) == (section, name))


@pytest.mark.parametrize(
    "option, value, setting",
    [
        ("--gap", "5", ("solver", "mip_gap")),
        ("--gap", "-0.1", ("solver", "mip_gap")),
        ("--time-limit", "-1", ("solver", "time_limit_s")),
        ("--threads", "0", ("solver", "threads")),
    ],
)
@pytest.mark.parametrize("verb", ["solve", "run"])
def test_cli_overrides_are_checked_like_settings(tmp_path, capsys, monkeypatch, option, value, setting, verb):
    monkeypatch.setattr(verbs, "solve", _no_solve)
    monkeypatch.setattr(verbs, "run_scenarios", _no_solve)
    case = make_case_dir(tmp_path)
    code, err = _run([verb, str(case), "--out", str(tmp_path / "out"), option, value], capsys)
    assert code == 2 and option in err and "Traceback" not in err
    _, problem = coerce_setting(_setting(*setting), value)  # what settings.toml says of the same value
    assert problem and problem in err and "must be" in problem
    assert f"[{setting[0]}] {setting[1]}" in err


@pytest.mark.parametrize("value", ["nan", "inf", "2.5", "x"])
def test_non_numbers_and_fractions_are_refused_for_threads(tmp_path, capsys, value):
    case = make_case_dir(tmp_path)
    code, err = _run(["solve", str(case), "--out", str(tmp_path / "out"), "--threads", value], capsys)
    assert code == 2 and "--threads" in err and "Traceback" not in err


def test_overrides_in_range_reach_the_solve(tmp_path, capsys, monkeypatch):
    seen = {}

    def fake_solve(case, **kw):
        seen.update(kw)
        raise KeyboardInterrupt  # stop after the hand-over: exit 130

    monkeypatch.setattr(verbs, "solve", fake_solve)
    case = make_case_dir(tmp_path)
    argv = ["solve", str(case), "--out", str(tmp_path / "o"), "--gap", "0.01", "--time-limit", "7", "--threads", "2"]
    code, err = _run(argv, capsys)
    assert code == 130 and "interrupted" in err
    assert seen["mip_gap"] == 0.01 and seen["time_limit"] == 7.0 and seen["threads"] == 2


@pytest.mark.parametrize(
    "argv, option",
    [
        (["stress", "--workers", "-1"], "--workers"),
        (["stress", "--workers", str(MAX_WORKERS + 1)], "--workers"),
        (["stress", "--connect-timeout", "0"], "--connect-timeout"),
        (["frontier", "--points", "1"], "--points"),
        (["frontier", "--points", str(MAX_FRONTIER_POINTS + 1)], "--points"),
        (["frontier", "--points", "10000000000000000000000000000000"], "--points"),
    ],
)
def test_counts_out_of_range_are_refused(tmp_path, capsys, argv, option):
    case = make_case_dir(tmp_path)
    code, err = _run([argv[0], str(case), "--out", str(tmp_path / "out"), *argv[1:]], capsys)
    assert code == 2 and option in err and "must be " in err and "Traceback" not in err


def test_run_sweep_refuses_a_negative_pool(tmp_path):
    with pytest.raises(ValueError, match="from 0"):
        run_sweep(None, None, workers=-1)


# --------------------------------------------------------------------------- the Dask scheduler


@pytest.mark.parametrize(
    "address, words",
    [("tcp://127.0.0.1:1", "could not connect"), ("tcp//x", "not a scheduler address")],
    ids=["unreachable", "malformed"],
)
def test_a_scheduler_that_cannot_be_reached_is_named_before_solving(tmp_path, capsys, monkeypatch, address, words):
    pytest.importorskip("distributed")
    monkeypatch.setattr(stress_mod, "solve", _no_solve)
    case = make_case_dir(tmp_path)
    argv = ["stress", str(case), "--out", str(tmp_path / "st"), "--scheduler", address, "--connect-timeout", "1"]
    t0 = time.perf_counter()
    code, err = _run(argv, capsys)
    assert code == 2 and words in err and address in err and "Traceback" not in err
    assert time.perf_counter() - t0 < 20
    assert not (tmp_path / "st").exists()


# --------------------------------------------------------------------------- Ctrl-C while starting up

# A child that runs the installed entry point (``netopt = "netopt.cli:main"``) or ``python -m netopt``, with an
# import hook that raises KeyboardInterrupt when ``module`` is first imported: Ctrl-C at that moment of start-up,
# without depending on timing.
_CTRL_C_CHILD = textwrap.dedent("""
    import runpy, sys

    class CtrlC:
        def find_spec(self, name, path=None, target=None):
            if name == {module!r}:
                raise KeyboardInterrupt
            return None

    sys.meta_path.insert(0, CtrlC())
    sys.argv = ["netopt", "check", {case!r}]
    if {how!r} == "-m":
        runpy.run_module("netopt", run_name="__main__", alter_sys=True)
    else:
        from netopt.cli import main
        sys.exit(main())
""")


@pytest.mark.parametrize("how", ["entry-point", "-m"])
@pytest.mark.parametrize(
    "module",
    [
        "netopt.cli.app",
        "netopt.cli.verbs",
        "pandas",
    ],
)
def test_ctrl_c_while_importing_ends_with_130_and_no_traceback(tmp_path, how, module):
    case = make_case_dir(tmp_path)
    script = tmp_path / "child.py"
    script.write_text(_CTRL_C_CHILD.format(module=module, case=str(case), how=how))
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, env=env, timeout=120)
    assert proc.returncode == 130, proc.stderr[-2000:]
    assert "interrupted" in proc.stderr and "Traceback" not in proc.stderr


# --------------------------------------------------------------------------- the stress journal beside the result


def test_a_sweep_of_other_options_reuses_nothing_of_the_old_result(tiny_case_dir, tmp_path, monkeypatch):
    """The old result's journal seeds a new sweep only when it is the same sweep (case, settings, options):
    a sweep with hard rules over a priced one re-solves every element, and the old result, its journal
    included, is untouched until the new one replaces it at the end."""
    case = load_case(tiny_case_dir)
    out = tmp_path / "st"
    stress(case, out, workers=0, progress=False, report=False)
    running = tmp_path / f".st.{JOURNAL}"
    assert not running.exists()
    old = _snapshot(out)
    real_sweep = stress_mod.run_sweep

    def sweep_then_look(*args, **kwargs):
        result = real_sweep(*args, **kwargs)
        assert _snapshot(out) == old, "the sweep wrote into the old result"
        return result

    monkeypatch.setattr(stress_mod, "run_sweep", sweep_then_look)
    facts = _facts(stress(case, out, workers=0, progress=False, report=False, rules="hard"))
    monkeypatch.setattr(stress_mod, "run_sweep", real_sweep)
    assert facts["sweep_reused_from_journal"] == "0" and facts["sweep_resolved_now"] == facts["sweep_elements"]
    facts = _facts(stress(case, out, workers=0, progress=False, report=False, rules="hard"))
    assert facts["sweep_reused_from_journal"] == facts["sweep_elements"] and facts["sweep_resolved_now"] == "0"
    assert not running.exists()


def _facts(tables) -> dict[str, str]:
    return dict(zip(tables["info"]["key"], tables["info"]["value"]))
