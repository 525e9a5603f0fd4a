"""Property-based tests: no input makes a reader crash, and every record is accounted for.

Random byte strings, and real records (from RDKit's shipped NCI files) with random byte edits, are fed to
each reader. Only InputFileError may escape (a file-level problem such as a table without a SMILES column
or bytes that start like gzip); records are numbered without gaps, each has a molecule or a reason that
names its record and line, and for SMILES and SDF input the record count equals an independent count.
"""

from __future__ import annotations

import io
import os
import re
from itertools import islice, pairwise

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rdkit import Chem, RDConfig, rdBase
from rdkit.Chem import AllChem

from ffaudit.errors import InputFileError
from ffaudit.read import iter_records_from_stream
from ffaudit.read.record import Record
from mol2_writer import mol_to_mol2_block

NCI = os.path.join(RDConfig.RDDataDir, "NCI")
FUZZ = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
FORMATS = ("smi", "csv", "tsv", "sdf", "mol2", "pdb")
COMPRESSED_MAGIC = (b"\x1f\x8b", b"BZh", b"PK\x03\x04", b"\x28\xb5\x2f\xfd", b"\xfd7zXZ\x00")


def _sdf_records(n: int) -> list[bytes]:
    with open(os.path.join(NCI, "first_200.props.sdf"), "rb") as handle:
        data = handle.read()
    return [block + b"$$$$\n" for block in data.split(b"$$$$\n")[:n]]


def _smiles_lines(n: int) -> list[bytes]:
    with open(os.path.join(NCI, "first_5K.smi"), "rb") as handle:
        return list(islice(handle, n))


def _mol2_and_pdb(n: int) -> tuple[list[bytes], list[bytes]]:
    """MOL2 and PDB records of the first NCI molecules that RDKit reads back from MOL2."""
    mol2: list[bytes] = []
    pdb: list[bytes] = []
    for mol in Chem.SDMolSupplier(os.path.join(NCI, "first_200.props.sdf")):
        with_h = Chem.AddHs(mol)
        AllChem.EmbedMolecule(with_h, randomSeed=11)
        block = mol_to_mol2_block(with_h, "fuzz")
        with rdBase.BlockLogs():
            readable = Chem.MolFromMol2Block(block, removeHs=False) is not None
        if not readable:
            continue  # a molecule the test writer cannot type for RDKit (see test_read.py)
        mol2.append(block.encode())
        pdb.append(Chem.MolToPDBBlock(with_h).encode())
        if len(mol2) == n:
            break
    return mol2, pdb


SDF_RECORDS = _sdf_records(8)
SMILES_LINES = _smiles_lines(50)
MOL2_RECORDS, PDB_RECORDS = _mol2_and_pdb(6)
REAL = {"sdf": SDF_RECORDS, "smi": SMILES_LINES, "mol2": MOL2_RECORDS, "pdb": PDB_RECORDS}


def read_all(data: bytes, fmt: str) -> list[Record] | None:
    """All records, or None when the reader raised InputFileError (any other exception fails the test)."""
    try:
        return list(iter_records_from_stream(io.BytesIO(data), f"fuzz.{fmt}", fmt))
    except InputFileError as exc:
        assert str(exc).startswith("fuzz.")  # names the file
        return None


def check(records: list[Record]) -> None:
    assert [r.record for r in records] == list(range(1, len(records) + 1))
    assert [r.index for r in records] == list(range(len(records)))
    assert all(a.line < b.line for a, b in pairwise(records))
    for r in records:
        assert (r.mol is None) != (r.error is None)
        assert r.name
        if r.error is not None:
            assert r.error.startswith(f"record {r.record} (line {r.line}): ")


def _lines(data: bytes) -> list[str]:
    text = data.decode("utf-8", errors="replace").removeprefix("\ufeff")
    return re.split(
        r"\r\n|\r|\n", text.removesuffix("\n") if not text.endswith("\r\n") else text[:-2]
    )


def expected_smi(data: bytes) -> int:
    """Independent count of .smi records: non-blank, non-comment lines, less a header line."""
    lines = [line.strip() for line in _lines(data)]
    lines = [line for line in lines if line and not line.startswith("#")]
    if lines and "smiles" in re.split(r"[\s,]", lines[0])[0].lower():
        lines = lines[1:]
    return len(lines)


def expected_sdf(data: bytes) -> int:
    """Independent count of SD records: chunks between $$$$ lines that are not blank."""
    blocks: list[list[str]] = []
    current: list[str] = []
    for line in _lines(data):
        if line.strip() == "$$$$":
            blocks.append(current)
            current = []
        else:
            current.append(line)
    blocks.append(current)
    return sum(1 for block in blocks if any(line.strip() for line in block))


def mutate(data: bytes, edits: list[tuple[int, int, int]]) -> bytes:
    """Apply (position, kind, byte) edits: kind 0 replaces, 1 inserts, 2 deletes a byte."""
    buf = bytearray(data)
    for position, kind, value in edits:
        if not buf:
            buf.append(value)
            continue
        at = position % len(buf)
        if kind == 0:
            buf[at] = value
        elif kind == 1:
            buf.insert(at, value)
        else:
            del buf[at]
    return bytes(buf)


EDITS = st.lists(
    st.tuples(st.integers(0, 1 << 16), st.integers(0, 2), st.integers(0, 255)),
    min_size=1,
    max_size=12,
)


@FUZZ
@given(data=st.binary(max_size=2048), fmt=st.sampled_from(FORMATS))
def test_random_bytes(data: bytes, fmt: str) -> None:
    records = read_all(data, fmt)
    if records is None:
        return
    check(records)
    if data.startswith(b"\x1f\x8b"):
        return  # a valid gzip stream by chance: its content is something else again
    if fmt == "smi":
        assert len(records) == expected_smi(data)
    if fmt == "sdf":
        assert len(records) == expected_sdf(data)


@FUZZ
@given(
    fmt=st.sampled_from(sorted(REAL)),
    picks=st.lists(st.integers(0, 49), min_size=1, max_size=4),
    edits=EDITS,
)
def test_mutated_real_records(
    fmt: str, picks: list[int], edits: list[tuple[int, int, int]]
) -> None:
    pool = REAL[fmt]
    data = mutate(b"".join(pool[i % len(pool)] for i in picks), edits)
    records = read_all(data, fmt)
    if (
        records is None
    ):  # only a mutation that creates a gzip/bzip2/... magic at the start may do this
        assert data.startswith(COMPRESSED_MAGIC)
        return
    check(records)
    if fmt == "smi":
        assert len(records) == expected_smi(data)
    if fmt == "sdf":
        assert len(records) == expected_sdf(data)


def test_unmutated_real_records_read() -> None:
    """The pools the mutations start from are good, so a mutation is what makes a record bad."""
    for fmt, pool in REAL.items():
        records = read_all(b"".join(pool), fmt)
        assert records is not None and len(records) == len(pool)
        assert all(r.readable for r in records), [r.error for r in records if not r.readable]
