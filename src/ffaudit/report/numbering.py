"""A molecule whose atom numbers are those of a molecule object of the audit output, for drawing its terms.

The term atoms of the machine output (``terms[].atoms``) are indices into the record's molecule as the audit
saw it: the atoms as read (the SMILES in its input order, an SD file's atom block with its own hydrogens),
then the hydrogens RDKit ``AddHs`` added. The ``smiles`` field is RDKit's *canonical* SMILES, whose atom
order is generally not the input order (``[Na+].[O-]C(=O)c1ccccc1`` is written ``O=C([O-])c1ccccc1.[Na+]``),
and an SD file may list hydrogens between heavy atoms; so a molecule rebuilt from ``smiles`` has, in
general, other numbers. Two ways give the audit's numbering back, tried in this order:

1. :func:`from_record`: read the record again from the library file (``source.path``, record number) and add
   hydrogens exactly as the audit does. Exact for every input format; needs the file.
2. :func:`from_smiles`: rebuild from ``smiles``, perceive classes with the parameter set, and find the
   atom order by a graph isomorphism between the record's bonds (from the listed terms) and the rebuilt
   molecule, with the environment class as the atom label. Needs the parameter set and every bond term
   listed (``--terms all``). Where the molecule has symmetry, the order found may differ from the audit's by
   an automorphism that keeps every class, which draws the same picture.

Either result is checked against the molecule object (:func:`mismatch`) before it is used: atom count,
every term's atoms bonded as its kind says, and elements of atoms with a proposed class. When neither way
works, the caller lists the terms without a drawing and says why.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from rdkit import Chem

from ffaudit.perceive.classes import ClassRules
from ffaudit.read.record import Record

UNCLASSIFIED_LABEL = "?"


@dataclass(frozen=True)
class Numbered:
    """The molecule with explicit hydrogens in the output's atom numbering, or None and why not."""

    mol: Chem.Mol | None
    how: str
    """How the numbering was obtained, or why there is no molecule (a sentence for the page)."""


def term_bonds(kind: str, atoms: Sequence[int]) -> list[tuple[int, int]]:
    """The bonds a term of ``kind`` spans, as atom pairs of ``atoms`` (in the output's canonical order).

    Chains for bond, angle, stretch-bend and dihedral; the centre (first atom) to each of the three others for
    an out-of-plane term; the pair for a charge increment; none for a nonbonded term or an unknown kind.
    """
    if kind in ("bond", "angle", "dihedral", "stretch_bend", "charge_increment"):
        return [(atoms[i], atoms[i + 1]) for i in range(len(atoms) - 1)]
    if kind == "out_of_plane" and atoms:
        return [(atoms[0], other) for other in atoms[1:]]
    return []


def record_edges(terms: Iterable[Mapping[str, Any]]) -> set[tuple[int, int]]:
    """Every bond the listed terms imply, as ``(low, high)`` atom pairs."""
    edges: set[tuple[int, int]] = set()
    for term in terms:
        for a, b in term_bonds(str(term.get("kind")), [int(x) for x in term.get("atoms", ())]):
            edges.add((min(a, b), max(a, b)))
    return edges


def mismatch(mol: Chem.Mol, molecule: Mapping[str, Any]) -> str | None:
    """Why ``mol`` cannot carry the atom numbers of ``molecule``, or None when nothing contradicts it.

    Checked: the atom count equals ``atoms`` (and the length of ``atom_classes``); every listed term's atoms
    exist and are bonded as its kind says; each atom with a proposed class has the element stated there.
    """
    n = mol.GetNumAtoms()
    if n != molecule.get("atoms") or n != len(molecule.get("atom_classes") or ()):
        return f"the molecule has {n} atoms, the results say {molecule.get('atoms')}"
    for term in molecule.get("terms") or ():
        atoms = [int(a) for a in term.get("atoms", ())]
        if any(a < 0 or a >= n for a in atoms):
            return f"a {term.get('kind')} term names atoms {atoms} outside 0..{n - 1}"
        for a, b in term_bonds(str(term.get("kind")), atoms):
            if mol.GetBondBetweenAtoms(a, b) is None:
                return f"atoms {a} and {b} of a {term.get('kind')} term are not bonded"
    for proposal in molecule.get("proposed_classes") or ():
        atom, element = proposal.get("atom"), proposal.get("element")
        if isinstance(atom, int) and 0 <= atom < n:
            found = mol.GetAtomWithIdx(atom).GetSymbol()
            if found != element:
                return f"atom {atom} is {found}, the results say {element}"
    return None


def from_record(record: Record, molecule: Mapping[str, Any]) -> Numbered:
    """The record read again from its library, with hydrogens added as the audit adds them.

    Returns no molecule (with the reason) when the record is unreadable now, its canonical SMILES differs
    from ``smiles`` (the file changed since the audit) or :func:`mismatch` finds a contradiction.
    """
    where = f"{record.path} record {record.record}"
    if record.mol is None:
        return Numbered(None, f"{where} cannot be read now: {record.error}")
    try:
        smiles = Chem.MolToSmiles(Chem.RemoveHs(record.mol))
    except Exception:
        smiles = Chem.MolToSmiles(record.mol)
    if smiles != molecule.get("smiles"):
        return Numbered(None, f"{where} is now {smiles}, not the audited {molecule.get('smiles')}")
    molh = Chem.AddHs(record.mol)
    problem = mismatch(molh, molecule)
    if problem is not None:
        return Numbered(None, f"{where}: {problem}")
    return Numbered(molh, f"atom numbers as in {where} (hydrogens added after the atoms read)")


def from_smiles(molecule: Mapping[str, Any], rules: ClassRules | None) -> Numbered:
    """The molecule rebuilt from ``smiles``, renumbered to the output's atom order (see the module text).

    Returns no molecule, with the reason, when there is no parameter set to perceive classes with, the
    terms listed do not give every bond, or no class-preserving match exists.
    """
    smiles = molecule.get("smiles")
    if not isinstance(smiles, str):
        return Numbered(None, "the results give no SMILES")
    if rules is None:
        return Numbered(
            None,
            "the library file is not readable here and the parameter set is not known (pass --params "
            "or --library to match the atom numbers)",
        )
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return Numbered(None, f"the SMILES {smiles} does not parse")
    molh = Chem.AddHs(mol)
    edges = record_edges(molecule.get("terms") or ())
    if len(edges) != molh.GetNumBonds() or molh.GetNumAtoms() != molecule.get("atoms"):
        return Numbered(
            None,
            "the library file is not readable here and the results do not list every bond term "
            "(audit with --terms all, or pass --library)",
        )
    assignments, _ = rules.perceive(molh)
    rebuilt = [a.class_id or UNCLASSIFIED_LABEL for a in assignments]
    recorded = [c or UNCLASSIFIED_LABEL for c in molecule.get("atom_classes") or ()]
    if sorted(rebuilt) != sorted(recorded):
        return Numbered(None, "the parameter set given assigns other classes than the results show")
    labels = {label: number for number, label in enumerate(sorted(set(rebuilt)), start=1)}
    query = _labelled_graph([labels[c] for c in recorded], edges)
    target = _labelled_graph(
        [labels[c] for c in rebuilt],
        {(b.GetBeginAtomIdx(), b.GetEndAtomIdx()) for b in molh.GetBonds()},
    )
    match = target.GetSubstructMatch(query)
    if len(match) != molh.GetNumAtoms():
        return Numbered(None, "no atom order of the SMILES matches the bonds and classes of the results")
    renumbered = Chem.RenumberAtoms(molh, list(match))
    problem = mismatch(renumbered, molecule)
    if problem is not None:
        return Numbered(None, f"the rebuilt molecule does not fit: {problem}")
    return Numbered(
        renumbered,
        "atom numbers matched by classes and bonds on the molecule rebuilt from its SMILES "
        "(symmetry-equivalent atoms may be swapped)",
    )


def _labelled_graph(labels: Sequence[int], edges: Iterable[tuple[int, int]]) -> Chem.Mol:
    """A bare graph for matching: every atom a carbon whose isotope is its label, every bond single."""
    graph = Chem.RWMol()
    for label in labels:
        atom = Chem.Atom(6)
        atom.SetIsotope(label)
        atom.SetNoImplicit(True)
        graph.AddAtom(atom)
    for a, b in sorted(edges):
        graph.AddBond(a, b, Chem.BondType.SINGLE)
    mol = graph.GetMol()
    mol.UpdatePropertyCache(strict=False)
    return mol


@dataclass(frozen=True)
class LibraryRecords:
    """Records read again from the audited library files, by ``(source.path, record number)``."""

    records: Mapping[tuple[str, int], Record]
    problems: Mapping[str, str]
    """``source.path`` -> why that library could not be read again (missing file, standard input, ...)."""


def read_records(
    wanted: Mapping[str, Iterable[int]],
    *,
    library: str | None = None,
    fmt: str | None = None,
    options: Mapping[str, Any] | None = None,
    search: Sequence[str] = (),
) -> LibraryRecords:
    """Read the records ``wanted`` (``source.path`` -> record numbers) from their library files.

    ``library`` replaces every ``source.path`` (the library has moved); otherwise a relative path that does
    not exist is also looked for under each directory of ``search``. Reading stops after the last record
    wanted from a file. Never raises for a file that cannot be read: the reason is in ``problems``.
    """
    from ffaudit.errors import FfauditError
    from ffaudit.read.open import iter_records

    found: dict[tuple[str, int], Record] = {}
    problems: dict[str, str] = {}
    for shown, numbers in sorted(wanted.items()):
        needed = set(numbers)
        if not needed:
            continue
        path = library or _locate(shown, search)
        if path is None:
            problems[shown] = (
                "read from standard input"
                if shown == "<stdin>"
                else f"{shown} is not found here (pass --library PATH)"
            )
            continue
        last = max(needed)
        try:
            for record in iter_records(path, fmt, **dict(options or {})):
                if record.record in needed:
                    found[(shown, record.record)] = record
                if record.record >= last:
                    break
        except (FfauditError, OSError) as exc:
            problems[shown] = f"{path} cannot be read: {exc}"
        if not problems.get(shown) and not any((shown, n) in found for n in needed):
            problems[shown] = f"{path} has none of the records wanted"
    return LibraryRecords(found, problems)


def _locate(shown: str, search: Sequence[str]) -> str | None:
    if shown == "<stdin>":
        return None
    if os.path.isfile(shown):
        return shown
    if not os.path.isabs(shown):
        for directory in search:
            candidate = os.path.join(directory, shown)
            if os.path.isfile(candidate):
                return candidate
    return None
