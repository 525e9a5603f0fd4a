"""The broken-input corpus (tests/data/broken_inputs/, made by make_broken.py).

For every file: no exception escapes except InputFileError where the whole file is unusable; every record is
accounted for (the count below was worked out from how the file was built); records are numbered without
gaps; each unreadable record's reason starts with its record number and line and says what is wrong; and
RDKit writes nothing to stderr.
"""

from __future__ import annotations

import importlib.util
import re
import sys
from dataclasses import dataclass, field
from itertools import pairwise
from pathlib import Path
from types import ModuleType

import pytest

from ffaudit.errors import InputFileError
from ffaudit.read import iter_records
from ffaudit.read.record import Record

CORPUS = Path(__file__).parent / "data" / "broken_inputs"


def _load_maker() -> ModuleType:
    spec = importlib.util.spec_from_file_location("broken_inputs_maker", CORPUS / "make_broken.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up here
    spec.loader.exec_module(module)
    return module


make_broken = _load_maker()


@dataclass(frozen=True)
class Expect:
    records: int = 0
    #: record number -> fragments its reason must contain (besides "record N (line L): ")
    bad: dict[int, tuple[str, ...]] = field(default_factory=dict)
    lines: dict[int, int] = field(default_factory=dict)  # record number -> first line
    names: dict[int, str] = field(default_factory=dict)
    file_error: tuple[str, ...] = ()  # fragments of the InputFileError message
    options: dict[str, str] = field(default_factory=dict)


EXPECT: dict[str, Expect] = {
    "sdf_truncated.sdf": Expect(3, {3: ("promises 9 atom and 8 bond lines",)}, lines={3: 25}),
    "sdf_bad_valence.sdf": Expect(3, {2: ("cannot sanitise", "valence", "C, 5")}, lines={2: 12}),
    "sdf_unknown_element.sdf": Expect(2, {2: ("unknown element 'Xx'", "file line 20")}),
    "sdf_missing_m_end.sdf": Expect(2, {1: ("no 'M  END' line",)}),
    "sdf_counts_too_many.sdf": Expect(2, {2: ("promises 5 atom",)}),
    "sdf_counts_too_few.sdf": Expect(2, {1: ("file line 7 should be a bond line",)}),
    "sdf_bond_to_missing_atom.sdf": Expect(2, {2: ("joins atoms 2 and 9", "has 3 atoms")}),
    "sdf_bad_coordinates.sdf": Expect(2, {1: ("file line 5 should be an atom line", "abcdef")}),
    "sdf_unkekulizable.sdf": Expect(2, {2: ("kekulize",)}),
    "sdf_trailing_terminators.sdf": Expect(2),
    "sdf_crlf.sdf": Expect(3, lines={1: 1, 2: 12, 3: 25}, names={3: "benzene"}),
    "sdf_mixed_endings.sdf": Expect(3, lines={1: 1, 2: 12, 3: 25}, names={2: "acetone"}),
    "sdf_non_utf8_name.sdf": Expect(2, names={1: "Ethanol-\ufffd\ufffd-grade"}),
    "sdf_prose_block.sdf": Expect(3, {2: ("only 2 line(s)",)}, lines={2: 12}),
    "sdf_v3000_truncated.sdf": Expect(2, {2: ("no 'M  END' line in the V3000 record",)}),
    "sdf_only_blank.sdf": Expect(0),
    "empty.sdf": Expect(0),
    "empty.smi": Expect(0),
    "smi_unclosed_ring.smi": Expect(3, {2: ("unclosed ring",)}),
    "smi_unclosed_branch.smi": Expect(2, {1: ("extra open parentheses",)}),
    "smi_unkekulizable.smi": Expect(2, {1: ("kekulize",)}),
    "smi_bad_valence.smi": Expect(3, {2: ("C, 5",), 3: ("N, 4",)}),
    "smi_unknown_element.smi": Expect(2, {1: ("syntax error", "[Xx]")}),
    "smi_header_and_comments.smi": Expect(3, lines={1: 4, 2: 6, 3: 8}, names={1: "ethyl acetate"}),
    "smi_mixed_endings.smi": Expect(5, {4: ("unclosed ring",)}, lines={4: 4, 5: 5}),
    "smi_non_utf8_names.smi": Expect(3, names={1: "\ufffdthanol", 2: "ac\ufffdtone\ufffd\ufffd"}),
    "smi_control_chars.smi": Expect(4, {2: ("'\\x00' at column 2",), 3: ("'\\x1b' at column 2",)}),
    "smi_comma_and_tab.smi": Expect(
        4, {3: ("unclosed ring",), 4: ("empty SMILES",)}, names={1: "ethanol", 2: "acetone"}
    ),
    "csv_missing_column.csv": Expect(
        file_error=("csv_missing_column.csv:1:", "names no SMILES column")
    ),
    "csv_named_column_missing.csv": Expect(
        file_error=("csv_named_column_missing.csv:1:", "no column named 'structure'"),
        options={"smiles_column": "structure"},
    ),
    "csv_bad_rows.csv": Expect(
        6,
        {
            2: ("1 field(s)", "field 2"),
            3: ("cannot split the row",),
            4: ("SMILES field ('smiles') is empty",),
            5: ("unclosed ring",),
        },
        lines={1: 2, 6: 7},
        names={1: "L-001", 4: "L-004"},
    ),
    "tsv_bad_rows.tsv": Expect(
        4, {2: ("syntax error",), 3: ("is empty",)}, names={4: "chloroethane"}
    ),
    "mol2_bad_atom_type.mol2": Expect(3, {2: ("atom type 'Xx.3'", "file line 35")}, lines={2: 26}),
    "mol2_unknown_subtype.mol2": Expect(1, names={1: "odd-subtype"}),
    "mol2_bond_to_missing_atom.mol2": Expect(2, {1: ("refers to atom 13",)}),
    "mol2_counts_mismatch.mol2": Expect(2, {2: ("says 12 atoms", "has 9 atom lines")}),
    "mol2_no_bond_section.mol2": Expect(2, {1: ("no @<TRIPOS>BOND section",)}),
    "mol2_preamble_junk.mol2": Expect(
        2, {1: ("before the first @<TRIPOS>MOLECULE",)}, lines={1: 2}
    ),
    "mol2_truncated.mol2": Expect(2, {2: ("says 9 atoms", "has 4 atom lines")}),
    "pdb_conect_missing_atom.pdb": Expect(2, {1: ("atom serial 99",)}),
    "pdb_no_hydrogens.pdb": Expect(1, {1: ("no hydrogen atoms", "template SMILES")}),
    "pdb_trailing_conect.pdb": Expect(
        3, {3: ("CONECT records but no ATOM/HETATM",)}, names={1: "ethanol", 2: "ethanol (model 2)"}
    ),
    "pdb_bad_coordinates.pdb": Expect(2, {1: ("coordinates that are not numbers",)}),
    "pdb_duplicate_serial.pdb": Expect(1, {1: ("atom serial 1 appears twice",)}),
    "pdb_not_pdb.pdb": Expect(2, {1: ("no ATOM/HETATM records", "Dear colleague")}),
    "not_gzip.sdf.gz": Expect(file_error=("not_gzip.sdf.gz", "not gzip-compressed")),
    "truncated.sdf.gz": Expect(file_error=("truncated.sdf.gz: after line", "truncated")),
    "binary_junk.sdf": Expect(1, {1: ("cannot parse the molfile block",)}),
    "binary_junk.mol2": Expect(1, {1: ("before the first @<TRIPOS>MOLECULE",)}),
    "binary_junk.pdb": Expect(1, {1: ("no ATOM/HETATM records",)}),
    "ten_mb_line.smi": Expect(
        2, {1: ("10485760 characters long", "1048576")}, names={2: "ethanol"}
    ),
    "sdf_huge_title.sdf": Expect(2, {1: ("2097152 characters long",)}, names={2: "acetone"}),
}


@pytest.fixture(scope="module")
def generated(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("broken_generated")
    make_broken.write_cases(folder, committed=False)
    return folder


def _path(case: object, generated: Path) -> Path:
    return (CORPUS if case.committed else generated) / case.filename  # type: ignore[attr-defined]


def _check_numbering(records: list[Record], path: Path) -> None:
    assert [r.record for r in records] == list(range(1, len(records) + 1))
    assert [r.index for r in records] == list(range(len(records)))
    assert all(a.line < b.line for a, b in pairwise(records))
    for r in records:
        assert r.path == str(path)
        assert (r.mol is None) == (r.error is not None)
        assert r.name  # never empty
        if r.error is not None:
            assert r.error.startswith(f"record {r.record} (line {r.line}): ")
            assert len(r.error) > len(f"record {r.record} (line {r.line}): ") + 10


def test_corpus_size_and_expectations_agree() -> None:
    names = [case.filename for case in make_broken.CASES]
    assert len(names) >= 30 and len(set(names)) == len(names)
    assert sorted(names) == sorted([*EXPECT, "binary_junk.smi"])


#: binary_junk.smi has hundreds of records; test_binary_junk_smiles counts them independently.
TABLE_CASES = [case for case in make_broken.CASES if case.filename != "binary_junk.smi"]


@pytest.mark.parametrize("case", TABLE_CASES, ids=lambda c: c.filename)
def test_broken_input(case: object, generated: Path, capfd: pytest.CaptureFixture[str]) -> None:
    path = _path(case, generated)
    expect = EXPECT[case.filename]  # type: ignore[attr-defined]
    records: list[Record] = []
    if expect.file_error:
        with pytest.raises(InputFileError) as info:
            records.extend(iter_records(str(path), **expect.options))  # type: ignore[arg-type]
        for fragment in expect.file_error:
            assert fragment in str(info.value)
        _check_numbering(records, path)
        assert all(r.readable for r in records)  # records before the failure are good ones
    else:
        records = list(iter_records(str(path), **expect.options))  # type: ignore[arg-type]
        _check_numbering(records, path)
        assert len(records) == expect.records
        assert {r.record for r in records if not r.readable} == set(expect.bad)
        for number, fragments in expect.bad.items():
            error = records[number - 1].error or ""
            for fragment in fragments:
                assert fragment in error, error
        for number, line in expect.lines.items():
            assert records[number - 1].line == line
        for number, name in expect.names.items():
            assert records[number - 1].name == name
    assert capfd.readouterr().err == ""


def test_binary_junk_smiles(generated: Path) -> None:
    path = generated / "binary_junk.smi"
    text = path.read_bytes().decode("utf-8", errors="replace")
    # independent count: lines (split on \r\n, \r, \n) that are not blank and not # comments
    expected = [
        line
        for line in re.split(r"\r\n|\r|\n", text)
        if line.strip() and not line.strip().startswith("#")
    ]
    records = list(iter_records(str(path)))
    _check_numbering(records, path)
    assert len(records) == len(expected) > 100
    assert sum(not r.readable for r in records) >= 0.95 * len(records)


def test_truncated_gzip_keeps_good_records(generated: Path) -> None:
    records: list[Record] = []
    with pytest.raises(InputFileError):
        records.extend(iter_records(str(generated / "truncated.sdf.gz")))
    assert len(records) > 10 and all(r.name == "ethanol" for r in records)


def test_unknown_subtype_warns() -> None:
    (record,) = iter_records(str(CORPUS / "mol2_unknown_subtype.mol2"))
    assert record.mol is not None
    assert record.meta["warnings"] == [
        "file line 8: atom type 'C.xx' is not a SYBYL type; read as element 'C'"
    ]


def test_committed_files_are_what_the_script_makes(tmp_path: Path) -> None:
    written = make_broken.write_cases(tmp_path, committed=True)
    assert len(written) >= 30
    for path in written:
        assert path.read_bytes() == (CORPUS / path.name).read_bytes(), path.name
    assert (CORPUS / "README.md").read_text(encoding="utf-8") == make_broken.readme()
