"""The in-process back-end: audit records one after another in this process."""

from __future__ import annotations

from collections.abc import Iterable, Iterator

from ffaudit.audit import AuditContext, MoleculeAudit
from ffaudit.read.record import Record


def audit_records(context: AuditContext, records: Iterable[Record]) -> Iterator[MoleculeAudit]:
    """Yield one audit per record, in input order."""
    for record in records:
        yield context.audit_record(record)
