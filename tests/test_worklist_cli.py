"""Worklist ranking on a library whose answer is known by hand; capped fragments re-audited; HTML report."""

import io
import json
from pathlib import Path

from rdkit import Chem

from ffaudit.audit import AuditContext
from ffaudit.cli.main import run
from ffaudit.paramset.load import load_parameter_set
from ffaudit.read.record import Record

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = str(ROOT / "sample_sets" / "formulation-lab.smi")


def _run(*argv):
    out, err = io.StringIO(), io.StringIO()
    return run(list(argv), out, err), out.getvalue(), err.getvalue()


def test_worklist_ranks_a_hand_made_library(tmp_path):
    # By hand, with the demonstration set and estimates counted as blockers:
    # - ethane, ethanol: fully covered (no blocker);
    # - 1-bromobutane and 1-bromopropane both lack only the angle br-c4-c4 (the set deliberately has no
    #   such angle), so that tuple alone completes 2 molecules and ranks first;
    # - no atom lacks a class, so everything is coverable: the curve ends at 100 %.
    lib = tmp_path / "hand.smi"
    lib.write_text("CC ethane\nCCO ethanol\nCCCCBr bromobutane\nCCCBr bromopropane\n")
    code, out, err = _run("worklist", str(lib), "--include-estimated", "--format", "json")
    assert code == 0, err
    doc = json.loads(out)
    (top,) = doc["tuples"]
    assert (top["rank"], top["kind"], top["classes"]) == (1, "angle", ["br", "c4", "c4"])
    assert (top["molecules"], top["alone"], top["completes"]) == (2, 2, 2)
    assert doc["coverage_curve"][0]["complete"] == 2  # ethane and ethanol before any fitting
    assert doc["coverage_curve"][-1] == {"tuples": 1, "complete": 4, "share": 1.0}


def test_every_fragment_keeps_its_tuple_unresolved_by_the_set(tmp_path):
    out_dir = tmp_path / "frags"
    code, _, err = _run(
        "worklist",
        SAMPLE,
        "--include-estimated",
        "--top",
        "6",
        "--fragments",
        str(out_dir),
        "--format",
        "json",
    )
    assert code == 0, err
    lines = [json.loads(x) for x in (out_dir / "fragments.jsonl").read_text().splitlines()]
    assert lines
    context = AuditContext(load_parameter_set())
    for line in lines:
        if line.get("error"):
            continue
        supplier = Chem.SDMolSupplier(str(out_dir / line["files"]["sdf"]), removeHs=False)
        mol = supplier[0]
        assert mol is not None and mol.GetNumConformers() == 1 and mol.GetConformer().Is3D()
        audit = context.audit_record(Record(0, "f", 1, 1, line["name"], mol))
        wanted = (line["kind"], tuple(line["classes"]))
        tiers = {r.tier for r in audit.resolutions if (r.term.kind, r.term.classes) == wanted}
        assert tiers and not tiers & {"exact", "wildcard", "parent"}, (line["name"], tiers)


def test_html_report_escapes_names(tmp_path):
    lib = tmp_path / "evil.smi"
    lib.write_text("CCCCBr <script>alert(1)</script>\nCC ethane\n")
    results = tmp_path / "r.jsonl"
    assert (
        _run("audit", str(lib), "--format", "jsonl", "-o", str(results), "--fail-on", "never")[0]
        == 0
    )
    page = tmp_path / "r.html"
    code, _, err = _run("report", str(results), "-o", str(page))
    assert code == 0, err
    html = page.read_text()
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "not a validation of accuracy" in html
    again = tmp_path / "r2.html"
    _run("report", str(results), "-o", str(again))
    assert again.read_bytes() == page.read_bytes()


def test_worklist_from_results_equals_worklist_from_the_library(tmp_path):
    # Audit output records each bond and dihedral term's bond order, so a worklist made from a results
    # file keys tuples by (kind, classes, order) exactly as one made from the library in-process does.
    # (That tuples differing only in order stay apart is tested on hand-made dicts in test_worklist.py.)
    results = tmp_path / "lab.jsonl"
    code, _, err = _run("audit", SAMPLE, "--format", "jsonl", "--terms", "problems", "--fail-on",
                        "never", "-o", str(results))
    assert code == 0, err
    docs = []
    for source in (SAMPLE, str(results)):
        code, out, err = _run("worklist", source, "--include-estimated", "--format", "json")
        assert code == 0, err
        docs.append(json.loads(out))
    from_library, from_results = docs
    assert from_results["tuples"] == from_library["tuples"]
    assert from_results["coverage_curve"] == from_library["coverage_curve"]
    assert not any("bond order" in note for note in from_results["notes"])
    ordered = [t for t in from_results["tuples"] if t["kind"] in ("bond", "dihedral")]
    assert ordered and all(t["order"] in ("single", "double", "triple", "aromatic") for t in ordered)
