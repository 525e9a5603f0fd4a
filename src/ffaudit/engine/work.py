"""What a worker does with one chunk: parse (if raw), audit, build the output, summarise, check.

This is the only code that audits records in every back-end, so the output cannot depend on where it ran.
"""

from __future__ import annotations

import os
import socket
from typing import Any

from ffaudit.audit import AuditContext, Summary
from ffaudit.engine.base import ChunkJob, ChunkOptions, ChunkResult, EngineError


def run_chunk(context: AuditContext, job: ChunkJob, options: ChunkOptions) -> ChunkResult:
    """Audit every record of ``job`` with ``context``.

    Bad records never raise (they become ``unreadable`` audits). Raises :class:`EngineError` when the payload
    yields records whose indices are not exactly ``job.first`` .. ``job.last`` in order, which would lose or
    duplicate records.
    """
    pset = context.pset
    summary = Summary(pset)
    molecules: list[dict[str, Any]] = []
    expected = job.first
    for record in job.payload.records():
        if record.index != expected:
            raise EngineError(
                f"chunk {job.number}: record {record.record} of {record.path} has index {record.index}, "
                f"expected {expected}"
            )
        expected += 1
        audit = context.audit_record(record)
        summary.add(audit)
        molecules.append(audit.to_dict(pset, options.terms))
    if expected != job.first + job.count:
        raise EngineError(
            f"chunk {job.number}: {expected - job.first} records parsed, expected {job.count} "
            f"(records {job.first}..{job.last})"
        )
    worker = f"{socket.gethostname()}:{os.getpid()}"
    if not options.encode:
        return ChunkResult(
            job.number, job.first, job.count, summary, molecules=tuple(molecules), worker=worker
        )
    from ffaudit.report.jsonl import dump_compact

    text = "".join(dump_compact(m) + "\n" for m in molecules)
    parquet = None
    if options.parquet:
        from ffaudit.engine.parquet import molecules_to_parquet

        parquet = molecules_to_parquet(molecules)
    return ChunkResult(
        job.number, job.first, job.count, summary, jsonl=text, parquet=parquet, worker=worker
    )
