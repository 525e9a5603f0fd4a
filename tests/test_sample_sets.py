"""The sample library (sample_sets/): what it contains, that SMILES and SDF agree, and the broken files.

The SDF is checked against RDKit's own SD reader and against the SMILES file; element and charge checks
use RDKit's perception of the molecules, not the reader's.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path
from types import ModuleType

import pytest
from rdkit import Chem

from ffaudit.read import iter_records

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sets"
SMI = SAMPLES / "formulation-lab.smi"
SDF = SAMPLES / "formulation-lab.sdf"
#: The elements the embedded default parameter set covers.
DEFAULT_ELEMENTS = {"H", "C", "N", "O", "F", "S", "Cl", "Br", "I"}


def _load_maker() -> ModuleType:
    spec = importlib.util.spec_from_file_location("sample_sets_maker", SAMPLES / "make_samples.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


def _smiles_lines() -> list[str]:
    return SMI.read_text(encoding="utf-8").splitlines()


def test_smiles_file_shape() -> None:
    lines = _smiles_lines()
    assert lines[0].startswith("# ")  # one header comment line, which the reader must skip
    records = list(iter_records(str(SMI)))
    assert 25 <= len(records) == len(lines) - 1
    assert all(r.readable for r in records), [r.error for r in records if not r.readable]
    assert [r.name for r in records] == [line.split()[1] for line in lines[1:]]
    assert records[0].line == 2


def test_library_covers_the_scenario() -> None:
    mols = {r.name: r.mol for r in iter_records(str(SMI))}
    elements = {a.GetSymbol() for m in mols.values() for a in m.GetAtoms()}
    assert {"P", "Si", "B"} <= elements  # elements the default set lacks
    outside = [
        n for n, m in mols.items() if {a.GetSymbol() for a in m.GetAtoms()} - DEFAULT_ELEMENTS
    ]
    assert len(outside) >= 5
    charged = [n for n, m in mols.items() if any(a.GetFormalCharge() for a in m.GetAtoms())]
    salts = [n for n, m in mols.items() if len(Chem.GetMolFrags(m)) > 1]
    assert {"benzyltrimethylammonium", "octanoate"} <= set(charged)
    assert set(salts) == {"sodium-benzoate", "tetrabutylammonium-bromide"}
    assert all(Chem.GetFormalCharge(mols[n]) == 0 for n in salts)  # salts are neutral overall
    groups = {
        "ester": "[CX3](=O)[OX2][#6]",
        "alcohol": "[CX4][OX2H]",
        "amide": "[CX3](=O)[NX3]",
        "aromatic": "a",
        "ketone": "[#6][CX3](=O)[#6]",
        "nitrile": "C#N",
        "halide": "[#6][F,Cl,Br,I]",
        "thioether": "[#6][SX2][#6]",
    }
    for group, smarts in groups.items():
        pattern = Chem.MolFromSmarts(smarts)
        assert any(m.HasSubstructMatch(pattern) for m in mols.values()), group


def test_sdf_matches_smiles_and_rdkit() -> None:
    smiles_records = list(iter_records(str(SMI)))
    sdf_records = list(iter_records(str(SDF)))
    reference = list(Chem.SDMolSupplier(str(SDF), removeHs=False))
    assert len(sdf_records) == len(smiles_records) == len(reference)
    for smi, rec, ref in zip(smiles_records, sdf_records, reference, strict=True):
        assert rec.mol is not None and ref is not None
        assert rec.name == smi.name == ref.GetProp("_Name")
        assert Chem.MolToSmiles(rec.mol) == Chem.MolToSmiles(ref)
        # same molecule as the SMILES line (3D may add stereo, so compare without it)
        no_h = Chem.RemoveHs(rec.mol)
        assert Chem.MolToSmiles(no_h, isomericSmiles=False) == Chem.MolToSmiles(
            smi.mol, isomericSmiles=False
        )
        # explicit hydrogens and real 3D coordinates
        assert all(a.GetNumImplicitHs() == 0 for a in rec.mol.GetAtoms())
        assert rec.mol.GetNumAtoms() == Chem.AddHs(smi.mol).GetNumAtoms()
        conf = rec.mol.GetConformer()
        assert conf.Is3D()
        assert any(abs(conf.GetAtomPosition(i).z) > 0.1 for i in range(rec.mol.GetNumAtoms()))
        assert rec.mol.GetProp("geometry").startswith("ETKDGv3 + ")


def test_make_samples_reproduces_the_committed_files(tmp_path: Path) -> None:
    maker = _load_maker()
    assert maker.main(["--out", str(tmp_path)]) == 0
    for name in ("bad.smi",):  # no RDKit output inside: byte-identical on any RDKit version
        assert (tmp_path / "broken" / name).read_bytes() == (SAMPLES / "broken" / name).read_bytes()
    made = list(Chem.SDMolSupplier(str(tmp_path / "formulation-lab.sdf"), removeHs=False))
    committed = list(Chem.SDMolSupplier(str(SDF), removeHs=False))
    assert [Chem.MolToSmiles(m) for m in made] == [Chem.MolToSmiles(m) for m in committed]
    assert [m.GetProp("geometry") for m in made] == [m.GetProp("geometry") for m in committed]
    for name in ("bad.sdf", "bad.mol2", "bad.pdb"):
        made_records = list(iter_records(str(tmp_path / "broken" / name)))
        committed_records = list(iter_records(str(SAMPLES / "broken" / name)))
        assert [(r.name, r.readable) for r in made_records] == [
            (r.name, r.readable) for r in committed_records
        ]


# what sample_sets/README.md says is wrong with each broken file: record number -> reason fragment
BROKEN = {
    "bad.smi": (9, {2: "unclosed ring", 4: "valence", 5: "kekulize", 7: "[Zz]", 8: "parentheses"}),
    "bad.sdf": (5, {2: "valence", 4: "promises 24 atom and 25 bond lines"}),
    "bad.mol2": (4, {2: "refers to atom 42", 3: "'Zz.3'"}),
    "bad.pdb": (4, {2: "atom serial 99", 3: "no hydrogen atoms"}),
}


@pytest.mark.parametrize("name", sorted(BROKEN))
def test_broken_samples(name: str) -> None:
    count, bad = BROKEN[name]
    records = list(iter_records(str(SAMPLES / "broken" / name)))
    assert len(records) == count
    assert {r.record for r in records if not r.readable} == set(bad)
    for number, fragment in bad.items():
        record = records[number - 1]
        assert record.error is not None
        assert record.error.startswith(f"record {number} (line {record.line}): ")
        assert fragment in record.error
    readme = (SAMPLES / "README.md").read_text(encoding="utf-8")
    assert f"`broken/{name}`" in readme
