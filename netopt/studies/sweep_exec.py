"""Where a sweep's tasks run and how finished ones are kept: local pool, Dask cluster, journal.

A task is a pure function ``task(spec, element) -> row`` (a module-level function, so it
pickles by reference).  It runs in a local process pool (forkserver start: no worker is
forked from a process holding solver threads), on a Dask distributed cluster, or in this
process.  Every finished row is appended, flushed and fsynced, to a JSONL journal whose
first line names the sweep's key, so a restarted sweep skips what is already done.

A pool worker ends itself when the process that started the pool dies (even by kill -9): it
watches its parent's sentinel, so no worker, forkserver or resource tracker outlives a killed run.
"""

from __future__ import annotations

import json
import multiprocessing as mp
import os
import threading
import time
import uuid
from collections.abc import Callable
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from pathlib import Path
from typing import Any

from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn, TimeRemainingColumn

from netopt.data.limits import CONNECT_TIMEOUT_S, MAX_WORKERS

JOURNAL = "sweep_journal.jsonl"
JOURNAL_FORMAT = "netopt stress sweep journal v2"  # v2: safety stock on held lines, a DC out stays paid for

Task = Callable[[Any, dict], dict]  # task(spec, element) -> row

ORPHAN_EXIT = 70  # exit code of a pool worker whose parent died (EX_SOFTWARE)


def where_running() -> str:
    """Where this task runs: a Dask worker address or this process id."""
    try:
        from distributed import get_worker

        return f"dask {get_worker().address}"
    except (ImportError, ValueError):
        return f"pid {os.getpid()}"


# pool plumbing: the task function and its spec are installed once per worker process
_POOL: dict = {}


def _pool_init(task: Task, spec: object, prepare: Callable[[object], object] | None) -> None:
    end_with_parent()
    _POOL["task"], _POOL["spec"] = task, spec
    if prepare is not None:
        prepare(spec)  # e.g. build the worker's kept model now, not inside the first task


def _pool_task(el: dict) -> dict:
    return _POOL["task"](_POOL["spec"], el)


def end_with_parent() -> None:
    """In a pool worker: end this process (``os._exit``) as soon as the process that started it dies.

    A daemon thread waits on the parent's sentinel (with forkserver the parent is the process that asked
    for the worker, not the forkserver; the sentinel is a pipe that reads end-of-file when it is gone), so
    a worker busy in a re-solve ends too.  The forkserver and the resource tracker end by themselves
    once no worker holds their pipes.  Nothing happens outside a child process.
    """
    parent = mp.parent_process()
    if parent is None:
        return

    def watch() -> None:
        try:
            parent.join()
        except (OSError, ValueError):  # the sentinel was closed: this process is ending anyway
            return
        os._exit(ORPHAN_EXIT)

    threading.Thread(target=watch, name="netopt-parent-watch", daemon=True).start()


# ---------------------------------------------------------------------------------- journal


def read_journal(path: Path, key: str) -> tuple[dict[str, dict], bool]:
    """Finished rows by element id and whether the journal belongs to ``key`` (a torn last line is ignored)."""
    if not path.exists():
        return {}, True
    rows: dict[str, dict] = {}
    with open(path, encoding="utf-8") as fh:
        lines = fh.read().split("\n")
    if not lines or not lines[0].strip():
        return {}, False
    try:
        head = json.loads(lines[0])
    except json.JSONDecodeError:
        return {}, False
    if head.get("journal") != JOURNAL_FORMAT or head.get("key") != key:
        return {}, False
    for line in lines[1:]:
        if not line.strip():
            continue
        try:
            r = json.loads(line)
        except json.JSONDecodeError:
            continue  # a line torn by a kill mid-write
        rows[r["id"]] = r
    return rows, True


def open_journal(path: Path, key: str, fresh: bool):
    """Open the journal for appending (new file with a header line when ``fresh``)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    if fresh or not path.exists():
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(
                json.dumps({"journal": JOURNAL_FORMAT, "key": key, "started": time.strftime("%Y-%m-%d %H:%M:%S")})
                + "\n"
            )
            fh.flush()
            os.fsync(fh.fileno())
    else:
        # Cut a torn last line so the next row starts on a line of its own.
        with open(path, "rb+") as fh:
            data = fh.read()
            if data and not data.endswith(b"\n"):
                fh.truncate(data.rfind(b"\n") + 1)
    return open(path, "a", encoding="utf-8")


def append_row(fh, row: dict) -> None:
    """Append one finished row to the journal, flushed and fsynced (survives kill -9)."""
    fh.write(json.dumps(row) + "\n")
    fh.flush()
    os.fsync(fh.fileno())


# ---------------------------------------------------------------------------------- executors


def pool_context():
    """Start method for pool workers: forkserver where available (no fork of a process holding HiGHS threads)."""
    methods = mp.get_all_start_methods()
    ctx = mp.get_context("forkserver" if "forkserver" in methods else "spawn")
    if ctx.get_start_method() == "forkserver":
        ctx.set_forkserver_preload(["netopt.studies.resilience", "netopt.engine.held", "netopt.engine.solve"])
    return ctx


def check_workers(workers: int | None) -> None:
    """ValueError unless ``workers`` is None (all cores) or 0 (in this process) to :data:`MAX_WORKERS`."""
    if workers is not None and not (isinstance(workers, int) and 0 <= workers <= MAX_WORKERS):
        raise ValueError(
            f"workers must be a whole number from 0 (in this process) to {MAX_WORKERS}, or None (all cores), "
            f"not {workers!r}"
        )


def run_local(task: Task, spec, todo: list[dict], workers: int, done_cb, prepare=None) -> None:
    """Run ``task(spec, el)`` for each element on a local process pool; ``done_cb(el, row)`` as each finishes."""
    ex = ProcessPoolExecutor(
        max_workers=workers, mp_context=pool_context(), initializer=_pool_init, initargs=(task, spec, prepare)
    )
    futs = {}
    try:
        futs = {ex.submit(_pool_task, el): el for el in todo}
        pending = set(futs)
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for f in sorted(done, key=lambda f: futs[f]["id"]):
                done_cb(futs[f], f.result())
    except BaseException:
        for f in futs:
            f.cancel()
        ex.shutdown(wait=False, cancel_futures=True)
        raise
    ex.shutdown(wait=True)


class SchedulerUnreachable(Exception):
    """The Dask scheduler address is malformed or no scheduler answered there in time."""


def connect_scheduler(address: str, timeout_s: float = CONNECT_TIMEOUT_S):
    """A ``distributed.Client`` connected to the scheduler at ``address`` within ``timeout_s`` seconds, or
    :class:`SchedulerUnreachable` naming the address, the time waited and the reason."""
    try:
        from distributed import Client
    except ImportError as e:  # pragma: no cover - the cluster extra is not installed
        raise SchedulerUnreachable(
            "running on a Dask cluster needs the 'distributed' package (pip install 'netopt[cluster]')"
        ) from e
    t0 = time.perf_counter()
    try:
        return Client(address, timeout=timeout_s)
    except (ValueError, TypeError) as e:  # distributed's words for an address it cannot parse
        raise SchedulerUnreachable(
            f"--scheduler {address!r} is not a scheduler address ({e}): give it as tcp://HOST:PORT"
        ) from e
    except Exception as e:  # any other failure to connect: refused, timed out, not a scheduler answering
        raise SchedulerUnreachable(
            f"could not connect to the Dask scheduler at {address!r} within {timeout_s:g} s "
            f"({type(e).__name__}: {e}; gave up after {time.perf_counter() - t0:.1f} s): check that the "
            "scheduler runs and is reachable from here"
        ) from e


def run_dask(task: Task, spec, todo: list[dict], scheduler, done_cb) -> None:
    """Run ``task(spec, el)`` for each element on a Dask cluster (address or ``distributed.Client``)."""
    from distributed import as_completed

    own = isinstance(scheduler, str)
    client = connect_scheduler(scheduler) if own else scheduler
    futs = []
    try:
        token = uuid.uuid4().hex[:12]
        spec_f = client.scatter(spec, broadcast=True, hash=False)
        futs = [
            client.submit(task, spec_f, el, pure=False, key=f"netopt-sweep-{token}-{i}") for i, el in enumerate(todo)
        ]
        by_key = {f.key: el for f, el in zip(futs, todo)}
        for f in as_completed(futs):
            done_cb(by_key[f.key], f.result())
    except BaseException:
        client.cancel(futs)
        raise
    finally:
        if own:
            client.close()


def run_inline(task: Task, spec, todo: list[dict], done_cb) -> None:
    """Run ``task(spec, el)`` for each element in this process."""
    for el in todo:
        done_cb(el, task(spec, el))


def progress_bar(total: int, completed: int, label: str):
    """A progress bar on stderr: done/total, elapsed, ETA."""

    p = Progress(
        TextColumn("{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TextColumn("elapsed"),
        TimeElapsedColumn(),
        TextColumn("ETA"),
        TimeRemainingColumn(),
        console=Console(stderr=True),
        transient=False,
    )
    task = p.add_task(label, total=total, completed=completed)
    return p, task


# ---------------------------------------------------------------------------------- the sweep
