"""The in-process back-end: audit records one after another in this process."""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from concurrent.futures import Future

from ffaudit.audit import AuditContext, MoleculeAudit
from ffaudit.engine.base import ChunkJob, ChunkOptions, ChunkResult
from ffaudit.engine.work import run_chunk
from ffaudit.read.record import Record


def audit_records(context: AuditContext, records: Iterable[Record]) -> Iterator[MoleculeAudit]:
    """Yield one audit per record, in input order."""
    for record in records:
        yield context.audit_record(record)


class InProcessBackend:
    """Runs each chunk when its result is asked for, so nothing is held beyond the chunk being handed on."""

    in_flight = 1

    def __init__(self, context: AuditContext, options: ChunkOptions) -> None:
        self.context = context
        self.options = options

    def submit(self, job: ChunkJob) -> Future[ChunkResult]:
        return Future()  # filled by wait(): the work happens when the driver wants the result

    def wait(self, job: ChunkJob, future: object) -> ChunkResult:
        return run_chunk(self.context, job, self.options)

    def close(self) -> None:
        """Nothing to release."""
