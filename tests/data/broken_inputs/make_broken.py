"""Make the corpus of broken structure files the reader tests feed to ffaudit.

Run ``python tests/data/broken_inputs/make_broken.py`` to rewrite the small, committed files and README.md in
this folder. Large or binary cases (random bytes, a 10 MB line, damaged gzip) are not committed: the tests
call :func:`write_cases` with ``committed=False`` to create them in a temporary folder.

Every case is built here from a few good molecules written by RDKit (so the good parts are known to be good)
and then broken in one stated way. The expected outcome of each case is asserted in
tests/test_read_broken.py.
"""

from __future__ import annotations

import gzip
import random
import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from rdkit import Chem
from rdkit.Chem import AllChem

HERE = Path(__file__).resolve().parent
SEED = 20240611


@dataclass(frozen=True)
class Case:
    filename: str
    description: str
    build: Callable[[], bytes]
    committed: bool = True


def _mol(smiles: str, name: str, *, hydrogens: bool = False, embed: bool = False) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    if hydrogens or embed:
        mol = Chem.AddHs(mol)
    if embed:
        AllChem.EmbedMolecule(mol, randomSeed=SEED)
    mol.SetProp("_Name", name)
    return mol


def _molblock(smiles: str, name: str) -> str:
    return Chem.MolToMolBlock(_mol(smiles, name))


def _sdf(*blocks: str) -> str:
    return "".join(block + "$$$$\n" for block in blocks)


GOOD = ("CCO", "ethanol")
GOOD2 = ("CC(C)=O", "acetone")
GOOD3 = ("c1ccccc1", "benzene")


def _good(which: tuple[str, str] = GOOD) -> str:
    return _molblock(*which)


# -- SDF ------------------------------------------------------------------------------------------------


def sdf_truncated() -> bytes:
    third = _molblock("CCCCCC(=O)OC", "methyl hexanoate")
    cut = third[: third.index("\n", len(third) // 2)]  # stops inside the atom block
    return (_sdf(_good(), _good(GOOD2)) + cut + "\n").encode()


def sdf_bad_valence() -> bytes:
    penta = _molblock("CC(C)(C)C", "neopentane").replace("  1  2  1  0", "  1  2  2  0")
    return _sdf(_good(), penta, _good(GOOD2)).encode()


def sdf_unknown_element() -> bytes:
    bad = _molblock("CCO", "xx-ethanol").replace(" O   0", " Xx  0")
    return _sdf(_good(GOOD2), bad).encode()


def sdf_missing_m_end() -> bytes:
    bad = "\n".join(line for line in _good().splitlines() if line != "M  END") + "\n"
    return _sdf(bad, _good(GOOD2)).encode()


def sdf_counts_too_many() -> bytes:
    bad = _good().replace("  3  2  0  0", "  5  2  0  0")
    return _sdf(_good(GOOD3), bad).encode()


def sdf_counts_too_few() -> bytes:
    bad = _good().replace("  3  2  0  0", "  2  2  0  0")
    return _sdf(bad, _good(GOOD3)).encode()


def sdf_bond_to_missing_atom() -> bytes:
    bad = _good().replace("  2  3  1  0", "  2  9  1  0")
    return _sdf(_good(GOOD2), bad).encode()


def sdf_bad_coordinates() -> bytes:
    bad = _good().replace("    0.0000    0.0000    0.0000 C", "    abcdef    0.0000    0.0000 C", 1)
    return _sdf(bad, _good(GOOD2)).encode()


def sdf_unkekulizable() -> bytes:
    # cyclopentane with every ring bond typed aromatic (4): five aromatic carbons cannot be kekulised
    ring = _molblock("C1CCCC1", "not-aromatic").replace("  1  0\n", "  4  0\n")
    return _sdf(_good(), ring).encode()


def sdf_trailing_terminators() -> bytes:
    return (_sdf(_good(), _good(GOOD2)) + "$$$$\n\n$$$$\n   \n").encode()


def sdf_crlf() -> bytes:
    return _sdf(_good(), _good(GOOD2), _good(GOOD3)).replace("\n", "\r\n").encode()


def sdf_mixed_endings() -> bytes:
    first, second, third = _good(), _good(GOOD2), _good(GOOD3)
    return (
        _sdf(first).replace("\n", "\r\n") + _sdf(second).replace("\n", "\r") + _sdf(third)
    ).encode()


def sdf_non_utf8_name() -> bytes:
    latin1 = _good().replace("ethanol", "Ethanol-\xe9\xe8-grade", 1).encode("latin-1")
    return latin1 + b"$$$$\n" + _sdf(_good(GOOD2)).encode()


def sdf_prose_block() -> bytes:
    prose = "This is not a molecule.\nIt is a note someone pasted into the file.\n"
    return (_sdf(_good()) + prose + "$$$$\n" + _sdf(_good(GOOD2))).encode()


def sdf_v3000_truncated() -> bytes:
    v3 = Chem.MolToV3KMolBlock(_mol("CCN", "ethylamine"))
    return (_sdf(_good()) + v3[: v3.index("M  V30 END ATOM")] + "$$$$\n").encode()


def sdf_only_blank() -> bytes:
    return b"\n\n   \n\t\n"


def sdf_huge_title() -> bytes:
    title = "N" * (2 << 20)
    big = _good().replace("ethanol", title, 1)
    return _sdf(big, _good(GOOD2)).encode()


# -- SMILES ---------------------------------------------------------------------------------------------


def smi_unclosed_ring() -> bytes:
    return b"CCO ethanol\nC1CCC open-ring\nc1ccccc1 benzene\n"


def smi_unclosed_branch() -> bytes:
    return b"CC(C open-branch\nCC(=O)C acetone\n"


def smi_unkekulizable() -> bytes:
    return b"c1cccc1 five-aromatic-carbons\nc1ccncc1 pyridine\n"


def smi_bad_valence() -> bytes:
    return b"CCO ethanol\nC(C)(C)(C)(C)C pentavalent\nN(C)(C)(C)C neutral-tetravalent-N\n"


def smi_unknown_element() -> bytes:
    return b"[Xx]CC unknown-element\nCCCl chloroethane\n"


def smi_header_and_comments() -> bytes:
    return (
        b"# Larkspur solvent shortlist\n"
        b"SMILES Name\n"
        b"\n"
        b"CCOC(C)=O ethyl acetate\n"
        b"# a comment in the middle\n"
        b"CC(C)O isopropanol\n"
        b"   \n"
        b"CCCCO n-butanol\n"
    )


def smi_mixed_endings() -> bytes:
    return b"CCO ethanol\r\nCC(C)=O acetone\rc1ccccc1 benzene\nC1CC broken\r\nCCN ethylamine"


def smi_non_utf8_names() -> bytes:
    return b"CCO \xe9thanol\nCC(C)=O ac\xe9tone\xff\xfe\nCCCC butane\n"


def smi_control_chars() -> bytes:
    return b"CCO ethanol\nC\x00C nul-inside\nC\x1bC escape-inside\nCCC propane\n"


def smi_comma_and_tab() -> bytes:
    return b"CCO,ethanol,46.07\nCC(C)=O\tacetone\t58.08\nC1CC,broken,0\n,no-smiles\n"


def csv_missing_column() -> bytes:
    return b"structure,name\nCCO,ethanol\n"


def csv_named_column_missing() -> bytes:
    return b"SMILES,name\nCCO,ethanol\n"


def csv_bad_rows() -> bytes:
    return (
        b"id,smiles,supplier\n"
        b"L-001,CCO,north\n"
        b"L-002\n"
        b'L-003,"CC(C)=O,south\n'
        b"L-004,,east\n"
        b"L-005,C1CC,west\n"
        b"L-006,CCN,north\n"
    )


def tsv_bad_rows() -> bytes:
    return b"SMILES\tName\nCCO\tethanol\nC(\topen-branch\n\tno-smiles\nCCCl\tchloroethane\n"


# -- MOL2 -----------------------------------------------------------------------------------------------

_MOL2_ETHANOL = """@<TRIPOS>MOLECULE
ethanol
 9 8 1 0 0
SMALL
NO_CHARGES

@<TRIPOS>ATOM
      1 C1         -0.8883    0.0385   -0.0240 C.3       1 UNL1        0.0000
      2 C2          0.5224   -0.5003   -0.0060 C.3       1 UNL1        0.0000
      3 O1          1.3650    0.5778    0.2566 O.3       1 UNL1        0.0000
      4 H1         -1.1013    0.4881   -1.0128 H         1 UNL1        0.0000
      5 H2         -1.0176    0.8188    0.7475 H         1 UNL1        0.0000
      6 H3         -1.6011   -0.7823    0.1771 H         1 UNL1        0.0000
      7 H4          0.8102   -0.9677   -0.9717 H         1 UNL1        0.0000
      8 H5          0.6230   -1.2766    0.7829 H         1 UNL1        0.0000
      9 H6          1.2877    1.1037   -0.5498 H         1 UNL1        0.0000
@<TRIPOS>BOND
     1     1     2    1
     2     2     3    1
     3     1     4    1
     4     1     5    1
     5     1     6    1
     6     2     7    1
     7     2     8    1
     8     3     9    1
"""


def _mol2_good(name: str = "ethanol") -> str:
    return _MOL2_ETHANOL.replace("ethanol", name, 1)


def mol2_bad_atom_type() -> bytes:
    bad = _mol2_good("bad-type").replace("O.3 ", "Xx.3", 1)
    return (_mol2_good() + bad + _mol2_good("ethanol-again")).encode()


def mol2_unknown_subtype() -> bytes:
    return _mol2_good("odd-subtype").replace("C.3 ", "C.xx", 1).encode()


def mol2_bond_to_missing_atom() -> bytes:
    bad = _mol2_good("bad-bond").replace("     2     2     3    1", "     2     2    13    1")
    return (bad + _mol2_good()).encode()


def mol2_counts_mismatch() -> bytes:
    bad = _mol2_good("bad-counts").replace(" 9 8 1 0 0", " 12 8 1 0 0")
    return (_mol2_good() + bad).encode()


def mol2_no_bond_section() -> bytes:
    bad = _mol2_good("no-bonds").split("@<TRIPOS>BOND")[0]
    return (bad + _mol2_good()).encode()


def mol2_preamble_junk() -> bytes:
    return ("# written by hand\nthis line is not MOL2\n" + _mol2_good()).encode()


def mol2_truncated() -> bytes:
    good = _mol2_good("cut-short")
    return (_mol2_good() + good[: good.index("      5 H2")]).encode()


# -- PDB ------------------------------------------------------------------------------------------------


def _pdb(smiles: str, name: str, flavor: int = 0) -> str:
    return Chem.MolToPDBBlock(_mol(smiles, name, embed=True), flavor=flavor)


def pdb_conect_missing_atom() -> bytes:
    bad = _pdb("CC(=O)OC", "methyl acetate").replace("CONECT    1", "CONECT   99", 1)
    return (bad + _pdb("CCO", "ethanol")).encode()


def pdb_no_hydrogens() -> bytes:
    mol = Chem.RemoveHs(_mol("OC(=O)c1ccccc1", "benzoic acid", embed=True))
    mol.SetProp("_Name", "benzoic acid")
    return Chem.MolToPDBBlock(mol, flavor=8).encode()


def pdb_trailing_conect() -> bytes:
    mol = _mol("CCO", "ethanol", embed=True)
    AllChem.EmbedMultipleConfs(mol, 2, randomSeed=SEED)
    block = Chem.MolToPDBBlock(mol, flavor=0)
    lines = block.splitlines()
    conect = [line for line in lines if line.startswith("CONECT")]
    body = [line for line in lines if not line.startswith("CONECT") and line != "END"]
    return ("\n".join(body + conect + ["END"]) + "\n").encode()


def pdb_bad_coordinates() -> bytes:
    good = _pdb("CCO", "ethanol")
    lines = good.splitlines()
    lines[1] = lines[1][:30] + "   x.xxx" + lines[1][38:]
    return ("\n".join(lines) + "\n" + _pdb("CC(C)=O", "acetone")).encode()


def pdb_duplicate_serial() -> bytes:
    good = _pdb("CCO", "ethanol")
    lines = good.splitlines()
    lines[2] = lines[2][:6] + lines[1][6:11] + lines[2][11:]
    return ("\n".join(lines) + "\n").encode()


def pdb_not_pdb() -> bytes:
    return (
        "Dear colleague,\nplease find the structures attached.\nEND\n" + _pdb("CCO", "ethanol")
    ).encode()


# -- compressed and binary (made at test time) -------------------------------------------------------------


def not_gzip() -> bytes:
    return _sdf(_good()).encode()


def truncated_gzip() -> bytes:
    data = gzip.compress(_sdf(*[_good()] * 200).encode(), mtime=0)
    return data[: len(data) // 2]


def _junk(size: int) -> bytes:
    return random.Random(SEED).randbytes(size)


def ten_mb_line() -> bytes:
    return b"C" * (10 * 1024 * 1024) + b"\nCCO ethanol\n"


CASES: list[Case] = [
    Case(
        "sdf_truncated.sdf",
        "third record cut off inside its atom block (no M  END, no $$$$)",
        sdf_truncated,
    ),
    Case(
        "sdf_bad_valence.sdf",
        "record 2: a carbon with five bonds (one bond made double)",
        sdf_bad_valence,
    ),
    Case("sdf_unknown_element.sdf", "record 2: atom symbol 'Xx'", sdf_unknown_element),
    Case("sdf_missing_m_end.sdf", "record 1 has no 'M  END' line", sdf_missing_m_end),
    Case(
        "sdf_counts_too_many.sdf",
        "record 2: counts line promises 5 atoms, 3 are there",
        sdf_counts_too_many,
    ),
    Case(
        "sdf_counts_too_few.sdf",
        "record 1: counts line says 2 atoms, 3 are there",
        sdf_counts_too_few,
    ),
    Case(
        "sdf_bond_to_missing_atom.sdf", "record 2: a bond to atom 9 of 3", sdf_bond_to_missing_atom
    ),
    Case("sdf_bad_coordinates.sdf", "record 1: an x coordinate 'abcdef'", sdf_bad_coordinates),
    Case(
        "sdf_unkekulizable.sdf",
        "record 2: cyclopentane with all ring bonds typed aromatic",
        sdf_unkekulizable,
    ),
    Case(
        "sdf_trailing_terminators.sdf",
        "two good records, then extra $$$$ and blank lines",
        sdf_trailing_terminators,
    ),
    Case("sdf_crlf.sdf", "three good records with CRLF line endings", sdf_crlf),
    Case(
        "sdf_mixed_endings.sdf",
        "three good records: CRLF, then CR only, then LF",
        sdf_mixed_endings,
    ),
    Case("sdf_non_utf8_name.sdf", "record 1 title in Latin-1 (not UTF-8)", sdf_non_utf8_name),
    Case("sdf_prose_block.sdf", "record 2 is two lines of prose", sdf_prose_block),
    Case(
        "sdf_v3000_truncated.sdf", "record 2: V3000 block cut before END ATOM", sdf_v3000_truncated
    ),
    Case("sdf_only_blank.sdf", "blank and whitespace-only lines, no records", sdf_only_blank),
    Case("empty.sdf", "zero bytes", lambda: b""),
    Case("empty.smi", "zero bytes", lambda: b""),
    Case("smi_unclosed_ring.smi", "line 2: ring bond 1 never closed", smi_unclosed_ring),
    Case("smi_unclosed_branch.smi", "line 1: branch opened and not closed", smi_unclosed_branch),
    Case("smi_unkekulizable.smi", "line 1: five aromatic carbons in a ring", smi_unkekulizable),
    Case(
        "smi_bad_valence.smi",
        "lines 2-3: pentavalent carbon, neutral tetravalent nitrogen",
        smi_bad_valence,
    ),
    Case("smi_unknown_element.smi", "line 1: bracket atom [Xx]", smi_unknown_element),
    Case(
        "smi_header_and_comments.smi",
        "comment, header, blank lines: three good records",
        smi_header_and_comments,
    ),
    Case(
        "smi_mixed_endings.smi",
        "CRLF, CR and LF endings, no final newline; line 4 bad",
        smi_mixed_endings,
    ),
    Case(
        "smi_non_utf8_names.smi", "Latin-1 and stray 0xff 0xfe bytes in names", smi_non_utf8_names
    ),
    Case("smi_control_chars.smi", "NUL and ESC bytes inside SMILES", smi_control_chars),
    Case(
        "smi_comma_and_tab.smi",
        "comma- and tab-separated lines; a bad SMILES and an empty one",
        smi_comma_and_tab,
    ),
    Case(
        "csv_missing_column.csv",
        "no 'smiles' column and first field not SMILES (file-level)",
        csv_missing_column,
    ),
    Case(
        "csv_named_column_missing.csv",
        "read with smiles_column='structure', absent (file-level)",
        csv_named_column_missing,
    ),
    Case(
        "csv_bad_rows.csv",
        "short row, unclosed quote, empty SMILES field, bad SMILES",
        csv_bad_rows,
    ),
    Case("tsv_bad_rows.tsv", "unclosed branch and an empty SMILES field", tsv_bad_rows),
    Case("mol2_bad_atom_type.mol2", "record 2: atom type 'Xx.3'", mol2_bad_atom_type),
    Case(
        "mol2_unknown_subtype.mol2",
        "atom type 'C.xx': read as carbon with a warning",
        mol2_unknown_subtype,
    ),
    Case(
        "mol2_bond_to_missing_atom.mol2",
        "record 1: a bond to atom 13 of 9",
        mol2_bond_to_missing_atom,
    ),
    Case(
        "mol2_counts_mismatch.mol2",
        "record 2: counts line says 12 atoms, 9 are there",
        mol2_counts_mismatch,
    ),
    Case("mol2_no_bond_section.mol2", "record 1: no @<TRIPOS>BOND section", mol2_no_bond_section),
    Case(
        "mol2_preamble_junk.mol2",
        "a line of text before the first @<TRIPOS>MOLECULE",
        mol2_preamble_junk,
    ),
    Case("mol2_truncated.mol2", "record 2 cut off inside its ATOM section", mol2_truncated),
    Case(
        "pdb_conect_missing_atom.pdb",
        "record 1: CONECT from atom 99, which does not exist",
        pdb_conect_missing_atom,
    ),
    Case("pdb_no_hydrogens.pdb", "heavy atoms only, CONECT without bond orders", pdb_no_hydrogens),
    Case(
        "pdb_trailing_conect.pdb",
        "two models, CONECT records only after the last ENDMDL",
        pdb_trailing_conect,
    ),
    Case("pdb_bad_coordinates.pdb", "record 1: an x coordinate 'x.xxx'", pdb_bad_coordinates),
    Case("pdb_duplicate_serial.pdb", "atom serial 1 used twice", pdb_duplicate_serial),
    Case("pdb_not_pdb.pdb", "a letter, ended by END, before a good record", pdb_not_pdb),
    Case("not_gzip.sdf.gz", "plain text named .gz (file-level)", not_gzip, committed=False),
    Case(
        "truncated.sdf.gz",
        "gzip stream cut in half (file-level, after good records)",
        truncated_gzip,
        committed=False,
    ),
    Case(
        "binary_junk.smi", "64 KiB of seeded random bytes", lambda: _junk(1 << 16), committed=False
    ),
    Case(
        "binary_junk.sdf", "64 KiB of seeded random bytes", lambda: _junk(1 << 16), committed=False
    ),
    Case(
        "binary_junk.mol2", "64 KiB of seeded random bytes", lambda: _junk(1 << 16), committed=False
    ),
    Case(
        "binary_junk.pdb", "64 KiB of seeded random bytes", lambda: _junk(1 << 16), committed=False
    ),
    Case("ten_mb_line.smi", "a 10 MiB line of 'C', then a good line", ten_mb_line, committed=False),
    Case("sdf_huge_title.sdf", "record 1 title is 2 MiB long", sdf_huge_title, committed=False),
]


def write_cases(folder: Path, *, committed: bool) -> list[Path]:
    """Write the cases whose ``committed`` flag equals ``committed`` into ``folder``; return their paths."""
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for case in CASES:
        if case.committed == committed:
            target = folder / case.filename
            target.write_bytes(case.build())
            written.append(target)
    return written


def readme() -> str:
    """README.md text: every case, its file name, what is wrong with it and where it lives."""
    rows = [
        f"| `{c.filename}` | {c.description} | {'committed' if c.committed else 'made at test time'} |"
        for c in CASES
    ]
    return (
        "# Broken structure files\n\n"
        "Inputs that the reader tests (tests/test_read_broken.py) feed to `ffaudit.read.iter_records`:\n"
        "each must give no traceback, account for every record, and give a reason naming the record\n"
        "and line. All are made by `make_broken.py` from molecules written by RDKit and then broken in\n"
        "one stated way; run `python tests/data/broken_inputs/make_broken.py` to rewrite the committed\n"
        "ones and this file. Large and binary cases are made by the tests in a temporary folder.\n\n"
        "| file | what is wrong | where |\n|---|---|---|\n" + "\n".join(rows) + "\n"
    )


def main() -> int:
    for path in write_cases(HERE, committed=True):
        print(f"wrote {path.relative_to(HERE)}")
    (HERE / "README.md").write_text(readme(), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
