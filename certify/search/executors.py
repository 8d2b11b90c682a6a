"""Run a sweep's blocks: in this process, on a local process pool, or on a Dask cluster.

The driver keeps a stack of blocks (depth first, so memory stays flat however many cells the
grid has) and a bounded number of blocks in flight. Whatever finishes first is handled first;
each block's work depends only on its own task, so the results do not depend on the order.
Certificates are written before the lines that name them.
"""

from __future__ import annotations

import concurrent.futures as cf
import itertools
from concurrent.futures.process import BrokenProcessPool
import multiprocessing
import time
from dataclasses import dataclass, field

from ..model.decimal import bounds_text, honest_digits
from ..model.numbers import exact_texts
from ..vocabulary import type_word
from .sweep import Job, Task, block_box, cells_of, child_tasks, n_cells, \
    needs_split, run_block

BATCH = 2048  # result lines per write
MAX_LOST_POOLS = 20  # pool restarts after dead workers before the sweep gives up


@dataclass
class Stats:
    """What one run of the driver did (cells finished earlier are not counted here)."""

    cells: int = 0
    certified: int = 0
    undecided: int = 0
    proofs: int = 0
    blocks: int = 0
    seconds: float = 0.0
    workers_lost: int = 0
    notes: list = field(default_factory=list)


class _InProcess:
    """An executor that runs each block at once, here (for --workers 1 and for tests)."""

    def submit(self, fn, *args):
        future = cf.Future()
        try:
            future.set_result(fn(*args))
        except BaseException as exc:  # handed to the driver like a worker's error
            future.set_exception(exc)
        return future

    @staticmethod
    def wait(futures):
        return set(futures)

    def shutdown(self):
        pass


class _Pool:
    """A local process pool; a pool broken by a dead worker is replaced and its blocks redone."""

    def __init__(self, workers: int):
        self.workers = workers
        self._new()

    def _new(self):
        # fork: workers start from this process as it is, with the model already imported
        # (forkserver and spawn would re-run a user's script that has no __main__ guard).
        self.pool = cf.ProcessPoolExecutor(self.workers,
                                           mp_context=multiprocessing.get_context("fork"))

    def submit(self, fn, *args):
        return self.pool.submit(fn, *args)

    @staticmethod
    def wait(futures):
        return cf.wait(futures, return_when=cf.FIRST_COMPLETED)[0]

    def restart(self):
        self.pool.shutdown(wait=False, cancel_futures=True)
        self._new()

    def shutdown(self):
        self.pool.shutdown(wait=True, cancel_futures=True)


class _Dask:
    """Blocks as Dask futures on a distributed scheduler; Dask reruns those of lost workers."""

    def __init__(self, address: str):
        try:
            from distributed import Client
        except ImportError:
            from ..errors import InputError

            raise InputError("--scheduler needs the distributed extra: pip install "
                             "'certify[distributed]'", None, "--scheduler") from None
        try:
            self.client = Client(address, timeout=20)
        except (OSError, TimeoutError) as exc:
            from ..errors import InputError

            raise InputError(f"cannot reach the scheduler ({exc})", None, "--scheduler") \
                from None

    def submit(self, fn, *args):
        return self.client.submit(fn, *args, pure=False)

    @staticmethod
    def wait(futures):
        from distributed import wait

        return set(wait(list(futures), return_when="FIRST_COMPLETED").done)

    def shutdown(self):
        self.client.close()


def executor(workers: int, scheduler: str | None):
    """Return the executor for the options."""
    if scheduler:
        return _Dask(scheduler)
    if workers <= 1:
        return _InProcess()
    return _Pool(workers)


def _name(block, prefix: str) -> str:
    return prefix + "-" + "-".join(f"{i0}_{i1}" for i0, i1 in block)


def _publish(job: Job, store, task: Task, result: dict) -> None:
    """Write the certificates of new proofs; replace them by their paths; round enclosures."""
    for k, found in enumerate(result["outcomes"]):
        if found is None or (task.inherited and task.inherited[k] is not None):
            continue
        prefix = "count" if job.mode == "scan" else f"e{k + 1}"
        if isinstance(found.get("certificate"), dict):
            found["certificate"] = store.certificate(_name(task.block, prefix),
                                                     found["certificate"])
            found["block"] = [list(r) for r in task.block]
        for m, part in enumerate(found.get("parts", [])):
            if isinstance(part.get("certificate"), dict):
                part["certificate"] = store.certificate(
                    _name(task.block, prefix) + f"-part{m + 1}", part["certificate"])
            part["parameters"] = exact_texts(part["parameters"])
            _describe(job, part)
        _describe(job, found)


def _describe(job: Job, found: dict) -> None:
    if found["verdict"] == "hyperbolic":
        found["type"] = type_word(job.model.kind, found["stable_dimension"],
                                  found["unstable_dimension"])
    if "enclosure" in found and found["enclosure"] and not isinstance(found["enclosure"], dict):
        from fractions import Fraction

        out = {}
        for v, (lo, hi) in zip(job.model.variables, found["enclosure"]):
            lo, hi = Fraction(lo), Fraction(hi)
            out[v] = list(bounds_text(lo, hi, honest_digits(lo, hi)))
        found["enclosure"] = out


def cell_records(job: Job, task: Task, result: dict, finished: set):
    """Yield the result lines of a finished block's cells (those not finished before)."""
    for cell in cells_of(task.block):
        if cell in finished:
            continue
        params = {a.name: exact_texts((a.edge(i), a.edge(i + 1))) for a, i in zip(job.axes, cell)}
        outcomes = result["outcomes"]
        ok = all(o["verdict"] != "undecided" for o in outcomes)
        record = {"cell": list(cell), "parameters": params,
                  "status": "certified" if ok else "undecided"}
        if job.mode == "scan":
            record.update({k: v for k, v in outcomes[0].items() if k != "verdict"})
            record["count"] = outcomes[0].get("count")
        else:
            record["equilibria"] = [{"equilibrium": k + 1, **o} for k, o in enumerate(outcomes)]
        yield record


def drive(job: Job, store, finished: set, workers: int = 1, scheduler: str | None = None,
          progress=None) -> Stats:
    """Run the sweep to the end; return what this run did."""
    stats = Stats()
    start = time.monotonic()
    root = tuple((0, a.n) for a in job.axes)
    starts = [list(g) for g in job.guesses] if job.mode == "guess" else [None]
    stack = [Task(root, starts, [])]
    total = n_cells(root)
    done = len(finished)
    runner = executor(workers, scheduler)
    limit = 2 * max(1, workers) if not scheduler else 64
    in_flight: dict = {}

    def unfinished(task: Task) -> bool:
        return not finished or any(c not in finished for c in cells_of(task.block))

    if progress is not None:
        progress(done, total, stats)
    try:
        while stack or in_flight:
            while stack and len(in_flight) < limit:
                task = stack.pop()
                if unfinished(task):
                    in_flight[runner.submit(run_block, job, task)] = task
            if not in_flight:
                break
            for future in runner.wait(in_flight):
                task = in_flight.pop(future)
                try:
                    result = future.result()
                except BrokenProcessPool:
                    stats.workers_lost += 1
                    if stats.workers_lost > MAX_LOST_POOLS:
                        raise RuntimeError("the local worker pool broke again and again (out "
                                           "of memory?); the finished cells are kept: run "
                                           "again with --resume") from None
                    stack += [task, *in_flight.values()]
                    in_flight.clear()
                    runner.restart()
                    break
                stats.blocks += 1
                stats.proofs += result["proofs"]
                _publish(job, store, task, result)
                if needs_split(task, result):
                    stack += reversed(child_tasks(job, task, result))
                    continue
                done = _store_cells(cell_records(job, task, result, finished), store, stats,
                                    done, total, progress)
    finally:
        runner.shutdown()
        stats.seconds = time.monotonic() - start
    return stats


def _store_cells(records, store, stats: Stats, done: int, total: int, progress) -> int:
    """Append a finished block's cells in batches (memory stays flat); return cells done."""
    while True:
        batch = list(itertools.islice(records, BATCH))
        if not batch:
            return done
        store.append(batch)
        for r in batch:
            stats.cells += 1
            if r["status"] == "certified":
                stats.certified += 1
            else:
                stats.undecided += 1
        done += len(batch)
        if progress is not None:
            progress(done, total, stats)


__all__ = ["Stats", "block_box", "drive", "executor"]
