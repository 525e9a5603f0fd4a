"""Run RDKit parsers quietly and keep what they say.

RDKit reports most parse and sanitisation problems by writing to its error log and returning ``None`` rather
than by raising. :func:`call_quietly` runs one RDKit call with the logs blocked (nothing reaches stderr) while
capturing the error log, catches any exception the call raises, and hands back the result with a cleaned,
one-line version of RDKit's message, so that a reader can put the reason into the record.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import TypeVar

from rdkit import rdBase

T = TypeVar("T")

#: Longest RDKit message kept in a reason; longer ones are cut and end in "...".
MAX_MESSAGE_CHARS = 600

_TIMESTAMP = re.compile(r"^\[\d\d:\d\d:\d\d\]\s?")
_CARET = re.compile(r"^\s*~*\^\s*$")
_STACK_FRAME = re.compile(r"^\s*\d+#\s")
_FAILED_SMILES = "SMILES Parse Error: Failed parsing SMILES"
_DROP_PREFIXES = (
    "****",
    "Violation occurred on line",
    "Failed Expression:",
    "----------",
    "Stacktrace:",
    "Pre-condition Violation",
    "Post-condition Violation",
    "Invariant Violation",
    "Range Error",
)


def clean_rdkit_message(raw: str) -> str:
    """Turn RDKit's raw log text into one line: timestamps, stack traces and duplicates removed.

    Lines are joined with ``"; "``. The echo of the input and the ``~^`` marker that RDKit prints below a
    SMILES syntax error are dropped (the line before them already gives the position). Never fails; returns
    ``""`` when nothing useful is left.
    """
    lines = [_TIMESTAMP.sub("", line).strip() for line in raw.splitlines()]
    kept: list[str] = []
    for i, line in enumerate(lines):
        if not line or _STACK_FRAME.match(line) or line.startswith(_DROP_PREFIXES):
            continue
        if _CARET.match(line):
            continue
        if i + 1 < len(lines) and _CARET.match(lines[i + 1]):
            continue  # the echo of the input above the ~^ marker
        if line not in kept:
            kept.append(line)
    if len(kept) > 1:
        kept = [line for line in kept if not line.startswith(_FAILED_SMILES)] or kept
    prefix = "SMILES Parse Error: "
    kept = [
        (line[len(prefix) :] if i and line.startswith(prefix) else line).rstrip(":")
        for i, line in enumerate(kept)
    ]
    text = "; ".join(kept)
    if len(text) > MAX_MESSAGE_CHARS:
        text = text[: MAX_MESSAGE_CHARS - 3] + "..."
    return text


def call_quietly(func: Callable[[], T]) -> tuple[T | None, str]:
    """Call ``func()`` with RDKit's logs blocked and its error log captured.

    Returns ``(result, message)``: ``result`` is what ``func`` returned, or ``None`` if it raised; ``message``
    is the cleaned RDKit error-log text plus the exception text if one was raised (``""`` when RDKit said
    nothing). Any ``Exception`` from ``func`` is caught and reported in ``message``; it never propagates.
    """
    result: T | None = None
    error = ""
    with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as capture:
        try:
            result = func()
        except Exception as exc:  # RDKit raises many unrelated types; all mean "could not parse"
            error = clean_rdkit_message(str(exc)) or type(exc).__name__
    try:
        message = clean_rdkit_message(capture.messages)
    except UnicodeDecodeError:  # RDKit can cut a multi-byte character when it echoes the input
        message = "(RDKit's message could not be decoded)"
    if error and error not in message:
        message = f"{message}; {error}" if message else error
    return result, message
