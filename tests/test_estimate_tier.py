"""The estimate tier end to end: every term of a molecule estimated from published rules, compared with
RDKit's own UFF parameter getters for the same atoms (rdkit.Chem.rdForceFieldHelpers), after the conventions
are put side by side:

- bonds: RDKit's kb is for E = 1/2 kb (r - r0)^2 [check_values.md section 4, [C]], which is our internal
  curvature convention, so k must equal kb and r0 must equal r0;
- angles: RDKit's ka is the curvature at theta0 of UFF's bend energy; theta0 in degrees;
- torsions: RDKit's getter gives V for the bond and its energy divides V by the number m of torsions about the
  bond; our term is k (1 + cos(n phi - phase)) with k = V / (2 m), so 2 m k must equal V;
- inversions: RDKit's K is per UFF term (three terms per centre, already divided by 3); we write one term
  per centre, so our k must equal 3 K.
"""

import math
import os

import pytest
from rdkit import Chem, RDConfig
from rdkit.Chem import rdForceFieldHelpers as ffh

from ffaudit.audit import AuditContext
from ffaudit.paramset.model import KINDS, EnvClass, Header, ParameterSet
from ffaudit.read.record import Record

ELEMENTS = {
    "H": 1,
    "C": 6,
    "N": 7,
    "O": 8,
    "F": 9,
    "S": 16,
    "Cl": 17,
    "Br": 35,
    "I": 53,
    "P": 15,
    "Si": 14,
}
EMPTY_SET = ParameterSet(
    Header("empty", "0", out_of_plane_centres="planar"),
    {},
    tuple(EnvClass(el.lower(), el, (f"[#{z}]",)) for el, z in ELEMENTS.items()),
    {k: {} for k in KINDS},
)
CONTEXT = AuditContext(EMPTY_SET, tiers=("estimate",))

SIX = {  # check_values.md section 4: the six molecules with full per-term RDKit output
    "ethane": "CC",
    "ethylene": "C=C",
    "benzene": "c1ccccc1",
    "acetone": "CC(C)=O",
    "methylamine": "CN",
    "H2O2": "OO",
}


def _compare(smiles):
    mol = Chem.MolFromSmiles(smiles)
    audit = CONTEXT.audit_record(Record(0, "t", 1, 1, smiles, mol))
    molh = Chem.AddHs(mol)
    compared = 0
    for r in audit.resolutions:
        if r.tier != "estimate":
            continue
        a = r.term.atoms
        v = r.entry.values
        if r.term.kind == "bond":
            kb, r0 = ffh.GetUFFBondStretchParams(molh, *a)
            assert v["k"] == pytest.approx(kb, rel=1e-6), (smiles, a)
            assert v["r0"] == pytest.approx(r0, rel=1e-6), (smiles, a)
        elif r.term.kind == "angle":
            ka, theta0 = ffh.GetUFFAngleBendParams(molh, *a)
            assert v["k"] == pytest.approx(ka, rel=1e-6), (smiles, a)
            assert v["theta0"] == pytest.approx(theta0, rel=1e-6), (smiles, a)
        elif r.term.kind == "dihedral":
            big_v = ffh.GetUFFTorsionParams(molh, *a)
            m = r.details["inputs"]["torsions_about_bond"]
            (term,) = r.entry.fourier
            assert 2 * m * term.k == pytest.approx(big_v, rel=1e-6, abs=1e-12), (smiles, a)
        elif r.term.kind == "out_of_plane":
            centre, *outer = a
            k_rdkit = ffh.GetUFFInversionParams(molh, outer[0], centre, outer[1], outer[2])
            if k_rdkit is None:
                continue
            assert v["k"] == pytest.approx(3 * k_rdkit, rel=1e-6), (smiles, a)
        else:
            continue
        compared += 1
    return audit, compared


@pytest.mark.parametrize("name", list(SIX))
def test_six_molecules_match_rdkit_uff(name):
    audit, compared = _compare(SIX[name])
    assert audit.status == "estimated"
    assert compared > 0


def test_ethane_counts_and_values():
    audit, compared = _compare("CC")
    # check_values.md section 4 excerpt [C]: ethane C-C UFF (699.592, 1.514), C-H (662.139, 1.1094)
    bonds = {r.term.classes: r.entry.values for r in audit.resolutions if r.term.kind == "bond"}
    assert bonds[("c", "c")]["k"] == pytest.approx(699.592, rel=1e-5)
    assert bonds[("c", "c")]["r0"] == pytest.approx(1.514, abs=5e-4)
    assert bonds[("c", "h")]["k"] == pytest.approx(662.139, rel=1e-5)
    assert compared == 7 + 12 + 9  # bonds, angles, dihedrals; ethane has no planar centres


def test_two_hundred_nci_molecules_match_rdkit_uff():
    path = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")
    total = used = 0
    with open(path) as handle:
        for line in handle:
            if used >= 200:
                break
            smiles = line.split()[0]
            mol = Chem.MolFromSmiles(smiles)
            if mol is None or not ffh.UFFHasAllMoleculeParams(Chem.AddHs(mol)):
                continue
            if any(a.GetSymbol() not in ELEMENTS for a in mol.GetAtoms()):
                continue
            _, compared = _compare(smiles)
            total += compared
            used += 1
    print(f"compared {total} terms of {used} NCI molecules with RDKit's UFF getters")
    assert used == 200 and total > 20_000


def test_estimates_are_flagged_with_provenance():
    audit, _ = _compare("CC(C)=O")
    r = next(r for r in audit.resolutions if r.term.kind == "bond")
    d = audit.to_dict(EMPTY_SET)["terms"][0]
    assert d["tier"] == "estimate" and d["provenance"]["estimated"] is True
    assert d["provenance"]["rule"] == "uff-bond" and "10024" in d["provenance"]["citation"]
    assert d["provenance"]["inputs"]["uff_types"]
    assert 0 < r.score < 1


def test_estimate_tier_can_be_switched_off():
    context = AuditContext(EMPTY_SET, tiers=())
    audit = context.audit_record(Record(0, "t", 1, 1, "x", Chem.MolFromSmiles("CC")))
    assert audit.status == "incomplete"
    assert all(r.tier == "missing" for r in audit.resolutions)


def test_unclassified_atoms_get_estimates_and_a_proposed_class():
    pset = ParameterSet(
        Header("c-only", "0"),
        {},
        (EnvClass("c", "C", ("[#6]",)), EnvClass("h", "H", ("[#1]",))),
        {k: {} for k in KINDS},
    )
    context = AuditContext(pset)
    audit = context.audit_record(Record(0, "t", 1, 1, "x", Chem.MolFromSmiles("CP(C)C")))
    (proposal,) = audit.proposed
    assert proposal.element == "P" and proposal.atom == 1
    query = Chem.MolFromSmarts(proposal.smarts)
    molh = Chem.AddHs(Chem.MolFromSmiles("CP(C)C"))
    assert (1,) in {m[:1] for m in molh.GetSubstructMatches(query)}
    p_bonds = [r for r in audit.resolutions if r.term.kind == "bond" and 1 in r.term.atoms]
    assert p_bonds and all(r.tier == "estimate" for r in p_bonds)
    assert not math.isnan(p_bonds[0].entry.values["r0"])


# --- estimates shared by signature -------------------------------------------------------------------

NCI_5K = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")


def test_shared_estimates_do_not_depend_on_the_order_molecules_come_in():
    """Estimates are kept per signature (tuple, UFF types, the facts the rule reads) and shared by every
    term with that signature. Had a signature left out a fact the rule reads, the first term seen would
    lend its values to later, different terms, and the output would depend on the order of the library.
    Input: the first 1,500 records of RDKit's NCI first_5K.smi with the embedded set (many estimates and
    unclassified atoms); audited forwards and backwards, each time by a fresh context, on the fast path
    and on the reference path, every record's JSON must be the same."""
    from ffaudit.engine.batch import audit_records
    from ffaudit.paramset.load import load_parameter_set
    from ffaudit.read.open import iter_records

    pset = load_parameter_set()
    records = list(iter_records(NCI_5K))[:1500]

    def run(ordered, fast):
        context = AuditContext(pset)
        audits = (
            audit_records(context, ordered) if fast else (context.audit_record(r) for r in ordered)
        )
        return {a.record.index: a.to_json(pset, "all") for a in audits}

    forward = run(records, fast=True)
    estimated = sum(text.count('"tier":"estimate"') for text in forward.values())
    assert estimated > 5000  # the check is about something: thousands of estimated terms
    assert run(records[::-1], fast=True) == forward
    assert run(records[::-1], fast=False) == forward


def test_typing_without_the_hydrogen_copy_equals_the_typing_of_the_copy():
    """:class:`AddedHydrogenTypes` (the fast path's typing of ``Chem.AddHs(mol)``, read from ``mol``) gives
    what :class:`MoleculeTypes` of the real ``Chem.AddHs(mol)`` gives, for every atom and every bond.

    Input: the first 1,000 records of RDKit's NCI first_5K.smi (they include charged atoms, metals, explicit
    hydrogens kept by the parser and molecules of several fragments), plus a few SMILES with explicit
    hydrogen atoms and isotopic hydrogens that the parser keeps as atoms.
    """
    from ffaudit.resolve.estimate import AddedHydrogenTypes, MoleculeTypes

    with open(NCI_5K) as handle:
        smiles = [line.split()[0] for line in handle if line.strip()][:1000]
    smiles += ["[2H]C([2H])O", "[H][N+]([H])([H])C", "C[H:1]", "OC(=O)c1ccccc1[O-]"]
    compared = 0
    for text in smiles:
        mol = Chem.MolFromSmiles(text)
        if mol is None:
            continue
        molh = Chem.AddHs(mol)
        copy = MoleculeTypes(molh)
        view = AddedHydrogenTypes(mol, [a.GetTotalNumHs() for a in mol.GetAtoms()])
        assert molh.GetNumAtoms() == view._first_h[-1], text
        for i in range(molh.GetNumAtoms()):
            assert view.of(i) is copy.of(i), (text, i)  # typings are interned
            assert view.atom(i) == copy.atom(i), (text, i)
        for bond in molh.GetBonds():
            i, j = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
            try:
                expected: object = copy.order(i, j)
            except ValueError as exc:
                expected = ("raises", str(exc))
            try:
                got: object = view.order(i, j)
            except ValueError as exc:
                got = ("raises", str(exc))
            assert got == expected, (text, i, j)
            compared += 1
        with pytest.raises(IndexError):
            view.of(molh.GetNumAtoms())
    assert compared > 20_000  # the records above have about 27 bonds each
