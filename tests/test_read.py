"""Readers against RDKit's own readers on the same molecules.

Reference data: the NCI sets shipped in the rdkit wheel (rdkit/Data/NCI/first_200.props.sdf, 200 records,
and first_5K.smi, 4999 lines). Each reader must give as many records as went in and, record by record, the
same atoms, bonds and canonical SMILES as RDKit's own reader (SDMolSupplier, SmilesMolSupplier,
MolFromMol2Block, MolFromPDBBlock) or as the molecule the test file was written from.
"""

from __future__ import annotations

import gzip
import io
import os
import sys
import tracemalloc
from itertools import islice
from pathlib import Path

import pytest
from rdkit import Chem, RDConfig
from rdkit.Chem import AllChem

from ffaudit.errors import InputFileError, UsageError
from ffaudit.read import detect_format, iter_records, iter_records_from_stream
from ffaudit.read.blocks import split_at_terminators
from ffaudit.read.rdkit_log import clean_rdkit_message
from ffaudit.read.record import Record
from ffaudit.read.sdf import is_terminator
from ffaudit.read.source import MAX_LINE_CHARS, iter_lines
from mol2_writer import mol_to_mol2_block

NCI = os.path.join(RDConfig.RDDataDir, "NCI")
SDF_200 = os.path.join(NCI, "first_200.props.sdf")
SMI_5K = os.path.join(NCI, "first_5K.smi")


def canon(mol: Chem.Mol, *, isomeric: bool = True) -> str:
    return Chem.MolToSmiles(mol, isomericSmiles=isomeric)


@pytest.fixture(scope="module")
def nci200() -> list[Chem.Mol]:
    mols = list(Chem.SDMolSupplier(SDF_200, removeHs=False))
    assert len(mols) == 200 and all(
        m is not None for m in mols
    )  # the shipped file: 200 good records
    return mols


# -- SDF ------------------------------------------------------------------------------------------------


def test_sdf_matches_sdmolsupplier(nci200: list[Chem.Mol]) -> None:
    records = list(iter_records(SDF_200))
    assert len(records) == 200
    for ref, rec in zip(nci200, records, strict=True):
        assert rec.mol is not None, rec.error
        assert rec.mol.GetNumAtoms() == ref.GetNumAtoms()
        assert rec.mol.GetNumBonds() == ref.GetNumBonds()
        assert canon(rec.mol) == canon(ref)
        # file atom numbering kept: atom i is the same element in both
        assert [a.GetAtomicNum() for a in rec.mol.GetAtoms()] == [
            a.GetAtomicNum() for a in ref.GetAtoms()
        ]
        assert (
            rec.mol.GetPropsAsDict() == ref.GetPropsAsDict()
        )  # SD data items, as RDKit reads them


def test_sdf_positions_and_default_names(nci200: list[Chem.Mol]) -> None:
    records = list(iter_records(SDF_200, start_index=10))
    assert [r.index for r in records] == list(range(10, 210))
    assert [r.record for r in records] == list(range(1, 201))
    # the titles in this file are blank, so names default to "record N"
    assert records[16].name == "record 17"
    # record starts: line 1, then one line after each $$$$ (counted independently here)
    with open(SDF_200, encoding="utf-8") as handle:
        starts = [1] + [n + 2 for n, line in enumerate(handle) if line.strip() == "$$$$"][:-1]
    assert [r.line for r in records] == starts


def test_sdf_gzip_equals_plain(tmp_path: Path) -> None:
    data = Path(SDF_200).read_bytes()
    gz = tmp_path / "nci.sdf.gz"
    gz.write_bytes(gzip.compress(data))
    hidden = tmp_path / "nci.sdf"  # gzip without .gz is recognised by its magic bytes
    hidden.write_bytes(gzip.compress(data))
    plain = [canon(r.mol) for r in iter_records(SDF_200) if r.mol]
    assert [canon(r.mol) for r in iter_records(str(gz)) if r.mol] == plain
    assert [canon(r.mol) for r in iter_records(str(hidden)) if r.mol] == plain


# -- SMILES ---------------------------------------------------------------------------------------------


def test_smiles_matches_smilesmolsupplier() -> None:
    supplier = Chem.SmilesMolSupplier(SMI_5K, delimiter="\t", titleLine=False)
    refs = [m for m in supplier]  # iterate: list() of a supplier is not reliable
    records = list(iter_records(SMI_5K))
    assert len(refs) == len(records) == 4999
    bad_ref = [i for i, m in enumerate(refs) if m is None]
    assert [r.index for r in records if r.mol is None] == bad_ref
    assert len(bad_ref) == 8  # RDKit 2026.09 refuses 8 lines of first_5K.smi (valence)
    for ref, rec in zip(refs, records, strict=True):
        if ref is None:
            assert rec.error and "valence" in rec.error.lower()
            continue
        assert rec.mol is not None
        assert rec.name == ref.GetProp("_Name")
        assert canon(rec.mol) == canon(ref)


def _first_5k_lines(n: int) -> list[tuple[str, str]]:
    with open(SMI_5K, encoding="utf-8") as handle:
        rows = [line.rstrip("\n").split("\t") for line in islice(handle, n)]
    return [(row[0], row[1]) for row in rows]


@pytest.mark.parametrize("fmt,sep", [("csv", ","), ("tsv", "\t")])
def test_tables_match_rdkit(tmp_path: Path, fmt: str, sep: str) -> None:
    rows = _first_5k_lines(300)
    path = tmp_path / f"lib.{fmt}"
    path.write_text(
        sep.join(["ID", "mw", "SMILES"]) + "\n" + "".join(f"{n}{sep}0{sep}{s}\n" for s, n in rows)
    )
    records = list(iter_records(str(path)))
    assert len(records) == 300
    assert [r.line for r in records] == list(range(2, 302))
    for (smiles, name), rec in zip(rows, records, strict=True):
        ref = Chem.MolFromSmiles(smiles)
        assert rec.name == name
        assert (rec.mol is None) == (ref is None)
        if ref is not None:
            assert canon(rec.mol) == canon(ref)


def test_table_named_columns_and_headerless(tmp_path: Path) -> None:
    named = tmp_path / "named.csv"
    named.write_text("code,structure,label\nA1,CCO,ethanol\nA2,CC(C)=O,acetone\n")
    records = list(iter_records(str(named), smiles_column="structure", name_column="label"))
    assert [(r.name, canon(r.mol)) for r in records] == [("ethanol", "CCO"), ("acetone", "CC(C)=O")]
    headerless = tmp_path / "plain.csv"
    headerless.write_text("CCO,ethanol\nCCN,ethylamine\n")
    assert [r.name for r in iter_records(str(headerless))] == ["ethanol", "ethylamine"]
    with pytest.raises(InputFileError, match=r"named\.csv:1: .*no column named 'nope'"):
        list(iter_records(str(named), smiles_column="nope"))


def test_smi_name_rules(tmp_path: Path) -> None:
    path = tmp_path / "names.smi"
    path.write_text(
        "smiles\tname\nCCO\tethanol\tx\nCCN ethyl amine\nCCC,propane,3\nC |$Me$|  methane cx\n"
    )
    records = list(iter_records(str(path)))
    assert [r.name for r in records] == ["ethanol", "ethyl amine", "propane", "methane cx"]
    assert all(r.mol is not None for r in records)
    assert [r.line for r in records] == [2, 3, 4, 5]


# -- MOL2 -----------------------------------------------------------------------------------------------


def test_mol2_matches_rdkit(tmp_path: Path, nci200: list[Chem.Mol]) -> None:
    blocks = []
    sources = []
    for i, mol in enumerate(nci200):
        with_h = Chem.AddHs(mol, addCoords=True)
        sources.append(with_h)
        blocks.append(mol_to_mol2_block(with_h, f"nci-{i + 1}"))
    path = tmp_path / "nci.mol2"
    path.write_text("".join(blocks))
    records = list(iter_records(str(path)))
    assert len(records) == 200
    assert [r.name for r in records] == [f"nci-{i + 1}" for i in range(200)]
    same_as_source = 0
    for block, source, rec in zip(blocks, sources, records, strict=True):
        ref = Chem.MolFromMol2Block(block, sanitize=True, removeHs=False)
        # exactly what RDKit's own MOL2 reader makes of the same block
        assert (rec.mol is None) == (ref is None)
        if ref is None:
            assert rec.error and f"record {rec.record} (line {rec.line})" in rec.error
            continue
        assert rec.mol.GetNumAtoms() == ref.GetNumAtoms() == source.GetNumAtoms()
        assert rec.mol.GetNumBonds() == ref.GetNumBonds() == source.GetNumBonds()
        assert canon(rec.mol) == canon(ref)
        has_metal = any(a.GetSymbol() == "Cu" for a in source.GetAtoms())
        if not has_metal:  # MOL2 has no formal-charge column; RDKit guesses metal charges
            assert canon(rec.mol, isomeric=False) == canon(source, isomeric=False)
            same_as_source += 1
    # measured with RDKit 2026.09: 196 of 200 round-trip; 2 fail to kekulise, 2 are Cu complexes
    assert same_as_source >= 190


# -- PDB ------------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def embedded(nci200: list[Chem.Mol]) -> list[Chem.Mol]:
    """40 of the first NCI molecules (no metals) with hydrogens and ETKDG 3D coordinates (stereo perceived from 3D)."""
    out = []
    for mol in nci200[:60]:
        if any(a.GetAtomicNum() > 35 and a.GetSymbol() != "I" for a in mol.GetAtoms()):
            continue  # metals: PDB bond perception is out of scope
        with_h = Chem.AddHs(mol)
        if AllChem.EmbedMolecule(with_h, randomSeed=7) != 0:
            continue
        Chem.AssignStereochemistryFrom3D(with_h)
        out.append(with_h)
        if len(out) == 40:
            break
    assert len(out) == 40
    return out


def _pdb_file(tmp_path: Path, mols: list[Chem.Mol], flavor: int) -> Path:
    path = tmp_path / f"lib{flavor}.pdb"
    path.write_text("".join(Chem.MolToPDBBlock(m, flavor=flavor) for m in mols))
    return path


def _only_single(mol: Chem.Mol) -> bool:
    return all(b.GetBondType() == Chem.BondType.SINGLE for b in mol.GetBonds())


def _assert_same(records: list[Record], mols: list[Chem.Mol], bond_orders: str) -> None:
    assert len(records) == len(mols)
    for rec, mol in zip(records, mols, strict=True):
        assert rec.mol is not None, rec.error
        # a file with single bonds only states no orders, so the reader works them out from 3D
        expected = (
            "determined-from-3d" if bond_orders == "as-read" and _only_single(mol) else bond_orders
        )
        assert rec.meta["bond_orders"] == expected
        assert rec.mol.GetNumAtoms() == mol.GetNumAtoms()
        assert rec.mol.GetNumBonds() == mol.GetNumBonds()
        assert canon(rec.mol) == canon(mol)


def test_pdb_bond_orders_as_read(tmp_path: Path, embedded: list[Chem.Mol]) -> None:
    # RDKit's default PDB flavour repeats CONECT entries to state bond orders
    records = list(iter_records(str(_pdb_file(tmp_path, embedded, 0))))
    _assert_same(records, embedded, "as-read")
    reference = Chem.MolFromPDBBlock(Chem.MolToPDBBlock(embedded[0]), removeHs=False)
    assert canon(records[0].mol) == canon(reference)  # RDKit's own PDB reader agrees


def test_pdb_bond_orders_from_template(
    tmp_path: Path, embedded: list[Chem.Mol], capfd: pytest.CaptureFixture[str]
) -> None:
    for mol in embedded[:10]:
        path = tmp_path / "one.pdb"
        path.write_text(Chem.MolToPDBBlock(mol, flavor=8))  # flavor 8: no bond orders in CONECT
        template = Chem.MolToSmiles(Chem.RemoveHs(mol))
        (record,) = iter_records(str(path), template_smiles=template)
        _assert_same([record], [mol], "template")
    assert capfd.readouterr().err == ""  # RDKit's "more than one match" warning is kept quiet


def test_pdb_bond_orders_from_3d(tmp_path: Path, embedded: list[Chem.Mol]) -> None:
    # no bond orders in the file: rdDetermineBonds works them out from the coordinates; measured with
    # RDKit 2026.09, all 40 come back as the molecule that was written (stereo from 3D included)
    records = list(iter_records(str(_pdb_file(tmp_path, embedded, 8))))
    _assert_same(records, embedded, "determined-from-3d")
    assert all(
        r.meta["total_charge"] == Chem.GetFormalCharge(m)
        for r, m in zip(records, embedded, strict=True)
    )


def test_pdb_template_mismatch_is_a_reason(tmp_path: Path, embedded: list[Chem.Mol]) -> None:
    path = _pdb_file(tmp_path, embedded[:2], 8)
    records = list(iter_records(str(path), template_smiles="CCCC"))
    assert len(records) == 2
    assert all(r.mol is None and "template" in (r.error or "") for r in records)
    with pytest.raises(UsageError, match="template SMILES"):
        iter_records(str(path), template_smiles="C1CC")


# -- entry point, formats, streams ---------------------------------------------------------------------


@pytest.mark.parametrize(
    "name,fmt",
    [
        ("a.smi", "smi"),
        ("a.smiles", "smi"),
        ("A.CSV", "csv"),
        ("a.tsv.gz", "tsv"),
        ("dir/a.sdf", "sdf"),
        ("a.sd", "sdf"),
        ("a.mol", "sdf"),
        ("a.mol2.gz", "mol2"),
        ("a.pdb", "pdb"),
    ],
)
def test_detect_format(name: str, fmt: str) -> None:
    assert detect_format(name) == fmt


@pytest.mark.parametrize("name", ["a.txt", "a", "a.gz", "a.xyz.gz"])
def test_detect_format_unknown(name: str) -> None:
    with pytest.raises(InputFileError, match=r"cannot tell the format"):
        detect_format(name)


def test_fmt_overrides_extension_and_bad_options(tmp_path: Path) -> None:
    path = tmp_path / "library.txt"
    path.write_text("CCO ethanol\n")
    assert [r.name for r in iter_records(str(path), "smi")] == ["ethanol"]
    with pytest.raises(UsageError, match="unknown input format"):
        iter_records(str(path), "xyz")
    with pytest.raises(UsageError, match="csv or tsv"):
        iter_records(str(path), "smi", smiles_column="smiles")
    with pytest.raises(UsageError, match="pdb"):
        iter_records(str(path), "sdf", template_smiles="CCO")
    with pytest.raises(InputFileError, match="no such file"):
        iter_records(str(tmp_path / "missing.sdf"))
    with pytest.raises(InputFileError, match="directory"):
        list(iter_records(str(tmp_path), "sdf"))


def test_stdin(monkeypatch: pytest.MonkeyPatch) -> None:
    data = Path(SDF_200).read_bytes()
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BufferedReader(io.BytesIO(data))))
    records = list(iter_records("-", "sdf"))
    assert len(records) == 200 and records[0].path == "<stdin>"
    monkeypatch.setattr(
        sys, "stdin", io.TextIOWrapper(io.BufferedReader(io.BytesIO(b"CCO ethanol\n")))
    )
    assert [r.name for r in iter_records("-")] == ["ethanol"]  # default format for stdin: smi


def test_from_stream_and_no_stderr(capfd: pytest.CaptureFixture[str]) -> None:
    data = b"C1CC ring\nC(C)(C)(C)(C)C five\n[Xx] unknown\nCCO ok\n"
    records = list(iter_records_from_stream(io.BytesIO(data), "mem.smi", "smi"))
    assert [r.readable for r in records] == [False, False, False, True]
    assert "unclosed ring" in (records[0].error or "")
    assert capfd.readouterr().err == ""  # RDKit's complaints are in the records, not on stderr


# -- streaming ------------------------------------------------------------------------------------------


def test_line_reader_memory_is_bounded() -> None:
    """12 MB of input, including a 10 MB line, read with a Python-level peak far below the input size."""
    big = (b"CCO ethanol\n" * 200_000) + b"C" * 10_000_000 + b"\nCCN last\n"
    stream = io.BytesIO(big)
    tracemalloc.start()
    count = 0
    longest = 0
    for line in iter_lines(stream, "big.smi"):
        count += 1
        longest = max(longest, line.length if line.overlong else len(line.text))
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert count == 200_002
    assert longest == 10_000_000
    assert peak < 4 * MAX_LINE_CHARS + (1 << 20)  # a few copies of one capped line, not the input


def test_sdf_blocks_stream(nci200: list[Chem.Mol]) -> None:
    """Blocks come out one at a time while the input is being read (a generator, not a list)."""
    data = Path(SDF_200).read_bytes() * 20  # 4000 records
    stream = io.BytesIO(data)
    blocks = split_at_terminators(iter_lines(stream, "x.sdf"), is_terminator)
    first = next(blocks)
    assert first.first_line == 1
    assert stream.tell() < len(data) // 10  # only the first chunk has been read
    assert sum(1 for _ in blocks) == 200 * 20 - 1


def test_clean_rdkit_message() -> None:
    raw = (
        "[12:00:00] SMILES Parse Error: syntax error while parsing: C(\n"
        "[12:00:00] SMILES Parse Error: check for mistakes around position 2:\n"
        "[12:00:00] C(\n[12:00:00] ~^\n"
        "[12:00:00] SMILES Parse Error: Failed parsing SMILES 'C(' for input: 'C('\n"
    )
    assert clean_rdkit_message(raw) == (
        "SMILES Parse Error: syntax error while parsing: C(; check for mistakes around position 2"
    )
    invariant = "\n\n****\nPost-condition Violation\nElement 'Xx' not found\nViolation occurred on line 95\n"
    assert (
        clean_rdkit_message(invariant + "Stacktrace:\n 0# foo\n****\n") == "Element 'Xx' not found"
    )
