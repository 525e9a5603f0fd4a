"""Semantic checks of one parameter-set document, beyond what the JSON Schema can say.

Each check is a generator ``check_xxx(doc, marks, path, *, context=None) -> Iterator[Finding]`` over the
plain data of one file (as read by :mod:`ffaudit.paramset.yamlload`), its marks and its display path. Checks
tolerate documents that failed the schema: they look only at the parts that have the right shape, so a
file's schema errors and semantic errors are listed together. ``context`` carries what earlier layers
defined (class ids with their parents, source keys) when several files are layered; without it a file is
checked on its own. :data:`CHECKS` lists every check, for the loader and the lint command.

Finding codes (all errors); the YAML and schema stages add theirs (see :mod:`ffaudit.paramset.yamlload`
and :mod:`ffaudit.paramset.schema`), the loader adds ``missing-file`` and ``units-mismatch``:

=====================  =====================================================================================
code                   meaning
=====================  =====================================================================================
``duplicate-class``    two classes with the same id
``unknown-class``      a tuple, ``class:``, ``equivalent:`` or ``before:`` names a class that is not defined
``unknown-parent``     ``parent:`` names a class that is not defined
``parent-cycle``       following ``parent:`` links comes back to the start
``unknown-source``     ``source:`` names a key that is not under ``sources:``
``invalid-smarts``     RDKit cannot parse a SMARTS pattern (RDKit's reason is quoted when available)
``smarts-element``     the first atom of a SMARTS pattern can never be the class's declared element
``unknown-element``    ``element:`` is not an element symbol
``bad-wildcard``       ``*`` where the kind allows none (only dihedral ends, out-of-plane outer three)
``duplicate-entry``    two entries of one table with the same canonical tuple and qualifiers
                       (for ``nonbonded``: the same class twice)
``missing-convention`` a kind whose constants depend on a convention has entries but no declared convention
``non-finite``         a number is infinite or not a number (``.inf``, ``.nan``)
=====================  =====================================================================================
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

from rdkit import Chem, rdBase

from ffaudit.findings import DocPath, Finding, Severity
from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import ARITY, KINDS, TABLE_NAMES, WILDCARD, WILDCARD_POSITIONS
from ffaudit.paramset.yamlload import Mark, locate

Marks = Mapping[DocPath, Mark]

QUALIFIED_KINDS = frozenset({"bond", "dihedral", "charge_increment"})
"""Kinds whose entries may carry ``order:`` and ``ring:`` qualifiers."""

@dataclass(frozen=True)
class LayerContext:
    """What earlier layers defined: class id -> parent (or None), and source keys."""

    classes: Mapping[str, str | None] = field(default_factory=dict)
    sources: frozenset[str] = frozenset()


Check = Callable[..., Iterator[Finding]]

_EMPTY = LayerContext()


def _finding(
    code: str,
    message: str,
    marks: Marks,
    path: str,
    doc_path: DocPath,
    hint: str | None = None,
    extra: tuple[tuple[str, Any], ...] = (),
) -> Finding:
    mark = locate(marks, doc_path)
    return Finding(
        code=code,
        severity=Severity.ERROR,
        message=message,
        path=path,
        line=mark[0] if mark else None,
        column=mark[1] if mark else None,
        doc_path=doc_path,
        hint=hint,
        extra=extra,
    )


def _line(marks: Marks, doc_path: DocPath) -> int | None:
    mark = locate(marks, doc_path)
    return mark[0] if mark else None


def _list(doc: Any, key: str) -> list[Any]:
    value = doc.get(key) if isinstance(doc, dict) else None
    return value if isinstance(value, list) else []


def _items(doc: Any, key: str) -> Iterator[tuple[int, dict[str, Any]]]:
    for i, item in enumerate(_list(doc, key)):
        if isinstance(item, dict):
            yield i, item


def _classes_of(doc: Any) -> Iterator[tuple[int, dict[str, Any], str]]:
    """(index, class mapping, id) of every class with a string id."""
    for i, cls in _items(doc, "classes"):
        if isinstance(cls.get("id"), str):
            yield i, cls, cls["id"]


def _tuple_field(kind: str) -> str:
    return "class" if kind == "nonbonded" else "classes"


def _tuple_of(kind: str, entry: Mapping[str, Any]) -> tuple[str, ...] | None:
    """The entry's class tuple if it has the right shape, else None."""
    if kind == "nonbonded":
        value = entry.get("class")
        return (value,) if isinstance(value, str) else None
    value = entry.get("classes")
    if (
        isinstance(value, list)
        and len(value) == ARITY[kind]
        and all(isinstance(c, str) for c in value)
    ):
        return tuple(value)
    return None


def _member_path(kind: str, index: int, position: int) -> DocPath:
    table = TABLE_NAMES[kind]
    if kind == "nonbonded":
        return (table, index, "class")
    return (table, index, "classes", position)


def check_duplicate_classes(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``duplicate-class``: a class id defined twice in one file (replacing across layers is fine)."""
    first: dict[str, int] = {}
    for i, _cls, cid in _classes_of(doc):
        if cid in first:
            before = _line(marks, ("classes", first[cid], "id"))
            yield _finding(
                "duplicate-class",
                f"class {cid!r} is defined again (first on line {before})",
                marks,
                path,
                ("classes", i, "id"),
                hint="class ids must be unique within a file",
            )
        else:
            first[cid] = i


def check_unknown_classes(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``unknown-class``: tuples, ``class:``, ``equivalent:`` and ``before:`` must name defined classes."""
    ctx = context or _EMPTY
    own = {cid for _i, _c, cid in _classes_of(doc)}
    known = own | set(ctx.classes)
    hint = "define the class under classes: or fix the spelling"
    for kind in KINDS:
        for i, entry in _items(doc, TABLE_NAMES[kind]):
            members = _tuple_of(kind, entry)
            for j, cid in enumerate(members or ()):
                if cid != WILDCARD and cid not in known:
                    yield _finding(
                        "unknown-class",
                        f"{kind} tuple names class {cid!r}, which is not defined",
                        marks,
                        path,
                        _member_path(kind, i, j),
                        hint=hint,
                    )
    for i, cls, cid in _classes_of(doc):
        equivalent = cls.get("equivalent")
        for j, other in enumerate(equivalent if isinstance(equivalent, list) else []):
            if isinstance(other, str) and other not in known:
                yield _finding(
                    "unknown-class",
                    f"class {cid!r} lists {other!r} as equivalent, which is not defined",
                    marks,
                    path,
                    ("classes", i, "equivalent", j),
                    hint=hint,
                )
        before = cls.get("before")
        if isinstance(before, str) and before not in ctx.classes:
            yield _finding(
                "unknown-class",
                f"class {cid!r} is to be placed before {before!r}, which no earlier layer defines",
                marks,
                path,
                ("classes", i, "before"),
                hint="before: is for layered sets and names a class of an earlier file",
            )


def check_parents(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``unknown-parent`` and ``parent-cycle``: parent links must lead to defined classes, without loops."""
    ctx = context or _EMPTY
    parents: dict[str, str | None] = dict(ctx.classes)
    own: dict[str, int] = {}
    for i, cls, cid in _classes_of(doc):
        parent = cls.get("parent")
        parents[cid] = parent if isinstance(parent, str) else None
        own.setdefault(cid, i)
    reported: set[frozenset[str]] = set()
    for cid, i in own.items():
        parent = parents[cid]
        if parent is None:
            continue
        if parent not in parents:
            yield _finding(
                "unknown-parent",
                f"class {cid!r} has parent {parent!r}, which is not defined",
                marks,
                path,
                ("classes", i, "parent"),
                hint="define the parent class or remove parent:",
            )
            continue
        chain = [cid]
        current: str | None = parent
        while current is not None and current in parents and current not in chain:
            chain.append(current)
            current = parents[current]
        if current == cid:
            cycle = frozenset(chain)
            if cycle not in reported:
                reported.add(cycle)
                text = " -> ".join([*chain, cid])
                yield _finding(
                    "parent-cycle",
                    f"parent links form a cycle: {text}",
                    marks,
                    path,
                    ("classes", i, "parent"),
                    hint="a parent must be a more general class; break the loop",
                )


def check_unknown_sources(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``unknown-source``: every ``source:`` of a class or entry must be a key under ``sources:``."""
    ctx = context or _EMPTY
    sources = doc.get("sources") if isinstance(doc, dict) else None
    known = set(sources) if isinstance(sources, dict) else set()
    known |= ctx.sources
    for table in ("classes", *(TABLE_NAMES[k] for k in KINDS)):
        for i, item in _items(doc, table):
            key = item.get("source")
            if isinstance(key, str) and key not in known:
                yield _finding(
                    "unknown-source",
                    f"source {key!r} is not defined under sources:",
                    marks,
                    path,
                    (table, i, "source"),
                    hint="add it to sources: with a citation, or fix the key",
                )


_LOG_STAMP = re.compile(r"^\[\d\d:\d\d:\d\d\]\s*")
_SYMBOLS: dict[str, int] = {Chem.GetPeriodicTable().GetElementSymbol(z): z for z in range(1, 119)}


@functools.lru_cache(maxsize=4096)
def parse_smarts(smarts: str) -> tuple[Chem.Mol | None, str | None]:
    """(query molecule, None) or (None, RDKit's reason) for ``smarts``. Never raises.

    Results are cached and shared: do not modify the returned molecule.
    """
    capture = getattr(rdBase, "CaptureErrorLog", None)
    messages = ""
    if capture is not None:
        with capture() as log:
            mol = Chem.MolFromSmarts(smarts)
        raw = log.messages
        messages = raw() if callable(raw) else str(raw)
    else:  # older RDKit: no capture, keep the console quiet
        with rdBase.BlockLogs():
            mol = Chem.MolFromSmarts(smarts)
    if mol is not None and mol.GetNumAtoms() == 0:
        return None, "the pattern has no atoms"
    if mol is not None:
        return mol, None
    lines = []
    for line in messages.splitlines():
        text = _LOG_STAMP.sub("", line).strip()
        text = text.removeprefix("SMARTS Parse Error:").strip().rstrip(":").strip()
        if not text or text.startswith("Failed parsing SMARTS") or set(text) <= {"~", "^"}:
            continue
        if text == smarts:
            continue
        lines.append(text)
    return None, "; ".join(lines) or None


def first_atom_elements(mol: Chem.Mol) -> frozenset[int] | None:
    """Atomic numbers the first query atom of ``mol`` can match, or None when that is not simple to tell.

    Reads RDKit's query description: element primitives (``#6``, ``C``, ``c``) combined with AND / OR;
    negations, recursive SMARTS and anything else give None (no opinion).
    """
    lines = mol.GetAtomWithIdx(0).DescribeQuery().splitlines()
    tree: list[tuple[int, str]] = [
        (len(s) - len(s.lstrip()), s.strip()) for s in lines if s.strip()
    ]
    result, _end = _query_elements(tree, 0)
    return result


def _query_elements(tree: list[tuple[int, str]], i: int) -> tuple[frozenset[int] | None, int]:
    depth, text = tree[i]
    children: list[frozenset[int] | None] = []
    j = i + 1
    if text in ("AtomAnd", "AtomOr"):
        while j < len(tree) and tree[j][0] > depth:
            child, j = _query_elements(tree, j)
            children.append(child)
        if text == "AtomAnd":
            known = [c for c in children if c is not None]
            if not known:
                return None, j
            return frozenset.intersection(*known), j
        if any(c is None for c in children) or not children:
            return None, j
        return frozenset().union(*[c for c in children if c is not None]), j
    while j < len(tree) and tree[j][0] > depth:  # skip any unexpected sub-tree
        j += 1
    match = re.fullmatch(r"(AtomType|AtomAtomicNum) (\d+) = val", text)
    if match is None:
        return None, j
    number = int(match.group(2))
    return frozenset({number % 1000 if match.group(1) == "AtomType" else number}), j


def check_smarts(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``invalid-smarts``, ``smarts-element``, ``unknown-element``: class patterns must parse and fit."""
    for i, cls, cid in _classes_of(doc):
        element = cls.get("element")
        number: int | None = None
        if isinstance(element, str):
            number = _SYMBOLS.get(element)
            if number is None:
                yield _finding(
                    "unknown-element",
                    f"class {cid!r} declares element {element!r}, which is not an element symbol",
                    marks,
                    path,
                    ("classes", i, "element"),
                    hint="write the symbol with a capital first letter: C, N, Cl, Br",
                )
        patterns = cls.get("smarts")
        for j, smarts in enumerate(patterns if isinstance(patterns, list) else []):
            if not isinstance(smarts, str) or not smarts:
                continue
            mol, reason = parse_smarts(smarts)
            where = ("classes", i, "smarts", j)
            if mol is None:
                why = f": {reason}" if reason else ""
                yield _finding(
                    "invalid-smarts",
                    f"SMARTS {smarts!r} of class {cid!r} cannot be parsed{why}",
                    marks,
                    path,
                    where,
                    hint="check brackets, ring-closure digits and atom primitives",
                )
                continue
            allowed = first_atom_elements(mol)
            if number is not None and allowed is not None and number not in allowed:
                names = ", ".join(
                    sorted(Chem.GetPeriodicTable().GetElementSymbol(z) for z in allowed)
                )
                yield _finding(
                    "smarts-element",
                    f"the first atom of SMARTS {smarts!r} can only be {names}, "
                    f"but class {cid!r} is declared as {element}",
                    marks,
                    path,
                    where,
                    hint="the first atom of each pattern is the classified atom; reorder or fix element:",
                )


def check_wildcards(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``bad-wildcard``: ``*`` only at dihedral ends and at the three outer out-of-plane positions."""
    for kind in KINDS:
        allowed = WILDCARD_POSITIONS.get(kind, ())
        for i, entry in _items(doc, TABLE_NAMES[kind]):
            for j, cid in enumerate(_tuple_of(kind, entry) or ()):
                if cid == WILDCARD and j not in allowed:
                    if kind == "dihedral":
                        rule = "dihedral tuples allow it only at the two ends"
                    elif kind == "out_of_plane":
                        rule = "out-of-plane tuples allow it only at the three outer positions"
                    else:
                        rule = f"{kind} tuples do not allow it"
                    yield _finding(
                        "bad-wildcard",
                        f"'*' at position {j + 1} of a {kind} tuple: {rule}",
                        marks,
                        path,
                        _member_path(kind, i, j),
                        hint="name the class",
                    )


def _entry_key(kind: str, entry: Mapping[str, Any]) -> tuple[Any, ...] | None:
    members = _tuple_of(kind, entry)
    if members is None:
        return None
    canonical, _reversed = canonical_classes(kind, members)
    if kind not in QUALIFIED_KINDS:
        return (canonical,)
    order = entry.get("order") if isinstance(entry.get("order"), str) else None
    ring = entry.get("ring") if isinstance(entry.get("ring"), bool) else None
    return (canonical, order, ring)


def check_duplicate_entries(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``duplicate-entry``: one table may not hold two entries with the same canonical key."""
    for kind in KINDS:
        table = TABLE_NAMES[kind]
        first: dict[tuple[Any, ...], int] = {}
        for i, entry in _items(doc, table):
            key = _entry_key(kind, entry)
            if key is None:
                continue
            if key not in first:
                first[key] = i
                continue
            earlier = _line(marks, (table, first[key]))
            members = ", ".join(key[0])
            same = "for the same class" if kind == "nonbonded" else "for the same canonical tuple"
            qualifiers = " and qualifiers" if kind in QUALIFIED_KINDS else ""
            yield _finding(
                "duplicate-entry",
                f"{kind} [{members}] is defined again {same}{qualifiers} (first on line {earlier})",
                marks,
                path,
                (table, i),
                hint="tuples equal to their reverse (or reordered outer atoms) are the same entry; "
                "remove one, or tell them apart with order:/ring:",
            )


_CONVENTION_KINDS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("bond", ("harmonic",)),
    ("angle", ("harmonic",)),
    ("out_of_plane", ("harmonic",)),
    ("dihedral", ("fourier",)),
)


def check_conventions(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``missing-convention``: each kind whose constants depend on a convention must declare it."""
    header = doc.get("header") if isinstance(doc, dict) else None
    if not isinstance(header, dict):
        return
    conventions = header.get("conventions")
    declared = conventions if isinstance(conventions, dict) else {}
    where: DocPath = ("header", "conventions") if isinstance(conventions, dict) else ("header",)
    for kind, forms in _CONVENTION_KINDS:
        if kind in declared:
            continue
        default = "fourier" if kind == "dihedral" else "harmonic"
        table = TABLE_NAMES[kind]
        uses = [i for i, e in _items(doc, table) if e.get("form", default) in forms]
        if not uses:
            continue
        first = _line(marks, (table, uses[0]))
        choices = (
            "full (E = k (1 + cos(n phi - phase))) or half (E = k/2 (1 + cos(...)))"
            if kind == "dihedral"
            else "half (E = 1/2 k dx^2) or full (E = k dx^2)"
        )
        yield _finding(
            "missing-convention",
            f"{table} has {len(uses)} {'entry' if len(uses) == 1 else 'entries'} whose constants "
            "depend on the energy convention "
            f"(first on line {first}) but header.conventions.{kind} is not declared",
            marks,
            path,
            where,
            hint=f"add '{kind}: ...' under header.conventions: {choices}",
        )


def check_finite(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """``non-finite``: no number may be infinite or NaN."""

    def walk(value: Any, doc_path: DocPath) -> Iterator[Finding]:
        if isinstance(value, float) and not math.isfinite(value):
            yield _finding(
                "non-finite",
                f"{value!r} is not a finite number",
                marks,
                path,
                doc_path,
                hint="write a finite value",
            )
        elif isinstance(value, dict):
            for key, item in value.items():
                yield from walk(item, doc_path + (key,))
        elif isinstance(value, list):
            for i, item in enumerate(value):
                yield from walk(item, doc_path + (i,))

    yield from walk(doc, ())


CHECKS: dict[str, Check] = {
    "duplicate-class": check_duplicate_classes,
    "unknown-class": check_unknown_classes,
    "parents": check_parents,
    "unknown-source": check_unknown_sources,
    "smarts": check_smarts,
    "wildcards": check_wildcards,
    "duplicate-entry": check_duplicate_entries,
    "conventions": check_conventions,
    "finite": check_finite,
}
"""Every semantic check by name, in the order the loader runs them."""


def iter_semantic_findings(
    doc: Any, marks: Marks, path: str, *, context: LayerContext | None = None
) -> Iterator[Finding]:
    """Run every check of :data:`CHECKS` on one document."""
    for check in CHECKS.values():
        yield from check(doc, marks, path, context=context)
