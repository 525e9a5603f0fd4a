"""``--format jsonl``: one JSON object per molecule per line, in input order; nothing else.

Each line is one molecule dict exactly as the driver built it (key order kept, floats as given: the driver
rounds them), valid against ``schemas/audit-molecule.schema.json``. The run information and the summary are
not written: a JSONL stream holds molecules only, so that ``cat``, ``grep`` and line-by-line readers work.
"""

from __future__ import annotations

import json
import os
import shutil
from collections.abc import Mapping
from typing import Any, TextIO


def dump_compact(obj: Any) -> str:
    """One-line JSON text of ``obj``: no spaces, non-ASCII kept as is, NaN and infinities refused.

    Raises ``ValueError`` for a NaN or infinite float and ``TypeError`` for a value JSON cannot hold.
    """
    return json.dumps(obj, ensure_ascii=False, separators=(",", ":"), allow_nan=False)


class JsonlReporter:
    """Writes each molecule as it comes; holds nothing."""

    def __init__(self, out: TextIO) -> None:
        self.out = out

    def start(self, run: Mapping[str, Any]) -> None:
        """Nothing to write: the JSONL stream carries molecules only."""

    def add(self, molecule: Mapping[str, Any]) -> None:
        """Write ``molecule`` as one line. Raises ``ValueError`` / ``TypeError`` as :func:`dump_compact`."""
        self.out.write(dump_compact(molecule) + "\n")

    def add_lines(self, lines: bytes) -> None:
        """Write molecules already encoded, one :func:`dump_compact` line each with its newline, as UTF-8
        (what workers return with ``ChunkOptions(encode=True)``). The bytes go straight to the stream's
        binary buffer when it writes UTF-8 on a platform whose line end is "\\n" (a file from
        ``open_output``, usually stdout, on POSIX); otherwise they are decoded and written as text, so
        that the stream's own encoding and newline translation apply."""
        buffer = self._binary()
        if buffer is not None:
            buffer.write(lines)
        else:
            self.out.write(lines.decode("utf-8"))

    def add_file(self, path: str) -> None:
        """Write the encoded molecules held in the file ``path`` (as :meth:`add_lines` would write its
        bytes), copied by the kernel (``os.sendfile``) when the stream is a binary-ready file with a file
        descriptor, else through a buffer. Raises ``OSError`` when the file cannot be read or the stream
        not written."""
        buffer = self._binary()
        if buffer is None:
            with open(path, "rb") as source:
                self.add_lines(source.read())
            return
        with open(path, "rb") as source:
            size = os.fstat(source.fileno()).st_size
            sent = 0
            try:
                target = buffer.fileno()
                buffer.flush()
                while sent < size:
                    n = os.sendfile(target, source.fileno(), sent, size - sent)
                    if n == 0:
                        break
                    sent += n
            except (AttributeError, OSError, ValueError):  # no descriptor, or sendfile cannot serve it
                pass
            source.seek(sent)
            shutil.copyfileobj(source, buffer, 1 << 20)

    def _binary(self) -> Any:
        """The stream's binary buffer, flushed of pending text, when bytes can be written to it as they are
        (UTF-8, "\\n" line ends); None otherwise."""
        buffer = getattr(self.out, "buffer", None)
        encoding = (getattr(self.out, "encoding", None) or "").lower().replace("-", "").replace("_", "")
        if buffer is None or encoding != "utf8" or os.linesep != "\n":
            return None
        self.out.flush()
        return buffer

    def finish(self, summary: Mapping[str, Any]) -> None:
        """Flush the stream; the summary is not part of the JSONL output."""
        self.out.flush()
