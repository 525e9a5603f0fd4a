"""Loading parameter sets: files or embedded names -> one validated, layered :class:`ParameterSet`.

Each file goes through four stages, and every finding of every stage is kept:

1. YAML (:mod:`ffaudit.paramset.yamlload`): safe reading, duplicate keys, size and alias caps;
2. schema (:mod:`ffaudit.paramset.schema`): every JSON Schema error;
3. semantic checks (:mod:`ffaudit.paramset.checks`), with what earlier layers defined;
4. conversion to internal units and conventions (:mod:`ffaudit.paramset.convert`) and canonical tuples.

Stage 4 runs only when no file has an error. A file whose YAML stage fails beyond duplicate keys is not
checked further.

Layering (several sources, base first): the header is the first file's, except that conventions a file
does not declare are taken from the first later file that does; every later file must declare the same
units as the first (``units-mismatch`` otherwise). Sources are merged by key, a later citation replacing an
earlier one. Classes are merged by id: a class whose id exists replaces it *in place* (its position, and so
its priority, is kept); a new class is appended after all earlier classes, unless it says ``before: ID``,
in which case it is inserted immediately before that class of an earlier layer (a replacing class with
``before:`` moves there). Entries are merged per table by canonical key (tuple, order, ring): a later entry
replaces the earlier one in place, new keys are appended. Every entry keeps the file it came from in
``location.path``.

Embedded sets live in ``ffaudit/paramset/data/NAME.yaml`` and are named ``embedded:NAME`` in findings
and provenance (so output does not depend on where the package is installed).
"""

from __future__ import annotations

import hashlib
import os
import re
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ffaudit.errors import ParameterSetError
from ffaudit.findings import Finding, Severity, format_doc_path
from ffaudit.paramset import convert
from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.checks import LayerContext, iter_semantic_findings
from ffaudit.paramset.model import (
    KINDS,
    TABLE_NAMES,
    Entry,
    EnvClass,
    FourierTerm,
    Header,
    ParameterSet,
    Source,
    SourceLocation,
    TableKey,
)
from ffaudit.paramset.schema import best_schema_finding, iter_schema_findings
from ffaudit.paramset.yamlload import YamlDocument, read_yaml

DEFAULT_SET = "generic-organic"
"""The embedded set used when no source is given."""

EMBEDDED_PREFIX = "embedded:"

_DATA_DIR = Path(__file__).resolve().parent / "data"
_NAME = re.compile(r"[a-z0-9][a-z0-9._-]*")


def embedded_set_names() -> tuple[str, ...]:
    """Names of the embedded sets (``data/NAME.yaml``), sorted."""
    if not _DATA_DIR.is_dir():
        return ()
    return tuple(sorted(p.stem for p in _DATA_DIR.glob("*.yaml") if p.is_file()))


def embedded_set_path(name: str) -> Path:
    """The file of embedded set ``name``; :class:`ParameterSetError` when there is none."""
    path = _DATA_DIR / f"{name}.yaml"
    if not _NAME.fullmatch(name) or not path.is_file():
        known = ", ".join(embedded_set_names()) or "none"
        raise ParameterSetError(
            f"no embedded parameter set named {name!r} (embedded sets: {known})"
        )
    return path


@dataclass(frozen=True)
class _Source:
    file: Path
    shown: str


def _resolve(source: str | os.PathLike[str]) -> _Source:
    """A path that exists, else an embedded set name; :class:`ParameterSetError` otherwise."""
    text = os.fspath(source)
    if os.path.exists(text):
        return _Source(Path(text), text)
    if (
        isinstance(source, str)
        and _NAME.fullmatch(source)
        and (_DATA_DIR / f"{source}.yaml").is_file()
    ):
        return _Source(_DATA_DIR / f"{source}.yaml", EMBEDDED_PREFIX + source)
    known = ", ".join(embedded_set_names()) or "none"
    message = (
        f"parameter set {text!r} not found: no such file, and no embedded set of that name "
        f"(embedded sets: {known})"
    )
    raise ParameterSetError(
        message,
        [Finding(code="missing-file", severity=Severity.ERROR, message=message, path=text)],
    )


@dataclass
class _File:
    """One file after the checking stages."""

    source: _Source
    doc: YamlDocument | None
    findings: list[Finding] = field(default_factory=list)
    best: Finding | None = None

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity >= Severity.ERROR]


def _check_file(source: _Source, context: LayerContext, first_units: Any) -> _File:
    try:
        doc = read_yaml(source.file, display_path=source.shown)
    except OSError as exc:
        code = "missing-file" if isinstance(exc, FileNotFoundError) else "unreadable-file"
        reason = exc.strerror or str(exc)
        finding = Finding(
            code=code,
            severity=Severity.ERROR,
            message=f"cannot read {source.shown}: {reason}",
            path=source.shown,
        )
        return _File(source, None, [finding], finding)
    result = _File(source, doc, list(doc.findings))
    if not doc.usable:
        result.best = result.findings[0] if result.findings else None
        return result
    schema_findings = list(iter_schema_findings(doc.data, doc.marks, source.shown))
    result.findings += schema_findings
    result.best = (
        best_schema_finding(doc.data, doc.marks, source.shown) if schema_findings else None
    )
    result.findings += iter_semantic_findings(doc.data, doc.marks, source.shown, context=context)
    units = _get(doc.data, "header", "units")
    if first_units is not None and isinstance(units, dict) and units != first_units:
        mark = doc.locate(("header", "units")) or (1, 1)
        result.findings.append(
            Finding(
                code="units-mismatch",
                severity=Severity.ERROR,
                message=f"units {_units_text(units)} differ from the first set's {_units_text(first_units)}",
                path=source.shown,
                line=mark[0],
                column=mark[1],
                doc_path=("header", "units"),
                hint="a layered file must declare the same units as the set it extends",
            )
        )
    result.findings.sort(key=Finding.sort_key)
    return result


def _units_text(units: Mapping[str, Any]) -> str:
    return "/".join(str(units.get(k)) for k in ("length", "angle", "energy"))


def _get(doc: Any, *keys: str) -> Any:
    for key in keys:
        if not isinstance(doc, dict):
            return None
        doc = doc.get(key)
    return doc


def _extend_context(context: LayerContext, doc: YamlDocument | None) -> LayerContext:
    """Add a file's class ids (with parents) and source keys, read defensively from its data."""
    if doc is None or not isinstance(doc.data, dict):
        return context
    classes = dict(context.classes)
    for cls in doc.data.get("classes") or []:
        if isinstance(cls, dict) and isinstance(cls.get("id"), str):
            parent = cls.get("parent")
            classes[cls["id"]] = parent if isinstance(parent, str) else None
    sources = doc.data.get("sources")
    keys = set(sources) if isinstance(sources, dict) else set()
    return LayerContext(classes=classes, sources=context.sources | frozenset(keys))


def _check_all(sources: Sequence[_Source]) -> list[_File]:
    files: list[_File] = []
    context = LayerContext()
    first_units: Any = None
    for source in sources:
        checked = _check_file(source, context, first_units)
        files.append(checked)
        if len(files) == 1 and checked.doc is not None:
            first_units = _get(checked.doc.data, "header", "units")
        context = _extend_context(context, checked.doc)
    return files


def iter_load_findings(
    source: str | os.PathLike[str], *more: str | os.PathLike[str]
) -> Iterator[Finding]:
    """Every finding of loading ``source`` (layered with ``more``), in file then line order. Never raises.

    A source that is neither a file nor an embedded name gives one ``missing-file`` finding.
    """
    resolved: list[_Source] = []
    for item in (source, *more):
        try:
            resolved.append(_resolve(item))
        except ParameterSetError as exc:
            yield from exc.findings
    for checked in _check_all(resolved):
        yield from checked.findings


def load_parameter_set(*sources: str | os.PathLike[str]) -> ParameterSet:
    """Load, check and layer parameter sets; no argument loads the embedded default set.

    Each source is a path, or the name of an embedded set when no such path exists. Later sources extend
    and override earlier ones (see the module docstring). Raises :class:`ParameterSetError` naming the
    file when a source is missing or unreadable, and carrying *all* findings of all files when any of
    them is an error.
    """
    if sources:
        resolved = [_resolve(s) for s in sources]
    else:
        resolved = [_Source(embedded_set_path(DEFAULT_SET), EMBEDDED_PREFIX + DEFAULT_SET)]
    files = _check_all(resolved)
    errors = [f for checked in files for f in checked.errors]
    if errors:
        raise ParameterSetError(_error_message(files), [f for c in files for f in c.findings])
    docs = [checked.doc for checked in files if checked.doc is not None]
    return _build(docs)


def _error_message(files: Sequence[_File]) -> str:
    bad = [c for c in files if c.errors]
    count = sum(len(c.errors) for c in bad)
    names = ", ".join(c.source.shown for c in bad)
    best = next((c.best for c in bad if c.best is not None), None) or bad[0].errors[0]
    noun = "error" if count == 1 else "errors"
    head = f"cannot load parameter set {names}: {count} {noun}"
    where = f" [at {format_doc_path(best.doc_path)}]" if best.doc_path else ""
    return f"{head}; most relevant: {best.location_text()}: {best.message}{where}"


# -- building -----------------------------------------------------------------------------------------


def _location(doc: YamlDocument, doc_path: tuple[str | int, ...]) -> SourceLocation:
    line, column = doc.locate(doc_path) or (1, 1)
    return SourceLocation(doc.path, line, column)


def _header(data: Mapping[str, Any]) -> Header:
    h = data["header"]
    lint = h.get("lint") or {}
    return Header(
        name=h["name"],
        version=h["version"],
        description=h.get("description", ""),
        demonstration=bool(h.get("demonstration", False)),
        units=dict(h["units"]),
        conventions=dict(h.get("conventions") or {}),
        out_of_plane_centres=h.get("out_of_plane_centres", "planar"),
        dihedrals_about_linear=bool(h.get("dihedrals_about_linear", False)),
        scale_14={k: float(v) for k, v in (h.get("scale_14") or {}).items()},
        lint_disable=tuple(lint.get("disable") or ()),
    )


def _classes(doc: YamlDocument) -> list[tuple[EnvClass, str | None]]:
    out: list[tuple[EnvClass, str | None]] = []
    for i, c in enumerate(doc.data.get("classes") or []):
        smarts = tuple(c["smarts"])
        out.append(
            (
                EnvClass(
                    id=c["id"],
                    element=c["element"],
                    smarts=smarts,
                    parent=c.get("parent"),
                    description=c.get("description", ""),
                    location=_location(doc, ("classes", i)),
                    smarts_locations=tuple(
                        _location(doc, ("classes", i, "smarts", j)) for j in range(len(smarts))
                    ),
                    equivalent=tuple(c.get("equivalent") or ()),
                    estimated=bool(c.get("estimated", False)),
                    hybridisation=c.get("hybridisation"),
                    aromatic=c.get("aromatic"),
                    charge=c.get("charge"),
                    source=c.get("source"),
                ),
                c.get("before"),
            )
        )
    return out


def _entry(
    kind: str, index: int, raw: Mapping[str, Any], doc: YamlDocument, header: Header
) -> Entry:
    table = TABLE_NAMES[kind]
    members = (raw["class"],) if kind == "nonbonded" else tuple(raw["classes"])
    canonical, reversed_ = canonical_classes(kind, members)
    form = raw.get("form", convert.FORMS[kind][0])
    fourier: tuple[FourierTerm, ...] = ()
    values: dict[str, float] = {}
    if kind == "dihedral":
        fourier = tuple(
            FourierTerm(
                *convert.dihedral_to_internal(
                    t["periodicity"], t["phase"], t["k"], header.units, header.conventions
                )
            )
            for t in raw["terms"]
        )
    else:
        values = convert.to_internal(kind, form, raw, header.units, header.conventions)
    if reversed_ and kind == "charge_increment":
        values["increment"] = -values["increment"]
    if reversed_ and kind == "stretch_bend":
        values["k_ab"], values["k_cb"] = values["k_cb"], values["k_ab"]
    return Entry(
        kind=kind,
        classes=canonical,
        form=form,
        values=values,
        location=_location(doc, (table, index)),
        source=raw.get("source"),
        bond_order=raw.get("order"),
        in_ring=raw.get("ring"),
        fourier=fourier,
        estimated=bool(raw.get("estimated", False)),
        note=raw.get("note"),
        doc_path=(table, index),
    )


def _place(order: list[EnvClass], cls: EnvClass, before: str | None) -> None:
    ids = [c.id for c in order]
    if before is not None and before != cls.id and before in ids:
        if cls.id in ids:
            del order[ids.index(cls.id)]
            ids.remove(cls.id)
        order.insert(ids.index(before), cls)
    elif cls.id in ids:
        order[ids.index(cls.id)] = cls
    else:
        order.append(cls)


def _build(docs: Sequence[YamlDocument]) -> ParameterSet:
    header = _header(docs[0].data)
    conventions = dict(header.conventions)
    sources: dict[str, Source] = {}
    classes: list[EnvClass] = []
    tables: dict[str, dict[TableKey, Entry]] = {kind: {} for kind in KINDS}
    digest = hashlib.sha256()
    for doc in docs:
        digest.update(doc.raw)
        file_header = _header(doc.data)
        for kind, convention in file_header.conventions.items():
            conventions.setdefault(kind, convention)
        for key, s in (doc.data.get("sources") or {}).items():
            sources[key] = Source(
                key=key,
                citation=s["citation"],
                doi=s.get("doi"),
                url=s.get("url"),
                note=s.get("note"),
                location=_location(doc, ("sources", key)),
            )
        if doc is docs[0]:
            classes.extend(cls for cls, _before in _classes(doc))
        else:
            for cls, before in _classes(doc):
                _place(classes, cls, before)
        for kind in KINDS:
            for i, raw in enumerate(doc.data.get(TABLE_NAMES[kind]) or []):
                entry = _entry(kind, i, raw, doc, file_header)
                tables[kind][entry.key] = entry
    return ParameterSet(
        header=replace(header, conventions=conventions),
        sources=sources,
        classes=tuple(classes),
        tables=tables,
        paths=tuple(doc.path for doc in docs),
        content_hash=digest.hexdigest(),
    )
