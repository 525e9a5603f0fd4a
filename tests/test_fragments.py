"""Capped fragments: every fragment re-perceives with its tuple's classes and, audited again, still lacks a
parameter of the set; fragments are valid molecules (RDKit sanitisation) with a 3D conformer; the index file.

Cases: the sample library (sample_sets/formulation-lab.smi) with the embedded set, estimates counted as
blockers (the set covers every tuple of it otherwise, apart from atoms without a class); a constructed case
(tests/data/worklist/beta-amine-overlay.yaml) whose class needs the fragment to grow two bond shells and to
take a ring whole; a methyl cap needed because a hydrogen cap would change a class.
"""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest
from rdkit import Chem

from ffaudit.audit import AuditContext
from ffaudit.cli.main import run
from ffaudit.fragments import (
    CAP_HYDROGEN,
    CAP_METHYL,
    INDEX_NAME,
    Fragment,
    fragment_for_tuple,
    fragments_for_worklist,
    read_index,
    write_fragments,
)
from ffaudit.paramset.load import load_parameter_set
from ffaudit.read.open import iter_records
from ffaudit.read.record import Record
from ffaudit.score import RESOLVED_FROM_SET
from ffaudit.worklist import WorklistTuple, audit_to_molecule, build_worklist, class_elements_of

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_sets" / "formulation-lab.smi"
OVERLAY = ROOT / "tests" / "data" / "worklist" / "beta-amine-overlay.yaml"
SCHEMA = json.loads((ROOT / "src" / "ffaudit" / "schemas" / "worklist.schema.json").read_text())
FRAGMENT_SCHEMA = {"$ref": "#/$defs/fragment", "$defs": SCHEMA["$defs"]}


def _worklist(path: Path | list[str], context: AuditContext, include_estimated: bool):
    pset = context.pset
    if isinstance(path, Path):
        records = iter_records(str(path))
    else:
        records = (
            Record(i, "<test>", i + 1, i + 1, f"m{i}", Chem.MolFromSmiles(s))
            for i, s in enumerate(path)
        )
    molecules = [audit_to_molecule(context.audit_record(r), pset) for r in records]
    return build_worklist(molecules, include_estimated, class_elements_of(pset))


@pytest.fixture(scope="module")
def sample(tmp_path_factory: pytest.TempPathFactory):
    context = AuditContext(load_parameter_set())
    worklist = _worklist(SAMPLE, context, include_estimated=True)
    results = fragments_for_worklist(worklist, context)
    directory = tmp_path_factory.mktemp("fragments")
    lines = write_fragments(results, directory)
    return context, worklist, results, directory, lines


def _tuple_term(audit, kind: str, atoms: list[int]):
    for r in audit.resolutions:
        if r.term.kind != kind:
            continue
        same = list(r.term.atoms) in (atoms, atoms[::-1])
        if kind == "out_of_plane":
            same = r.term.atoms[0] == atoms[0] and sorted(r.term.atoms[1:]) == sorted(atoms[1:])
        if same:
            return r
    return None


def _check_fragment_file(directory: Path, line: dict, context: AuditContext) -> Chem.Mol:
    """Read the SDF back as a QM workflow would and check it from scratch."""
    supplier = Chem.SDMolSupplier(
        str(directory / line["files"]["sdf"]), removeHs=False, sanitize=True
    )
    mol = next(iter(supplier))
    assert mol is not None, "RDKit cannot read or sanitise the SDF"  # RDKit sanitisation
    assert mol.GetNumConformers() == 1 and mol.GetConformer().Is3D()
    z = [mol.GetConformer().GetAtomPosition(i).z for i in range(mol.GetNumAtoms())]
    assert (
        max(z) - min(z) > 0.1 or mol.GetNumAtoms() <= 3
    )  # a real 3D embedding, not flat coordinates
    assert all(a.GetNumImplicitHs() == 0 for a in mol.GetAtoms())  # every hydrogen is an SDF atom
    atoms = line["atoms"]
    assignments, _ = context.rules.perceive(mol)
    assert [assignments[a].class_id for a in atoms] == line["classes"]
    audit = context.audit_record(Record(0, line["files"]["sdf"], 1, 1, line["name"], mol))
    found = _tuple_term(audit, line["kind"], atoms)
    assert found is not None
    assert list(found.term.classes) == line["classes"]
    assert found.tier not in RESOLVED_FROM_SET and found.tier == line["tier"]
    if line["order"] is not None:
        assert found.term.bond_order == line["order"]
    # The SMILES file: the same molecule (RDKit canonical SMILES), and auditing it shows the tuple unresolved.
    smi_text = (directory / line["files"]["smi"]).read_text(encoding="utf-8").split()
    assert smi_text[1] == line["name"]
    from_smiles = Chem.MolFromSmiles(smi_text[0])
    assert Chem.MolToSmiles(from_smiles) == Chem.MolToSmiles(Chem.RemoveHs(mol))
    smi_audit = context.audit_record(Record(0, "smi", 1, 1, line["name"], from_smiles))
    assert any(
        r.term.kind == line["kind"]
        and list(r.term.classes) == line["classes"]
        and r.tier not in RESOLVED_FROM_SET
        for r in smi_audit.resolutions
    )
    return mol


def test_every_sample_fragment_reperceives_and_still_lacks_a_parameter(sample):
    context, worklist, results, directory, lines = sample
    # 43 ranked tuples on the sample (measured; see test_worklist for the counts), a fragment for each.
    assert len(results) == len(worklist.tuples) > 20
    assert all(isinstance(r, Fragment) for r in results)
    for line in lines:
        assert line["error"] is None
        _check_fragment_file(directory, line, context)


def test_index_lines(sample):
    _, worklist, _, directory, lines = sample
    assert read_index(directory) == lines
    assert [line["rank"] for line in lines] == [t.rank for t in worklist.tuples]
    assert [line["label"] for line in lines] == [t.label for t in worklist.tuples]
    validator = jsonschema.Draft202012Validator(FRAGMENT_SCHEMA)
    names = set()
    for line in lines:
        validator.validate(line)
        assert (directory / line["files"]["sdf"]).is_file() and (
            directory / line["files"]["smi"]
        ).is_file()
        names.add(line["name"])
        mapped = Chem.MolFromSmiles(line["mapped_smiles"], sanitize=False)
        assert mapped.GetNumAtoms() == line["atoms_total"]
        if line["kind"] == "dihedral":
            # The scan is the tuple's dihedral: four atoms bonded in a chain in the SDF.
            mol = Chem.MolFromMolFile(str(directory / line["files"]["sdf"]), removeHs=False)
            i, j, k, m = line["scan"]
            assert line["scan"] == line["atoms"]
            assert all(
                mol.GetBondBetweenAtoms(x, y) is not None for x, y in ((i, j), (j, k), (k, m))
            )
        else:
            assert line["scan"] is None
    assert len(names) == len(lines)


def test_fragments_are_smaller_than_their_sources(sample):
    _, _, results, _, _ = sample
    for fragment in results:
        assert isinstance(fragment, Fragment)
        source = Chem.MolFromSmiles(fragment.source.smiles)
        assert fragment.heavy_atoms <= source.GetNumHeavyAtoms() + fragment.caps * (
            fragment.cap == CAP_METHYL
        )
    # The smallest fragment for an angle of the ketone family is propanal (hand check: c3o-c4-c4 needs a
    # carbonyl carbon, two sp3 carbons and the double-bonded oxygen, the methyl cut and capped by H).
    first = results[0]
    assert first.key == ("angle", ("c3o", "c4", "c4"), None)
    assert first.smiles == "CCC=O" and first.cap == CAP_HYDROGEN


@pytest.fixture(scope="module")
def beta_amine():
    pset = load_parameter_set("generic-organic", str(OVERLAY))
    # Set tiers only (no analogy, no rule estimate), so that the c4b tuples are plainly missing.
    context = AuditContext(pset, tiers=("wildcard", "parent"))
    # 1-propyl-4-methoxypiperidine: only the middle propyl carbon is c4b (C-C-N, N in the ring).
    worklist = _worklist(["CCCN1CCC(CC1)OC"], context, include_estimated=False)
    return context, worklist


def test_extension_beyond_first_shell_keeps_the_ring_whole(beta_amine, tmp_path: Path):
    context, worklist = beta_amine
    item: WorklistTuple = next(t for t in worklist.tuples if t.key == ("nonbonded", ("c4b",), None))
    fragment = fragment_for_tuple(item, context)
    assert isinstance(fragment, Fragment), fragment
    # By hand: with the c4b carbon alone (methane or ethane after capping) or with one shell (propane,
    # butane) the carbon is no longer beta to a ring N; two shells reach the N, which is in a ring, so the
    # piperidine comes whole; the methoxy O is cut and its ring carbon capped by H: N-propylpiperidine.
    assert fragment.shells == 2
    assert fragment.cap == CAP_HYDROGEN and fragment.caps == 1
    assert Chem.MolToSmiles(Chem.MolFromSmiles(fragment.smiles)) == Chem.MolToSmiles(
        Chem.MolFromSmiles("CCCN1CCCCC1")
    )
    ring_info = fragment.mol.GetRingInfo()  # RDKit's ring perception of the fragment
    assert sorted(len(r) for r in ring_info.AtomRings()) == [6]
    lines = write_fragments([fragment_for_tuple(t, context) for t in worklist.tuples], tmp_path)
    assert all(line["error"] is None for line in lines)
    for line in lines:
        _check_fragment_file(tmp_path, line, context)
    # Every fragment of a c4b tuple has to reach the ring nitrogen.
    c4b_lines = [line for line in lines if "c4b" in line["classes"]]
    assert len(c4b_lines) > 5
    for line in c4b_lines:
        mol = Chem.MolFromMolFile(str(tmp_path / line["files"]["sdf"]), removeHs=False)
        assert any(
            a.GetSymbol() == "N" and a.IsInRingSize(6) for a in mol.GetAtoms()
        )  # RDKit ring info


def test_methyl_cap_when_hydrogen_changes_a_class():
    context = AuditContext(load_parameter_set())
    worklist = _worklist(["C=CC(=O)OCC"], context, include_estimated=True)  # ethyl acrylate
    item = next(t for t in worklist.tuples if t.key == ("angle", ("c3", "c3o", "o2c"), None))
    fragment = fragment_for_tuple(item, context)
    assert isinstance(fragment, Fragment), fragment
    # By hand: cutting the ester O-ethyl bond and capping with H gives acrylic acid, whose OH oxygen is
    # o2hc, not o2c; a methyl cap keeps it an ester oxygen (methyl acrylate).
    assert fragment.cap == CAP_METHYL and fragment.shells == 0
    assert fragment.smiles == Chem.MolToSmiles(Chem.MolFromSmiles("C=CC(=O)OC"))
    acid = Chem.AddHs(Chem.MolFromSmiles("C=CC(=O)O"))
    classes = [a.class_id for a in context.rules.perceive(acid)[0]]
    assert classes[4] == "o2hc"


def test_embedding_is_reproducible():
    context = AuditContext(load_parameter_set())
    worklist = _worklist(["CCC(C)=O"], context, include_estimated=True)  # methyl ethyl ketone
    item = worklist.tuples[0]
    a = fragment_for_tuple(item, context)
    b = fragment_for_tuple(item, context)
    assert isinstance(a, Fragment) and isinstance(b, Fragment)
    assert Chem.MolToMolBlock(a.mol) == Chem.MolToMolBlock(b.mol)


def test_unfixable_and_absent_tuples_fail_with_a_reason():
    context = AuditContext(load_parameter_set())
    ghost = WorklistTuple(
        key=("bond", ("c4", "zz"), None),
        elements=("C", None),
        molecules=1,
        terms=1,
        alone=1,
        tiers={},
        candidates=(),
    )
    failure = fragment_for_tuple(ghost, context)
    assert not isinstance(failure, Fragment) and "does not occur" in failure.reason
    classless = WorklistTuple(
        key=("nonbonded", ("?P",), None),
        elements=("P",),
        molecules=1,
        terms=1,
        alone=1,
        tiers={},
        candidates=(),
    )
    failure = fragment_for_tuple(classless, context)
    assert not isinstance(failure, Fragment) and "class" in failure.reason


def test_cli_writes_fragments(tmp_path: Path):
    import io

    out, err = io.StringIO(), io.StringIO()
    directory = tmp_path / "frags"
    code = run(
        [
            "worklist",
            str(SAMPLE),
            "--include-estimated",
            "--top",
            "4",
            "--fragments",
            str(directory),
            "--format",
            "json",
        ],
        out,
        err,
    )
    assert code == 0, err.getvalue()
    document = json.loads(out.getvalue())
    assert document["fragments"] == {
        "directory": str(directory),
        "index": INDEX_NAME,
        "written": 4,
        "failed": 0,
    }
    lines = read_index(directory)
    assert [line["rank"] for line in lines] == [1, 2, 3, 4]
    assert [line["label"] for line in lines] == [t["label"] for t in document["tuples"]]
    assert len(list(directory.glob("*.sdf"))) == 4
