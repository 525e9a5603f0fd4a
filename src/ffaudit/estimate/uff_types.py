"""Assign a UFF atom type (Rappé et al., J. Am. Chem. Soc. 114, 10024 (1992)) to an RDKit atom.

The UFF paper names types by element, hybridisation (1, 2, 3, R for resonant) and, for some elements, a
formal oxidation state. It does not say how to perceive them from a connection table, so this module uses
RDKit's perception and states each choice in the returned reason:

- hybridisation is RDKit's ``Atom.GetHybridization()`` (so amide, aniline and ester-type N/O are sp2, since
  RDKit marks their lone pair as conjugated);
- an sp2 C, N, O or S is *resonant* (``_R``) when it is aromatic or has a bond RDKit marks conjugated.
  The paper reserves ``_R`` for aromatic and resonance-stabilised atoms (its example is the amide); treating
  every conjugated sp2 atom as resonant is broader and is the convention RDKit's UFF follows, which the
  tests compare against;
- P and S oxidation states come from the total valence (P: 3 or 5; S: 2, 4 or 6), Se must be divalent;
- halogens and hydrogen have one type each (the bridging-H type ``H_b`` is never assigned).

Nothing here raises for chemistry it cannot type: :func:`assign_uff_type` returns ``label=None`` and says
why (element not in the table, hybridisation with no UFF type, unexpected valence).
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

from ffaudit.estimate.uff_table import UFF_TYPES

_HYB = Chem.rdchem.HybridizationType

AMIDE_BOND_ORDER = 1.41
"""UFF's bond order for the C-N bond of an amide (Rappé et al. 1992, section on bond orders; value quoted
from memory of the paper [M]). RDKit's UFF does not apply it (it uses 1.0), so the RDKit comparison in the
tests uses :func:`bond_order` with ``amide_rule=False``."""

_AMIDE_CN = Chem.MolFromSmarts("[NX3]-[CX3]=[OX1]")


@dataclass(frozen=True)
class UffTyping:
    """The result of typing one atom: ``label`` (None when no UFF type applies) and why."""

    label: str | None
    reason: str


_INTERNED: dict[tuple[str | None, str], UffTyping] = {}


def _typing(label: str | None, reason: str) -> UffTyping:
    """The one :class:`UffTyping` of (``label``, ``reason``), made on first use: equal typings are one
    object, so estimate keys made of them compare at once."""
    key = (label, reason)
    typing = _INTERNED.get(key)
    if typing is None:
        typing = _INTERNED[key] = UffTyping(label, reason)
    return typing


def _resonant_or_2(atom: Chem.Atom, symbol: str) -> UffTyping:
    if atom.GetIsAromatic():
        return _typing(f"{symbol}_R", "sp2 and aromatic: resonant type")
    if any(b.GetIsConjugated() for b in atom.GetBonds()):
        return _typing(
            f"{symbol}_R",
            "sp2 with a conjugated bond: assumed resonant (_R), as RDKit's UFF does; "
            "the UFF paper reserves _R for aromatic/resonance-stabilised atoms",
        )
    return _typing(f"{symbol}_2", "sp2, not aromatic, no conjugated bond")


def assign_uff_type(atom: Chem.Atom) -> UffTyping:
    """Return the UFF type of ``atom`` (an atom of a sanitised RDKit molecule) and the reason.

    Never raises for unusual chemistry: an atom with no type in :data:`UFF_TYPES` gets ``label=None``
    and a reason naming the element, hybridisation or valence that has no type. Equal results are one
    object (interned process-wide).
    """
    symbol = atom.GetSymbol()
    hyb = atom.GetHybridization()
    valence = atom.GetTotalValence()
    if symbol == "H":
        return _typing("H_", "hydrogen: H_ (bridging-hydrogen type H_b is never assigned)")
    if symbol in ("F", "I"):
        return _typing(f"{symbol}_", "halogen: one type per element")
    if symbol in ("Cl", "Br"):
        return _typing(symbol, "halogen: one type per element")
    if symbol == "Si":
        reason = "silicon: Si3 is UFF's only Si type"
        if hyb != _HYB.SP3:
            reason += f" (RDKit hybridisation {hyb!s}; tetrahedral type assumed)"
        return _typing("Si3", reason)
    if symbol == "P":
        if valence in (3, 5):
            return _typing(f"P_3+{valence}", f"phosphorus with total valence {valence}")
        return _typing(
            None, f"phosphorus with total valence {valence}: UFF has P_3+3 and P_3+5 only"
        )
    if symbol == "Se":
        if hyb == _HYB.SP3 and valence == 2:
            return _typing("Se3+2", "divalent sp3 selenium")
        return _typing(
            None, f"selenium with hybridisation {hyb!s} and valence {valence}: only Se3+2 exists"
        )
    if symbol == "S":
        if hyb == _HYB.SP2:
            return _resonant_or_2(atom, "S")
        if hyb == _HYB.SP3 and valence in (2, 4, 6):
            return _typing(f"S_3+{valence}", f"sp3 sulfur with total valence {valence}")
        return _typing(
            None, f"sulfur with hybridisation {hyb!s} and valence {valence}: no UFF type"
        )
    if symbol == "B":
        if hyb == _HYB.SP3:
            return _typing("B_3", "sp3 boron")
        if hyb == _HYB.SP2:
            return _typing("B_2", "sp2 boron")
        return _typing(None, f"boron with hybridisation {hyb!s}: UFF has B_3 and B_2 only")
    if symbol in ("C", "N", "O"):
        if hyb == _HYB.SP3:
            return _typing(f"{symbol}_3", "sp3")
        if hyb == _HYB.SP2:
            return _resonant_or_2(atom, symbol)
        if hyb == _HYB.SP:
            return _typing(f"{symbol}_1", "sp (linear)")
        return _typing(None, f"{symbol} with hybridisation {hyb!s}: no UFF type")
    return _typing(None, f"element {symbol} is not in ffaudit's UFF table")


def bond_order(bond: Chem.Bond, amide_rule: bool = False) -> float:
    """The UFF bond order of ``bond``: RDKit's ``GetBondTypeAsDouble()`` (1, 1.5 aromatic, 2, 3).

    With ``amide_rule=True`` the C-N single bond of an amide gets :data:`AMIDE_BOND_ORDER` (1.41), as the
    UFF paper prescribes. Raises ``ValueError`` for bonds with no order (dative, zero, unspecified).
    """
    order = bond.GetBondTypeAsDouble()
    if order <= 0.0:
        raise ValueError(f"bond {bond.GetIdx()} has no bond order ({bond.GetBondType()!s})")
    if amide_rule and bond.GetBondType() == Chem.BondType.SINGLE:
        mol = bond.GetOwningMol()
        pair = {bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()}
        for match in mol.GetSubstructMatches(_AMIDE_CN):
            if set(match[:2]) == pair:
                return AMIDE_BOND_ORDER
    return order


def known_label(label: str | None) -> bool:
    """True when ``label`` is a type of :data:`ffaudit.estimate.uff_table.UFF_TYPES`."""
    return label is not None and label in UFF_TYPES
