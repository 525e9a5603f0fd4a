"""Capped fragments: the smallest piece of a real library molecule that still carries a worklist tuple.

A parameter is fitted on a model compound small enough for quantum chemistry. For each worklist tuple this
module cuts one out of a library molecule so that the tuple's atoms keep their classes, hence the fragment
shows exactly the tuple that the set lacks:

1. *Sources.* The tuple's candidate molecules (the smallest ones that contain it, see
   :attr:`ffaudit.worklist.WorklistTuple.candidates`) are rebuilt from their SMILES and audited again with
   the same set; every occurrence of the tuple whose value is not a parameter of the set is a start
   (symmetry-equivalent occurrences, by RDKit's canonical atom ranks, are tried once).
2. *Core.* The tuple's atoms, closed under four rules: a ring bond is never cut (every ring system the
   fragment touches is kept whole, aromatic or not), a bond that is not single is never cut (its other atom
   is kept), a bond at an atom with a formal charge is never cut (charge-separated groups such as nitro,
   N-oxides or ammonium stay whole instead of becoming odd ions), and an atom's hydrogens are always kept.
3. *Caps.* Every other bond leaving the fragment is single; it is cut and its outer atom becomes a hydrogen
   cap. If re-perception of the capped fragment (the set's class rules on the fragment with explicit
   hydrogens) does not give every tuple atom its class, the same cut is tried with methyl caps (the outer
   atom becomes CH3, which keeps "bonded to carbon" environments that a hydrogen would change). If neither
   works, the fragment grows by one bond shell (every heavy neighbour, then the closure of step 2) and caps
   are tried again, hydrogen first. At worst the fragment is the whole molecule, whose classes are the
   library's. The cap used (``hydrogen`` or ``methyl``) is recorded with the fragment.
4. *Check.* The fragment is audited like a library molecule: the term over the tuple's atoms must have the
   same kind, classes and bond order and no parameter of the set (tier analogy, estimate or missing).
5. *Choice.* The smallest fragment wins: fewest heavy atoms, then fewest atoms, then hydrogen caps before
   methyl, then the candidate's order. It is embedded in 3D with RDKit's ETKDG (version 3, fixed random
   seed :data:`EMBED_SEED`, one thread; with random starting coordinates if that fails), so the same input
   gives the same conformer. The conformer is a starting geometry, not an optimised one.

For a dihedral tuple the four fragment atoms of the tuple are the dihedral to scan (``scan``); when its
central bond is in a ring the scan is constrained by the ring (``scan_in_ring``).

Atom indices in a fragment are 0-based indices of the SDF record (hydrogens included). Tuples with an atom
without a class get no fragment: the atom needs a class rule first.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

from rdkit import Chem
from rdkit.Chem import rdDistGeom

from ffaudit.audit import AuditContext, MoleculeAudit
from ffaudit.read.record import Record
from ffaudit.score import RESOLVED_FROM_SET
from ffaudit.terms import Term
from ffaudit.worklist import MoleculeRef, TupleKey, Worklist, WorklistTuple, is_fixable, tuple_label

EMBED_SEED = 61453
"""Random seed of the ETKDG embedding (any fixed number; fixed so that runs are reproducible)."""

CAP_HYDROGEN = "hydrogen"
CAP_METHYL = "methyl"
CAPS: tuple[str, ...] = (CAP_HYDROGEN, CAP_METHYL)
"""Cap kinds, in the order they are tried."""

INDEX_NAME = "fragments.jsonl"
"""The index file written into the fragment directory, one line per tuple."""

_ORIGINAL = "ffaudit_original_index"


@dataclass(frozen=True)
class Fragment:
    """A capped fragment carrying one worklist tuple, with a 3D conformer."""

    rank: int | None
    key: TupleKey
    mol: Chem.Mol
    """Explicit hydrogens, sanitised, one 3D conformer."""
    atoms: tuple[int, ...]
    """The tuple's atoms in the fragment, in the canonical order of its classes."""
    cap: str
    """``hydrogen`` or ``methyl``: what every cut bond was capped with."""
    caps: int
    """Number of cut bonds (each capped)."""
    shells: int
    """Bond shells added beyond the core (0: tuple atoms, whole ring systems, multiple bonds, hydrogens)."""
    tier: str
    """Tier of the tuple's term when the fragment itself is audited (never a parameter of the set)."""
    source: MoleculeRef
    source_atoms: tuple[int, ...]
    """The tuple's atoms in the source molecule rebuilt from its SMILES with explicit hydrogens."""

    @property
    def name(self) -> str:
        return fragment_name(self.rank, self.key)

    @property
    def smiles(self) -> str:
        """Canonical SMILES, hydrogens implicit."""
        return str(Chem.MolToSmiles(Chem.RemoveHs(self.mol)))

    @property
    def mapped_smiles(self) -> str:
        """SMILES with every atom explicit and mapped: atom map number = fragment index + 1."""
        mol = Chem.Mol(self.mol)
        for atom in mol.GetAtoms():
            atom.SetAtomMapNum(atom.GetIdx() + 1)
        return str(Chem.MolToSmiles(mol))

    @property
    def heavy_atoms(self) -> int:
        return sum(1 for a in self.mol.GetAtoms() if a.GetAtomicNum() > 1)

    @property
    def scan(self) -> tuple[int, ...] | None:
        """The dihedral to scan (the tuple's four atoms), for dihedral tuples."""
        return self.atoms if self.key[0] == "dihedral" else None

    @property
    def scan_in_ring(self) -> bool | None:
        if self.key[0] != "dihedral":
            return None
        bond = self.mol.GetBondBetweenAtoms(self.atoms[1], self.atoms[2])
        return bool(bond is not None and bond.IsInRing())


@dataclass(frozen=True)
class FragmentFailure:
    """No fragment could be made for a tuple, and why."""

    rank: int | None
    key: TupleKey
    reason: str


@dataclass(frozen=True)
class _Trial:
    mol: Chem.Mol
    atoms: tuple[int, ...]
    cap: str
    caps: int
    shells: int
    tier: str
    source: MoleculeRef
    source_atoms: tuple[int, ...]
    order: int

    def size_key(self) -> tuple[int, int, int, int, tuple[int, ...]]:
        heavy = sum(1 for a in self.mol.GetAtoms() if a.GetAtomicNum() > 1)
        return heavy, self.mol.GetNumAtoms(), CAPS.index(self.cap), self.order, self.source_atoms


def fragment_name(rank: int | None, key: TupleKey) -> str:
    """File-name stem of a tuple's fragment: ``007_dihedral_c3.c3.n3.h_n_single``."""
    kind, classes, order = key
    stem = f"{kind}_{'.'.join(classes)}" + (f"_{order}" if order else "")
    return f"{rank:03d}_{stem}" if rank is not None else stem


def fragment_for_tuple(
    item: WorklistTuple,
    context: AuditContext,
    sources: Iterable[MoleculeRef] | None = None,
) -> Fragment | FragmentFailure:
    """The smallest capped fragment of ``item`` among its candidate molecules (or ``sources``).

    Never raises for a molecule: sources that do not parse, or in which the tuple does not occur (results
    made with another set), are skipped; if nothing works the result is a :class:`FragmentFailure` saying why.
    """
    key = item.key
    if not is_fixable(key):
        return FragmentFailure(
            item.rank, key, "an atom of the tuple has no class; it needs a class rule first"
        )
    refs = list(item.candidates if sources is None else sources)
    trials: list[_Trial] = []
    seen_smiles: set[str] = set()
    found = 0
    for order, ref in enumerate(refs):
        if ref.smiles is None or ref.smiles in seen_smiles:
            continue
        seen_smiles.add(ref.smiles)
        audit, molh = _reaudit(ref, context)
        if audit is None or molh is None:
            continue
        for term in _occurrences(audit, molh, key):
            found += 1
            cut = capped_fragment(molh, term, audit, context)
            if isinstance(cut, tuple):
                mol, atoms, cap, caps, shells, tier = cut
                trials.append(_Trial(mol, atoms, cap, caps, shells, tier, ref, term.atoms, order))
    if not found:
        return FragmentFailure(
            item.rank,
            key,
            f"the tuple does not occur in the {len(seen_smiles)} candidate molecules audited again with "
            "this parameter set (were the results made with another set?)",
        )
    for trial in sorted(trials, key=_Trial.size_key):
        embedded = embed(trial.mol)
        if embedded is None:
            continue
        return Fragment(
            rank=item.rank,
            key=key,
            mol=embedded,
            atoms=trial.atoms,
            cap=trial.cap,
            caps=trial.caps,
            shells=trial.shells,
            tier=trial.tier,
            source=trial.source,
            source_atoms=trial.source_atoms,
        )
    if trials:
        return FragmentFailure(item.rank, key, "ETKDG could not embed any of the fragments in 3D")
    return FragmentFailure(
        item.rank, key, f"no fragment of the {found} occurrences kept the tuple's classes"
    )


def fragments_for_worklist(
    worklist: Worklist, context: AuditContext, top: int | None = None
) -> list[Fragment | FragmentFailure]:
    """A fragment (or the reason there is none) for each ranked tuple, in worklist order (the first ``top``)."""
    items = worklist.tuples if top is None else worklist.tuples[:top]
    return [fragment_for_tuple(item, context) for item in items]


def capped_fragment(
    molh: Chem.Mol, term: Term, audit: MoleculeAudit, context: AuditContext
) -> tuple[Chem.Mol, tuple[int, ...], str, int, int, str] | str:
    """Cut the smallest capped fragment around ``term`` of ``molh`` (the audited molecule, explicit H).

    Returns (fragment, tuple atoms in the fragment, cap kind, number of caps, shells added, tier of the
    tuple in the fragment's audit), or a reason when even the whole molecule does not keep the classes.
    """
    target = {a: audit.assignments[a].class_id for a in term.atoms}
    keep = _closure(molh, set(term.atoms))
    shells = 0
    while True:
        cuts = _cuts(molh, keep)
        for cap in CAPS if cuts else CAPS[:1]:
            built = _build(molh, keep, cuts, cap)
            if built is None:
                continue
            fragment, mapping = built
            assignments, _ = context.rules.perceive(fragment)
            if any(assignments[mapping[a]].class_id != cls for a, cls in target.items()):
                continue
            checked = _check(fragment, term, mapping, context)
            if checked is not None:
                atoms, tier = checked
                return fragment, atoms, cap, len(cuts), shells, tier
        grown = _closure(molh, keep | _heavy_neighbours(molh, keep))
        if grown == keep:
            return "the classes of the tuple's atoms differ even in the whole molecule"
        keep = grown
        shells += 1


def embed(mol: Chem.Mol) -> Chem.Mol | None:
    """A copy of ``mol`` with one ETKDG (v3) conformer, seed :data:`EMBED_SEED`; None when embedding fails."""
    out = Chem.Mol(mol)
    params = rdDistGeom.ETKDGv3()
    # RDKit's bundled stubs type these properties wrongly, hence the ignores.
    params.randomSeed = EMBED_SEED  # type: ignore[assignment]
    params.numThreads = 1  # type: ignore[assignment]
    if rdDistGeom.EmbedMolecule(out, params) != 0:
        params.useRandomCoords = True  # type: ignore[assignment]
        if rdDistGeom.EmbedMolecule(out, params) != 0:
            return None
    return out


def fragment_record(result: Fragment | FragmentFailure) -> dict[str, Any]:
    """The ``fragments.jsonl`` line of one tuple (see ``schemas/worklist.schema.json``, ``fragment``)."""
    kind, classes, order = result.key
    out: dict[str, Any] = {
        "rank": result.rank,
        "kind": kind,
        "classes": list(classes),
        "order": order,
        "label": tuple_label(result.key),
    }
    if isinstance(result, FragmentFailure):
        out.update(
            name=None,
            smiles=None,
            mapped_smiles=None,
            atoms=None,
            scan=None,
            scan_in_ring=None,
            files=None,
            heavy_atoms=None,
            atoms_total=None,
            cap=None,
            caps=None,
            shells=None,
            tier=None,
            source=None,
            error=result.reason,
        )
        return out
    scan = result.scan
    out.update(
        name=result.name,
        smiles=result.smiles,
        mapped_smiles=result.mapped_smiles,
        atoms=list(result.atoms),
        scan=None if scan is None else list(scan),
        scan_in_ring=result.scan_in_ring,
        files={"sdf": f"{result.name}.sdf", "smi": f"{result.name}.smi"},
        heavy_atoms=result.heavy_atoms,
        atoms_total=result.mol.GetNumAtoms(),
        cap=result.cap,
        caps=result.caps,
        shells=result.shells,
        tier=result.tier,
        source={
            **result.source.to_dict(),
            "smiles": result.source.smiles,
            "atoms": list(result.source_atoms),
        },
        error=None,
    )
    return out


def write_fragments(
    results: Sequence[Fragment | FragmentFailure], directory: str | os.PathLike[str]
) -> list[dict[str, Any]]:
    """Write each fragment as ``NAME.sdf`` and ``NAME.smi`` and the index ``fragments.jsonl`` into
    ``directory`` (created if missing); return the index lines.

    Raises :class:`ffaudit.errors.UsageError` naming the directory when it cannot be created or written.
    """
    from ffaudit.errors import UsageError
    from ffaudit.report.base import open_output
    from ffaudit.report.jsonl import dump_compact

    try:
        os.makedirs(directory, exist_ok=True)
    except OSError as exc:
        raise UsageError(
            f"cannot create fragment directory {os.fspath(directory)}: {exc.strerror or exc}"
        ) from exc
    lines = [fragment_record(r) for r in results]
    for result, line in zip(results, lines, strict=True):
        if not isinstance(result, Fragment):
            continue
        mol = Chem.Mol(result.mol)
        _stamp(mol, result)
        with open_output(os.path.join(directory, line["files"]["sdf"])) as out:
            writer = Chem.SDWriter(out)
            writer.write(mol)
            writer.close()
        with open_output(os.path.join(directory, line["files"]["smi"])) as out:
            out.write(f"{line['smiles']} {result.name}\n")
    with open_output(os.path.join(directory, INDEX_NAME)) as out:
        for line in lines:
            out.write(dump_compact(line) + "\n")
    return lines


# -- internals -----------------------------------------------------------------------------------------


def _stamp(mol: Chem.Mol, fragment: Fragment) -> None:
    kind, classes, order = fragment.key
    mol.SetProp("_Name", fragment.name)
    mol.SetProp("ffaudit_tuple", tuple_label(fragment.key))
    mol.SetProp("ffaudit_kind", kind)
    mol.SetProp("ffaudit_classes", " ".join(classes))
    if order:
        mol.SetProp("ffaudit_order", order)
    mol.SetProp("ffaudit_atoms", " ".join(map(str, fragment.atoms)))
    if fragment.scan is not None:
        mol.SetProp("ffaudit_scan_dihedral", " ".join(map(str, fragment.scan)))
    mol.SetProp(
        "ffaudit_atom_indices", "0-based indices of this record's atoms, hydrogens included"
    )
    mol.SetProp("ffaudit_caps", f"{fragment.caps} {fragment.cap}")
    mol.SetProp("ffaudit_tier", fragment.tier)
    mol.SetProp("ffaudit_source", f"{fragment.source.name} (record index {fragment.source.index})")
    mol.SetProp("ffaudit_conformer", f"RDKit ETKDGv3, seed {EMBED_SEED}, not optimised")


def _reaudit(
    ref: MoleculeRef, context: AuditContext
) -> tuple[MoleculeAudit | None, Chem.Mol | None]:
    from ffaudit.read.smiles import parse_smiles

    mol, _error = parse_smiles(ref.smiles or "")
    if mol is None:
        return None, None
    audit = context.audit_record(Record(ref.index, "<fragment source>", 1, 1, ref.name, mol))
    if audit.status == "unreadable":
        return None, None
    return audit, Chem.AddHs(mol)


def _occurrences(audit: MoleculeAudit, molh: Chem.Mol, key: TupleKey) -> list[Term]:
    """The tuple's terms in ``audit`` without a parameter of the set, one per symmetry class."""
    kind, classes, order = key
    ranks = list(Chem.CanonicalRankAtoms(molh, breakTies=False))
    found: list[Term] = []
    signatures: set[tuple[int, ...]] = set()
    for r in audit.resolutions:
        term = r.term
        if term.kind != kind or term.classes != classes or r.tier in RESOLVED_FROM_SET:
            continue
        if order is not None and term.bond_order != order:
            continue
        signature = tuple(ranks[a] for a in term.atoms)
        if kind == "out_of_plane":
            signature = (signature[0], *sorted(signature[1:]))
        elif kind != "nonbonded":
            signature = min(signature, signature[::-1])
        if signature not in signatures:
            signatures.add(signature)
            found.append(term)
    return found


def _closure(mol: Chem.Mol, atoms: set[int]) -> set[int]:
    """``atoms`` plus what may not be cut off: ring bonds, bonds that are not single, bonds at a charged
    atom, hydrogens."""
    keep = set(atoms)
    stack = list(atoms)
    while stack:
        atom = mol.GetAtomWithIdx(stack.pop())
        for bond in atom.GetBonds():
            other = bond.GetOtherAtom(atom)
            j = other.GetIdx()
            if j in keep:
                continue
            if (
                bond.IsInRing()
                or bond.GetBondType() != Chem.BondType.SINGLE
                or other.GetAtomicNum() == 1
                or atom.GetFormalCharge() != 0
                or other.GetFormalCharge() != 0
            ):
                keep.add(j)
                stack.append(j)
    return keep


def _heavy_neighbours(mol: Chem.Mol, keep: set[int]) -> set[int]:
    return {
        n.GetIdx()
        for i in keep
        for n in mol.GetAtomWithIdx(i).GetNeighbors()
        if n.GetAtomicNum() > 1 and n.GetIdx() not in keep
    }


def _cuts(mol: Chem.Mol, keep: set[int]) -> list[tuple[int, int]]:
    """Bonds (inside atom, outside atom) leaving ``keep``, sorted; all single, not in a ring, between
    uncharged atoms (see :func:`_closure`)."""
    return sorted(
        (i, n.GetIdx())
        for i in keep
        for n in mol.GetAtomWithIdx(i).GetNeighbors()
        if n.GetIdx() not in keep
    )


def _reset(atom: Chem.Atom, atomic_number: int) -> None:
    atom.SetAtomicNum(atomic_number)
    atom.SetFormalCharge(0)
    atom.SetIsAromatic(False)
    atom.SetNumExplicitHs(0)
    atom.SetNoImplicit(True)
    atom.SetIsotope(0)
    atom.SetNumRadicalElectrons(0)
    atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)


def _build(
    molh: Chem.Mol, keep: set[int], cuts: Sequence[tuple[int, int]], cap: str
) -> tuple[Chem.Mol, dict[int, int]] | None:
    """The fragment ``keep`` with every cut capped; (molecule, original index -> fragment index) or None
    when RDKit cannot sanitise it.

    Cap atoms are the outer atoms themselves, turned into H (or C with three new H), so that the bond lists
    of the kept atoms, and with them their stereo tags, stay as they were.
    """
    rw = Chem.RWMol(molh)
    for atom in rw.GetAtoms():
        atom.SetIntProp(_ORIGINAL, atom.GetIdx())
    capped: set[int] = set()
    for inside, outside in cuts:
        atom = rw.GetAtomWithIdx(outside)
        _reset(atom, 1 if cap == CAP_HYDROGEN else 6)
        atom.SetIntProp(_ORIGINAL, -1)
        bond = rw.GetBondBetweenAtoms(inside, outside)
        bond.SetBondType(Chem.BondType.SINGLE)
        bond.SetIsAromatic(False)
        bond.SetStereo(Chem.BondStereo.STEREONONE)
        capped.add(outside)
        if cap == CAP_METHYL:
            for _ in range(3):
                hydrogen = Chem.Atom(1)
                hydrogen.SetNoImplicit(True)
                new = rw.AddAtom(hydrogen)
                rw.GetAtomWithIdx(new).SetIntProp(_ORIGINAL, -1)
                rw.AddBond(outside, new, Chem.BondType.SINGLE)
    doomed = sorted(set(range(molh.GetNumAtoms())) - keep - capped, reverse=True)
    for index in doomed:
        rw.RemoveAtom(index)
    mol = rw.GetMol()
    for atom in mol.GetAtoms():
        atom.SetNoImplicit(True)
    try:
        Chem.SanitizeMol(mol)
    except Exception:  # noqa: BLE001 - RDKit raises several types (valence, kekulisation)
        return None
    Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
    mapping = {
        atom.GetIntProp(_ORIGINAL): atom.GetIdx()
        for atom in mol.GetAtoms()
        if atom.GetIntProp(_ORIGINAL) >= 0
    }
    for atom in mol.GetAtoms():
        atom.ClearProp(_ORIGINAL)
    return mol, mapping


def _same_atoms(kind: str, a: Sequence[int], b: Sequence[int]) -> bool:
    if kind == "out_of_plane":
        return a[0] == b[0] and sorted(a[1:]) == sorted(b[1:])
    return tuple(a) == tuple(b) or tuple(a) == tuple(b)[::-1]


def _check(
    fragment: Chem.Mol, term: Term, mapping: dict[int, int], context: AuditContext
) -> tuple[tuple[int, ...], str] | None:
    """Audit the fragment; the tuple's term there (atoms, tier) if it still lacks a parameter of the set."""
    wanted = [mapping[a] for a in term.atoms]
    audit = context.audit_record(Record(0, "<fragment>", 1, 1, "fragment", fragment))
    for r in audit.resolutions:
        t = r.term
        if t.kind == term.kind and _same_atoms(t.kind, t.atoms, wanted):
            same = t.classes == term.classes and t.bond_order == term.bond_order
            if same and r.tier not in RESOLVED_FROM_SET:
                return t.atoms, r.tier
            return None
    return None


def read_index(directory: str | os.PathLike[str]) -> list[dict[str, Any]]:
    """The lines of ``DIR/fragments.jsonl``. Raises ``OSError`` / ``ValueError`` when it cannot be read."""
    with open(os.path.join(directory, INDEX_NAME), encoding="utf-8") as stream:
        return [json.loads(line) for line in stream if line.strip()]
