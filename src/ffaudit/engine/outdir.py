"""Output-directory mode (``ffaudit audit LIBRARY -o DIR/``): per-chunk result files, a manifest, resume.

A run writes into ``DIR``::

    manifest.json                 what was run (the run identity) and, once complete, every chunk
    chunk-000000.jsonl            the chunk's molecules, one JSON object per line (as --format jsonl)
    chunk-000000.parquet          the same molecules as a Parquet table (when pyarrow is installed)
    chunk-000000.summary.json     the chunk's mergeable totals (:mod:`ffaudit.engine.summary_state`)
    ...
    summary.json                  the library summary, merged from every chunk in order (when complete)

Concatenating the ``.jsonl`` chunks in name order gives exactly the ``--format jsonl`` output of the same
run. Every file is written to a temporary name and renamed into place, so a file that exists is complete.
While the run goes on, each finished chunk is appended to ``journal.jsonl`` with the sha256 of its files;
at the end the manifest lists every chunk (record range, count, file names, sizes, sha256), ``summary.json``
is written and the journal is removed. Nothing in the directory depends on timing, the back-end or the job
count, so two runs of the same input give the same files.

``--resume`` reads the manifest, refuses a directory whose run identity (library path, size and sha256,
input format and reader options, parameter set hash, terms mode, chunk size, Parquet or not, ffaudit
version) differs from the new run's, and trusts a chunk only when the journal or manifest lists it and every
one of its files has the recorded size and sha256; every other chunk is audited again. A run killed at any
moment (even by SIGKILL) and resumed therefore ends with the same files as an uninterrupted run.

Files are not fsync'ed: a killed process loses nothing the operating system has accepted, but a power cut
may; resume detects a damaged chunk by its hash and audits it again.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import secrets
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ffaudit.audit import Summary
from ffaudit.engine.base import ChunkJob, ChunkResult, EngineError
from ffaudit.engine.summary_state import summary_from_state, summary_state
from ffaudit.errors import UsageError
from ffaudit.paramset.model import ParameterSet

MANIFEST = "manifest.json"
SUMMARY = "summary.json"
JOURNAL = "journal.jsonl"
FORMAT_NAME = "ffaudit-run"
FORMAT_VERSION = 1
SUMMARY_FORMAT_NAME = "ffaudit-run-summary"
_HASH_BLOCK = 1 << 20


def chunk_file(number: int, kind: str) -> str:
    """The file name of chunk ``number``: ``kind`` is ``jsonl``, ``parquet`` or ``summary``."""
    suffix = {"jsonl": ".jsonl", "parquet": ".parquet", "summary": ".summary.json"}[kind]
    return f"chunk-{number:06d}{suffix}"


def sha256_file(path: Path) -> str:
    """The hex sha256 of the file's bytes. Raises ``OSError`` when it cannot be read."""
    digest = hashlib.sha256()
    with open(path, "rb") as stream:
        for block in iter(lambda: stream.read(_HASH_BLOCK), b""):
            digest.update(block)
    return digest.hexdigest()


def library_identity(path: str, fmt: str) -> dict[str, Any]:
    """What identifies the input: the path as given, the format, and for a file its size and sha256.

    Raises :class:`ffaudit.errors.InputFileError` naming the file when it cannot be read.
    """
    from ffaudit.errors import InputFileError

    if path == "-":
        return {"path": "-", "format": fmt}
    try:
        return {
            "path": path,
            "format": fmt,
            "bytes": os.path.getsize(path),
            "sha256": sha256_file(Path(path)),
        }
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from exc


def recorded_identity(path: str | os.PathLike[str]) -> dict[str, Any] | None:
    """The run identity in ``path``'s manifest, or None when there is no readable manifest."""
    try:
        data = json.loads((Path(path) / MANIFEST).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    run = data.get("run") if isinstance(data, dict) else None
    return dict(run) if isinstance(run, dict) else None


def write_atomic(target: Path, data: bytes) -> None:
    """Write ``data`` to ``target`` through a temporary file in the same directory and a rename.

    Raises :class:`UsageError` naming the file when it cannot be written.
    """
    temp = target.with_name(f".{target.name}.{secrets.token_hex(6)}.part")
    try:
        with open(temp, "xb") as stream:
            stream.write(data)
        os.replace(temp, target)
    except OSError as exc:
        with contextlib.suppress(OSError):
            temp.unlink()
        raise UsageError(f"cannot write {target}: {exc.strerror or exc}") from exc


def write_chunk_files(
    directory: str | os.PathLike[str], number: int, payloads: Mapping[str, bytes]
) -> dict[str, dict[str, Any]]:
    """Write chunk ``number``'s files (kind -> bytes) atomically into ``directory``; kind -> ``{"name",
    "bytes", "sha256"}`` as the manifest lists them. Workers call it for their own chunks (see
    :attr:`~ffaudit.engine.base.ChunkOptions.directory`). Raises :class:`UsageError` naming a file that
    cannot be written."""
    files: dict[str, dict[str, Any]] = {}
    for kind, data in payloads.items():
        name = chunk_file(number, kind)
        write_atomic(Path(directory) / name, data)
        files[kind] = {"name": name, "bytes": len(data), "sha256": hashlib.sha256(data).hexdigest()}
    return files


def _json_bytes(obj: Any) -> bytes:
    return (json.dumps(obj, ensure_ascii=False, indent=1, sort_keys=False) + "\n").encode("utf-8")


@dataclass(frozen=True)
class ChunkRecord:
    """A finished chunk as the manifest lists it."""

    number: int
    first: int
    count: int
    files: Mapping[str, Mapping[str, Any]]
    """kind (``jsonl``, ``parquet``, ``summary``) -> ``{"name", "bytes", "sha256"}``."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "number": self.number,
            "first": self.first,
            "count": self.count,
            "files": {k: dict(v) for k, v in self.files.items()},
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> ChunkRecord:
        files = data["files"]
        if not isinstance(files, Mapping):
            raise TypeError("files is not a mapping")
        return cls(int(data["number"]), int(data["first"]), int(data["count"]), dict(files))


@dataclass
class OutputDirectory:
    """One run's output directory. :meth:`open` checks it and finds the chunks that can be kept."""

    path: Path
    identity: Mapping[str, Any]
    parquet: bool
    done: dict[int, ChunkRecord] = field(default_factory=dict)
    """Chunks verified complete (kept from an earlier run, or written by this one)."""
    kept: int = 0
    """How many chunks were kept from an earlier run."""

    @classmethod
    def open(
        cls, path: str | os.PathLike[str], identity: Mapping[str, Any], *, resume: bool
    ) -> OutputDirectory:
        """Prepare ``path`` for a run of ``identity`` (which holds ``parquet``: whether to write Parquet).

        A missing directory is created. Raises :class:`UsageError` naming the directory when it is a file,
        holds another run (without ``resume``), holds a different run (with ``resume``: the message names the
        options that differ), or is not empty and holds no ffaudit run.
        """
        directory = Path(path)
        if directory.exists() and not directory.is_dir():
            raise UsageError(f"{directory}: exists and is not a directory")
        try:
            directory.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise UsageError(
                f"cannot create the output directory {directory}: {exc.strerror or exc}"
            ) from exc
        out = cls(directory, dict(identity), bool(identity.get("parquet")))
        manifest_path = directory / MANIFEST
        if not manifest_path.exists():
            foreign = [p.name for p in directory.iterdir() if not p.name.startswith(".")]
            if foreign:
                listed = ", ".join(sorted(foreign)[:5]) + (", ..." if len(foreign) > 5 else "")
                raise UsageError(
                    f"{directory}: the output directory is not empty ({listed}) and holds no ffaudit run; "
                    "choose a new or empty directory"
                )
            if resume:
                raise UsageError(
                    f"{directory}: --resume: there is no run to resume ({MANIFEST} is missing)"
                )
            out._start()
            return out
        if not resume:
            raise UsageError(
                f"{directory}: already holds an ffaudit run ({MANIFEST}); pass --resume to continue or "
                "check it, or choose a new directory"
            )
        manifest = out._read_manifest(manifest_path)
        different = _differences(manifest.get("run", {}), identity)
        if different:
            raise UsageError(
                f"{directory}: --resume: the directory holds a run with different options "
                f"({'; '.join(different)}); resume with the same options or choose a new directory"
            )
        out._remove_partials()
        recorded = _chunk_records(manifest.get("chunks", []))
        recorded += out._read_journal()
        for chunk in recorded:
            if chunk.number not in out.done and out._verify(chunk):
                out.done[chunk.number] = chunk
        out.kept = len(out.done)
        if manifest.get("complete"):
            out._write_manifest(
                complete=False, chunks=sorted(out.done.values(), key=lambda c: c.number)
            )
        out._rewrite_journal()
        return out

    def _start(self) -> None:
        self._remove_partials()
        self._write_manifest(complete=False, chunks=[])
        write_atomic(self.path / JOURNAL, b"")

    def _read_manifest(self, manifest_path: Path) -> dict[str, Any]:
        try:
            data = json.loads(manifest_path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise UsageError(f"{manifest_path}: cannot read the manifest: {exc}") from exc
        if not isinstance(data, dict) or data.get("format") != FORMAT_NAME:
            raise UsageError(f"{manifest_path}: not an ffaudit run manifest")
        if data.get("format_version") != FORMAT_VERSION:
            raise UsageError(
                f"{manifest_path}: manifest format version {data.get('format_version')!r}, this ffaudit "
                f"writes version {FORMAT_VERSION}; resume with the ffaudit that started the run"
            )
        return data

    def _read_journal(self) -> list[ChunkRecord]:
        path = self.path / JOURNAL
        chunks: list[ChunkRecord] = []
        if not path.exists():
            return chunks
        items = []
        for line in path.read_text(encoding="utf-8", errors="replace").splitlines():
            try:
                items.append(json.loads(line))
            except ValueError:
                continue  # a line cut short by a kill: that chunk is audited again
        return chunks + _chunk_records(items)

    def _rewrite_journal(self) -> None:
        text = "".join(
            json.dumps(c.to_dict(), separators=(",", ":")) + "\n"
            for c in sorted(self.done.values(), key=lambda c: c.number)
        )
        write_atomic(self.path / JOURNAL, text.encode("utf-8"))

    def _verify(self, chunk: ChunkRecord) -> bool:
        wanted = {"jsonl", "summary"} | ({"parquet"} if self.parquet else set())
        if set(chunk.files) != wanted:
            return False
        for kind, info in chunk.files.items():
            name = str(info.get("name", ""))
            if name != chunk_file(chunk.number, kind):
                return False
            target = self.path / name
            try:
                if target.stat().st_size != info.get("bytes") or sha256_file(target) != info.get(
                    "sha256"
                ):
                    return False
            except OSError:
                return False
        return True

    def _remove_partials(self) -> None:
        for stale in self.path.glob(".*.part"):
            with contextlib.suppress(OSError):
                stale.unlink()

    def _write_manifest(
        self,
        *,
        complete: bool,
        chunks: Iterable[ChunkRecord],
        extra: Mapping[str, Any] | None = None,
    ) -> None:
        manifest: dict[str, Any] = {
            "format": FORMAT_NAME,
            "format_version": FORMAT_VERSION,
            "complete": complete,
            "run": dict(self.identity),
        }
        manifest.update(extra or {})
        manifest["chunks"] = [c.to_dict() for c in chunks]
        write_atomic(self.path / MANIFEST, _json_bytes(manifest))

    def write_chunk(self, result: ChunkResult) -> ChunkRecord:
        """Write one audited chunk's files and record it in the journal.

        Raises :class:`EngineError` when the result has no encoded molecules (or no Parquet when this
        directory wants it), and :class:`UsageError` when a file cannot be written.
        """
        wanted = {"jsonl"} | ({"parquet"} if self.parquet else set())
        if result.files is not None:  # the worker wrote them: check they are this chunk's and in place
            files = {kind: dict(info) for kind, info in result.files.items()}
            self._check_written(result.number, files, wanted)
        elif result.jsonl is None or (self.parquet and result.parquet is None):
            raise EngineError(
                f"chunk {result.number}: the result is not encoded for an output directory"
            )
        else:
            payloads = {"jsonl": result.jsonl}
            if self.parquet and result.parquet is not None:
                payloads["parquet"] = result.parquet
            files = write_chunk_files(self.path, result.number, payloads)
        summary = _json_bytes(summary_state(result.summary))
        files.update(write_chunk_files(self.path, result.number, {"summary": summary}))
        chunk = ChunkRecord(result.number, result.first, result.count, dict(sorted(files.items())))
        try:
            with open(self.path / JOURNAL, "a", encoding="utf-8") as journal:
                journal.write(json.dumps(chunk.to_dict(), separators=(",", ":")) + "\n")
        except OSError as exc:
            raise UsageError(f"cannot write {self.path / JOURNAL}: {exc.strerror or exc}") from exc
        self.done[result.number] = chunk
        return chunk

    def _check_written(
        self, number: int, files: Mapping[str, Mapping[str, Any]], wanted: set[str]
    ) -> None:
        """Raise :class:`EngineError` unless a worker's report names exactly this chunk's ``wanted`` files
        and each is in the directory with the reported size (its sha256 is checked on ``--resume``)."""
        if set(files) != wanted:
            raise EngineError(
                f"chunk {number}: the worker wrote {sorted(files)}, expected {sorted(wanted)}"
            )
        for kind, info in files.items():
            name = chunk_file(number, kind)
            if info.get("name") != name:
                raise EngineError(f"chunk {number}: the worker wrote {info.get('name')}, not {name}")
            try:
                size = (self.path / name).stat().st_size
            except OSError as exc:
                raise EngineError(
                    f"chunk {number}: {self.path / name} is not there: {exc.strerror or exc}"
                ) from exc
            if size != info.get("bytes"):
                raise EngineError(
                    f"chunk {number}: {self.path / name} has {size} bytes, the worker wrote "
                    f"{info.get('bytes')}"
                )

    def load_summary(self, pset: ParameterSet, chunk: ChunkRecord) -> Summary:
        """The summary of a finished chunk, read from its verified file.

        Raises :class:`EngineError` when the file no longer matches its hash or cannot be decoded.
        """
        info = chunk.files["summary"]
        target = self.path / str(info["name"])
        try:
            data = target.read_bytes()
        except OSError as exc:
            raise EngineError(f"{target}: cannot read: {exc.strerror or exc}") from exc
        if hashlib.sha256(data).hexdigest() != info["sha256"]:
            raise EngineError(f"{target}: changed while the run was going on (sha256 differs)")
        try:
            return summary_from_state(pset, json.loads(data))
        except ValueError as exc:
            raise EngineError(f"{target}: {exc}") from exc

    def finish(self, planned: list[tuple[int, int, int]], summary_doc: Mapping[str, Any]) -> None:
        """Check that every planned chunk ``(number, first, count)`` is done, write ``summary.json`` and
        the complete manifest, and remove the journal.

        Raises :class:`EngineError` naming the first chunk that is missing or whose range differs.
        """
        chunks: list[ChunkRecord] = []
        for number, first, count in planned:
            chunk = self.done.get(number)
            if chunk is None:
                raise EngineError(
                    f"chunk {number} (records {first}..{first + count - 1}) was not written"
                )
            if (chunk.first, chunk.count) != (first, count):
                raise EngineError(
                    f"chunk {number}: the directory has records {chunk.first}..{chunk.first + chunk.count - 1}, "
                    f"the input gives {first}..{first + count - 1}"
                )
            chunks.append(chunk)
        stale = set(self.done) - {number for number, _, _ in planned}
        for number in sorted(stale):
            for info in self.done[number].files.values():
                with contextlib.suppress(OSError):
                    (self.path / str(info["name"])).unlink()
        data = _json_bytes(summary_doc)
        write_atomic(self.path / SUMMARY, data)
        records = sum(c.count for c in chunks)
        self._write_manifest(
            complete=True,
            chunks=chunks,
            extra={
                "records": records,
                "summary": {
                    "name": SUMMARY,
                    "bytes": len(data),
                    "sha256": hashlib.sha256(data).hexdigest(),
                },
            },
        )
        with contextlib.suppress(FileNotFoundError):
            (self.path / JOURNAL).unlink()


def _chunk_records(items: Any) -> list[ChunkRecord]:
    """The well-formed chunk entries of a manifest or journal; malformed ones are left out (their
    chunks are audited again)."""
    chunks: list[ChunkRecord] = []
    for item in items if isinstance(items, list) else []:
        try:
            chunks.append(ChunkRecord.from_dict(item))
        except (KeyError, TypeError, ValueError):
            continue
    return chunks


def _differences(old: Mapping[str, Any], new: Mapping[str, Any]) -> list[str]:
    diffs: list[str] = []
    for key in sorted(set(old) | set(new)):
        a, b = old.get(key), new.get(key)
        if a == b:
            continue
        if isinstance(a, Mapping) and isinstance(b, Mapping):
            diffs += [f"{key}.{d}" for d in _differences(a, b)]
        else:
            diffs.append(f"{key}: {a!r} then, {b!r} now")
    return diffs


def run_into_directory(
    directory: OutputDirectory,
    jobs: Iterable[ChunkJob],
    audit: Callable[[Iterable[ChunkJob]], Iterator[ChunkResult]],
    pset: ParameterSet,
    *,
    summary_doc: Callable[[Summary], Mapping[str, Any]],
    on_chunk: Callable[[int], None] | None = None,
) -> Summary:
    """Audit the chunks of ``jobs`` that ``directory`` does not hold yet and finish the directory.

    ``audit`` runs chunk jobs on a back-end (in order) and must encode them for a directory
    (:class:`~ffaudit.engine.base.ChunkOptions` ``encode=True``, and ``parquet`` as the directory wants).
    ``summary_doc`` turns the merged library summary into the ``summary.json`` document. ``on_chunk`` is
    called with the record count of every chunk as it is kept or written (for a progress bar). Returns the
    merged summary. Raises what the back-end or :meth:`OutputDirectory.finish` raises.
    """
    planned: list[tuple[int, int, int]] = []

    def todo() -> Iterator[ChunkJob]:
        for job in jobs:
            planned.append((job.number, job.first, job.count))
            kept = directory.done.get(job.number)
            if kept is not None and (kept.first, kept.count) == (job.first, job.count):
                if on_chunk is not None:
                    on_chunk(job.count)
                continue
            directory.done.pop(job.number, None)
            yield job

    for result in audit(todo()):
        directory.write_chunk(result)
        if on_chunk is not None:
            on_chunk(result.count)
    summary = Summary(pset)
    for number, _, _ in planned:
        chunk = directory.done.get(number)
        if chunk is None:
            raise EngineError(f"chunk {number} was planned but not written")
        summary.merge(directory.load_summary(pset, chunk))
    directory.finish(planned, summary_doc(summary))
    return summary
