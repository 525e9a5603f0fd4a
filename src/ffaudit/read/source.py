"""Open a structure library and stream its lines.

:func:`open_input` opens a path (or ``-`` for standard input) as bytes, recognises gzip by its magic bytes (so
``.gz`` is optional) and rejects other compressions it cannot read. :func:`iter_lines` decodes the bytes as
UTF-8 (undecodable bytes become U+FFFD, a leading byte-order mark is dropped), splits on ``\\n``, ``\\r\\n``
and lone ``\\r`` alike, numbers the lines from 1 and never holds more than one capped line in memory: a line
longer than :data:`MAX_LINE_CHARS` is consumed in pieces and handed on as an *overlong* line (its first
characters and its length only), so the reader can turn its record into an unreadable one with a reason.
"""

from __future__ import annotations

import gzip
import io
import os
import sys
import zlib
from collections.abc import Iterator
from contextlib import contextmanager
from typing import BinaryIO, NamedTuple, cast

from ffaudit.errors import InputFileError

#: Longest line read whole (1 MiB of characters). Longer lines make their record unreadable.
MAX_LINE_CHARS = 1 << 20
#: Longest record (SDF, MOL2 or PDB block) kept in memory (64 MiB of characters).
MAX_RECORD_CHARS = 64 << 20
#: Characters of an overlong line kept for messages.
PREFIX_CHARS = 40

STDIN_NAME = "<stdin>"

_GZIP_MAGIC = b"\x1f\x8b"
_OTHER_MAGIC = {
    b"BZh": "bzip2",
    b"\xfd7zXZ\x00": "xz",
    b"PK\x03\x04": "zip",
    b"\x28\xb5\x2f\xfd": "zstd",
}
_READ_ERRORS = (OSError, EOFError, zlib.error, UnicodeError)


class Line(NamedTuple):
    """One line of input without its line ending.

    ``number`` is 1-based. When ``overlong`` is true the line was longer than :data:`MAX_LINE_CHARS`:
    ``text`` then holds only its first :data:`PREFIX_CHARS` characters and ``length`` its full length.
    """

    number: int
    text: str
    overlong: bool = False
    length: int = 0

    def too_long_reason(self) -> str:
        """The reason given for a record that contains this overlong line."""
        return (
            f"line {self.number} is {self.length} characters long, over the limit of "
            f"{MAX_LINE_CHARS} characters (1 MiB) per line; starts {self.text[:PREFIX_CHARS]!r}"
        )


def display_path(path: str) -> str:
    """The name used for ``path`` in records and messages (``-`` is shown as ``<stdin>``)."""
    return STDIN_NAME if path == "-" else path


@contextmanager
def open_input(path: str) -> Iterator[BinaryIO]:
    """Open ``path`` (``-`` is standard input) for reading bytes, decompressing gzip transparently.

    Raises :class:`InputFileError` naming the file when it cannot be opened (missing, a directory, no
    permission), when its name ends in ``.gz`` but it does not start with the gzip magic bytes, or when it is
    compressed in a way this reader does not support (bzip2, xz, zip, zstd). An empty file, compressed or not,
    opens fine and yields no bytes.
    """
    shown = display_path(path)
    if path == "-":
        raw: BinaryIO = sys.stdin.buffer
        owned = False
    else:
        if os.path.isdir(path):
            raise InputFileError(f"{shown}: is a directory, not a structure file")
        try:
            raw = open(path, "rb")  # noqa: SIM115 - closed in the finally below
        except OSError as exc:
            raise InputFileError(f"{shown}: cannot open: {exc.strerror or exc}") from exc
        owned = True
    try:
        yield _decompressing(raw, shown, expect_gzip=path.lower().endswith(".gz"))
    finally:
        if owned:
            raw.close()


def _decompressing(raw: BinaryIO, shown: str, *, expect_gzip: bool) -> BinaryIO:
    stream = (
        raw if hasattr(raw, "peek") else cast(BinaryIO, io.BufferedReader(cast(io.RawIOBase, raw)))
    )
    try:
        head = cast(io.BufferedReader, stream).peek(8)[:8]
    except OSError as exc:
        raise InputFileError(f"{shown}: cannot read: {exc.strerror or exc}") from exc
    if head.startswith(_GZIP_MAGIC):
        return cast(BinaryIO, gzip.GzipFile(fileobj=stream, mode="rb"))
    if expect_gzip and head:
        raise InputFileError(
            f"{shown}: the name ends in .gz but the file is not gzip-compressed "
            f"(first bytes {head[:4]!r}, expected {_GZIP_MAGIC!r}); rename it or compress it with gzip"
        )
    for magic, kind in _OTHER_MAGIC.items():
        if head.startswith(magic):
            raise InputFileError(
                f"{shown}: looks {kind}-compressed; only gzip is read (decompress it first)"
            )
    return stream


def iter_lines(stream: BinaryIO, path: str, *, max_chars: int = MAX_LINE_CHARS) -> Iterator[Line]:
    """Yield the lines of ``stream`` as :class:`Line` objects, numbered from 1.

    Reading never fails on bad text (undecodable bytes are replaced). A damaged compressed stream (bad gzip
    header, truncated data, CRC mismatch) raises :class:`InputFileError` with the file name and the number of
    the line being read; lines yielded before that are good.
    """
    shown = display_path(path)
    # plain utf-8 and the BOM dropped by hand: CPython's utf-8-sig decoder swallows a file that is only
    # the first one or two bytes of a BOM
    text = io.TextIOWrapper(stream, encoding="utf-8", errors="replace", newline=None)
    number = 0

    def read(limit: int) -> str:
        try:
            return text.readline(limit)
        except _READ_ERRORS as exc:
            raise InputFileError(
                f"{shown}: after line {number}: cannot read any further: {_describe(exc)}"
            ) from exc

    try:
        while True:
            chunk = read(max_chars + 1)
            if not chunk:
                return
            if number == 0 and chunk.startswith("\ufeff"):
                chunk = chunk[1:]
                if not chunk:
                    continue
            number += 1
            if chunk.endswith("\n"):
                yield Line(number, chunk[:-1])
            elif len(chunk) <= max_chars:
                yield Line(number, chunk)  # last line, no line ending
            else:
                prefix = chunk[:PREFIX_CHARS]
                length = len(chunk)
                while not chunk.endswith("\n"):
                    chunk = read(1 << 16)
                    if not chunk:
                        break
                    length += len(chunk)
                if chunk.endswith("\n"):
                    length -= 1
                yield Line(number, prefix, overlong=True, length=length)
    finally:
        if not text.closed:
            text.detach()


def _describe(exc: BaseException) -> str:
    if isinstance(exc, gzip.BadGzipFile):
        return f"bad gzip data ({exc})"
    if isinstance(exc, EOFError):
        return f"compressed data ends early, the file looks truncated ({exc})"
    if isinstance(exc, zlib.error):
        return f"corrupt compressed data ({exc})"
    if isinstance(exc, OSError):
        return exc.strerror or str(exc)
    return str(exc)
