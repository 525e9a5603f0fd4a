"""What a worker does with one chunk: parse (if raw), audit, build the output, summarise, check.

This is the only code that audits records in every back-end, so the output cannot depend on where it ran.
Records are audited by the batched fast path (:func:`ffaudit.engine.batch.audit_records`), which gives the
same audits as the reference :meth:`AuditContext.audit_record`; setting the environment variable
``FFAUDIT_REFERENCE_PATH=1`` where the chunks run makes them use the reference, one record at a time (for
debugging; the output is the same, only slower).
"""

from __future__ import annotations

import gc
import os
import socket
from collections.abc import Iterator
from pathlib import Path

from ffaudit.audit import AuditContext, MoleculeAudit, Summary
from ffaudit.engine.base import ChunkJob, ChunkOptions, ChunkResult, EngineError
from ffaudit.engine.batch import audit_records
from ffaudit.read.record import Record

REFERENCE_PATH_VARIABLE = "FFAUDIT_REFERENCE_PATH"
"""Set to ``1`` (in the environment of the process that runs the chunks) to audit with the reference path."""


def use_reference_path() -> bool:
    """True when :data:`REFERENCE_PATH_VARIABLE` asks for the reference path (read at each chunk)."""
    return os.environ.get(REFERENCE_PATH_VARIABLE, "") not in ("", "0")


def audit_chunk_records(
    context: AuditContext, records: Iterator[Record]
) -> Iterator[MoleculeAudit]:
    """One audit per record, in input order: the fast path, or the reference when asked for.

    Never raises for a bad record; exceptions raised by ``records`` itself propagate.
    """
    if use_reference_path():
        return (context.audit_record(record) for record in records)
    return audit_records(context, records)


def run_chunk(context: AuditContext, job: ChunkJob, options: ChunkOptions) -> ChunkResult:
    """Audit every record of ``job`` with ``context``.

    The cyclic garbage collector is paused for the chunk (and switched back on afterwards, also on error):
    a chunk allocates hundreds of thousands of small acyclic objects (audits, then their output dicts), and
    the collections their allocation triggers would scan every live object again and again (measured on
    NCI first_5K: about half the time of a chunk). Cycles made meanwhile are collected after the chunk.

    Bad records never raise (they become ``unreadable`` audits). Raises :class:`EngineError` when the payload
    yields records whose indices are not exactly ``job.first`` .. ``job.last`` in order, or when the audits do
    not come back one per record in that order, which would lose or duplicate records.
    """
    paused = gc.isenabled()
    if paused:
        gc.disable()
    try:
        return _run_chunk(context, job, options)
    finally:
        if paused:
            gc.enable()


def _run_chunk(context: AuditContext, job: ChunkJob, options: ChunkOptions) -> ChunkResult:
    pset = context.pset
    summary = Summary(pset)
    expected = job.first

    def checked() -> Iterator[Record]:
        nonlocal expected
        for record in job.payload.records():
            if record.index != expected:
                raise EngineError(
                    f"chunk {job.number}: record {record.record} of {record.path} has index "
                    f"{record.index}, expected {expected}"
                )
            expected += 1
            yield record

    audited = job.first
    audits: list[MoleculeAudit] = []
    for audit in audit_chunk_records(context, checked()):
        if audit.record.index != audited:  # the auditor lost, repeated or reordered a record
            raise EngineError(
                f"chunk {job.number}: audit of record index {audit.record.index}, expected {audited}"
            )
        audited += 1
        summary.add(audit)
        audits.append(audit)
    if audited != expected:
        raise EngineError(
            f"chunk {job.number}: {expected - job.first} records parsed but {audited - job.first} audited"
        )
    if expected != job.first + job.count:
        raise EngineError(
            f"chunk {job.number}: {expected - job.first} records parsed, expected {job.count} "
            f"(records {job.first}..{job.last})"
        )
    worker = f"{socket.gethostname()}:{os.getpid()}"
    terms = options.terms
    if not options.encode:
        molecules = tuple(a.to_dict(pset, terms) for a in audits)
        return ChunkResult(
            job.number, job.first, job.count, summary, molecules=molecules, worker=worker
        )
    # the JSON text straight from the audits (byte-identical to encoding to_dict, much cheaper); the
    # molecule heads are made once for both outputs
    heads = [a.head() for a in audits]
    text = "".join(
        [a.to_json(pset, terms, head) + "\n" for a, head in zip(audits, heads, strict=True)]
    ).encode("utf-8")
    parquet = None
    if options.parquet:
        from ffaudit.engine.parquet import audits_to_parquet

        parquet = audits_to_parquet(audits, pset, terms, heads)
    if options.directory is not None:
        from ffaudit.engine.outdir import write_chunk_files

        payloads = {"jsonl": text} if parquet is None else {"jsonl": text, "parquet": parquet}
        files = write_chunk_files(options.directory, job.number, payloads)
        return ChunkResult(
            job.number,
            job.first,
            job.count,
            summary,
            files=files,
            lines=text.count(b"\n"),
            worker=worker,
        )
    if options.spool is not None and parquet is None:
        from ffaudit.engine.outdir import chunk_file, write_atomic

        path = os.path.join(options.spool, chunk_file(job.number, "jsonl"))
        write_atomic(Path(path), text)
        return ChunkResult(
            job.number,
            job.first,
            job.count,
            summary,
            lines=text.count(b"\n"),
            spooled=path,
            worker=worker,
        )
    return ChunkResult(
        job.number, job.first, job.count, summary, jsonl=text, parquet=parquet, worker=worker
    )
