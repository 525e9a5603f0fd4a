"""One term as the audit output shows it: the term dict of ``audit-molecule.schema.json`` and its parts.

Values are rounded to 6 significant digits; an entry's values and provenance are serialised once per (entry,
set, tier) and shared by every term that uses the entry (the dicts returned are shared: never mutate them).
"""

from __future__ import annotations

from typing import Any

from ffaudit.paramset.model import Entry, ParameterSet
from ffaudit.resolve.driver import Resolution
from ffaudit.terms import Term


def rounded(value: float) -> float:
    """``value`` to 6 significant digits, as every output shows it."""
    return float(f"{value:.6g}")


def entry_values(entry: Entry) -> dict[str, Any]:
    """An entry's values as plain JSON (internal units; see :mod:`ffaudit.paramset.model`)."""
    if entry.kind == "dihedral":
        return {
            "terms": [
                {"periodicity": t.periodicity, "phase": rounded(t.phase), "k": rounded(t.k)}
                for t in entry.fourier
            ]
        }
    return {name: rounded(v) for name, v in entry.values.items()}


def term_ref(term: Term) -> dict[str, Any]:
    """The term's kind, atoms and classes: the start of a term dict, and a molecule's ``score_term``."""
    return {"kind": term.kind, "atoms": list(term.atoms), "classes": list(term.classes)}


def provenance(entry: Entry, pset: ParameterSet) -> dict[str, Any]:
    """Where an entry's value came from: file and line, source key and its citation."""
    prov: dict[str, Any] = {
        "set": f"{pset.header.name} {pset.header.version}",
        "file": entry.location.path,
        "line": entry.location.line,
        "entry": list(entry.classes),
        "source": entry.source,
    }
    if entry.bond_order is not None:
        prov["order"] = entry.bond_order
    if entry.in_ring is not None:
        prov["ring"] = entry.in_ring
    source = pset.sources.get(entry.source) if entry.source else None
    if source is not None:
        prov["citation"] = source.citation
    if entry.estimated:
        prov["estimated_entry"] = True
    return prov


_ENTRY_CACHE: dict[tuple[int, int, str], tuple[Entry, ParameterSet, dict[str, Any], dict[str, Any]]] = {}
_ENTRY_CACHE_LIMIT = 100_000


def _cached_entry_dicts(
    entry: Entry, pset: ParameterSet, tier: str
) -> tuple[dict[str, Any], dict[str, Any]]:
    """Values and provenance of a set entry, serialised once per (entry, set, tier).

    The cache keeps the entry and set alive with their ids, so an id is never reused while cached.
    Callers copy nothing: the returned dicts are shared and must not be mutated.
    """
    key = (id(entry), id(pset), tier)
    hit = _ENTRY_CACHE.get(key)
    if hit is not None and hit[0] is entry and hit[1] is pset:
        return hit[2], hit[3]
    values = entry_values(entry)
    prov = provenance(entry, pset)
    if tier == "analogy":
        prov = {"estimated": True, "donor": prov}
    if len(_ENTRY_CACHE) >= _ENTRY_CACHE_LIMIT:
        _ENTRY_CACHE.clear()
    _ENTRY_CACHE[key] = (entry, pset, values, prov)
    return values, prov


def resolution_dict(r: Resolution, pset: ParameterSet) -> dict[str, Any]:
    """One listed term as the audit output shows it (``audit-molecule.schema.json``, ``term``)."""
    out = term_ref(r.term)
    if r.term.bond_order is not None:  # bond, charge increment: the bond; dihedral: the central bond
        out["order"] = r.term.bond_order
    out["tier"] = r.tier
    out["score"] = r.score
    if r.entry is not None and r.tier != "estimate":
        out["form"] = r.entry.form
        out["values"], out["provenance"] = _cached_entry_dicts(r.entry, pset, r.tier)
    elif r.entry is not None:  # a rule estimate: values and inputs belong to this term alone
        out["form"] = r.entry.form
        out["values"] = entry_values(r.entry)
        out["provenance"] = {"estimated": True, **r.details}
    else:
        out["form"] = None
        out["values"] = {}
        out["provenance"] = None
    if r.substitutions:
        out["substitutions"] = [
            {"position": i, "from": old, "to": new} for i, old, new in r.substitutions
        ]
    out["reason"] = r.reason
    return out
