"""Class perception: rule order, first atom of the pattern, hydrogens, unclassified atoms, pickling."""

import pickle

from rdkit import Chem

from ffaudit.paramset.model import EnvClass, Header, ParameterSet, SourceLocation
from ffaudit.perceive.classes import ClassRules


def _set(classes):
    return ParameterSet(Header("hand", "1"), {}, tuple(classes), {})


CLASSES = (
    EnvClass("c3o", "C", ("[CX3]=[OX1]",), location=SourceLocation("hand.yaml", 3)),
    EnvClass("c3", "C", ("[CX3]",), location=SourceLocation("hand.yaml", 4)),
    EnvClass("c4", "C", ("[CX4]",), location=SourceLocation("hand.yaml", 5)),
    EnvClass("o1", "O", ("[OX1]",)),
    EnvClass("h_o", "H", ("[#1][OX2]",)),
    EnvClass("h", "H", ("[#1]",)),
)


def test_first_rule_wins_and_first_pattern_atom_is_classified():
    mol = Chem.AddHs(Chem.MolFromSmiles("CC(=O)C=C"))  # atoms: C0 C1(=O2) C3=C4
    assignments, findings = ClassRules(_set(CLASSES)).perceive(mol)
    classes = [a.class_id for a in assignments]
    # The carbonyl carbon is classified by the earlier, more specific rule; the O in "[CX3]=[OX1]" is not
    # classified by that pattern (only its first atom is).
    assert classes[:5] == ["c4", "c3o", "o1", "c3", "c3"]
    assert assignments[1].rule == "c3o/1" and assignments[1].location.line == 3
    assert assignments[3].rule == "c3/1"
    assert all(c == "h" for c in classes[5:])
    assert findings == []


def test_unclassified_atom_is_a_finding_not_an_error():
    mol = Chem.AddHs(Chem.MolFromSmiles("CO"))  # O is sp3 (X2): no rule for it
    assignments, findings = ClassRules(_set(CLASSES)).perceive(mol)
    assert assignments[1].class_id is None
    assert [f.code for f in findings] == ["unclassified-atom"]
    assert findings[0].atoms == (1,)
    assert "O" in findings[0].message
    assert [
        a.class_id
        for a in assignments
        if a.atom > 1 and mol.GetAtomWithIdx(a.atom).GetNeighbors()[0].GetIdx() == 1
    ] == ["h_o"]


def test_hint_names_missing_element():
    mol = Chem.AddHs(Chem.MolFromSmiles("CP"))
    _, findings = ClassRules(_set(CLASSES)).perceive(mol)
    assert any("no class for element P" in f.hint for f in findings)


def test_rules_survive_pickling():
    rules = ClassRules(_set(CLASSES))
    clone = pickle.loads(pickle.dumps(rules))
    mol = Chem.AddHs(Chem.MolFromSmiles("CC(=O)O"))
    assert [a.class_id for a in clone.perceive(mol)[0]] == [
        a.class_id for a in rules.perceive(mol)[0]
    ]


def test_many_matching_atoms_are_all_classified():
    # maxMatches must not truncate: a long chain has more candidate atoms than RDKit's default cap of 1000.
    mol = Chem.AddHs(Chem.MolFromSmiles("C" * 400))
    assignments, findings = ClassRules(_set(CLASSES)).perceive(mol)
    assert findings == [] and len(assignments) == 400 + 802
