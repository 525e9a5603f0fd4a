"""A progress bar for long audits: records done, records per second, time left.

Shown with rich on the diagnostics stream (stderr) only when that stream is a terminal, unless forced on or
off (``--progress`` / ``--no-progress``); the reports on stdout are never touched, so output files and pipes
are the same with or without it. The total is estimated cheaply from the file's bytes (newlines for line
formats, ``$$$$`` for SD files, molecule headers for MOL2); without an estimate the bar shows the count and
the rate but no time left.
"""

from __future__ import annotations

import types
from typing import TextIO

from rich.console import Console
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    Progress,
    ProgressColumn,
    Task,
    TextColumn,
    TimeElapsedColumn,
    TimeRemainingColumn,
)
from rich.text import Text

from ffaudit.read.source import open_input

_MARKERS: dict[str, bytes] = {
    "smi": b"\n",
    "csv": b"\n",
    "tsv": b"\n",
    "sdf": b"$$$$",
    "mol2": b"@<TRIPOS>MOLECULE",
}
_BLOCK = 1 << 22


def estimate_records(path: str, fmt: str) -> int | None:
    """About how many records ``path`` holds (an upper bound for line formats: blank lines count), or
    None for standard input, PDB files, or a file that cannot be read (the reader reports that itself)."""
    marker = _MARKERS.get(fmt)
    if marker is None or path == "-":
        return None
    count = 0
    tail = b""
    try:
        with open_input(path) as stream:
            for block in iter(lambda: stream.read(_BLOCK), b""):
                data = tail + block
                count += data.count(marker)
                tail = data[-(len(marker) - 1) :] if len(marker) > 1 else b""  # a marker cut in two
    except Exception:  # noqa: BLE001 - only an estimate; the reader will report the real problem
        return None
    return count


class _RateColumn(ProgressColumn):
    """Records per second over the run so far."""

    def render(self, task: Task) -> Text:
        elapsed = task.elapsed or 0.0
        if elapsed <= 0 or not task.completed:
            return Text("- rec/s")
        return Text(f"{task.completed / elapsed:,.0f} rec/s")


def wants_progress(stream: TextIO, choice: bool | None) -> bool:
    """``choice`` when given, else whether ``stream`` is a terminal."""
    if choice is not None:
        return choice
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


class ProgressBar:
    """``with ProgressBar(stream, total, enabled) as bar: bar.advance(n)``; does nothing when disabled."""

    def __init__(
        self, stream: TextIO, total: int | None, *, enabled: bool, label: str = "auditing"
    ) -> None:
        self._progress: Progress | None = None
        self._task = None
        if not enabled:
            return
        self._progress = Progress(
            TextColumn("{task.description}"),
            BarColumn(),
            MofNCompleteColumn(),
            _RateColumn(),
            TimeElapsedColumn(),
            TextColumn("left"),
            TimeRemainingColumn(),
            console=Console(file=stream, highlight=False),
            transient=False,
        )
        self._task = self._progress.add_task(label, total=total)

    def __enter__(self) -> ProgressBar:
        if self._progress is not None:
            self._progress.start()
        return self

    def advance(self, records: int) -> None:
        if self._progress is not None and self._task is not None:
            self._progress.advance(self._task, records)

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: types.TracebackType | None,
    ) -> None:
        if self._progress is not None:
            if exc_type is None and self._task is not None:
                done = self._progress.tasks[0].completed
                self._progress.update(self._task, total=done)
            self._progress.stop()
