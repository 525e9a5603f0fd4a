"""Molecule dicts as a Parquet table with one fixed schema (needs the ``parquet`` extra, pyarrow).

One row per molecule. Every chunk file of an output directory has the same schema, so the chunks read as one
dataset: ``pyarrow.dataset.dataset(sorted(glob.glob("DIR/chunk-*.parquet")), format="parquet")``. Scalar fields are columns; ``counts`` is a
map kind -> tier -> number; ``terms`` a list of structs with the fields every term has, its ``values`` and
``provenance`` as JSON text (their keys depend on the functional form). Whatever a molecule dict holds beyond
the schema goes, as JSON text, into ``extra_json``, so nothing of the JSONL output is lost. Values are those
of the JSONL output (internal units: angstrom, degree, kcal/mol; see ``schemas/audit-molecule.schema.json``).
"""

from __future__ import annotations

import io
import json
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

from ffaudit.resolve.driver import Resolution, SharedEstimate
from ffaudit.termdict import resolution_dict
from ffaudit.termtable import estimate_dict

if TYPE_CHECKING:
    from ffaudit.audit import MoleculeAudit
    from ffaudit.paramset.model import ParameterSet

try:
    import pyarrow as pa
    import pyarrow.parquet as pq

    HAVE_PYARROW = True
except ImportError:  # the parquet extra is not installed; callers check HAVE_PYARROW
    HAVE_PYARROW = False

_SCALARS: tuple[tuple[str, str], ...] = (
    ("index", "int64"),
    ("name", "string"),
    ("smiles", "string"),
    ("status", "string"),
    ("reason", "string"),
    ("score", "float64"),
    ("atoms", "int64"),
    ("fragments", "int64"),
)
# the keys of a term dict that have columns of their own; any other key goes into the term's extra_json
_TERM_FIELDS = frozenset(
    (
        "kind",
        "atoms",
        "classes",
        "order",
        "tier",
        "score",
        "form",
        "values",
        "provenance",
        "reason",
    )
)
_KNOWN = {name for name, _ in _SCALARS} | {
    "source",
    "atom_classes",
    "counts",
    "terms",
    "findings",
    "score_term",
    "meta",
}


def _dumps(value: Any) -> str | None:
    if value is None:
        return None
    return json.dumps(value, ensure_ascii=False, separators=(",", ":"), sort_keys=True)


def _term_type() -> pa.StructType:
    return pa.struct(
        [
            ("kind", pa.string()),
            ("atoms", pa.list_(pa.int32())),
            ("classes", pa.list_(pa.string())),
            ("order", pa.string()),
            ("tier", pa.string()),
            ("score", pa.float64()),
            ("form", pa.string()),
            ("values_json", pa.string()),
            ("provenance_json", pa.string()),
            ("reason", pa.string()),
            ("extra_json", pa.string()),
        ]
    )


def schema() -> pa.Schema:
    """The Parquet schema of a molecule table. Raises ``ImportError`` without pyarrow."""
    if not HAVE_PYARROW:
        raise ImportError("writing Parquet needs pyarrow: pip install 'ffaudit[parquet]'")
    fields = [
        pa.field("index", pa.int64(), nullable=False),
        pa.field("source_path", pa.string()),
        pa.field("source_record", pa.int64()),
        pa.field("source_line", pa.int64()),
    ]
    fields += [pa.field(name, getattr(pa, kind)()) for name, kind in _SCALARS if name != "index"]
    fields += [
        pa.field("atom_classes", pa.list_(pa.string())),
        pa.field("counts", pa.map_(pa.string(), pa.map_(pa.string(), pa.int64()))),
        pa.field("score_term_json", pa.string()),
        pa.field("findings_json", pa.string()),
        pa.field("meta_json", pa.string()),
        pa.field("terms", pa.list_(_term_type())),
        pa.field("extra_json", pa.string()),
    ]
    return pa.schema(fields)


def _terms_column(molecules: Sequence[Mapping[str, Any]], memo: dict[int, str | None]) -> pa.Array:
    """The ``terms`` column of molecule dicts, built column by column (a row of structs per term is
    several times slower)."""
    rows: list[dict[str, Any]] = []
    atoms: list[list[int]] = []
    offsets = [0]
    for molecule in molecules:
        for term in molecule.get("terms") or ():
            rows.append(_term_row(term, memo))
            atoms.append(list(term.get("atoms") or ()))
        offsets.append(len(rows))
    return _terms_array(rows, None, atoms, offsets)


def _terms_array(
    rows: Sequence[Mapping[str, Any]],
    picks: Sequence[int] | None,
    atoms: Sequence[Sequence[int]],
    offsets: Sequence[int],
) -> pa.Array:
    """The list-of-struct ``terms`` column: term ``j`` has the columns of ``rows[picks[j]]`` (of
    ``rows[j]`` when ``picks`` is None) and ``atoms[j]``; molecule ``i`` has terms ``offsets[i]`` to
    ``offsets[i + 1]``."""
    struct = _term_type()
    take = None if picks is None else pa.array(picks, type=pa.int32())
    arrays = []
    for f in (struct.field(i) for i in range(struct.num_fields)):
        if f.name == "atoms":
            arrays.append(pa.array(atoms, type=f.type))
            continue
        column = pa.array([r[f.name] for r in rows], type=f.type)
        arrays.append(column if take is None else column.take(take))
    terms = pa.StructArray.from_arrays(arrays, fields=list(struct))
    return pa.ListArray.from_arrays(pa.array(offsets, type=pa.int32()), terms)


def _extra_json(term: Mapping[str, Any]) -> str | None:
    more = term.keys() - _TERM_FIELDS
    return _dumps({k: term[k] for k in term if k in more}) if more else None


def _term_row(term: Mapping[str, Any], memo: dict[int, str | None]) -> dict[str, Any]:
    """A term dict's column values, all but ``atoms``."""
    return {
        "kind": term.get("kind"),
        "classes": list(term.get("classes") or ()),
        "order": term.get("order"),
        "tier": term.get("tier"),
        "score": term.get("score"),
        "form": term.get("form"),
        "values_json": _dumps_shared(term.get("values"), memo),
        "provenance_json": _dumps_shared(term.get("provenance"), memo),
        "reason": term.get("reason"),
        "extra_json": _extra_json(term),
    }


def _terms_column_of_audits(
    audits: Sequence[MoleculeAudit], pset: ParameterSet, terms: str, memo: dict[int, str | None]
) -> pa.Array:
    """The ``terms`` column straight from the audits' term tables: the columns of each shared outcome are
    made once per chunk and repeated with ``take``; only the atoms are per term."""
    rows: list[dict[str, Any]] = []
    shown_dicts: list[dict[str, Any]] = []  # kept alive: ``memo`` is keyed by the ids of their values
    row_of: dict[int, int] = {}
    picks: list[int] = []
    atoms: list[list[int]] = []
    offsets = [0]
    for audit in audits:
        for item, term_atoms in audit.table.listed(terms):
            if isinstance(item, SharedEstimate):  # its provenance names the atoms: a row per term
                shown = estimate_dict(item, pset, term_atoms)
                shown_dicts.append(shown)
                rows.append(_term_row(shown, memo))
                picks.append(len(rows) - 1)
                atoms.append(list(term_atoms))
                continue
            row = row_of.get(id(item))
            if row is None:  # items stay alive while the audits do, so their ids are not reused
                if isinstance(item, Resolution):
                    shown = resolution_dict(item, pset)
                else:
                    shown = {"kind": item.kind, **item.output(pset, term_atoms)[0]}
                shown_dicts.append(shown)
                rows.append(_term_row(shown, memo))
                row = row_of[id(item)] = len(rows) - 1
            picks.append(row)
            atoms.append(list(term_atoms))
        offsets.append(len(picks))
    return _terms_array(rows, picks, atoms, offsets)


def audits_to_table(
    audits: Sequence[MoleculeAudit],
    pset: ParameterSet,
    terms: str,
    heads: Sequence[Mapping[str, Any]] | None = None,
) -> pa.Table:
    """The table :func:`molecules_to_table` makes of ``[a.to_dict(pset, terms) for a in audits]``, made
    without the term dicts; ``heads``, when given, are the audits' :meth:`~MoleculeAudit.head` dicts (made
    already for the JSON lines). Raises ``ImportError`` without pyarrow."""
    memo: dict[int, str | None] = {}
    full = schema()
    others = pa.schema([f for f in full if f.name != "terms"])
    if heads is None:
        heads = [a.head() for a in audits]
    rows = [_row(head, memo) for head in heads]
    table = pa.Table.from_pylist(rows, schema=others)
    column = _terms_column_of_audits(audits, pset, terms, memo)
    return pa.Table.from_arrays(
        [column if f.name == "terms" else table.column(f.name) for f in full], schema=full
    )


def audits_to_parquet(
    audits: Sequence[MoleculeAudit],
    pset: ParameterSet,
    terms: str,
    heads: Sequence[Mapping[str, Any]] | None = None,
) -> bytes:
    """The bytes :func:`molecules_to_parquet` gives for the audits' dicts (``heads`` as for
    :func:`audits_to_table`). Raises ``ImportError`` without pyarrow."""
    sink = io.BytesIO()
    pq.write_table(audits_to_table(audits, pset, terms, heads), sink, compression="zstd")
    return sink.getvalue()


def _dumps_shared(value: Any, memo: dict[int, str | None]) -> str | None:
    """:func:`_dumps` once per object: terms resolved by the same entry share their values and
    provenance dicts (see ``ffaudit.audit``). ``memo`` lives for one table, while every object is alive."""
    key = id(value)
    if key not in memo:
        memo[key] = _dumps(value)
    return memo[key]


def _row(molecule: Mapping[str, Any], memo: dict[int, str | None]) -> dict[str, Any]:
    source = molecule.get("source") or {}
    row: dict[str, Any] = {name: molecule.get(name) for name, _ in _SCALARS}
    extra = {k: v for k, v in molecule.items() if k not in _KNOWN}
    row.update(
        source_path=source.get("path"),
        source_record=source.get("record"),
        source_line=source.get("line"),
        atom_classes=list(molecule.get("atom_classes") or ()),
        counts=dict(molecule.get("counts") or {}),
        score_term_json=_dumps(molecule.get("score_term")),
        findings_json=_dumps(molecule.get("findings") or []),
        meta_json=_dumps(molecule.get("meta")),
        extra_json=_dumps(extra) if extra else None,
    )
    return row


def molecules_to_table(molecules: Sequence[Mapping[str, Any]]) -> pa.Table:
    """The molecules as a table of :func:`schema`. Raises ``ImportError`` without pyarrow."""
    memo: dict[int, str | None] = {}
    full = schema()
    others = pa.schema([f for f in full if f.name != "terms"])
    table = pa.Table.from_pylist([_row(m, memo) for m in molecules], schema=others)
    terms = _terms_column(molecules, memo)
    return pa.Table.from_arrays(
        [terms if f.name == "terms" else table.column(f.name) for f in full], schema=full
    )


def molecules_to_parquet(molecules: Sequence[Mapping[str, Any]]) -> bytes:
    """The molecules as the bytes of one Parquet file (zstd-compressed; the same input gives the same
    bytes). Raises ``ImportError`` without pyarrow."""
    sink = io.BytesIO()
    pq.write_table(molecules_to_table(molecules), sink, compression="zstd")
    return sink.getvalue()
