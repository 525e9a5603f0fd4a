"""``ffaudit compare``: the edited sample set on the sample library, exit codes, --allow, --tolerance, git.

The expected regressions are worked out here from the edit itself (the two YAML files read with plain
``yaml.safe_load`` and the sample library audited with each set), not from ffaudit's compare code.
"""

from __future__ import annotations

import io
import json
import math
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
import yaml
from jsonschema import Draft202012Validator

from ffaudit.audit import AuditContext
from ffaudit.cli.main import run as cli_run
from ffaudit.compare import AllowRule, compare_sets, parse_allow, relative_change
from ffaudit.errors import UsageError
from ffaudit.paramset.git_source import load_set_spec
from ffaudit.paramset.load import load_parameter_set
from ffaudit.read.open import iter_records
from ffaudit.report.schemas import load_schema

ROOT = Path(__file__).resolve().parent.parent
DEFAULT = ROOT / "src" / "ffaudit" / "paramset" / "data" / "generic-organic.yaml"
EDITED = ROOT / "sample_sets" / "generic-organic-edited.yaml"
LIBRARY = ROOT / "sample_sets" / "formulation-lab.smi"
REFERENCE = ROOT.parent / "shared" / "reference"

# CODATA 2022 (NIST, physics.nist.gov/cuu/Constants): c and N_A exact, m_u recommended value;
# thermochemical calorie 4.184 J by definition. Mass of carbon-12 is 12 u exactly (definition of u).
C_LIGHT = 299_792_458.0
N_A = 6.022_140_76e23
M_U = 1.660_539_068_92e-27
KCAL = 4184.0
MASS_C12 = 12.0


def _nu(k_kcal_mol_a2: float, m1: float, m2: float) -> float:
    """nu = 1/(2 pi c) sqrt(k/mu) in cm-1 (published harmonic-oscillator formula), written out here."""
    k_si = k_kcal_mol_a2 * KCAL / N_A / 1e-20
    mu = m1 * m2 / (m1 + m2) * M_U
    return math.sqrt(k_si / mu) / (2 * math.pi * C_LIGHT * 100)


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli_run(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def _key(kind: str, raw: dict[str, Any]) -> tuple[Any, ...]:
    classes = tuple(raw["classes"])
    if kind == "bonds":
        classes = tuple(sorted(classes))
    elif kind == "dihedrals":
        classes = min(classes, classes[::-1])
    return (classes, raw.get("order"), raw.get("ring"))


def _tables(path: Path) -> dict[str, dict[tuple[Any, ...], dict[str, Any]]]:
    doc = yaml.safe_load(path.read_text(encoding="utf-8"))
    return {
        kind: {_key(kind, raw): raw for raw in doc[kind]}
        for kind in ("bonds", "angles", "dihedrals")
    }


@pytest.fixture(scope="module")
def edit() -> dict[str, Any]:
    """The three edits, read from the two files with plain YAML."""
    old, new = _tables(DEFAULT), _tables(EDITED)
    removed = [(t, k) for t in old for k in old[t] if k not in new[t]]
    added = [(t, k) for t in new for k in new[t] if k not in old[t]]
    changed = [(t, k) for t in old for k in old[t] if k in new[t] and old[t][k] != new[t][k]]
    assert len(removed) == len(added) == len(changed) == 1, (removed, added, changed)
    return {
        "removed": removed[0],
        "added": added[0],
        "changed": changed[0],
        "old": old,
        "new": new,
    }


@pytest.fixture(scope="module")
def audits() -> tuple[list[Any], list[Any]]:
    old = AuditContext(load_parameter_set(str(DEFAULT)))
    new = AuditContext(load_parameter_set(str(EDITED)))
    records = list(iter_records(str(LIBRARY)))
    return [old.audit_record(r) for r in records], [new.audit_record(r) for r in records]


@pytest.fixture(scope="module")
def comparison() -> Any:
    return compare_sets(
        load_parameter_set(), load_parameter_set(str(EDITED)), iter_records(str(LIBRARY))
    )


def test_edited_set_is_the_scripts_output() -> None:
    script = ROOT / "sample_sets" / "make_edited_set.py"
    done = subprocess.run(
        [sys.executable, str(script), "--check"], capture_output=True, text=True, check=False
    )
    assert done.returncode == 0, done.stderr
    text = EDITED.read_text(encoding="utf-8")
    assert text.count("# EDIT ") == 3
    assert 'version: "0.1.0"' in DEFAULT.read_text(encoding="utf-8")
    assert 'version: "0.1.0"' not in text


def test_the_edits_touch_the_sample_library(edit: dict[str, Any]) -> None:
    assert edit["removed"][0] == "bonds"
    assert edit["changed"][0] == "bonds"
    assert edit["added"][0] == "dihedrals"
    assert "*" in edit["added"][1][0]


def test_lost_coverage_is_exactly_the_terms_of_the_removed_entry(
    edit: dict[str, Any], comparison: Any, audits: tuple[list[Any], list[Any]]
) -> None:
    removed_classes, order, _ring = edit["removed"][1]
    expected = {
        (a.record.name, r.term.atoms)
        for a in audits[0]
        for r in a.resolutions
        if r.tier == "exact"
        and r.term.kind == "bond"
        and r.entry.classes == removed_classes
        and r.entry.bond_order == order
    }
    assert expected  # the sample library uses the removed entry
    lost = {(f.molecule, f.atoms) for f in comparison.findings if f.code == "coverage-lost"}
    assert lost == expected
    # every one of them is located at the removed entry's line in OLD
    old_line = next(
        i
        for i, line in enumerate(DEFAULT.read_text().splitlines(), 1)
        if line.strip() == f'- classes: ["{removed_classes[0]}", "{removed_classes[1]}"]'
    )
    for f in comparison.findings:
        if f.code in ("coverage-lost", "entry-removed"):
            assert (f.path, f.line) == ("embedded:generic-organic", old_line)
    # molecules that were covered and held such a term lose their status
    covered_before = {a.record.name for a in audits[0] if a.status == "covered"}
    expected_molecules = {name for name, _ in expected} & covered_before
    assert expected_molecules == {"dichloromethane"}
    lost_molecules = {f.molecule for f in comparison.findings if f.code == "status-lost"}
    assert lost_molecules == expected_molecules


def test_changed_entry_relative_change_and_wavenumber_shift(
    edit: dict[str, Any], comparison: Any
) -> None:
    kind, key = edit["changed"]
    k_old = float(
        edit["old"][kind][key]["k"]
    )  # header convention: bond half, so k is the curvature
    k_new = float(edit["new"][kind][key]["k"])
    assert k_new / k_old == pytest.approx(1.2)
    (change,) = [e for e in comparison.entries if e.change == "changed"]
    assert change.key[0] == key[0]
    (value,) = change.values
    assert value.name == "k"
    assert value.relative == pytest.approx((k_new - k_old) / k_old, rel=1e-12)
    # both classes of [c4, c4] are carbon: reduced mass from 12C (most common isotope)
    nu_old, nu_new = _nu(k_old, MASS_C12, MASS_C12), _nu(k_new, MASS_C12, MASS_C12)
    assert change.wavenumber is not None
    assert change.wavenumber.before == pytest.approx(nu_old, rel=1e-9)
    assert change.wavenumber.after == pytest.approx(nu_new, rel=1e-9)
    assert change.wavenumber.shift == pytest.approx(nu_new - nu_old, rel=1e-9)
    assert nu_new / nu_old == pytest.approx(math.sqrt(1.2), rel=1e-12)
    # located at the changed entry's k line's entry in NEW
    (finding,) = [f for f in comparison.findings if f.code == "entry-changed"]
    assert finding.path == str(EDITED) or finding.path.endswith("generic-organic-edited.yaml")
    lines = EDITED.read_text().splitlines()
    assert lines[finding.line - 1].strip() == '- classes: ["c4", "c4"]'


def test_wildcard_gains_coverage_for_the_terms_it_matches(
    edit: dict[str, Any], comparison: Any, audits: tuple[list[Any], list[Any]]
) -> None:
    classes, order, _ring = edit["added"][1]
    old_by_mol = {a.record.name: {r.term.atoms: r.tier for r in a.resolutions} for a in audits[0]}
    expected = set()
    for a in audits[1]:
        for r in a.resolutions:
            if r.tier == "wildcard" and r.entry.classes == classes and r.entry.bond_order == order:
                assert old_by_mol[a.record.name][r.term.atoms] in ("analogy", "estimate")
                expected.add((a.record.name, r.term.atoms))
    assert len(expected) == 20  # measured: 8 diethyl phthalate, 8 benzophenone, 4 sodium benzoate
    gained = {(f.molecule, f.atoms) for f in comparison.findings if f.code == "coverage-gained"}
    assert gained == expected
    assert {f.molecule for f in comparison.findings if f.code == "status-gained"} == {
        "benzophenone"
    }


def test_exactly_the_expected_regressions(comparison: Any) -> None:
    codes = sorted(f.code for f in comparison.regressions)
    assert codes == [
        "coverage-lost",
        "coverage-lost",
        "entry-changed",
        "entry-removed",
        "status-lost",
    ]
    assert {e.change for e in comparison.entries} == {"removed", "added", "changed"}
    assert len(comparison.entries) == 3


def test_score_distribution_before_and_after(
    comparison: Any, audits: tuple[list[Any], list[Any]]
) -> None:
    for dist, side in ((comparison.scores_before, audits[0]), (comparison.scores_after, audits[1])):
        scores = sorted(a.score for a in side if a.score is not None)
        assert dist.count == len(scores) == sum(n for _, _, n in dist.histogram)
        assert dist.min == scores[0]
        mid = len(scores) // 2
        median = scores[mid] if len(scores) % 2 else (scores[mid - 1] + scores[mid]) / 2
        assert dist.median == pytest.approx(median, abs=1e-6)


def test_same_set_has_no_findings_and_exit_0() -> None:
    c = compare_sets(load_parameter_set(), load_parameter_set(), iter_records(str(LIBRARY)))
    assert c.findings == () and c.entries == ()
    code, out, _err = _run("compare", "generic-organic", str(DEFAULT), "--reference", str(LIBRARY))
    assert code == 0
    assert "Regressions: none" in out


def test_exit_codes_allow_and_tolerance(tmp_path: Path) -> None:
    args = ["compare", "generic-organic", str(EDITED), "--reference", str(LIBRARY)]
    assert _run(*args)[0] == 1
    # removal allowed: the lost terms and the lost molecule caused by it are allowed with it
    code, out, _ = _run(*args, "--allow", "removed:bond:c4-cl", "--format", "json")
    data = json.loads(out)
    assert code == 1
    assert [f["code"] for f in data["findings"] if f["severity"] == "error"] == ["entry-changed"]
    assert data["summary"]["allowed"] == 4
    assert _run(*args, "--allow", "removed:bond:c4-cl", "--allow", "changed:*")[0] == 0
    assert _run(*args, "--allow", "removed:bond:c4-cl@single", "--tolerance", "0.25")[0] == 0
    assert _run(*args, "--allow", "removed:bond:c4-cl", "--tolerance", "0.19")[0] == 1
    # a lost-molecule rule alone leaves the removed entry and its terms as regressions
    code, out, _ = _run(
        *args, "--allow", "lost:dichloromethane", "--allow", "changed:*", "--format", "json"
    )
    assert code == 1
    errors = [f["code"] for f in json.loads(out)["findings"] if f["severity"] == "error"]
    assert errors == ["entry-removed"]
    # usage errors and unreadable sets
    assert _run(*args, "--allow", "bogus")[0] == 2
    assert _run(*args, "--allow", "lost:")[0] == 2
    assert _run(*args, "--tolerance", "-1")[0] == 2
    code, _, err = _run(
        "compare", str(tmp_path / "nope.yaml"), str(EDITED), "--reference", str(LIBRARY)
    )
    assert code == 2 and "nope.yaml" in err
    code, _, err = _run("compare", str(EDITED), str(EDITED), "--reference", str(tmp_path / "x.smi"))
    assert code == 2 and "x.smi" in err


def test_allow_grammar() -> None:
    assert parse_allow("removed:bond:c4-h_c") == AllowRule("removed", "bond:c4-h_c")
    assert parse_allow("*:*").matches("lost", ["anything"])
    assert not parse_allow("changed:bond:*").matches("removed", ["bond:c4-c4"])
    with pytest.raises(UsageError, match="CATEGORY:PATTERN"):
        parse_allow("gone:bond:c4-cl")
    assert relative_change(0.0, 0.0) == 0.0
    assert relative_change(0.0, 1.0) is None
    assert relative_change(-2.0, -1.0) == pytest.approx(0.5)


def test_json_output_validates_and_is_deterministic(tmp_path: Path) -> None:
    args = [
        "compare",
        "generic-organic",
        str(EDITED),
        "--reference",
        str(LIBRARY),
        "--format",
        "json",
    ]
    first = tmp_path / "a.json"
    assert _run(*args, "-o", str(first))[0] == 1
    second = _run(*args)[1]
    assert first.read_text(encoding="utf-8") == second
    schema = load_schema("compare-report.schema.json")
    Draft202012Validator.check_schema(schema)
    errors = list(Draft202012Validator(schema).iter_errors(json.loads(second)))
    assert errors == []
    data = json.loads(second)
    assert data["summary"]["regressions"] == 5
    (bond,) = [e for e in data["entries"] if e["change"] == "changed"]
    assert bond["wavenumber"]["shift"] == pytest.approx(
        _nu(839.52, 12, 12) - _nu(699.6, 12, 12), rel=1e-5
    )


def _git(repo: Path, *argv: str) -> None:
    subprocess.run(
        ["git", "-c", "user.name=ffaudit test", "-c", "user.email=test@example.invalid", *argv],
        cwd=repo,
        check=True,
        capture_output=True,
    )


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_git_revision_as_old(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    repo = tmp_path / "repo"
    repo.mkdir()
    _git(repo, "init", "-q")
    (repo / "set.yaml").write_bytes(DEFAULT.read_bytes())
    _git(repo, "add", "set.yaml")
    _git(repo, "commit", "-q", "-m", "default set")
    (repo / "set.yaml").write_bytes(EDITED.read_bytes())
    _git(repo, "commit", "-q", "-a", "-m", "edited set")
    monkeypatch.chdir(repo)
    code, out, _ = _run(
        "compare",
        "git:HEAD~1:set.yaml",
        "set.yaml",
        "--reference",
        str(LIBRARY),
        "--format",
        "json",
    )
    assert code == 1
    data = json.loads(out)
    assert data["old"]["paths"] == ["git:HEAD~1:set.yaml"]
    (removed,) = [f for f in data["findings"] if f["code"] == "entry-removed"]
    assert removed["path"] == "git:HEAD~1:set.yaml"
    assert (
        DEFAULT.read_text().splitlines()[removed["line"] - 1].strip() == '- classes: ["c4", "cl"]'
    )
    # the same file at both revisions: nothing changed
    assert _run("compare", "git:HEAD:set.yaml", "set.yaml", "--reference", str(LIBRARY))[0] == 0
    # --repo from elsewhere
    monkeypatch.chdir(tmp_path)
    pset = load_set_spec("git:HEAD~1:set.yaml", repo=repo)
    assert pset.header.version == "0.1.0"
    # missing revision, missing path, not a repository: exit 2 naming the spec
    monkeypatch.chdir(repo)
    code, _, err = _run("compare", "git:HEAD~9:set.yaml", "set.yaml", "--reference", str(LIBRARY))
    assert code == 2 and "git:HEAD~9:set.yaml" in err
    code, _, err = _run("compare", "git:HEAD:nope.yaml", "set.yaml", "--reference", str(LIBRARY))
    assert code == 2 and "git:HEAD:nope.yaml" in err
    plain = tmp_path / "plain"
    plain.mkdir()
    monkeypatch.chdir(plain)
    code, _, err = _run(
        "compare",
        "git:HEAD:set.yaml",
        str(EDITED),
        "--reference",
        str(LIBRARY),
        "--repo",
        str(plain),
    )
    assert code == 2 and "git:HEAD:set.yaml" in err


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_git_set_with_errors_names_the_spec(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    repo = tmp_path / "repo"
    repo.mkdir()
    _git(repo, "init", "-q")
    (repo / "bad.yaml").write_text(
        "format: ffaudit-parameter-set/1\nheader: {}\n", encoding="utf-8"
    )
    _git(repo, "add", "bad.yaml")
    _git(repo, "commit", "-q", "-m", "bad set")
    monkeypatch.chdir(repo)
    code, _, err = _run("compare", "git:HEAD:bad.yaml", str(EDITED), "--reference", str(LIBRARY))
    assert code == 2
    assert "git:HEAD:bad.yaml:2" in err
    assert "ffaudit-git-" not in err


def test_class_rule_change_is_reported_per_atom(tmp_path: Path) -> None:
    layer = tmp_path / "layer.yaml"
    layer.write_text(
        "format: ffaudit-parameter-set/1\n"
        "header:\n"
        "  name: chloro-layer\n"
        '  version: "1"\n'
        "  units: {length: angstrom, angle: degree, energy: kcal/mol}\n"
        "classes:\n"
        "  - id: c4cl\n"
        "    element: C\n"
        '    smarts: ["[CX4][Cl]"]\n'
        "    before: c4\n",
        encoding="utf-8",
    )
    old = load_parameter_set()
    new = load_parameter_set("generic-organic", str(layer))
    records = [r for r in iter_records(str(LIBRARY)) if r.name == "dichloromethane"]
    c = compare_sets(old, new, records)
    (m,) = c.molecules
    # dichloromethane ClCCl: RDKit atom 1 is the carbon (input order kept by AddHs)
    assert [(x.atom, x.before, x.after) for x in m.classes] == [(1, "c4", "c4cl")]
    changed = [f for f in c.findings if f.code == "class-changed"]
    assert [(f.path, f.line) for f in changed] == [(str(layer), 9)]  # the SMARTS line of c4cl
    lost = [t for t in m.terms if t.direction == "lost"]
    assert lost and all(t.cause == "class:1:c4->c4cl" for t in lost)
    assert all(1 in t.atoms for t in m.terms)
    assert m.direction == "lost"


def test_params_base_is_layered_under_both(tmp_path: Path) -> None:
    head = (
        "format: ffaudit-parameter-set/1\n"
        "header:\n"
        "  name: layer\n"
        '  version: "1"\n'
        "  units: {length: angstrom, angle: degree, energy: kcal/mol}\n"
        "  conventions: {bond: half}\n"
    )
    old, new = tmp_path / "old.yaml", tmp_path / "new.yaml"
    old.write_text(head, encoding="utf-8")
    new.write_text(
        head + 'bonds:\n  - classes: ["c4", "c4"]\n    order: single\n    k: 720.0\n    r0: 1.52\n',
        encoding="utf-8",
    )
    args = ["compare", str(old), str(new), "--reference", str(LIBRARY), "--format", "json"]
    code, out, _ = _run(*args, "--params-base", "generic-organic")
    assert code == 1
    data = json.loads(out)
    (entry,) = data["entries"]
    # 699.6 -> 720.0 kcal/mol/A^2 (the base's value, overridden in NEW): +2.9 %
    assert entry["values"][0]["relative"] == pytest.approx(20.4 / 699.6, rel=1e-5)
    assert [f["code"] for f in data["findings"] if f["severity"] == "error"] == ["entry-changed"]
    assert _run(*args, "--params-base", "generic-organic", "--tolerance", "0.029")[0] == 1
    assert _run(*args, "--params-base", "generic-organic", "--tolerance", "0.03")[0] == 0


def _compare_output(fmt: str) -> tuple[int, str]:
    code, out, err = _run(
        "compare", "generic-organic", str(EDITED), "--reference", str(LIBRARY), "--format", fmt
    )
    if code == 2 and "not available" in err:
        pytest.skip(f"--format {fmt}: the shared CI writer is not in this build ({err.strip()})")
    return code, out


def test_junit_one_case_per_molecule_failure_is_what_it_lost() -> None:
    import xml.etree.ElementTree as ET

    code, out = _compare_output("junit")
    assert code == 1
    root = ET.fromstring(out)
    cases = root.findall(".//testcase")
    assert len(cases) == 30  # one per reference molecule of formulation-lab.smi
    failed = {c.get("name"): c.find("failure") for c in cases if c.find("failure") is not None}
    assert list(failed) == ["10: dichloromethane"]
    text = (failed["10: dichloromethane"].text or "") + (
        failed["10: dichloromethane"].get("message") or ""
    )
    assert "bond:c4-cl" in text and "covered -> estimated" in text
    xsd = REFERENCE / "junit-10.xsd"
    if not xsd.exists():
        pytest.skip(f"{xsd} is absent (the reference folder is shared, see its README)")
    xmlschema = pytest.importorskip("xmlschema", reason="no XML Schema validator installed")
    xmlschema.XMLSchema(str(xsd)).validate(out)


def test_sarif_validates_and_points_at_parameter_lines() -> None:
    from jsonschema import Draft4Validator

    code, out = _compare_output("sarif")
    assert code == 1
    log = json.loads(out)
    schema_file = REFERENCE / "sarif-schema-2.1.0.json"
    if not schema_file.exists():
        pytest.skip(f"{schema_file} is absent (the reference folder is shared, see its README)")
    schema = json.loads(schema_file.read_text(encoding="utf-8"))
    assert list(Draft4Validator(schema).iter_errors(log)) == []
    results = log["runs"][0]["results"]
    located = {
        (
            r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"],
            r["locations"][0]["physicalLocation"]["region"]["startLine"],
        )
        for r in results
        if r.get("level") == "error"
    }
    # the removed entry's line in OLD, the changed entry's line in NEW
    removed = _line_of(DEFAULT, '- classes: ["c4", "cl"]')
    changed = _line_of(EDITED, '- classes: ["c4", "c4"]')
    assert any(u.endswith("generic-organic") and n == removed for u, n in located), located
    assert any(u.endswith("generic-organic-edited.yaml") and n == changed for u, n in located)


def _line_of(path: Path, stripped: str) -> int:
    lines = path.read_text(encoding="utf-8").splitlines()
    (line,) = [i for i, text in enumerate(lines, 1) if text.strip() == stripped]
    return line
