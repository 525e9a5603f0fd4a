"""What lint rules can tell about a set's classes: hybridisation, aromaticity and bond orders.

A class may declare ``hybridisation`` and ``aromatic`` descriptors; when it does not, they are inferred by
perceiving the set's classes on a fixed list of small probe molecules (:data:`PROBE_SMILES`) and reading
RDKit's own perception of the atoms each class was given. A property is known only when every probe atom
of the class agrees; a class no probe atom falls into stays unknown (None), and rules then skip or say
what they assumed.

Bond orders between two classes are inferred the same way from the probe bonds between them.
Nothing here raises for a set that loaded: a class rule RDKit cannot compile makes the whole inference
empty (the structure rules report the SMARTS itself).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

from rdkit import Chem

from ffaudit.errors import ParameterSetError
from ffaudit.paramset.model import EnvClass, ParameterSet

if TYPE_CHECKING:
    from ffaudit.lint.context import LintContext

_CACHE_KEY = "ffaudit.lint.classinfo"

PROBE_SMILES: tuple[str, ...] = (
    # saturated
    "CC",
    "CCC",
    "CC(C)C",
    "C1CCCCC1",
    "CO",
    "COC",
    "CCO",
    "CN",
    "CNC",
    "CN(C)C",
    "C[NH3+]",
    "C[N+](C)(C)C",
    "CS",
    "CSC",
    "CSSC",
    "CF",
    "CCl",
    "CBr",
    "CI",
    "ClCCl",
    "FC(F)F",
    "C[O-]",
    "OO",
    "NN",
    # unsaturated, carbonyl and friends
    "C=C",
    "CC=C",
    "C=CC=C",
    "C#C",
    "CC#C",
    "C#N",
    "CC#N",
    "C=O",
    "CC=O",
    "CC(C)=O",
    "CC(=O)O",
    "CC(=O)OC",
    "CC(=O)[O-]",
    "CC(N)=O",
    "CNC(C)=O",
    "CC(=S)N",
    "C=N",
    "CC=NC",
    "CC=NO",
    "CN=NC",
    "C[N+](=O)[O-]",
    "CS(C)(=O)=O",
    "CS(=O)(=O)N",
    "CS(=O)(=O)[O-]",
    "C=C=C",
    "C[N+]#N",
    "CN=[N+]=[N-]",
    "CC(=O)Cl",
    "NC(N)=O",
    "C=CO",
    "C=CN",
    # aromatic
    "c1ccccc1",
    "Cc1ccccc1",
    "Oc1ccccc1",
    "Nc1ccccc1",
    "COc1ccccc1",
    "Fc1ccccc1",
    "Clc1ccccc1",
    "Brc1ccccc1",
    "Ic1ccccc1",
    "c1ccncc1",
    "c1cc[nH]c1",
    "c1ccoc1",
    "c1ccsc1",
    "c1ccc(cc1)C#N",
    "c1ccc(cc1)C=O",
    "c1ccc(cc1)C(=O)O",
    "c1ccc(cc1)[N+](=O)[O-]",
    "c1ccc(cc1)-c1ccccc1",
    "c1ccc(cc1)S",
    "c1ccc(cc1)[O-]",
    "c1ccc2ccccc2c1",
    "c1cnc[nH]1",
)
"""Small molecules covering common organic environments; used only to infer class descriptors."""

_HYBRIDISATION_NAMES: dict[Chem.HybridizationType, str] = {
    Chem.HybridizationType.SP: "sp",
    Chem.HybridizationType.SP2: "sp2",
    Chem.HybridizationType.SP3: "sp3",
    Chem.HybridizationType.S: "none",
}

_BOND_NAMES: dict[Chem.BondType, str] = {
    Chem.BondType.SINGLE: "single",
    Chem.BondType.DOUBLE: "double",
    Chem.BondType.TRIPLE: "triple",
    Chem.BondType.AROMATIC: "aromatic",
}


@dataclass(frozen=True)
class ClassInfo:
    """Descriptors of one class: declared, else inferred from the probes; None when unknown."""

    class_id: str
    element: str
    hybridisation: str | None
    aromatic: bool | None
    inferred: bool
    """True when at least one descriptor came from the probes rather than the class itself."""


@dataclass(frozen=True)
class SetInfo:
    """Class descriptors and probe bond orders of one set."""

    classes: Mapping[str, ClassInfo]
    bond_orders: Mapping[tuple[str, str], frozenset[str]]
    """(class a, class b) with a <= b -> the bond orders seen between them in the probes."""

    def element(self, class_id: str) -> str | None:
        info = self.classes.get(class_id)
        return info.element if info is not None else None

    def hybridisation(self, class_id: str) -> str | None:
        info = self.classes.get(class_id)
        return info.hybridisation if info is not None else None

    def bond_order(self, a: str, b: str) -> str | None:
        """The one bond order the probes show between ``a`` and ``b``, or None (none seen, or several)."""
        orders = self.bond_orders.get((a, b) if a <= b else (b, a), frozenset())
        return next(iter(orders)) if len(orders) == 1 else None


def _unanimous(values: set[str] | set[bool]) -> str | bool | None:
    if len(values) != 1:
        return None
    (value,) = values
    return value


def _probe(
    pset: ParameterSet,
) -> tuple[dict[str, set[str]], dict[str, set[bool]], dict[tuple[str, str], set[str]]]:
    from ffaudit.perceive.classes import ClassRules

    hyb: dict[str, set[str]] = {}
    aro: dict[str, set[bool]] = {}
    orders: dict[tuple[str, str], set[str]] = {}
    try:
        rules = ClassRules(pset)
    except ParameterSetError:
        return hyb, aro, orders
    for smiles in PROBE_SMILES:
        mol = Chem.MolFromSmiles(smiles)
        if mol is None:  # pragma: no cover - the probe list is fixed and tested
            continue
        mol = Chem.AddHs(mol)
        assignments, _ = rules.perceive(mol)
        ids = [a.class_id for a in assignments]
        for atom in mol.GetAtoms():
            cid = ids[atom.GetIdx()]
            if cid is None:
                continue
            name = _HYBRIDISATION_NAMES.get(atom.GetHybridization())
            if name is not None:
                hyb.setdefault(cid, set()).add(name)
            aro.setdefault(cid, set()).add(atom.GetIsAromatic())
        for bond in mol.GetBonds():
            a, b = ids[bond.GetBeginAtomIdx()], ids[bond.GetEndAtomIdx()]
            order = _BOND_NAMES.get(bond.GetBondType())
            if a is None or b is None or order is None:
                continue
            key = (a, b) if a <= b else (b, a)
            orders.setdefault(key, set()).add(order)
    return hyb, aro, orders


def _info(cls: EnvClass, hyb: set[str], aro: set[bool]) -> ClassInfo:
    inferred = False
    hybridisation = cls.hybridisation
    if hybridisation is None:
        value = _unanimous(hyb)
        hybridisation = value if isinstance(value, str) else None
        inferred = inferred or hybridisation is not None
    aromatic = cls.aromatic
    if aromatic is None:
        value = _unanimous(aro)
        aromatic = value if isinstance(value, bool) else None
        inferred = inferred or aromatic is not None
    return ClassInfo(cls.id, cls.element, hybridisation, aromatic, inferred)


def set_info(pset: ParameterSet) -> SetInfo:
    """Descriptors of every class of ``pset`` and the probe bond orders."""
    hyb, aro, orders = _probe(pset)
    classes = {c.id: _info(c, hyb.get(c.id, set()), aro.get(c.id, set())) for c in pset.classes}
    return SetInfo(classes, {k: frozenset(v) for k, v in orders.items()})


def context_info(ctx: LintContext) -> SetInfo:
    """:func:`set_info` of ``ctx.pset``, computed once per lint run (kept in ``ctx.extra``).

    Raises ``ValueError`` when the context has no loaded set (rules declaring NEEDS_SET never see that).
    """
    if ctx.pset is None:
        raise ValueError(f"{ctx.path}: no loaded parameter set to describe")
    cached = ctx.extra.get(_CACHE_KEY)
    if not isinstance(cached, SetInfo):
        cached = set_info(ctx.pset)
        ctx.extra[_CACHE_KEY] = cached
    return cached
