"""Estimated entries written out as a parameter-set fragment for a maintainer to review and merge.

Every term resolved by analogy or by a rule estimate becomes one entry (the first occurrence of each
distinct tuple wins, in input order), marked ``estimated: true``, with a comment and a ``note`` giving its
provenance and score; classes proposed for unclassified atoms are included, also marked estimated. The
fragment is a valid set in our format with the base set's units and conventions, so
``--params BASE --params FRAGMENT`` resolves those terms from the fragment.
"""

from __future__ import annotations

import json
from collections.abc import Iterable
from dataclasses import replace
from typing import Any

from ffaudit.audit import MoleculeAudit
from ffaudit.paramset.canonical import UNASSIGNED, canonical_classes
from ffaudit.paramset.model import Entry, EnvClass, Header, ParameterSet, Source
from ffaudit.paramset.write import dump_set_document
from ffaudit.resolve.estimate import BADGER_CITATION, UFF_CITATION
from ffaudit.termdict import entry_values

ESTIMATE_SOURCES = {
    rule: Source(
        rule, UFF_CITATION, doi="10.1021/ja00051a040", note="ffaudit rule estimate (UFF formulas)"
    )
    for rule in ("uff-bond", "uff-angle", "uff-torsion", "uff-inversion", "uff-vdw")
}
ESTIMATE_SOURCES["badger-1934"] = Source(
    "badger-1934", BADGER_CITATION, note="cross-check of bond constants"
)


class FragmentBuilder:
    """Collects estimated entries and proposed classes from a stream of audits."""

    def __init__(self, pset: ParameterSet) -> None:
        self.pset = pset
        self.entries: dict[tuple[str, Any], Entry] = {}
        self.comments: dict[tuple[str, Any], str] = {}
        self.classes: dict[str, EnvClass] = {}
        self._smarts_ids: dict[str, str] = {}

    def _class_for(self, audit: MoleculeAudit, atom: int) -> str | None:
        proposal = next((p for p in audit.proposed if p.atom == atom), None)
        if proposal is None:
            return None
        if proposal.smarts in self._smarts_ids:
            return self._smarts_ids[proposal.smarts]
        ident = proposal.id
        n = 2
        while ident in self.classes or ident in self.pset.class_index:
            ident, n = f"{proposal.id}_{n}", n + 1
        self._smarts_ids[proposal.smarts] = ident
        self.classes[ident] = EnvClass(
            id=ident,
            element=proposal.element,
            smarts=(proposal.smarts,),
            description=proposal.description,
            estimated=True,
            hybridisation=proposal.hybridisation,
            aromatic=proposal.aromatic,
            charge=proposal.charge,
        )
        return ident

    def add(self, audit: MoleculeAudit) -> None:
        for r in audit.resolutions:
            if r.tier not in ("analogy", "estimate") or r.entry is None:
                continue
            classes = list(r.term.classes)
            for pos, c in enumerate(classes):
                if c == UNASSIGNED:
                    ident = self._class_for(audit, r.term.atoms[pos])
                    if ident is None:
                        break
                    classes[pos] = ident
            else:
                canonical, _ = canonical_classes(r.term.kind, classes)
                bond_order = r.term.bond_order if r.term.kind in ("bond", "dihedral") else None
                key = (r.term.kind, (canonical, bond_order, None))
                if key in self.entries:
                    continue
                source: str | None
                if r.tier == "estimate":
                    how = f"rule {r.details.get('rule')}: {r.details.get('citation')}"
                    source = str(r.details.get("rule"))
                else:
                    how = f"analogy with {'-'.join(r.entry.classes)} ({r.entry.location.path}:{r.entry.location.line})"
                    source = r.entry.source
                note = (
                    f"ESTIMATED ({r.tier}, score {r.score:g}) from {audit.record.name!r} "
                    f"(record {audit.record.record}, atoms {'-'.join(map(str, r.term.atoms))}); {how}"
                )
                self.entries[key] = replace(
                    r.entry,
                    classes=canonical,
                    bond_order=bond_order,
                    in_ring=None,
                    source=source,
                    estimated=True,
                    note=note,
                )
                values = json.dumps(entry_values(r.entry), separators=(",", ":"))
                self.comments[key] = f"{note}\nreview before use; internal values {values}"

    def add_all(self, audits: Iterable[MoleculeAudit]) -> None:
        for audit in audits:
            self.add(audit)

    def document(self) -> str:
        base = self.pset.header
        header = Header(
            name=f"{base.name}-estimates",
            version=base.version,
            description=(
                f"Estimated entries proposed by ffaudit for {base.name} {base.version}. Every entry is an "
                "ESTIMATE (analogy or published rule), not a fitted parameter: review each one before "
                "using it in production simulations."
            ),
            demonstration=True,
            units=base.units,
            conventions=base.conventions,
            out_of_plane_centres=base.out_of_plane_centres,
            dihedrals_about_linear=base.dihedrals_about_linear,
            scale_14=base.scale_14,
        )
        used = {e.source for e in self.entries.values() if e.source}
        sources = [s for k, s in sorted(self.pset.sources.items()) if k in used]
        sources += [
            s for k, s in ESTIMATE_SOURCES.items() if k in used and k not in self.pset.sources
        ]
        comments = {(kind, key): text for (kind, key), text in self.comments.items()}
        return dump_set_document(
            header, sources, self.classes.values(), self.entries.values(), comments=comments
        )
