"""One input record: where it came from, its name, and the molecule or the reason there is none."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from rdkit import Chem


@dataclass(frozen=True)
class Record:
    """A record read from a structure library.

    ``index`` is the 0-based position in the input (over all records, readable or not), ``record`` the 1-based
    record number within ``path`` and ``line`` the 1-based line where the record starts. ``mol`` is a sanitised
    RDKit molecule as read (hydrogens as the file has them; the audit adds the missing ones) or None, in which
    case ``error`` says why. ``meta`` carries reader-specific facts that belong in the output (for example how
    PDB bond orders were decided).
    """

    index: int
    path: str
    record: int
    line: int
    name: str
    mol: Chem.Mol | None
    error: str | None = None
    meta: Mapping[str, Any] = field(default_factory=dict)

    @property
    def readable(self) -> bool:
        return self.mol is not None

    def source_dict(self) -> dict[str, Any]:
        return {"path": self.path, "record": self.record, "line": self.line}
