"""What a reporter is, and the one helper that owns the output file.

A reporter turns the audit of a library into one output format. It is fed plain dicts only (the machine
output contract, described by ``schemas/audit-molecule.schema.json`` and ``schemas/audit-report.schema.json``),
never the engine, the parameter-set object or the configuration, so every format can be tested with
hand-made data:

1. :meth:`Reporter.start` once, with the run information
   ``{"parameter_set": {...}, "cautions": [...], "terms_mode": "all" | "problems" | "none"}``;
2. :meth:`Reporter.add` once per molecule dict, in input order;
3. :meth:`Reporter.finish` once, with the library summary dict.

Each reporter class is constructed with the text stream it writes to (``XReporter(out)``); it never opens,
closes or removes files. :func:`open_output` does that.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import stat
import sys
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path
from typing import Any, Protocol, TextIO

from ffaudit.errors import UsageError
from ffaudit.report.csv_ import CsvReporter
from ffaudit.report.json_ import JsonReporter
from ffaudit.report.jsonl import JsonlReporter
from ffaudit.report.table import TableReporter

STDOUT = "-"
"""The output path meaning standard output."""


class Reporter(Protocol):
    """One output format of ``ffaudit audit``. Methods are called in the order start, add*, finish."""

    def start(self, run: Mapping[str, Any]) -> None:
        """Begin the output with the run information (parameter set, cautions, terms mode)."""

    def add(self, molecule: Mapping[str, Any]) -> None:
        """Write (or take into account) one molecule dict; called in input order."""

    def finish(self, summary: Mapping[str, Any]) -> None:
        """End the output with the library summary dict."""


@contextlib.contextmanager
def open_output(
    path: str | os.PathLike[str] | None, stdout: TextIO | None = None
) -> Iterator[TextIO]:
    """Yield a text stream for a report written to ``path``.

    ``None`` or ``"-"`` yields ``stdout`` (default: ``sys.stdout`` as it is at call time), which is not
    closed afterwards; what was written to it before an exception stays written. Any other path is written
    through a temporary file beside the target (``.NAME.RANDOM.part``, UTF-8, ``"\\n"`` line ends, mode from
    the umask like an ordinary new file) that is renamed onto the target when the ``with`` block ends
    normally. If the block raises (any exception, including ``KeyboardInterrupt``), the temporary file is
    removed, an existing target is left as it was, and the exception propagates. A path that exists and is
    neither a regular file nor a directory (``/dev/null``, a FIFO, ``/dev/stdout``) is opened and written in
    place instead, since renaming a file onto it would replace the device or pipe.

    Raises :class:`ffaudit.errors.UsageError` naming the path when the temporary file cannot be created (missing
    directory, no permission) or the finished file cannot be moved into place.
    """
    if path is None or os.fspath(path) == STDOUT:
        yield sys.stdout if stdout is None else stdout
        return

    target = Path(path)
    if _special_file(target):
        # a device, FIFO or socket (/dev/null, /dev/stdout, a named pipe) is written in place: a temporary
        # file renamed onto it would replace the device node with a regular file
        try:
            stream = open(target, "w", encoding="utf-8", newline="")  # noqa: SIM115 (closed below)
        except OSError as exc:
            raise UsageError(f"cannot write output file {target}: {exc.strerror or exc}") from exc
        with stream:
            yield stream
        return
    temp = target.with_name(f".{target.name}.{secrets.token_hex(6)}.part")
    try:
        fd = os.open(temp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    except OSError as exc:
        raise UsageError(f"cannot write output file {target}: {exc.strerror or exc}") from exc
    try:
        with open(fd, "w", encoding="utf-8", newline="") as stream:
            yield stream
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            temp.unlink()
        raise
    try:
        os.replace(temp, target)
    except OSError as exc:
        with contextlib.suppress(FileNotFoundError):
            temp.unlink()
        raise UsageError(f"cannot write output file {target}: {exc.strerror or exc}") from exc


def _special_file(path: Path) -> bool:
    """True when ``path`` exists and is not a regular file or a directory (a device, FIFO or socket)."""
    try:
        mode = os.stat(path).st_mode
    except OSError:
        return False
    return not (stat.S_ISREG(mode) or stat.S_ISDIR(mode))


REPORTERS: dict[str, Callable[[TextIO], Reporter]] = {
    "table": TableReporter,
    "json": JsonReporter,
    "jsonl": JsonlReporter,
    "csv": CsvReporter,
}
"""Output format name (the ``--format`` value) -> reporter class, constructed as ``cls(out)``."""


def make_reporter(fmt: str, out: TextIO) -> Reporter:
    """A reporter of format ``fmt`` writing to ``out``.

    Raises :class:`ffaudit.errors.UsageError` naming the known formats when ``fmt`` is not one of them.
    """
    try:
        cls = REPORTERS[fmt]
    except KeyError:
        known = ", ".join(REPORTERS)
        raise UsageError(f"unknown output format {fmt!r} (expected one of: {known})") from None
    return cls(out)
