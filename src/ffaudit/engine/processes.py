"""The local-processes back-end: a pool of worker processes, each holding the compiled context once.

The parent pickles the :class:`~ffaudit.audit.AuditContext` once; each worker unpickles it once in its
initializer (which recompiles the class rules) and keeps it for every chunk it is given. Chunks carry raw
record text or parsed records; workers send back the molecule output (dicts or encoded JSON lines) and the
chunk summary, never RDKit molecules.

Workers are started with the ``forkserver`` method where the platform has it (``spawn`` elsewhere): no
worker inherits the parent's threads (a progress bar, a Dask client) or open files, and the server imports
RDKit and ffaudit once for all workers.

When a worker dies (killed, out of memory, a crash inside RDKit), the pool is broken: it is replaced and
every chunk that had not come back is submitted again, so no record is lost and, results being taken per
chunk, none is duplicated. A chunk whose worker dies :data:`MAX_RESTARTS` times stops the run with
:class:`~ffaudit.engine.base.EngineError` naming its records.
"""

from __future__ import annotations

import multiprocessing
import pickle
from concurrent.futures import Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from ffaudit.audit import AuditContext
from ffaudit.engine import allocator
from ffaudit.engine.base import ChunkJob, ChunkOptions, ChunkResult, EngineError
from ffaudit.engine.work import run_chunk

MAX_RESTARTS = 3
"""How many times one chunk may lose its worker before the run gives up."""

POLL_SECONDS = 2.0
"""How often a wait for a chunk checks that every worker is still alive. The pool itself notices a dead
worker almost always, but a worker killed while it holds the pool's result queue can leave its futures
pending for ever; the check turns that into the same break (and recovery)."""

_WORKER_CONTEXT: AuditContext | None = None
_WORKER_OPTIONS: ChunkOptions | None = None


def _initialise(payload: bytes, options: ChunkOptions) -> None:
    global _WORKER_CONTEXT, _WORKER_OPTIONS
    allocator.tune()
    _WORKER_CONTEXT = pickle.loads(payload)
    _WORKER_OPTIONS = options


def _work(job: ChunkJob) -> ChunkResult:
    if (
        _WORKER_CONTEXT is None or _WORKER_OPTIONS is None
    ):  # pragma: no cover - set by the initializer
        raise EngineError("worker process started without its audit context")
    return run_chunk(_WORKER_CONTEXT, job, _WORKER_OPTIONS)


def _mp_context() -> Any:
    methods = multiprocessing.get_all_start_methods()
    if "forkserver" in methods:
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(["ffaudit.engine.work"])
        return ctx
    return multiprocessing.get_context("spawn")


class ProcessBackend:
    """``jobs`` worker processes; keeps ``in_flight`` chunks submitted (default ``2 * jobs``)."""

    def __init__(
        self,
        context: AuditContext,
        options: ChunkOptions,
        *,
        jobs: int,
        in_flight: int | None = None,
    ) -> None:
        self.jobs = jobs
        self.in_flight = in_flight or 2 * jobs
        self._payload = pickle.dumps(context, protocol=pickle.HIGHEST_PROTOCOL)
        self._options = options
        self._pending: dict[int, tuple[ChunkJob, Future[ChunkResult]]] = {}
        self._restarts: dict[int, int] = {}
        self.restarts = 0
        """Times the pool was replaced after losing a worker (for reports and tests)."""
        self._pool = self._start()

    def _start(self) -> ProcessPoolExecutor:
        try:
            return ProcessPoolExecutor(
                max_workers=self.jobs,
                mp_context=_mp_context(),
                initializer=_initialise,
                initargs=(self._payload, self._options),
            )
        except OSError as exc:
            raise EngineError(f"cannot start {self.jobs} worker processes: {exc}") from exc

    def worker_pids(self) -> list[int]:
        """Process ids of the current workers (those started so far)."""
        processes = getattr(self._pool, "_processes", None) or {}
        return sorted(processes)

    def submit(self, job: ChunkJob) -> Future[ChunkResult]:
        try:
            future = self._pool.submit(_work, job)
        except BrokenProcessPool as exc:
            # A worker died between two submissions: hand the break to wait(), which recovers from it
            # exactly as from a break seen while waiting (new pool, every unfinished chunk again).
            future = Future()
            future.set_exception(exc)
        self._pending[job.number] = (job, future)
        return future

    def wait(self, job: ChunkJob, future: Any) -> ChunkResult:
        while True:
            _, current = self._pending[job.number]
            try:
                result = self._result(current)
            except BrokenProcessPool:
                self._recover(job)
                continue
            except EngineError:
                raise
            except Exception as exc:
                raise EngineError(
                    f"chunk {job.number} (records {job.first}..{job.last}): the worker failed: "
                    f"{type(exc).__name__}: {exc}"
                ) from exc
            del self._pending[job.number]
            self._restarts.pop(job.number, None)
            return result

    def _result(self, future: Future[ChunkResult]) -> ChunkResult:
        """``future.result()``, raising ``BrokenProcessPool`` when a worker has died meanwhile."""
        while True:
            try:
                return future.result(timeout=POLL_SECONDS)
            except TimeoutError:
                if self._lost_worker():
                    raise BrokenProcessPool("a worker process died while chunks were pending") from None

    def _lost_worker(self) -> bool:
        processes = getattr(self._pool, "_processes", None) or {}
        return any(process.exitcode is not None for process in list(processes.values()))

    def _discard_pool(self) -> None:
        """Shut the current pool down without waiting on it (it may be wedged) and end its workers.

        A worker killed while it wrote a result leaves half a message in the result pipe, and the pool's
        manager thread waits for the rest for ever, which would also hang the interpreter at exit (it
        joins that thread). With the workers gone, closing this process's end of the pipe gives the thread
        end-of-file: it then marks the pool broken and ends. (``shutdown`` drops the pool's references to
        the pipe and the thread, so they are taken first.)
        """
        pool = self._pool
        processes = list((getattr(pool, "_processes", None) or {}).values())
        writer = getattr(getattr(pool, "_result_queue", None), "_writer", None)
        manager = getattr(pool, "_executor_manager_thread", None)
        pool.shutdown(wait=False, cancel_futures=True)
        for process in processes:
            if process.exitcode is None:
                process.kill()
        for process in processes:
            process.join(timeout=10)
        if writer is not None:
            writer.close()
        if manager is not None:
            manager.join(timeout=10)

    def _recover(self, job: ChunkJob) -> None:
        """Replace the broken pool and submit again every chunk that has not come back."""
        count = self._restarts.get(job.number, 0) + 1
        self._restarts[job.number] = count
        if count > MAX_RESTARTS:
            raise EngineError(
                f"chunk {job.number} (records {job.first}..{job.last}): its worker process died "
                f"{count} times; a record in it may crash RDKit (run it with --jobs 1 to see which)"
            )
        self._discard_pool()
        self._pool = self._start()
        self.restarts += 1
        waiting = sorted(self._pending.values(), key=lambda item: item[0].number)
        self._pending = {}
        for pending_job, old in waiting:
            if old.done() and old.exception() is None:
                self._pending[pending_job.number] = (pending_job, old)  # came back before the break
            else:
                self.submit(pending_job)

    def close(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)
