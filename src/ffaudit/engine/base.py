"""The engine's one interface: chunks of records in, audited chunks out, in input order.

A run is a stream of :class:`ChunkJob` objects (numbered chunks of consecutive records, carried either as
parsed :class:`~ffaudit.read.record.Record` objects or as raw record text that the worker parses, see
:mod:`ffaudit.engine.rawsplit`). A back-end audits each chunk with :func:`ffaudit.engine.work.run_chunk` where
it runs, and :func:`audit_chunks` yields the :class:`ChunkResult` objects in chunk order whatever order the
workers finish in. At most ``in_flight`` chunks are submitted and not yet handed on, so memory stays bounded
however long the input is.

Back-ends (``backend=``):

- ``"inprocess"``: one chunk after another in this process;
- ``"processes"``: ``jobs`` local worker processes (:mod:`ffaudit.engine.processes`);
- ``"dask"``: a Dask cluster, a scheduler address or ``"local"`` for a LocalCluster of ``jobs`` workers
  (:mod:`ffaudit.engine.dask_backend`; needs the ``dask`` extra).

Every back-end runs the same chunk function on the same chunks, and every result is checked against its job
(chunk number, first record index, record count, and the indices inside), so the output is the same byte for
byte whatever the back-end and job count, and a result that would lose or duplicate a record stops the run
with :class:`EngineError` instead of being written.
"""

from __future__ import annotations

import os
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any, Protocol

from ffaudit.audit import AuditContext, Summary
from ffaudit.errors import FfauditError
from ffaudit.read.record import Record

BACKENDS: tuple[str, ...] = ("inprocess", "processes", "dask")

DEFAULT_CHUNK_SIZE = 200
"""Records per chunk: large enough that shipping a chunk costs little next to auditing it, small enough
that a chunk's results (``--terms all``) stay a few megabytes and a lost worker loses little work."""


class EngineError(FfauditError):
    """A back-end could not deliver a chunk (a worker failed, a result does not match its job)."""


class ChunkPayload(Protocol):
    """The records of one chunk, in a form that can be pickled to a worker."""

    def records(self) -> Iterator[Record]:
        """The chunk's records in input order (parsed here, in the worker, when the payload is raw text)."""
        ...


@dataclass(frozen=True)
class ParsedRecords:
    """A payload of records already parsed (molecules travel as RDKit pickles)."""

    items: tuple[Record, ...]

    def records(self) -> Iterator[Record]:
        return iter(self.items)


@dataclass(frozen=True)
class ChunkJob:
    """Chunk ``number`` (0-based): ``count`` records with input indices ``first`` .. ``first + count - 1``."""

    number: int
    first: int
    count: int
    payload: ChunkPayload

    @property
    def last(self) -> int:
        """Index of the chunk's last record (``first - 1`` for an empty chunk)."""
        return self.first + self.count - 1


@dataclass(frozen=True)
class ChunkOptions:
    """What a worker returns for each chunk.

    ``terms`` is the ``--terms`` mode of the molecule dicts. With ``encode`` the molecules come back as one
    compact JSON line each (exactly what ``--format jsonl`` writes) instead of dicts; with ``parquet`` also as a
    Parquet file (bytes) of :mod:`ffaudit.engine.parquet`'s table. Encoding in the workers keeps the parent
    process free for writing.
    """

    terms: str = "all"
    encode: bool = False
    parquet: bool = False
    directory: str | None = None
    """With ``encode``: the output directory the worker writes the chunk's JSONL (and Parquet) files into
    itself, returning only their names, sizes and sha256 (for workers that share the directory's file
    system: this process, local worker processes, a LocalCluster); None to return the bytes."""
    spool: str | None = None
    """With ``encode`` and no ``directory``: a directory on the workers' file system where each chunk's
    JSON lines are written (``chunk-NNNNNN.jsonl``, atomically) instead of being sent back; the result names
    the file (:attr:`ChunkResult.spooled`) and the receiver reads and removes it. For local workers, whose
    results would otherwise be pickled through a pipe or a socket (with ``--terms all``, about 100 KB per
    molecule)."""


@dataclass(frozen=True)
class ChunkResult:
    """The audit of one chunk: the per-molecule output and the chunk's :class:`Summary`.

    Exactly one of ``molecules`` (dicts) and ``jsonl`` (UTF-8 text, one line per molecule) is set, according to
    :attr:`ChunkOptions.encode`. ``summary`` covers the chunk's records only; merge summaries in chunk order.
    ``worker`` names where it ran (diagnostics only, never part of the output).
    """

    number: int
    first: int
    count: int
    summary: Summary
    molecules: tuple[dict[str, Any], ...] | None = None
    jsonl: bytes | None = None
    parquet: bytes | None = None
    files: Mapping[str, Mapping[str, Any]] | None = None
    """Set instead of ``jsonl`` and ``parquet`` when the worker wrote them into
    :attr:`ChunkOptions.directory`: kind -> ``{"name", "bytes", "sha256"}``."""
    lines: int | None = None
    """With ``files`` or ``spooled``: the number of JSON lines the worker wrote."""
    spooled: str | None = None
    """With :attr:`ChunkOptions.spool`: the path of the file holding the chunk's JSON lines (set instead of
    ``jsonl``); the receiver removes it once read."""
    worker: str = field(default="", compare=False)


class Future(Protocol):
    """What the ordered driver needs of a submitted chunk (``concurrent.futures`` and Dask futures fit)."""

    def result(self, timeout: float | None = None) -> Any: ...


class Backend(Protocol):
    """A place to run chunks. ``submit`` must not block for long; ``close`` releases workers."""

    in_flight: int

    def submit(self, job: ChunkJob) -> Future: ...

    def wait(self, job: ChunkJob, future: Future) -> ChunkResult:
        """The result of ``job`` (resubmitting it if the back-end lost it). Raises :class:`EngineError`."""
        ...

    def close(self) -> None: ...


def default_jobs() -> int:
    """The number of cores this process may use (its CPU affinity where the system tells it)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def chunk_records(
    records: Iterable[Record], chunk_size: int = DEFAULT_CHUNK_SIZE
) -> Iterator[ChunkJob]:
    """Group parsed records into consecutive chunks of ``chunk_size`` (the last one may be shorter).

    Raises :class:`ValueError` when ``chunk_size`` is below 1 and :class:`EngineError` when the records'
    indices are not consecutive (the engine's no-loss check relies on it).
    """
    if chunk_size < 1:
        raise ValueError(f"chunk size must be at least 1, not {chunk_size}")
    batch: list[Record] = []
    number = 0
    expected: int | None = None
    for record in records:
        if expected is not None and record.index != expected:
            raise EngineError(
                f"record {record.record} of {record.path} has index {record.index}, expected {expected}"
            )
        expected = record.index + 1
        batch.append(record)
        if len(batch) == chunk_size:
            yield ChunkJob(number, batch[0].index, len(batch), ParsedRecords(tuple(batch)))
            number += 1
            batch = []
    if batch:
        yield ChunkJob(number, batch[0].index, len(batch), ParsedRecords(tuple(batch)))


def check_result(job: ChunkJob, result: ChunkResult) -> ChunkResult:
    """Return ``result`` when it is the complete audit of ``job``; raise :class:`EngineError` otherwise."""
    if (result.number, result.first, result.count) != (job.number, job.first, job.count):
        raise EngineError(
            f"chunk {job.number} (records {job.first}..{job.last}): the worker returned chunk "
            f"{result.number} with {result.count} records from index {result.first}"
        )
    if result.summary.records != job.count:
        raise EngineError(
            f"chunk {job.number} (records {job.first}..{job.last}): the summary counts "
            f"{result.summary.records} records, expected {job.count}"
        )
    if result.molecules is not None:
        delivered = len(result.molecules)
    elif result.files is not None or result.spooled is not None:
        delivered = result.lines or 0
    else:
        delivered = (result.jsonl or b"").count(b"\n")
    if delivered != job.count:
        raise EngineError(
            f"chunk {job.number} (records {job.first}..{job.last}): {delivered} molecules delivered, "
            f"expected {job.count}"
        )
    return result


def ordered(backend: Backend, jobs: Iterable[ChunkJob]) -> Iterator[ChunkResult]:
    """Submit ``jobs`` to ``backend`` keeping at most ``backend.in_flight`` pending; yield results in order."""
    pending: deque[tuple[ChunkJob, Future]] = deque()
    source = iter(jobs)
    exhausted = False
    while True:
        while not exhausted and len(pending) < max(1, backend.in_flight):
            job = next(source, None)
            if job is None:
                exhausted = True
                break
            pending.append((job, backend.submit(job)))
        if not pending:
            return
        job, future = pending.popleft()
        yield check_result(job, backend.wait(job, future))


def open_backend(
    context: AuditContext,
    options: ChunkOptions,
    *,
    backend: str = "inprocess",
    jobs: int | None = None,
    scheduler: str | None = None,
    in_flight: int | None = None,
) -> Backend:
    """Start a back-end holding ``context`` (compiled once per worker). Call ``close()`` when done.

    ``jobs`` is the number of worker processes (default: :func:`default_jobs`); for a remote Dask scheduler
    it only sets how many chunks are kept in flight (the cluster decides how many workers there are).
    Raises :class:`ffaudit.errors.UsageError` for an unknown back-end or a missing Dask installation, and
    :class:`EngineError` when workers cannot be started or the scheduler cannot be reached.
    """
    from ffaudit.errors import UsageError

    n = default_jobs() if jobs is None else jobs
    if n < 1:
        raise UsageError(f"the number of jobs must be at least 1, not {n}")
    if backend == "inprocess":
        from ffaudit.engine.inprocess import InProcessBackend

        return InProcessBackend(context, options)
    if backend == "processes":
        from ffaudit.engine.processes import ProcessBackend

        return ProcessBackend(context, options, jobs=n, in_flight=in_flight)
    if backend == "dask":
        from ffaudit.engine.dask_backend import DaskBackend

        return DaskBackend(
            context, options, scheduler=scheduler or "local", jobs=n, in_flight=in_flight
        )
    raise UsageError(
        f"unknown engine back-end {backend!r} (expected one of: {', '.join(BACKENDS)})"
    )


def audit_chunks(
    context: AuditContext,
    jobs: Iterable[ChunkJob],
    *,
    options: ChunkOptions | None = None,
    backend: str = "inprocess",
    n_jobs: int | None = None,
    scheduler: str | None = None,
    in_flight: int | None = None,
    on_start: Callable[[Backend], None] | None = None,
) -> Iterator[ChunkResult]:
    """Audit chunk jobs on ``backend``; yield one :class:`ChunkResult` per job, in job order.

    The back-end is started on first iteration and closed when the iterator is exhausted or closed.
    ``on_start`` is called with the started back-end (tests use it to reach the workers).
    Raises as :func:`open_backend`, and :class:`EngineError` when a chunk cannot be audited.
    """
    runner = open_backend(
        context,
        options or ChunkOptions(),
        backend=backend,
        jobs=n_jobs,
        scheduler=scheduler,
        in_flight=in_flight,
    )
    try:
        if on_start is not None:
            on_start(runner)
        yield from ordered(runner, jobs)
    finally:
        runner.close()


def audit_stream(
    context: AuditContext,
    records: Iterable[Record] | Iterable[ChunkJob],
    *,
    backend: str = "inprocess",
    jobs: int | None = None,
    scheduler: str | None = None,
    chunk_size: int = DEFAULT_CHUNK_SIZE,
    terms: str = "all",
    in_flight: int | None = None,
    on_start: Callable[[Backend], None] | None = None,
) -> Iterator[ChunkResult]:
    """Audit a stream of records (or of ready chunk jobs) and yield :class:`ChunkResult` in input order.

    Each result carries the molecule dicts (``MoleculeAudit.to_dict(pset, terms)``) of ``chunk_size``
    consecutive records and their :class:`Summary`. For a library file prefer
    :func:`ffaudit.engine.rawsplit.plan_library`, whose chunks are parsed by the workers.
    Raises as :func:`audit_chunks`.
    """
    items = iter(records)
    first = next(items, None)
    if first is None:
        return
    stream: Iterable[Any] = _prepend(first, items)
    chunk_jobs = stream if isinstance(first, ChunkJob) else chunk_records(stream, chunk_size)
    yield from audit_chunks(
        context,
        chunk_jobs,
        options=ChunkOptions(terms=terms),
        backend=backend,
        n_jobs=jobs,
        scheduler=scheduler,
        in_flight=in_flight,
        on_start=on_start,
    )


def _prepend(first: Any, rest: Iterator[Any]) -> Iterator[Any]:
    yield first
    yield from rest
