"""2D drawings (SVG, RDKit) of a molecule with the atoms and bonds of its missing and estimated terms marked.

The molecule comes in the output's atom numbering (:mod:`ffaudit.report.numbering`). Hydrogens are drawn only
where a marked term uses them; the others are folded into their heavy atom's label (``OH``, ``CH3``). Marked
atoms carry their atom number (as in the results' term list) as a small note. Two styles, told apart by
colour and named in the page's legend: :data:`MISSING_COLOUR` for atoms and bonds of terms without a value,
:data:`ESTIMATED_COLOUR` for those of terms with an estimated value only (analogy or rule estimate). An atom
or bond in both kinds of term is drawn as missing.

Everything drawn comes from the molecule's atoms and bonds: every property that RDKit could draw as text
(atom labels, aliases, notes, map numbers read from a file) is removed first, so no text from an input file
reaches the SVG. Drawing is deterministic (RDKit's own 2D coordinates, no timestamps).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from rdkit import Chem
from rdkit.Chem import rdDepictor
from rdkit.Chem.Draw import rdMolDraw2D

from ffaudit.report.numbering import term_bonds

MISSING = "missing"
ESTIMATED = "estimated"
ESTIMATED_TIERS: frozenset[str] = frozenset({"analogy", "estimate"})
"""Tiers whose value is an unreviewed estimate."""

MISSING_COLOUR = "#FF6B6B"
"""Fill of atoms and bonds of missing terms (a light red)."""
ESTIMATED_COLOUR = "#5C9EFF"
"""Fill of atoms and bonds of estimated terms (a light blue; red and blue stay apart for colour-blind
readers)."""
STYLE_COLOURS: Mapping[str, str] = {MISSING: MISSING_COLOUR, ESTIMATED: ESTIMATED_COLOUR}

WIDTH = 420
HEIGHT = 320
_INDEX_PROP = "_ffaudit_index"


@dataclass(frozen=True)
class Drawing:
    """An SVG drawing and where each output atom and bond ended up in it (for hover marks)."""

    svg: str
    atom_index: Mapping[int, int]
    """Output atom number -> atom number in the drawing (atoms drawn only)."""
    bond_index: Mapping[tuple[int, int], int]
    """Output atom pair ``(low, high)`` -> bond number in the drawing (bonds drawn only)."""


def style_of(tier: str) -> str | None:
    """:data:`MISSING`, :data:`ESTIMATED` or None (a value from the set) for a tier."""
    if tier == "missing":
        return MISSING
    if tier in ESTIMATED_TIERS:
        return ESTIMATED
    return None


def marks(
    terms: Iterable[Mapping[str, Any]],
) -> tuple[dict[int, str], dict[tuple[int, int], str]]:
    """The style of each atom and bond (``(low, high)``) of the missing and estimated ``terms``."""
    atom_style: dict[int, str] = {}
    bond_style: dict[tuple[int, int], str] = {}
    for term in terms:
        style = style_of(str(term.get("tier")))
        if style is None:
            continue
        atoms = [int(a) for a in term.get("atoms", ())]
        for atom in atoms:
            if atom_style.get(atom) != MISSING:
                atom_style[atom] = style
        for a, b in term_bonds(str(term.get("kind")), atoms):
            key = (min(a, b), max(a, b))
            if bond_style.get(key) != MISSING:
                bond_style[key] = style
    return atom_style, bond_style


def _rgb(colour: str) -> tuple[float, float, float]:
    value = colour.lstrip("#")
    # +0.3: RDKit writes int(x * 255), so the written colour is exactly this one
    r, g, b = ((int(value[i : i + 2], 16) + 0.3) / 255 for i in (0, 2, 4))
    return (r, g, b)


def _clean_copy(mol: Chem.Mol) -> Chem.Mol:
    """A copy with no molecule, atom or bond properties (nothing from the file can be drawn as text)."""
    copy = Chem.Mol(mol)
    for name in copy.GetPropNames(includePrivate=True, includeComputed=True):
        copy.ClearProp(name)
    for atom in copy.GetAtoms():
        for name in atom.GetPropNames(includePrivate=True, includeComputed=True):
            atom.ClearProp(name)
        atom.SetAtomMapNum(0)
    for bond in copy.GetBonds():
        for name in bond.GetPropNames(includePrivate=True, includeComputed=True):
            bond.ClearProp(name)
    copy.RemoveAllConformers()
    return copy


def _without_plain_hydrogens(mol: Chem.Mol, keep: set[int]) -> Chem.Mol:
    """``mol`` with every hydrogen not in ``keep`` folded into its neighbour; atoms keep
    :data:`_INDEX_PROP` = their number in ``mol``."""
    work = Chem.Mol(mol)
    for atom in work.GetAtoms():
        atom.SetIntProp(_INDEX_PROP, atom.GetIdx())
        if atom.GetAtomicNum() == 1 and atom.GetIdx() in keep:
            atom.SetAtomMapNum(1)  # RemoveHs keeps mapped hydrogens when told to
    # Any: RDKit's type stubs give these option attributes the type of their owner class
    params: Any = Chem.RemoveHsParameters()
    params.removeMapped = False
    params.showWarnings = False
    try:
        reduced = Chem.RemoveHs(work, params, sanitize=True)
    except Exception:  # a molecule RemoveHs cannot sanitise is drawn with all its hydrogens
        reduced = work
    for atom in reduced.GetAtoms():
        atom.SetAtomMapNum(0)
    return reduced


def draw(
    mol: Chem.Mol,
    atom_style: Mapping[int, str],
    bond_style: Mapping[tuple[int, int], str],
    size: tuple[int, int] = (WIDTH, HEIGHT),
) -> Drawing:
    """Draw ``mol`` (output numbering, explicit hydrogens) with the given styles of atoms and bonds.

    Raises ``ValueError`` naming the atom when a styled atom is not in ``mol``; RDKit errors while drawing
    propagate (the caller lists the terms without a drawing then).
    """
    n = mol.GetNumAtoms()
    for atom in atom_style:
        if not 0 <= atom < n:
            raise ValueError(f"atom {atom} is not in the molecule ({n} atoms)")
    keep = {a for a in atom_style if mol.GetAtomWithIdx(a).GetAtomicNum() == 1}
    shown = _without_plain_hydrogens(_clean_copy(mol), keep)
    atom_index = {a.GetIntProp(_INDEX_PROP): a.GetIdx() for a in shown.GetAtoms()}
    reverse = {v: k for k, v in atom_index.items()}
    for atom in shown.GetAtoms():
        atom.ClearProp(_INDEX_PROP)
        if reverse[atom.GetIdx()] in atom_style:
            atom.SetProp("atomNote", str(reverse[atom.GetIdx()]))
    bond_index: dict[tuple[int, int], int] = {}
    for bond in shown.GetBonds():
        a, b = reverse[bond.GetBeginAtomIdx()], reverse[bond.GetEndAtomIdx()]
        bond_index[(min(a, b), max(a, b))] = bond.GetIdx()
    rdDepictor.Compute2DCoords(shown)
    drawer = rdMolDraw2D.MolDraw2DSVG(size[0], size[1], -1, -1, True)
    options: Any = drawer.drawOptions()  # Any: see params in _without_plain_hydrogens
    options.fillHighlights = True
    options.highlightRadius = 0.35
    options.annotationFontScale = 0.6
    options.clearBackground = True
    atoms = [atom_index[a] for a in sorted(atom_style) if a in atom_index]
    atom_colours = {atom_index[a]: _rgb(STYLE_COLOURS[s]) for a, s in atom_style.items()}
    bonds = [bond_index[k] for k in sorted(bond_style) if k in bond_index]
    bond_colours = {
        bond_index[k]: _rgb(STYLE_COLOURS[s]) for k, s in bond_style.items() if k in bond_index
    }
    drawer.DrawMolecule(
        shown,
        highlightAtoms=atoms,
        highlightAtomColors=atom_colours,
        highlightBonds=bonds,
        highlightBondColors=bond_colours,
    )
    drawer.FinishDrawing()
    return Drawing(_inline_svg(drawer.GetDrawingText()), atom_index, bond_index)


def _inline_svg(text: str) -> str:
    """RDKit's SVG document as an element for an HTML page (no XML declaration, no header comment)."""
    if text.startswith("<?xml"):
        text = text[text.index("?>") + 2 :].lstrip()
    return text.replace("<!-- END OF HEADER -->\n", "").strip()


def drawn_atoms(drawing: Drawing, atoms: Sequence[int]) -> list[int]:
    """Drawing atom numbers of the output ``atoms`` that are drawn."""
    return [drawing.atom_index[a] for a in atoms if a in drawing.atom_index]


def drawn_bonds(drawing: Drawing, kind: str, atoms: Sequence[int]) -> list[int]:
    """Drawing bond numbers of the bonds a term of ``kind`` on ``atoms`` spans, where drawn."""
    keys = [(min(a, b), max(a, b)) for a, b in term_bonds(kind, atoms)]
    return [drawing.bond_index[k] for k in keys if k in drawing.bond_index]
