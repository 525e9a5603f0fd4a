"""Findings: what went wrong or looks wrong, as data.

A :class:`Finding` says *what* (code, severity, message), *where* (a parameter-file location with its path
inside the YAML document, or a molecule, record, atoms and term) and *why* (cause, and a hint for the fix).
Code that checks things yields findings; a driver stamps what the checker does not know (file name, rule id,
severity override). Callers choose one of three entry points over the same generator: iterate them
(:func:`iter_findings` style), raise on the first error (:func:`raise_first`), or ask yes/no (:func:`has_errors`).

Findings are frozen and hashable; :meth:`Finding.identity` is a stable key, so comparing two runs is a set
difference.
"""

from __future__ import annotations

import enum
from collections.abc import Iterable
from dataclasses import dataclass, field, replace
from typing import Any


class Severity(enum.IntEnum):
    """Severity of a finding; ordered so that ``max()`` gives the worst."""

    INFO = 1
    WARNING = 2
    ERROR = 3

    @property
    def label(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> Severity:
        """Parse ``error`` / ``warning`` / ``info``; raises ``ValueError`` on anything else."""
        try:
            return cls[text.strip().upper()]
        except KeyError:
            raise ValueError(
                f"unknown severity {text!r} (expected error, warning or info)"
            ) from None


DocPath = tuple[str | int, ...]


@dataclass(frozen=True)
class Finding:
    """One problem. Only ``code``, ``severity`` and ``message`` are required.

    Location fields are optional and independent: a parameter-set finding has ``path``/``line``/``column`` and
    ``doc_path``; a molecule finding has ``molecule``/``record``/``atoms``/``term``. Lines and columns are 1-based.
    """

    code: str
    severity: Severity
    message: str
    path: str | None = None
    line: int | None = None
    column: int | None = None
    doc_path: DocPath = ()
    molecule: str | None = None
    record: int | None = None
    atoms: tuple[int, ...] = ()
    term: str | None = None
    cause: str | None = None
    hint: str | None = None
    rule: str | None = None
    extra: tuple[tuple[str, Any], ...] = field(default=(), compare=False, hash=False)

    def identity(self) -> tuple[Any, ...]:
        """A key that stays the same across runs for the same problem (message wording excluded)."""
        return (
            self.code,
            self.path,
            self.doc_path,
            self.molecule,
            self.record,
            self.atoms,
            self.term,
        )

    def sort_key(self) -> tuple[Any, ...]:
        return (
            self.path or "",
            self.line or 0,
            self.column or 0,
            self.record or 0,
            self.atoms,
            self.code,
            self.message,
        )

    def with_(self, **changes: Any) -> Finding:
        return replace(self, **changes)

    def location_text(self) -> str:
        """``file:line:column`` (as much as is known), or ``record N (name)`` for molecule findings."""
        if self.path is not None or self.line is not None:
            parts = [self.path or "<input>"]
            if self.line is not None:
                parts.append(str(self.line))
                if self.column is not None:
                    parts.append(str(self.column))
            return ":".join(parts)
        if self.record is not None or self.molecule is not None:
            text = f"record {self.record}" if self.record is not None else "molecule"
            if self.molecule:
                text += f" ({self.molecule})"
            if self.atoms:
                text += " atoms " + ",".join(map(str, self.atoms))
            return text
        return "<unknown>"

    def format(self) -> str:
        """One line for people: ``where: severity code: message [at doc.path] (hint: ...)``."""
        text = f"{self.location_text()}: {self.severity.label} {self.code}: {self.message}"
        if self.doc_path:
            text += f" [at {format_doc_path(self.doc_path)}]"
        if self.hint:
            text += f" (hint: {self.hint})"
        return text

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form (None fields omitted)."""
        out: dict[str, Any] = {
            "code": self.code,
            "severity": self.severity.label,
            "message": self.message,
        }
        for name in (
            "path",
            "line",
            "column",
            "molecule",
            "record",
            "term",
            "cause",
            "hint",
            "rule",
        ):
            value = getattr(self, name)
            if value is not None:
                out[name] = value
        if self.doc_path:
            out["doc_path"] = format_doc_path(self.doc_path)
        if self.atoms:
            out["atoms"] = list(self.atoms)
        return out


def format_doc_path(doc_path: DocPath) -> str:
    """``("bonds", 3, "k")`` -> ``bonds[3].k``; the empty path is ``$``."""
    if not doc_path:
        return "$"
    text = ""
    for part in doc_path:
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += ("." if text else "") + str(part)
    return text


def worst(findings: Iterable[Finding]) -> Severity | None:
    """The highest severity among ``findings``, or ``None`` when there are none."""
    return max((f.severity for f in findings), default=None)


def has_errors(findings: Iterable[Finding]) -> bool:
    """Yes/no entry point: is any finding an error?"""
    return any(f.severity >= Severity.ERROR for f in findings)


def raise_first(findings: Iterable[Finding], exc_type: type[Exception] = ValueError) -> None:
    """Raise-first entry point: raise ``exc_type`` with the first error-level finding's text, if any."""
    for finding in findings:
        if finding.severity >= Severity.ERROR:
            raise exc_type(finding.format())
