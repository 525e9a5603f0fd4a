"""Parameter-set loading: safe YAML, schema, semantic checks, units, layering, hashing and writing.

Fixtures: tests/data/sets/ (valid sets) and tests/data/broken_sets/ (each file says at its top how it was
made and what is wrong). Expected positions are found by searching the fixture text (:func:`where`), not
by asking the YAML parser, so a wrong line or column from the loader fails the test.
"""

from __future__ import annotations

import hashlib
import math
import shutil
from pathlib import Path

import pytest
from rdkit import Chem

from ffaudit.errors import ParameterSetError
from ffaudit.findings import Finding
from ffaudit.paramset import load as load_module
from ffaudit.paramset.checks import first_atom_elements, parse_smarts
from ffaudit.paramset.load import (
    DEFAULT_SET,
    embedded_set_names,
    embedded_set_path,
    iter_load_findings,
    load_parameter_set,
)
from ffaudit.paramset.model import KINDS, Entry, ParameterSet
from ffaudit.paramset.write import dump_parameter_set, dump_set_document, scalar
from ffaudit.paramset.yamlload import parse_yaml

DATA = Path(__file__).parent / "data"
SETS = DATA / "sets"
BROKEN = DATA / "broken_sets"
MINIMAL = SETS / "minimal.yaml"
OVERLAY = SETS / "overlay.yaml"

# Conversion factors used for the hand calculations below (definitions, not project code):
KJ_PER_KCAL = 4.184  # thermochemical calorie: 1 kcal = 4.184 kJ exactly
KJ_NM2_PER_KCAL_A2 = 418.4  # check_values.md §3: 1 kcal/mol/A^2 = 418.4 kJ/mol/nm^2
A_PER_NM = 10.0  # 1 nm = 10 A
DEG_PER_RAD = 180.0 / math.pi


def where(path: Path, needle: str, occurrence: int = 1, offset: int = 0) -> tuple[int, int]:
    """1-based (line, column + offset) of the n-th occurrence of ``needle`` outside comment lines."""
    seen = 0
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if line.lstrip().startswith("#"):
            continue
        start = 0
        while (col := line.find(needle, start)) >= 0:
            seen += 1
            if seen == occurrence:
                return number, col + 1 + offset
            start = col + 1
    raise AssertionError(f"{needle!r} (occurrence {occurrence}) not in {path}")


def findings_of(path: Path) -> list[Finding]:
    return list(iter_load_findings(path))


# -- broken sets: one mistake each -------------------------------------------------------------------

# (file, code, needle, occurrence, column offset from the needle, document path)
BROKEN_CASES = [
    ("duplicate_key.yaml", "duplicate-key", "k: 340.0", 1, 0, ("bonds", 0, "k")),
    ("yaml_syntax.yaml", "yaml-syntax", "extra: 2", 1, len("extra"), ()),
    ("unknown_class.yaml", "unknown-class", "c9", 1, 0, ("bonds", 1, "classes", 1)),
    ("unknown_source.yaml", "unknown-source", "crc-2005", 1, 0, ("bonds", 0, "source")),
    (
        "parent_cycle.yaml",
        "parent-cycle",
        "parent: c",
        1,
        len("parent: "),
        ("classes", 1, "parent"),
    ),
    ("invalid_smarts.yaml", "invalid-smarts", '"[CX4"', 1, 0, ("classes", 1, "smarts", 1)),
    ("wildcard_bond.yaml", "bad-wildcard", '"*"', 1, 0, ("bonds", 1, "classes", 0)),
    ("dihedral_reversed.yaml", "duplicate-entry", "classes: [h_o", 1, 0, ("dihedrals", 1)),
    ("schema_type.yaml", "schema", "stiff", 1, 0, ("bonds", 0, "k")),
    ("missing_version.yaml", "schema", "header:", 1, 0, ("header",)),
    ("unknown_unit.yaml", "schema", "furlong", 1, 0, ("header", "units", "length")),
    ("python_tag.yaml", "unsafe-tag", "!!python", 1, 0, ("header", "description")),
    ("alias_bomb.yaml", "alias-expansion", "&l1", 1, 0, ()),
    (
        "missing_convention.yaml",
        "missing-convention",
        "conventions:",
        1,
        0,
        ("header", "conventions"),
    ),
    ("smarts_element.yaml", "smarts-element", '"[OX2][CX4]"', 1, 0, ("classes", 1, "smarts", 1)),
    ("unknown_parent.yaml", "unknown-parent", "carbon", 1, 0, ("classes", 1, "parent")),
    ("duplicate_class.yaml", "duplicate-class", "id: c4", 2, len("id: "), ("classes", 2, "id")),
    ("form_field.yaml", "schema", "k: 680.0", 1, len("k: "), ("bonds", 0, "k")),
    ("non_finite.yaml", "non-finite", ".inf", 1, 0, ("bonds", 0, "k")),
    ("recursive_alias.yaml", "alias-expansion", "&loop", 1, 0, ("header", "lint", "disable", 1)),
    ("merge_key.yaml", "merge-key", "<<", 1, 0, ("bonds", 1)),
]


def test_every_broken_fixture_is_covered_and_documented() -> None:
    files = sorted(p.name for p in BROKEN.glob("*.yaml"))
    covered = {case[0] for case in BROKEN_CASES} | {"several_errors.yaml"}
    assert sorted(covered) == files
    assert len(files) >= 14
    for name in files:
        lines = (BROKEN / name).read_text(encoding="utf-8").splitlines()
        head = " ".join(line for line in lines[:4] if line.startswith("#"))
        assert head.startswith("# Made by hand"), name
        assert "Wrong:" in head or "mistakes" in head, name


@pytest.mark.parametrize(
    ("name", "code", "needle", "occurrence", "offset", "doc_path"),
    BROKEN_CASES,
    ids=[case[0] for case in BROKEN_CASES],
)
def test_broken_set_gives_one_located_finding(
    name: str,
    code: str,
    needle: str,
    occurrence: int,
    offset: int,
    doc_path: tuple[str | int, ...],
) -> None:
    path = BROKEN / name
    findings = findings_of(path)
    assert [f.code for f in findings] == [code], [f.format() for f in findings]
    finding = findings[0]
    line, column = where(path, needle, occurrence, offset)
    assert finding.path == str(path)
    assert (finding.line, finding.column) == (line, column), finding.format()
    assert finding.doc_path == doc_path
    assert finding.message
    # the loader raises with the same findings and names the file
    with pytest.raises(ParameterSetError) as raised:
        load_parameter_set(path)
    assert raised.value.findings == tuple(findings)
    assert str(path) in str(raised.value)


def test_duplicate_key_names_both_lines() -> None:
    path = BROKEN / "duplicate_key.yaml"
    (finding,) = findings_of(path)
    first = where(path, "k: 680.0")[0]
    second = where(path, "k: 340.0")[0]
    assert f"line {second}" in finding.message and f"first on line {first}" in finding.message


def test_duplicate_dihedral_names_first_line() -> None:
    path = BROKEN / "dihedral_reversed.yaml"
    (finding,) = findings_of(path)
    assert f"first on line {where(path, 'classes: [h_c')[0]}" in finding.message


def test_invalid_smarts_quotes_rdkit_reason() -> None:
    (finding,) = findings_of(BROKEN / "invalid_smarts.yaml")
    _mol, reason = parse_smarts("[CX4")
    assert reason is not None, "RDKit's error log could not be captured"
    assert reason in finding.message
    assert "syntax error" in reason  # RDKit's own wording for an unclosed bracket


def test_schema_messages_say_what_was_expected() -> None:
    (wrong_type,) = findings_of(BROKEN / "schema_type.yaml")
    assert "expected a number" in wrong_type.message and "'stiff'" in wrong_type.message
    (missing,) = findings_of(BROKEN / "missing_version.yaml")
    assert "'version'" in missing.message
    (unit,) = findings_of(BROKEN / "unknown_unit.yaml")
    assert "'furlong'" in unit.message and "'nanometer'" in unit.message
    (field,) = findings_of(BROKEN / "form_field.yaml")
    assert field.hint is not None and "polynomial" in field.hint


def test_alias_bomb_is_stopped_quickly() -> None:
    (finding,) = findings_of(BROKEN / "alias_bomb.yaml")
    assert "100000" in finding.message
    assert (BROKEN / "alias_bomb.yaml").stat().st_size < 2048


def test_python_tag_is_never_constructed(capfd: pytest.CaptureFixture[str]) -> None:
    findings_of(BROKEN / "python_tag.yaml")
    assert "this must never run" not in capfd.readouterr().out


def test_all_errors_of_a_file_are_listed() -> None:
    path = BROKEN / "several_errors.yaml"
    findings = findings_of(path)
    located = [(f.code, f.line, f.doc_path) for f in findings]
    assert located == [
        ("invalid-smarts", where(path, '"[CX4)"')[0], ("classes", 1, "smarts", 0)),
        ("schema", where(path, "short")[0], ("bonds", 0, "r0")),
        ("duplicate-entry", where(path, "classes: [o2, c4]")[0], ("bonds", 2)),
        ("unknown-class", where(path, "o9")[0], ("angles", 0, "classes", 2)),
    ]
    with pytest.raises(ParameterSetError) as raised:
        load_parameter_set(path)
    text = str(raised.value)
    assert "4 errors" in text
    assert all(f.format() in text for f in findings)


def test_missing_file() -> None:
    missing = DATA / "no-such-dir" / "absent.yaml"
    with pytest.raises(ParameterSetError, match="absent.yaml"):
        load_parameter_set(missing)
    (finding,) = list(iter_load_findings(missing))
    assert finding.code == "missing-file" and finding.path == str(missing)


def test_directory_is_unreadable(tmp_path: Path) -> None:
    with pytest.raises(ParameterSetError) as raised:
        load_parameter_set(tmp_path)
    assert [f.code for f in raised.value.findings] == ["unreadable-file"]
    assert str(tmp_path) in str(raised.value)


def test_file_too_large(tmp_path: Path) -> None:
    big = tmp_path / "big.yaml"
    with open(big, "wb") as handle:  # sparse file: no 16 MiB written to disk
        handle.truncate(16 * 1024 * 1024 + 1)
    (finding,) = findings_of(big)
    assert finding.code == "file-too-large" and finding.path == str(big)


def test_not_utf8(tmp_path: Path) -> None:
    bad = tmp_path / "latin1.yaml"
    bad.write_bytes(MINIMAL.read_bytes().replace(b"any carbon", b"any carb\xf3n"))
    (finding,) = findings_of(bad)
    assert finding.code == "yaml-syntax" and "UTF-8" in finding.message
    assert (finding.line, finding.column) == where(MINIMAL, "any carbon", offset=len("any carb"))


def test_unquoted_no_hint() -> None:
    doc = parse_yaml(b"a: No\nb: 2001-02-03\n", "x.yaml")
    assert doc.data == {"a": False, "b": "2001-02-03"}  # YAML 1.1 boolean; dates stay text
    assert doc.marks[("a",)] == (1, 4) and doc.marks[()] == (1, 1)


# -- the valid minimal set ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def minimal() -> ParameterSet:
    return load_parameter_set(MINIMAL)


def entry(ps: ParameterSet, kind: str, *classes: str, order: str | None = None) -> Entry:
    return ps.entries(kind)[(tuple(classes), order, None)]


def test_minimal_is_clean() -> None:
    assert findings_of(MINIMAL) == []


def test_header_and_classes(minimal: ParameterSet) -> None:
    h = minimal.header
    assert (h.name, h.version, h.demonstration) == ("minimal", "0.1", True)
    assert dict(h.units) == {"length": "nanometer", "angle": "radian", "energy": "kJ/mol"}
    assert h.conventions["bond"] == "full" and h.conventions["dihedral"] == "half"
    assert dict(h.scale_14) == {"vdw": 0.5, "electrostatic": 0.8333}
    assert [c.id for c in minimal.classes] == ["h_c", "h_o", "c3", "c4", "c", "o2", "o1"]
    c4 = minimal.class_index["c4"]
    assert (c4.element, c4.smarts, c4.parent, c4.equivalent) == ("C", ("[CX4]",), "c", ("c3",))
    assert minimal.parent_chain("c4") == ("c",)
    o1 = minimal.class_index["o1"]
    assert o1.location is not None and o1.location.line == where(MINIMAL, "id: o1")[0]
    assert [loc.column for loc in o1.smarts_locations if loc] == [
        where(MINIMAL, '"[OX1]=[#6]"')[1],
        where(MINIMAL, '"[OX1]"]')[1],
    ]
    assert set(minimal.sources) == {"crc-lengths", "test-values"}
    assert set(minimal.tables) == set(KINDS)


def test_bond_values_converted_by_hand(minimal: ParameterSet) -> None:
    ch = entry(minimal, "bond", "c4", "h_c")
    # full convention (E = k dr^2) -> curvature 2k; kJ/mol/nm^2 -> kcal/mol/A^2 divides by 418.4
    assert ch.values["k"] == pytest.approx(2 * 138500.0 / KJ_NM2_PER_KCAL_A2, rel=1e-12)
    assert ch.values["k"] == pytest.approx(662.05, abs=0.01)  # close to RDKit's UFF C-H kb 662.14
    assert ch.values["r0"] == pytest.approx(0.109 * A_PER_NM, rel=1e-12)
    assert ch.source == "crc-lengths"
    assert ch.location.path == str(MINIMAL)
    assert (ch.location.line, ch.location.column) == where(MINIMAL, "classes: [c4, h_c]")
    assert ch.doc_path == ("bonds", 0)
    double = entry(minimal, "bond", "c3", "o1", order="double")
    assert double.values["k"] == pytest.approx(2 * 250000.0 / KJ_NM2_PER_KCAL_A2, rel=1e-12)
    morse = entry(minimal, "bond", "h_o", "o2")
    assert morse.form == "morse"
    assert morse.values["depth"] == pytest.approx(400.0 / KJ_PER_KCAL, rel=1e-12)
    assert morse.values["width"] == pytest.approx(22.0 / A_PER_NM, rel=1e-12)  # 1/nm -> 1/A
    # curvature of a Morse well at its minimum: 2 D a^2 (no convention applies)
    assert morse.values["k"] == pytest.approx(2 * (400.0 / KJ_PER_KCAL) * 2.2**2, rel=1e-12)
    poly = entry(minimal, "bond", "c3", "c4")
    assert poly.values["c2"] == pytest.approx(130000.0 / KJ_NM2_PER_KCAL_A2, rel=1e-12)
    # energy/length^3: kJ -> kcal divides by 4.184, nm^-3 -> A^-3 divides by 10^3
    assert poly.values["c3"] == pytest.approx(-260000.0 / KJ_PER_KCAL / 1000.0, rel=1e-12)
    assert poly.values["c4"] == 0.0 and poly.values["k"] == pytest.approx(2 * poly.values["c2"])
    assert poly.estimated is True and poly.note == "polynomial form for the tests"


def test_angle_dihedral_oop_values_converted_by_hand(minimal: ParameterSet) -> None:
    a = entry(minimal, "angle", "h_c", "c4", "o2")
    # angle constants are per rad^2 whatever the angle unit: only the energy and the convention change
    assert a.values["k"] == pytest.approx(2 * 300.0 / KJ_PER_KCAL, rel=1e-12)
    assert a.values["theta0"] == pytest.approx(1.9106 * DEG_PER_RAD, rel=1e-12)
    assert a.values["theta0"] == pytest.approx(109.47, abs=0.01)
    linear = entry(minimal, "angle", "c4", "c3", "o1")
    assert linear.values == {"k": pytest.approx(50.0 / KJ_PER_KCAL), "theta0": 180.0}
    wild = entry(minimal, "dihedral", "*", "c4", "o2", "*")
    (term,) = wild.fourier
    # half convention E = k/2 (1 + cos): the internal constant is k/2
    assert (term.periodicity, term.phase) == (3, 0.0)
    assert term.k == pytest.approx(1.2 / 2 / KJ_PER_KCAL, rel=1e-12)
    assert wild.wildcards == 2
    reversed_ = entry(minimal, "dihedral", "h_c", "c4", "c3", "o1")  # written [o1, c3, c4, h_c]
    assert [(t.periodicity, t.phase) for t in reversed_.fourier] == [
        (2, pytest.approx(180.0)),
        (3, 0.0),
    ]
    assert reversed_.fourier[1].k == pytest.approx(-0.4 / 2 / KJ_PER_KCAL, rel=1e-12)
    oop = entry(minimal, "out_of_plane", "c3", "c4", "h_c", "o1")  # written [c3, o1, c4, h_c]
    assert oop.values["k"] == pytest.approx(2 * 60.0 / KJ_PER_KCAL, rel=1e-12)
    assert oop.values["chi0"] == 0.0
    assert entry(minimal, "out_of_plane", "c3", "*", "*", "*").values["k"] == pytest.approx(
        2 * 50.0 / KJ_PER_KCAL
    )


def test_nonbonded_and_reversal_rules(minimal: ParameterSet) -> None:
    lj = entry(minimal, "nonbonded", "c4")
    assert lj.values["rmin_half"] == pytest.approx(0.1908 * A_PER_NM, rel=1e-12)
    assert lj.values["epsilon"] == pytest.approx(0.4577 / KJ_PER_KCAL, rel=1e-12)
    assert len(minimal.entries("nonbonded")) == 6
    # written [o2, c4] with +0.28 moved o2 -> c4; canonical (c4, o2) moves -0.28 from c4 to o2
    increment = entry(minimal, "charge_increment", "c4", "o2")
    assert increment.values["increment"] == pytest.approx(-0.28)
    # written [o2, c4, h_c] k_ab 10 (o2-c4), k_cb 12 (h_c-c4): reversed, so the two swap
    sb = entry(minimal, "stretch_bend", "h_c", "c4", "o2")
    factor = 1 / KJ_PER_KCAL / A_PER_NM  # kJ/mol/nm/rad -> kcal/mol/A/rad
    assert sb.values["k_ab"] == pytest.approx(12.0 * factor, rel=1e-12)
    assert sb.values["k_cb"] == pytest.approx(10.0 * factor, rel=1e-12)


def test_loaded_set_pickles(minimal: ParameterSet) -> None:
    import pickle

    again = pickle.loads(pickle.dumps(minimal))
    assert again.entries("bond") == minimal.entries("bond")


# -- layering, embedded sets, hashing ----------------------------------------------------------------


def test_overlay_alone_reports_what_it_borrows() -> None:
    alone = findings_of(OVERLAY)
    assert sorted({f.code for f in alone}) == ["unknown-class", "unknown-parent"]
    assert {f.doc_path for f in alone} == {
        ("classes", 0, "parent"),  # c4 comes from the base
        ("classes", 0, "before"),
        ("bonds", 0, "classes", 0),  # h_c
        ("bonds", 0, "classes", 1),  # c4
    }
    assert list(iter_load_findings(MINIMAL, OVERLAY)) == []  # layered, everything is defined


def test_layering_overrides_and_extends() -> None:
    ps = load_parameter_set(MINIMAL, OVERLAY)
    assert ps.paths == (str(MINIMAL), str(OVERLAY))
    assert ps.header.name == "minimal"  # the header is the first set's
    # o2 replaced in place, c4f inserted before c4 (before:), f appended
    assert [c.id for c in ps.classes] == ["h_c", "h_o", "c3", "c4f", "c4", "c", "o2", "o1", "f"]
    assert ps.class_index["o2"].smarts == ("[OX2H1]", "[OX2]")
    assert ps.class_index["o2"].location is not None
    assert ps.class_index["o2"].location.path == str(OVERLAY)
    # the overridden bond comes from the overlay, converted with the overlay's own (half) convention
    ch = entry(ps, "bond", "c4", "h_c")
    assert ch.location.path == str(OVERLAY)
    assert ch.location.line == where(OVERLAY, "classes: [h_c, c4]")[0]
    assert ch.values["k"] == pytest.approx(280000.0 / KJ_NM2_PER_KCAL_A2, rel=1e-12)
    assert ch.source == "overlay-values"
    # untouched entries keep the base file as provenance; the new one is appended
    assert entry(ps, "bond", "c4", "o2").location.path == str(MINIMAL)
    assert list(ps.entries("bond"))[-1] == (("c4f", "f"), None, None)
    assert entry(ps, "bond", "c4f", "f").location.path == str(OVERLAY)
    assert len(ps.entries("bond")) == 6
    assert set(ps.sources) == {"crc-lengths", "test-values", "overlay-values"}


def test_layer_may_not_change_units(tmp_path: Path) -> None:
    other = tmp_path / "angstrom.yaml"
    other.write_text(
        OVERLAY.read_text(encoding="utf-8").replace(
            "{length: nanometer, angle: radian, energy: kJ/mol}",
            "{length: angstrom, angle: radian, energy: kJ/mol}",
        ),
        encoding="utf-8",
    )
    with pytest.raises(ParameterSetError) as raised:
        load_parameter_set(MINIMAL, other)
    (finding,) = raised.value.findings
    assert finding.code == "units-mismatch" and finding.path == str(other)
    assert finding.doc_path == ("header", "units")
    assert finding.line == where(other, "units:")[0]


def test_content_hash(tmp_path: Path) -> None:
    ps = load_parameter_set(MINIMAL)
    assert ps.content_hash == hashlib.sha256(MINIMAL.read_bytes()).hexdigest()
    layered = load_parameter_set(MINIMAL, OVERLAY)
    both = MINIMAL.read_bytes() + OVERLAY.read_bytes()
    assert layered.content_hash == hashlib.sha256(both).hexdigest()
    copy = tmp_path / "copy.yaml"
    shutil.copy(MINIMAL, copy)
    assert load_parameter_set(copy).content_hash == ps.content_hash
    raw = copy.read_bytes()
    copy.write_bytes(raw.replace(b"any carbon", b"any carbom"))  # one byte, still valid
    changed = load_parameter_set(copy)
    assert changed.content_hash != ps.content_hash
    assert changed.class_index["c"].description == "any carbom"


def test_embedded_name_resolution(monkeypatch: pytest.MonkeyPatch) -> None:
    # point the embedded-set folder at tests/data/sets so that "minimal" is an embedded name
    monkeypatch.setattr(load_module, "_DATA_DIR", SETS)
    assert "minimal" in embedded_set_names()
    assert embedded_set_path("minimal") == SETS / "minimal.yaml"
    ps = load_parameter_set("minimal")
    assert ps.paths == ("embedded:minimal",)
    assert entry(ps, "bond", "c4", "h_c").location.path == "embedded:minimal"
    with pytest.raises(ParameterSetError, match="no embedded parameter set named 'nope'"):
        embedded_set_path("nope")
    with pytest.raises(ParameterSetError, match="'nope' not found"):
        load_parameter_set("nope")


def test_default_embedded_set() -> None:
    if DEFAULT_SET not in embedded_set_names():
        pytest.skip(f"the embedded default set {DEFAULT_SET}.yaml is not written yet")
    ps = load_parameter_set()
    assert ps.header.name == DEFAULT_SET
    assert ps.paths == (f"embedded:{DEFAULT_SET}",)
    assert load_parameter_set(DEFAULT_SET).content_hash == ps.content_hash
    assert ps.classes and any(ps.entries(kind) for kind in KINDS)


# -- writing -----------------------------------------------------------------------------------------


def assert_same_set(a: ParameterSet, b: ParameterSet) -> None:
    """Equal classes, sources and entries, values within 1e-9 relative; locations not compared."""
    assert [(c.id, c.element, c.smarts, c.parent, c.equivalent) for c in a.classes] == [
        (c.id, c.element, c.smarts, c.parent, c.equivalent) for c in b.classes
    ]
    assert {k: s.citation for k, s in a.sources.items()} == {
        k: s.citation for k, s in b.sources.items()
    }
    for kind in KINDS:
        assert list(a.entries(kind)) == list(b.entries(kind)), kind
        for key, x in a.entries(kind).items():
            y = b.entries(kind)[key]
            assert (x.form, x.source, x.estimated, x.note) == (
                y.form,
                y.source,
                y.estimated,
                y.note,
            )
            assert x.values.keys() == y.values.keys()
            for name, value in x.values.items():
                assert y.values[name] == pytest.approx(value, rel=1e-9, abs=1e-12), (key, name)
            assert len(x.fourier) == len(y.fourier)
            for s, t in zip(x.fourier, y.fourier, strict=True):
                assert s.periodicity == t.periodicity
                assert t.phase == pytest.approx(s.phase, rel=1e-9, abs=1e-12)
                assert t.k == pytest.approx(s.k, rel=1e-9, abs=1e-12)


@pytest.mark.parametrize(
    ("units", "conventions"),
    [
        (None, None),
        (
            {"length": "angstrom", "angle": "degree", "energy": "kcal/mol"},
            {"bond": "half", "angle": "half", "out_of_plane": "half", "dihedral": "full"},
        ),
        (
            {"length": "nanometer", "angle": "degree", "energy": "kcal/mol"},
            {"bond": "full", "angle": "half", "out_of_plane": "full", "dihedral": "half"},
        ),
    ],
    ids=["own-units", "internal", "mixed"],
)
def test_round_trip(
    minimal: ParameterSet,
    tmp_path: Path,
    units: dict[str, str] | None,
    conventions: dict[str, str] | None,
) -> None:
    from dataclasses import replace

    header = minimal.header
    if units is not None and conventions is not None:
        header = replace(header, units=units, conventions=conventions)
    out = tmp_path / "dumped.yaml"
    out.write_text(dump_parameter_set(minimal, header), encoding="utf-8")
    assert findings_of(out) == []
    again = load_parameter_set(out)
    assert dict(again.header.units) == dict(header.units)
    assert_same_set(minimal, again)


def test_fragment_with_estimates_and_comments(minimal: ParameterSet, tmp_path: Path) -> None:
    from dataclasses import replace

    base = entry(minimal, "bond", "c4", "o2")
    estimated = replace(base, estimated=True, source=None, note="from covalent radii")
    angle = entry(minimal, "angle", "h_c", "c4", "o2")
    comments = {
        ("bond", estimated.key): "estimated: r0 from radii\nreview before use",
        ("angle", angle.key): "kept as is",
    }
    text = dump_set_document(
        minimal.header, {}, minimal.classes, [estimated, angle], comments=comments
    )
    lines = text.splitlines()
    at = lines.index("  - classes: [c4, o2]")
    assert lines[at - 2 : at] == ["  # estimated: r0 from radii", "  # review before use"]
    assert lines[lines.index("  - classes: [h_c, c4, o2]") - 1] == "  # kept as is"
    out = tmp_path / "fragment.yaml"
    out.write_text(text, encoding="utf-8")
    fragment = load_parameter_set(out)
    loaded = entry(fragment, "bond", "c4", "o2")
    assert loaded.estimated is True and loaded.note == "from covalent radii"
    assert loaded.values["k"] == pytest.approx(base.values["k"], rel=1e-9)
    assert loaded.location.line == at + 1


def test_writer_adds_missing_conventions(minimal: ParameterSet, tmp_path: Path) -> None:
    from dataclasses import replace

    header = replace(minimal.header, conventions={})
    out = tmp_path / "defaults.yaml"
    out.write_text(dump_parameter_set(minimal, header), encoding="utf-8")
    again = load_parameter_set(out)
    assert again.header.conventions == {
        "bond": "half",
        "angle": "half",
        "out_of_plane": "half",
        "dihedral": "full",
    }
    assert_same_set(minimal, again)


@pytest.mark.parametrize("value", [1e-05, 1e16, -2.5e-12, 0.109, 3.0, "No", "*", "kJ/mol", "a: b"])
def test_scalars_read_back(value: object) -> None:
    doc = parse_yaml(f"v: {scalar(value)}\n".encode(), "x.yaml")
    assert doc.findings == () and doc.data == {"v": value}


# -- SMARTS element reading, checked against RDKit's own matching ------------------------------------


@pytest.mark.parametrize(
    ("smarts", "expected"),
    [
        ("[CX4]", {6}),
        ("c", {6}),
        ("[#6X3]", {6}),
        ("[C,N]", {6, 7}),
        ("[c,n;r6]", {6, 7}),
        ("[Cl]", {17}),
        ("[2H]", {1}),
        ("[!#1]", None),
        ("*", None),
        ("[$(C=O)]", None),
        ("[C,$(N)]", None),
    ],
)
def test_first_atom_elements(smarts: str, expected: set[int] | None) -> None:
    mol, reason = parse_smarts(smarts)
    assert mol is not None, reason
    found = first_atom_elements(mol)
    assert (None if found is None else set(found)) == expected
    if found is None:
        return
    # RDKit's matching agrees: every atom that the pattern's first atom matches has an allowed element
    for smiles in ("CCO", "c1ccncc1", "ClCC(=O)N", "[2H]C([2H])Cl", "C=CC#N"):
        target = Chem.AddHs(Chem.MolFromSmiles(smiles))
        for match in target.GetSubstructMatches(mol):
            assert target.GetAtomWithIdx(match[0]).GetAtomicNum() in found


def test_parameter_set_schema_is_valid_2020_12() -> None:
    """The loader does not check its schema at run time, so this test does (JSON Schema 2020-12 metaschema,
    as shipped with jsonschema)."""
    from jsonschema import Draft202012Validator

    from ffaudit.paramset.schema import load_schema

    schema = load_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    Draft202012Validator.check_schema(schema)  # raises SchemaError if not
