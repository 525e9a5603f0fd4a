"""The Dask back-end: chunks run on a Dask cluster (``--scheduler ADDRESS``, or ``local`` for a LocalCluster).

The compiled context travels once per worker, as a worker plugin: the client pickles it once, the scheduler
hands the plugin to every worker that is connected or joins later, and each worker unpickles it once and
keeps it under the run's token until the run ends (the plugin is removed then, so a long-lived cluster does
not keep old parameter sets). Each chunk is one task with its own key; results are taken in chunk order, from
the workers directly for a LocalCluster (for a cluster at an address, as Dask's configuration says:
``distributed.client.direct-to-workers``, off by default since workers may not be reachable from here).

When a worker dies, the scheduler runs its tasks again elsewhere (Dask's own resubmission). Results are
taken per chunk and checked against the job by :func:`ffaudit.engine.base.check_result` (chunk number,
first index, count), so a chunk audited twice is still delivered once and a chunk that never comes back
stops the run with :class:`~ffaudit.engine.base.EngineError` rather than being skipped. A chunk Dask gives up
on (its workers died :data:`distributed` ``allowed-failures`` times) stops the run the same way.

Needs the ``dask`` extra (``pip install 'ffaudit[dask]'``); without it :class:`DaskBackend` raises
:class:`~ffaudit.errors.UsageError` saying so.
"""

from __future__ import annotations

import contextlib
import hashlib
import logging
import pickle
import uuid
from typing import Any

from ffaudit.audit import AuditContext
from ffaudit.engine import allocator
from ffaudit.engine.base import ChunkJob, ChunkOptions, ChunkResult, EngineError
from ffaudit.engine.work import run_chunk
from ffaudit.errors import UsageError

LOCAL = "local"
"""The scheduler value that starts a LocalCluster on this machine for the run."""

CONNECT_TIMEOUT = "20s"
"""How long to wait for a scheduler to answer before giving up."""

try:
    from distributed.diagnostics.plugin import WorkerPlugin as _WorkerPlugin

    HAVE_DISTRIBUTED = True
except ImportError:  # the dask extra is not installed; DaskBackend says so
    _WorkerPlugin = object  # type: ignore[misc, assignment]
    HAVE_DISTRIBUTED = False

_CONTEXTS: dict[str, AuditContext] = {}
"""On a worker: the contexts of the runs it serves, by run token (filled by the plugin)."""


class ContextPlugin(_WorkerPlugin):
    """Unpickles the run's context once on each worker and drops it at the end of the run.

    Defined at module level so that workers import it by name (and fill this module's ``_CONTEXTS``).
    """

    def __init__(self, token: str, payload: bytes) -> None:
        self.token = token
        self.payload = payload

    def setup(self, worker: Any) -> None:
        _CONTEXTS[self.token] = pickle.loads(self.payload)

    def teardown(self, worker: Any) -> None:
        _CONTEXTS.pop(self.token, None)


def run_task(token: str, job: ChunkJob, options: ChunkOptions) -> ChunkResult:
    """The task each chunk runs on a worker. Raises :class:`EngineError` when the context is missing."""
    context = _CONTEXTS.get(token)
    if context is None:
        raise EngineError(
            f"this Dask worker has no audit context for run {token} (plugin not installed)"
        )
    return run_chunk(context, job, options)


class DaskBackend:
    """Runs chunks on a Dask cluster; keeps ``in_flight`` chunks submitted (default: twice the workers)."""

    def __init__(
        self,
        context: AuditContext,
        options: ChunkOptions,
        *,
        scheduler: str = LOCAL,
        jobs: int = 1,
        in_flight: int | None = None,
    ) -> None:
        if not HAVE_DISTRIBUTED:
            raise UsageError(
                "the Dask back-end (--scheduler) needs dask.distributed: pip install 'ffaudit[dask]'"
            )
        import dask
        import distributed

        self.options = options
        self.scheduler = scheduler
        self._cluster: Any = None
        try:
            if scheduler == LOCAL:
                # Dask's statistical profiler samples every worker thread's stack every 10 ms, holding the
                # GIL: measured, it slowed the audit in a worker by about a quarter (nobody reads its
                # profiles in a run we start ourselves; a cluster of one's own keeps its own settings)
                # and with ffaudit's allocator settings in the workers' environment, in place of the
                # MALLOC_TRIM_THRESHOLD_ Dask's nannies set (see ffaudit.engine.allocator: that one makes
                # every large buffer be mapped afresh; measured, 230,000 to 300,000 page faults per
                # worker on NCI first_5K against 6,000 to 7,500, and about 10% more CPU time)
                environ = {
                    **dask.config.get("distributed.nanny.pre-spawn-environ", {}),
                    **allocator.environment(),
                }
                settings = {
                    "distributed.worker.profile.enabled": False,
                    "distributed.nanny.pre-spawn-environ": environ,
                }
                with dask.config.set(settings):
                    self._cluster = distributed.LocalCluster(  # type: ignore[no-untyped-call]
                        n_workers=jobs,
                        threads_per_worker=1,
                        processes=True,
                        host="127.0.0.1",
                        dashboard_address=None,
                        silence_logs=logging.ERROR,
                    )
                # results are fetched from the workers directly: through the scheduler (Dask's default
                # for a client outside the cluster) every chunk's output would cross one more connection
                # and the scheduler's event loop, which runs in this process (measured on NCI first_5K
                # with --terms all: this process's CPU time 1.2 s -> 0.85 s, the run 15% shorter)
                self.client = distributed.Client(  # type: ignore[no-untyped-call]
                    self._cluster, timeout=CONNECT_TIMEOUT, direct_to_workers=True
                )
            else:
                self.client = distributed.Client(  # type: ignore[no-untyped-call]
                    scheduler, timeout=CONNECT_TIMEOUT
                )
        except (OSError, TimeoutError) as exc:
            self._close_cluster()
            raise EngineError(f"cannot reach the Dask scheduler {scheduler}: {exc}") from exc
        payload = pickle.dumps(context, protocol=pickle.HIGHEST_PROTOCOL)
        digest = hashlib.sha256(payload).hexdigest()[:12]
        self.token = f"{digest}-{uuid.uuid4().hex[:12]}"
        self._submitted = 0
        self._plugin_name = f"ffaudit-context-{self.token}"
        try:
            self.client.register_plugin(ContextPlugin(self.token, payload), name=self._plugin_name)
        except Exception as exc:
            self.close()
            raise EngineError(
                f"cannot install the audit context on the Dask workers: {exc}"
            ) from exc
        workers = max(jobs, len(self.client.scheduler_info(n_workers=-1).get("workers", {})))
        self.in_flight = in_flight or 2 * workers

    def submit(self, job: ChunkJob) -> Any:
        # a key of its own per submission: a released key may still be known to the scheduler for a
        # while, and a second stream on this back-end (chunk numbers start again at 0) would get its result
        self._submitted += 1
        return self.client.submit(
            run_task,
            self.token,
            job,
            self.options,
            key=f"ffaudit-chunk-{self.token}-{job.number:06d}-{self._submitted}",
            pure=False,
        )

    def wait(self, job: ChunkJob, future: Any) -> ChunkResult:
        try:
            result: ChunkResult = future.result()
        except EngineError:
            raise
        except Exception as exc:
            raise EngineError(
                f"chunk {job.number} (records {job.first}..{job.last}) failed on the Dask cluster: "
                f"{type(exc).__name__}: {exc}"
            ) from exc
        finally:
            future.release()
        return result

    def close(self) -> None:
        client = getattr(self, "client", None)
        if client is not None:
            # the cluster may be gone already, leaving nothing to clean up on it
            with contextlib.suppress(Exception):
                client.unregister_worker_plugin(self._plugin_name)
            client.close()
        self._close_cluster()

    def _close_cluster(self) -> None:
        if self._cluster is not None:
            self._cluster.close()
            self._cluster = None
