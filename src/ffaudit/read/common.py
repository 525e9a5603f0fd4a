"""Pieces every format reader shares: record names, reasons, and the RDKit parse-then-classify step."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any, NamedTuple

from rdkit import Chem, rdBase

from ffaudit.read.rdkit_log import call_quietly
from ffaudit.read.record import Record

#: Longest record name kept; longer names are cut and end in "...".
MAX_NAME_CHARS = 200


class ParseResult(NamedTuple):
    """A molecule, or ``None`` and the reason (one line, RDKit's own words where it gave any)."""

    mol: Chem.Mol | None
    reason: str | None


def default_name(record: int) -> str:
    """The name of a record whose file gives none: ``record 17``."""
    return f"record {record}"


def clean_name(text: str | None, record: int) -> str:
    """``text`` stripped of surrounding space and control characters and cut to :data:`MAX_NAME_CHARS`;
    :func:`default_name` when nothing is left."""
    if text is None:
        return default_name(record)
    name = "".join(ch if ch.isprintable() else " " for ch in text).strip()
    if not name:
        return default_name(record)
    if len(name) > MAX_NAME_CHARS:
        name = name[: MAX_NAME_CHARS - 3] + "..."
    return name


def where(record: int, line: int) -> str:
    """The location prefix of a reason: ``record 3 (line 45)``."""
    return f"record {record} (line {line})"


def make_record(
    *,
    index: int,
    path: str,
    record: int,
    line: int,
    name: str,
    result: ParseResult,
    meta: Mapping[str, Any] | None = None,
) -> Record:
    """Build the :class:`Record`; a failed ``result`` gets its reason prefixed with :func:`where`."""
    error = None
    if result.mol is None:
        error = f"{where(record, line)}: {result.reason or 'unreadable (no reason known)'}"
    return Record(
        index=index,
        path=path,
        record=record,
        line=line,
        name=name,
        mol=result.mol,
        error=error,
        meta=dict(meta or {}),
    )


def parse_then_classify(
    parse: Callable[[bool], Chem.Mol | None],
    *,
    what: str,
    diagnose: Callable[[], str | None] = lambda: None,
    locate: Callable[[str], str] = lambda message: message,
) -> ParseResult:
    """Run an RDKit parser, sanitising; on failure tell a syntax problem from a chemistry problem.

    ``parse(sanitize)`` calls the RDKit parser. It is first run with ``sanitize=True`` (so RDKit's own
    perception, including stereochemistry, is what the audit sees). If that gives no molecule, it is run
    again without sanitising: a molecule then means the text was fine but RDKit rejected the chemistry
    (valence, kekulisation), otherwise the text itself could not be parsed. ``diagnose()`` may add the
    reader's own finding (for example a counts line that does not match) when RDKit gave no message.
    ``locate`` rewrites RDKit's message (for example to turn line numbers within a block into file lines).
    A molecule with no atoms is refused too. Never raises.

    RDKit's messages matter only when there is no molecule, so the first parse runs with the log blocked
    but not captured (capturing adds about 10 us per record, a sixth of a small molecule's parse); a
    failed parse is run again with the log captured, which gives the same messages (RDKit's parsers are
    deterministic).
    """
    try:
        with rdBase.BlockLogs():
            mol = parse(True)
    except Exception:  # run again below, capturing what RDKit says
        mol = None
    message = ""
    if mol is None:
        mol, message = call_quietly(lambda: parse(True))
        message = _note_atom_numbering(locate(message)) if message else message
    if mol is not None:
        if mol.GetNumAtoms() == 0:
            return ParseResult(None, f"{what} has no atoms")
        return ParseResult(mol, None)
    raw, raw_message = call_quietly(lambda: parse(False))
    raw_message = locate(raw_message) if raw_message else raw_message
    if raw is not None:
        detail = message or raw_message or "no message from RDKit"
        return ParseResult(None, f"the {what} parses but RDKit cannot sanitise it: {detail}")
    detail = message or raw_message
    own = diagnose()
    if own and detail:
        detail = f"{own}; RDKit: {detail}"
    elif own:
        detail = own
    elif detail:
        detail = f"RDKit: {detail}"
    else:
        detail = "RDKit returned no molecule and gave no reason"
    return ParseResult(None, f"cannot parse the {what}: {detail}")


def _note_atom_numbering(message: str) -> str:
    """Say that RDKit's atom numbers in ``message`` count from 0 (files count from 1)."""
    if "atom #" in message or "atoms:" in message:
        return message + " (RDKit numbers atoms from 0)"
    return message
