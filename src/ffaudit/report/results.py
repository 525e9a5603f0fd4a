"""Reading audit results back: a ``--format jsonl`` file, a ``--format json`` document or an output directory.

``ffaudit report`` and other readers of finished runs take RESULTS in one of three shapes:

- a JSONL file (``ffaudit audit LIB --format jsonl``): one molecule object per line and nothing else, so the
  run information (parameter set, cautions) is not in it;
- a JSON document (``--format json``): the run information, the molecules and the summary in one object
  (read whole into memory);
- an output directory (``ffaudit audit LIB -o DIR/``, :mod:`ffaudit.engine.outdir`): the ``chunk-*.jsonl``
  files read in name order (together exactly the JSONL output of the run), with the run information from
  ``summary.json`` when the run is complete and from ``manifest.json`` otherwise.

Molecules are streamed (except from a JSON document) and given with their location (file and line) so that
a bad line is reported where it is. Each molecule gets a light check of the keys a report needs; the full
check is the JSON Schema (:mod:`ffaudit.report.schemas`), which is too slow to run on every line of a large
library here.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ffaudit.errors import InputFileError

STATUSES: tuple[str, ...] = ("covered", "estimated", "incomplete", "unreadable")

REQUIRED_KEYS: tuple[str, ...] = (
    "index",
    "source",
    "name",
    "smiles",
    "status",
    "score",
    "atoms",
    "atom_classes",
    "counts",
    "terms",
)
"""Keys every molecule object must have for a report (a subset of the schema's required keys)."""

CHUNK_GLOB = "chunk-*.jsonl"
MANIFEST = "manifest.json"
SUMMARY = "summary.json"


@dataclass(frozen=True)
class RunInfo:
    """What the results say about the run, where they say it (a JSONL file says nothing of it)."""

    parameter_set: Mapping[str, Any] | None = None
    """``{"name", "version", "hash", "demonstration", "paths"}`` as the audit wrote it, or None."""
    cautions: tuple[str, ...] | None = None
    """The cautions of the run (they include the demonstration notice when the set is one), or None."""
    terms_mode: str | None = None
    library: Mapping[str, Any] | None = None
    """Output directory: ``{"path", "format", ...}`` of the audited library."""
    reader_options: Mapping[str, Any] = field(default_factory=dict)
    complete: bool = True
    """False for an output directory whose run has not finished (no ``summary.json``)."""


@dataclass(frozen=True)
class Results:
    """RESULTS as found on disk: its kind, the files holding the molecules, and the run information."""

    path: Path
    kind: str
    """``jsonl``, ``json`` or ``directory``."""
    files: tuple[Path, ...]
    run: RunInfo

    def molecules(self) -> Iterator[tuple[str, dict[str, Any]]]:
        """Every molecule object in order, with its location ``FILE:LINE``.

        Raises :class:`InputFileError` naming the file and line of a line that is not JSON, not an object,
        or lacks a key a report needs (:data:`REQUIRED_KEYS`), and naming the file when it cannot be read.
        """
        if self.kind == "json":
            yield from _json_document_molecules(self.files[0])
            return
        for path in self.files:
            yield from _jsonl_molecules(path)


def open_results(path: str | os.PathLike[str]) -> Results:
    """Find out what ``path`` holds and read its run information (molecules are read later, streamed).

    Raises :class:`InputFileError` naming the path when it does not exist, is a directory without chunk
    files, or has a manifest or summary that is not JSON.
    """
    target = Path(path)
    if target.is_dir():
        return _open_directory(target)
    if not target.is_file():
        raise InputFileError(f"{target}: no such file or directory")
    head = _first_line(target)
    if head.strip() and not _is_json_object(head):
        document = _read_json(target)
        if not isinstance(document, dict) or not isinstance(document.get("molecules"), list):
            raise InputFileError(
                f"{target}: neither JSON lines (one molecule object per line, from audit --format jsonl) "
                "nor a JSON document with 'molecules' (from audit --format json)"
            )
        parameter_set = document.get("parameter_set")
        cautions = document.get("cautions")
        return Results(
            target,
            "json",
            (target,),
            RunInfo(
                parameter_set=parameter_set if isinstance(parameter_set, dict) else None,
                cautions=tuple(str(c) for c in cautions) if isinstance(cautions, list) else None,
                terms_mode=_text_or_none(document.get("terms_mode")),
            ),
        )
    return Results(target, "jsonl", (target,), RunInfo())


def _open_directory(directory: Path) -> Results:
    chunks = tuple(sorted(directory.glob(CHUNK_GLOB), key=lambda p: p.name))
    manifest_path = directory / MANIFEST
    if not chunks and not manifest_path.exists():
        raise InputFileError(
            f"{directory}: a directory without {CHUNK_GLOB} files or {MANIFEST}; expected an output "
            "directory of ffaudit audit (-o DIR/)"
        )
    manifest = _read_json(manifest_path) if manifest_path.exists() else {}
    run = manifest.get("run", {}) if isinstance(manifest, dict) else {}
    run = run if isinstance(run, dict) else {}
    complete = bool(manifest.get("complete")) if isinstance(manifest, dict) else False
    summary_path = directory / SUMMARY
    summary = _read_json(summary_path) if summary_path.exists() else {}
    summary = summary if isinstance(summary, dict) else {}
    parameter_set = summary.get("parameter_set", run.get("parameter_set"))
    cautions = summary.get("cautions")
    library = run.get("library")
    options = run.get("reader_options")
    return Results(
        directory,
        "directory",
        chunks,
        RunInfo(
            parameter_set=parameter_set if isinstance(parameter_set, dict) else None,
            cautions=tuple(str(c) for c in cautions) if isinstance(cautions, list) else None,
            terms_mode=_text_or_none(summary.get("terms_mode", run.get("terms_mode"))),
            library=library if isinstance(library, dict) else None,
            reader_options=options if isinstance(options, dict) else {},
            complete=complete and summary_path.exists(),
        ),
    )


def _text_or_none(value: Any) -> str | None:
    return value if isinstance(value, str) else None


def _first_line(path: Path) -> str:
    try:
        with open(path, encoding="utf-8", errors="replace") as stream:
            for line in stream:
                if line.strip():
                    return line
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    return ""


def _is_json_object(line: str) -> bool:
    try:
        return isinstance(json.loads(line), dict)
    except ValueError:
        return False


def _read_json(path: Path) -> Any:
    try:
        with open(path, encoding="utf-8") as stream:
            return json.load(stream)
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    except ValueError as exc:
        raise InputFileError(f"{path}: not valid JSON: {exc}") from exc


def check_molecule(obj: Any, where: str) -> dict[str, Any]:
    """``obj`` if it is a molecule object with the keys a report needs and a known status.

    Raises :class:`InputFileError` starting with ``where`` (``FILE:LINE``) otherwise.
    """
    if not isinstance(obj, dict):
        raise InputFileError(f"{where}: expected a molecule object, found {type(obj).__name__}")
    lacking = [key for key in REQUIRED_KEYS if key not in obj]
    if lacking:
        raise InputFileError(
            f"{where}: the molecule object lacks {', '.join(lacking)} (is this ffaudit audit output?)"
        )
    if obj["status"] not in STATUSES:
        raise InputFileError(
            f"{where}: unknown status {obj['status']!r} (expected one of {', '.join(STATUSES)})"
        )
    if not isinstance(obj["terms"], list) or not isinstance(obj["counts"], dict):
        raise InputFileError(f"{where}: 'terms' must be a list and 'counts' an object")
    return obj


def _jsonl_molecules(path: Path) -> Iterator[tuple[str, dict[str, Any]]]:
    try:
        stream = open(path, encoding="utf-8")  # noqa: SIM115 - closed below, also on error
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    with stream:
        number = 0
        try:
            for number, line in enumerate(stream, start=1):  # noqa: B007 - used after the loop
                if not line.strip():
                    continue
                where = f"{path}:{number}"
                try:
                    obj = json.loads(line)
                except ValueError as exc:
                    raise InputFileError(f"{where}: not valid JSON: {exc}") from exc
                yield where, check_molecule(obj, where)
        except UnicodeDecodeError as exc:
            raise InputFileError(f"{path}:{number + 1}: not UTF-8 text: {exc.reason}") from exc


def _json_document_molecules(path: Path) -> Iterator[tuple[str, dict[str, Any]]]:
    document = _read_json(path)
    for number, obj in enumerate(document.get("molecules", []), start=1):
        where = f"{path}: molecules[{number - 1}]"
        yield where, check_molecule(obj, where)
