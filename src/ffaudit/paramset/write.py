"""Writing parameter-set documents: internal values -> YAML text in a header's units and conventions.

:func:`dump_set_document` writes one complete, valid document of our format (``ffaudit-parameter-set/1``)
from a header, sources, classes and entries. Values are converted back from internal units to the units
and conventions the header declares (see :mod:`ffaudit.paramset.convert`), so
``load(dump(x))`` gives ``x`` again to 12 significant digits (numbers are written with 12, so that
conversions do not print as 0.10900000000000001). It is meant for writing a set out
(``init-set``) and for emitting estimated entries as a reviewable fragment: entries and classes marked
``estimated`` say ``estimated: true``, and an optional comment is written above any entry.

Entries are written in canonical tuple order (reversed charge increments already carry the flipped sign).
A kind with entries but no convention in the header gets the internal one (``half``; ``full`` for
dihedrals), which is added to the written header. Raises ``ValueError`` for an entry of an unknown kind or form.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Iterable, Mapping
from typing import Any

from ffaudit.paramset import convert
from ffaudit.paramset.model import (
    KINDS,
    TABLE_NAMES,
    Entry,
    EnvClass,
    Header,
    ParameterSet,
    Source,
    TableKey,
)

FORMAT = "ffaudit-parameter-set/1"

INTERNAL_UNITS: dict[str, str] = {"length": "angstrom", "angle": "degree", "energy": "kcal/mol"}

CommentKey = tuple[str, TableKey]
"""(kind, entry key) of the entry a comment belongs to."""

_PLAIN = re.compile(r"[A-Za-z_][A-Za-z0-9_.+/-]*")
_RESERVED = {"true", "false", "yes", "no", "on", "off", "y", "n", "null", "nan", "inf"}


def scalar(value: Any) -> str:
    """One YAML scalar that reads back as ``value`` with our loader (str, int, float, bool, None)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return ".nan"
        if math.isinf(value):
            return ".inf" if value > 0 else "-.inf"
        text = repr(float(f"{value:.12g}"))  # 12 digits: 0.109, not 0.10900000000000001
        mantissa, e, exponent = text.partition("e")
        if "." not in mantissa:  # YAML 1.1 floats need a dot: 1e-05 -> 1.0e-05
            mantissa += ".0"
        return mantissa + e + exponent
    text = str(value)
    if _PLAIN.fullmatch(text) and text.lower() not in _RESERVED:
        return text
    return json.dumps(text, ensure_ascii=False)


def _flow(values: Iterable[Any]) -> str:
    return "[" + ", ".join(scalar(v) for v in values) + "]"


def _mapping(pairs: Iterable[tuple[str, Any]]) -> str:
    return "{" + ", ".join(f"{k}: {scalar(v)}" for k, v in pairs) + "}"


def _conventions(header: Header, entries: Iterable[Entry]) -> dict[str, str]:
    out = dict(header.conventions)
    for entry in entries:
        if entry.kind in convert.DEFAULT_CONVENTION:
            out.setdefault(entry.kind, convert.DEFAULT_CONVENTION[entry.kind])
    return out


def _header_lines(
    header: Header, unit_map: Mapping[str, str], conventions: Mapping[str, str]
) -> list[str]:
    lines = [
        "header:",
        f"  name: {scalar(header.name)}",
        f"  version: {json.dumps(header.version)}",
    ]
    if header.description:
        lines.append(f"  description: {json.dumps(header.description, ensure_ascii=False)}")
    if header.demonstration:
        lines.append("  demonstration: true")
    lines.append("  units: " + _mapping((k, unit_map[k]) for k in ("length", "angle", "energy")))
    ordered = [k for k in ("bond", "angle", "out_of_plane", "dihedral") if k in conventions]
    if ordered:
        lines.append("  conventions: " + _mapping((k, conventions[k]) for k in ordered))
    lines.append(f"  out_of_plane_centres: {scalar(header.out_of_plane_centres)}")
    lines.append(f"  dihedrals_about_linear: {scalar(header.dihedrals_about_linear)}")
    if header.scale_14:
        lines.append("  scale_14: " + _mapping(header.scale_14.items()))
    if header.lint_disable:
        lines.append("  lint:")
        lines.append("    disable: " + _flow(header.lint_disable))
    return lines


def _source_lines(sources: Iterable[Source]) -> list[str]:
    lines: list[str] = []
    for source in sources:
        lines.append(f"  {scalar(source.key)}:")
        lines.append(f"    citation: {json.dumps(source.citation, ensure_ascii=False)}")
        for name in ("doi", "url", "note"):
            value = getattr(source, name)
            if value is not None:
                lines.append(f"    {name}: {json.dumps(value, ensure_ascii=False)}")
    return (["sources:", *lines]) if lines else []


def _class_lines(classes: Iterable[EnvClass]) -> list[str]:
    lines: list[str] = []
    for cls in classes:
        lines.append(f"  - id: {scalar(cls.id)}")
        lines.append(f"    element: {scalar(cls.element)}")
        lines.append("    smarts: " + "[" + ", ".join(json.dumps(s) for s in cls.smarts) + "]")
        if cls.parent is not None:
            lines.append(f"    parent: {scalar(cls.parent)}")
        if cls.equivalent:
            lines.append("    equivalent: " + _flow(cls.equivalent))
        if cls.description:
            lines.append(f"    description: {json.dumps(cls.description, ensure_ascii=False)}")
        if cls.hybridisation is not None:
            lines.append(f"    hybridisation: {scalar(cls.hybridisation)}")
        if cls.aromatic is not None:
            lines.append(f"    aromatic: {scalar(cls.aromatic)}")
        if cls.charge is not None:
            lines.append(f"    charge: {scalar(cls.charge)}")
        if cls.source is not None:
            lines.append(f"    source: {scalar(cls.source)}")
        if cls.estimated:
            lines.append("    estimated: true")
    return (["classes:", *lines]) if lines else []


def _entry_lines(
    entry: Entry, unit_map: Mapping[str, str], conventions: Mapping[str, str], comment: str | None
) -> list[str]:
    lines = [f"  # {line}".rstrip() for line in comment.splitlines()] if comment else []
    if entry.kind == "nonbonded":
        lines.append(f"  - class: {scalar(entry.classes[0])}")
    else:
        lines.append(f"  - classes: {_flow(entry.classes)}")
    if entry.kind in ("bond", "angle"):
        lines.append(f"    form: {scalar(entry.form)}")
    if entry.bond_order is not None:
        lines.append(f"    order: {scalar(entry.bond_order)}")
    if entry.in_ring is not None:
        lines.append(f"    ring: {scalar(entry.in_ring)}")
    if entry.kind == "dihedral":
        lines.append("    terms:")
        for term in entry.fourier:
            n, phase, k = convert.dihedral_from_internal(
                term.periodicity, term.phase, term.k, unit_map, conventions
            )
            lines.append("      - " + _mapping((("periodicity", n), ("phase", phase), ("k", k))))
    else:
        values = convert.from_internal(entry.kind, entry.form, entry.values, unit_map, conventions)
        lines.extend(f"    {name}: {scalar(value)}" for name, value in values.items())
    if entry.source is not None:
        lines.append(f"    source: {scalar(entry.source)}")
    if entry.estimated:
        lines.append("    estimated: true")
    if entry.note is not None:
        lines.append(f"    note: {json.dumps(entry.note, ensure_ascii=False)}")
    return lines


def dump_set_document(
    header: Header,
    sources: Mapping[str, Source] | Iterable[Source],
    classes: Iterable[EnvClass],
    entries: Iterable[Entry],
    *,
    comments: Mapping[CommentKey, str] | None = None,
) -> str:
    """A complete YAML document of our format; values in ``header``'s units and conventions.

    ``comments`` maps (kind, entry key) to text written as ``#`` lines above that entry. Entries are
    grouped into their tables (in the order of :data:`~ffaudit.paramset.model.KINDS`), keeping their
    order within a table. Raises ``ValueError`` for an unknown kind or form.
    """
    entry_list = list(entries)
    unknown = sorted({e.kind for e in entry_list} - set(KINDS))
    if unknown:
        raise ValueError(f"unknown term kind {unknown[0]!r}")
    unit_map = {**INTERNAL_UNITS, **header.units}
    conventions = _conventions(header, entry_list)
    source_list = list(sources.values()) if isinstance(sources, Mapping) else list(sources)
    lines = [f"format: {FORMAT}"]
    lines += _header_lines(header, unit_map, conventions)
    lines += _source_lines(source_list)
    lines += _class_lines(classes)
    notes = comments or {}
    for kind in KINDS:
        rows = [e for e in entry_list if e.kind == kind]
        if not rows:
            continue
        lines.append(f"{TABLE_NAMES[kind]}:")
        for entry in rows:
            lines += _entry_lines(entry, unit_map, conventions, notes.get((kind, entry.key)))
    return "\n".join(lines) + "\n"


def dump_parameter_set(parameter_set: ParameterSet, header: Header | None = None) -> str:
    """The whole of a loaded set as one document, in ``header``'s (default: the set's own) units."""
    entries = [e for kind in KINDS for e in parameter_set.entries(kind).values()]
    return dump_set_document(
        header or parameter_set.header, parameter_set.sources, parameter_set.classes, entries
    )
