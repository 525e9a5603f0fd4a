"""The audit command end to end on the shipped sample library, through run(argv, stdout, stderr)."""

import io
import json
from pathlib import Path

import pytest

from ffaudit.cli.main import run
from ffaudit.report.schemas import validate_molecule, validate_report

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_SMI = str(ROOT / "sample_sets" / "formulation-lab.smi")
SAMPLE_SDF = str(ROOT / "sample_sets" / "formulation-lab.sdf")
BAD_SMI = str(ROOT / "sample_sets" / "broken" / "bad.smi")
BAD_SDF = str(ROOT / "sample_sets" / "broken" / "bad.sdf")


def _run(*argv):
    out, err = io.StringIO(), io.StringIO()
    code = run(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def _records(path):
    """Records in the file counted independently of ffaudit: SMILES lines that are not comments, or $$$$."""
    text = Path(path).read_text(errors="replace")
    if path.endswith(".sdf"):
        return text.count("$$$$")
    return sum(1 for line in text.splitlines() if line.strip() and not line.startswith("#"))


@pytest.mark.parametrize("path", [SAMPLE_SMI, SAMPLE_SDF, BAD_SMI, BAD_SDF])
def test_every_record_accounted_for_in_jsonl(path):
    code, out, err = _run("audit", path, "--format", "jsonl", "--fail-on", "never")
    assert code == 0, err
    lines = [json.loads(line) for line in out.splitlines()]
    assert len(lines) == _records(path)
    assert [m["index"] for m in lines] == list(range(len(lines)))
    for m in lines:
        validate_molecule(m)
    assert f"{len(lines)} records" in err


def test_broken_records_are_reported_with_their_line():
    code, out, _ = _run("audit", BAD_SDF, "--format", "jsonl")
    molecules = [json.loads(line) for line in out.splitlines()]
    bad = [m for m in molecules if m["status"] == "unreadable"]
    assert bad, "the broken sample SDF has unreadable records"
    for m in bad:
        assert m["reason"] and m["source"]["line"] >= 1 and m["source"]["record"] >= 1
        assert (
            f"line {m['source']['line']}" in m["reason"]
            or str(m["source"]["record"]) in m["reason"]
        )
    assert code == 1  # --fail-on missing (default): unreadable records fail the run


def test_json_document_validates_and_adds_up():
    code, out, _ = _run("audit", SAMPLE_SMI, "--format", "json", "--fail-on", "never")
    doc = json.loads(out)
    validate_report(doc)
    summary = doc["summary"]
    assert summary["records"] == len(doc["molecules"]) == _records(SAMPLE_SMI)
    assert sum(summary["status"].values()) == summary["records"]
    assert (
        doc["parameter_set"]["name"] == "generic-organic" and doc["parameter_set"]["demonstration"]
    )


def test_exit_codes_follow_the_policy():
    # The sample library has molecules the demonstration set can only estimate or not cover at all.
    assert _run("audit", SAMPLE_SMI, "--fail-on", "never")[0] == 0
    assert _run("audit", SAMPLE_SMI, "--fail-on", "estimated")[0] == 1
    assert _run("audit", SAMPLE_SMI, "--fail-on", "never", "--min-score", "0.99")[0] == 1
    code, _, err = _run("audit", "no-such-file.smi")
    assert code == 2 and "no-such-file.smi" in err
    code, _, err = _run("audit", SAMPLE_SMI, "--params", "no-such-set.yaml")
    assert code == 2 and "no-such-set.yaml" in err
    assert _run("audit")[0] == 2


def test_output_is_deterministic():
    first = _run("audit", SAMPLE_SDF, "--format", "jsonl", "--fail-on", "never")[1]
    second = _run("audit", SAMPLE_SDF, "--format", "jsonl", "--fail-on", "never")[1]
    assert first == second


def test_terms_modes():
    all_terms = [
        json.loads(x)
        for x in _run("audit", SAMPLE_SMI, "--format", "jsonl", "--terms", "all")[1].splitlines()
    ]
    problems = [
        json.loads(x)
        for x in _run("audit", SAMPLE_SMI, "--format", "jsonl", "--terms", "problems")[
            1
        ].splitlines()
    ]
    for a, p in zip(all_terms, problems, strict=True):
        assert a["counts"] == p["counts"]
        assert [t for t in a["terms"] if t["tier"] != "exact"] == p["terms"]
        assert sum(sum(t.values()) for t in a["counts"].values()) == len(a["terms"])


def test_table_carries_the_cautions_and_demonstration_notice():
    code, out, _ = _run("audit", SAMPLE_SMI, "--fail-on", "never")
    assert code == 0
    assert "DEMONSTRATION" in out.upper()
    assert "not a validation of accuracy" in out


def test_explain_smiles_and_file_record():
    code, out, _ = _run("explain", "CC(=O)O")
    assert code == 0 and "c3o" in out and "exact" in out
    code, out, _ = _run("explain", f"{SAMPLE_SMI}:1", "--format", "json")
    data = json.loads(out)
    assert code == 0 and data["name"] == "ethyl-acetate"
    validate_molecule(data)
    assert _run("explain", f"{SAMPLE_SMI}:999")[0] == 2


def test_init_set_writes_a_loadable_copy(tmp_path):
    from ffaudit.paramset.load import load_parameter_set

    target = tmp_path / "mine.yaml"
    assert _run("init-set", str(target))[0] == 0
    assert load_parameter_set(target).header.name == "generic-organic"
    assert _run("init-set", str(target))[0] == 2  # refuses to overwrite


def test_emit_params_round_trip_and_tier_switches(tmp_path):
    fragment = tmp_path / "estimates.yaml"
    code, out, err = _run(
        "audit",
        SAMPLE_SMI,
        "--format",
        "jsonl",
        "--fail-on",
        "never",
        "--emit-params",
        str(fragment),
    )
    assert code == 0 and fragment.exists() and "review" in err
    before = [json.loads(x) for x in out.splitlines()]
    code, out, _ = _run(
        "audit",
        SAMPLE_SMI,
        "--format",
        "jsonl",
        "--fail-on",
        "never",
        "--params",
        "generic-organic",
        "--params",
        str(fragment),
    )
    after = [json.loads(x) for x in out.splitlines()]
    assert sum(m["status"] == "estimated" for m in before) > 0
    assert sum(m["status"] == "estimated" for m in after) == 0
    for m in after:
        assert not any(t["tier"] in ("analogy", "estimate") for t in m["terms"])
    # with both estimate tiers off, nothing is estimated: what they covered is missing instead
    code, out, _ = _run("audit", SAMPLE_SMI, "--format", "jsonl", "--no-analogy", "--no-estimate")
    off = [json.loads(x) for x in out.splitlines()]
    assert code == 1 and not any(m["status"] == "estimated" for m in off)
    assert sum(m["status"] == "incomplete" for m in off) > sum(
        m["status"] == "incomplete" for m in before
    )


def test_core_commands_work_without_the_optional_extras():
    # `pip install ffaudit` (no html/dask/parquet extra) must still give a working command line.
    import subprocess
    import sys

    code = (
        "import sys\n"
        "for name in ('jinja2', 'markupsafe', 'matplotlib', 'distributed', 'dask', 'pyarrow'):\n"
        "    sys.modules[name] = None\n"
        "from ffaudit.cli.main import main\n"
        f"sys.exit(main(['audit', {SAMPLE_SMI!r}, '--format', 'csv', '--fail-on', 'never', '--jobs', '1']))\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.count("\n") == _records(SAMPLE_SMI) + 1
