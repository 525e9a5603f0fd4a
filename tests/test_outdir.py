"""Output-directory mode, its resume checks, the chunk summary codec, Parquet chunks and the progress bar.

Input: the first 60 lines of RDKit's shipped NCI sample ``first_5K.smi`` (rdkit/Data/NCI, public NCI open
data); the reference for the molecules is the same run's ``--format jsonl`` output on stdout.
"""

from __future__ import annotations

import glob
import io
import json
from pathlib import Path

import pytest
from rdkit import RDConfig

from ffaudit.audit import AuditContext, Summary
from ffaudit.cli.main import run as cli_run
from ffaudit.engine.outdir import JOURNAL, MANIFEST, SUMMARY
from ffaudit.engine.summary_state import FIELDS, summary_from_state, summary_state
from ffaudit.paramset.load import load_parameter_set
from ffaudit.read.open import iter_records

SMI5K = Path(RDConfig.RDDataDir) / "NCI" / "first_5K.smi"

try:
    import pyarrow  # noqa: F401

    HAVE_PYARROW = True
except ImportError:
    HAVE_PYARROW = False
needs_pyarrow = pytest.mark.skipif(not HAVE_PYARROW, reason="pyarrow is not installed (parquet extra)")


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> str:
    path = tmp_path_factory.mktemp("lib") / "nci60.smi"
    path.write_text("\n".join(SMI5K.read_text().splitlines()[:60]) + "\n")
    return str(path)


@pytest.fixture(scope="module")
def stdout_jsonl(library) -> str:
    code, out, err = cli(library, "--format", "jsonl", "--jobs", "1")
    assert code == 0, err
    return out


def cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli_run(["audit", *argv, "--fail-on", "never"], out, err)
    return code, out.getvalue(), err.getvalue()


def chunk_text(directory: Path) -> str:
    return "".join(p.read_text() for p in sorted(directory.glob("chunk-*.jsonl")))


def test_directory_holds_chunks_manifest_and_summary(tmp_path, library, stdout_jsonl):
    out = tmp_path / "run"
    code, stdout, err = cli(library, "--chunk-size", "16", "--jobs", "1", "-o", f"{out}/")
    assert code == 0, err
    assert stdout == ""
    names = sorted(p.name for p in out.iterdir())
    assert MANIFEST in names and SUMMARY in names and JOURNAL not in names
    assert [n for n in names if n.endswith(".jsonl")] == [f"chunk-{i:06d}.jsonl" for i in range(4)]
    assert chunk_text(out) == stdout_jsonl  # the chunks are the --format jsonl output, in order
    manifest = json.loads((out / MANIFEST).read_text())
    assert manifest["complete"] is True and manifest["records"] == 60
    assert [(c["first"], c["count"]) for c in manifest["chunks"]] == [
        (0, 16),
        (16, 16),
        (32, 16),
        (48, 12),
    ]
    assert manifest["run"]["library"]["path"] == library
    assert len(manifest["run"]["library"]["sha256"]) == 64
    summary = json.loads((out / SUMMARY).read_text())
    assert summary["summary"]["records"] == 60
    assert sum(summary["summary"]["status"].values()) == 60


def test_directory_summary_equals_the_json_report_summary(tmp_path, library):
    code, report, _ = cli(library, "--format", "json", "--jobs", "1")
    assert code == 0
    out = tmp_path / "run"
    assert cli(library, "--chunk-size", "7", "--jobs", "1", "--output-dir", str(out))[0] == 0
    assert json.loads((out / SUMMARY).read_text())["summary"] == json.loads(report)["summary"]


def test_directory_rule_for_o(tmp_path, library):
    existing = tmp_path / "existing"
    existing.mkdir()
    # an existing directory is a directory even without the trailing slash
    assert cli(library, "--jobs", "1", "-o", str(existing))[0] == 0
    assert (existing / MANIFEST).exists()
    plain = tmp_path / "report.jsonl"
    assert cli(library, "--jobs", "1", "--format", "jsonl", "-o", str(plain))[0] == 0
    assert plain.is_file()


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (("--resume",), "--resume needs an output directory"),
        (("--format", "csv", "-o", "{tmp}/d/"), "--format csv writes one report"),
        (("-o", "{tmp}/missing/", "--resume"), "there is no run to resume"),
    ],
)
def test_directory_usage_errors(tmp_path, library, extra, message):
    argv = [a.replace("{tmp}", str(tmp_path)) for a in extra]
    code, _, err = cli(library, "--jobs", "1", *argv)
    assert code == 2
    assert message in err
    assert "Traceback" not in err


def test_directory_refuses_foreign_or_finished_runs(tmp_path, library):
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("mine")
    code, _, err = cli(library, "--jobs", "1", "-o", f"{foreign}/")
    assert code == 2 and "is not empty (notes.txt) and holds no ffaudit run" in err
    done = tmp_path / "done"
    assert cli(library, "--jobs", "1", "-o", f"{done}/")[0] == 0
    code, _, err = cli(library, "--jobs", "1", "-o", f"{done}/")
    assert code == 2 and "already holds an ffaudit run" in err and "--resume" in err


def test_resume_refuses_other_options(tmp_path, library):
    out = tmp_path / "run"
    assert cli(library, "--jobs", "1", "--chunk-size", "16", "-o", f"{out}/")[0] == 0
    code, _, err = cli(library, "--jobs", "1", "--chunk-size", "8", "-o", f"{out}/", "--resume")
    assert code == 2 and "chunk_size: 16 then, 8 now" in err
    code, _, err = cli(
        library,
        "--jobs",
        "1",
        "--chunk-size",
        "16",
        "--terms",
        "problems",
        "-o",
        f"{out}/",
        "--resume",
    )
    assert code == 2 and "terms_mode: 'all' then, 'problems' now" in err


def test_resume_redoes_damaged_and_missing_chunks_only(tmp_path, library):
    out = tmp_path / "run"
    args = (library, "--chunk-size", "16", "-o", f"{out}/")
    assert cli(*args, "--jobs", "1")[0] == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    damaged = out / "chunk-000001.jsonl"
    damaged.write_bytes(damaged.read_bytes().replace(b'"status":"', b'"status":"x', 1))
    (out / "chunk-000002.summary.json").unlink()
    (out / ".chunk-000003.jsonl.0123456789ab.part").write_text("half a file")
    code, _, err = cli(*args, "--jobs", "2", "--resume")
    assert code == 0, err
    assert "(4 chunks, 2 kept from the earlier run)" in err  # chunks 0 and 3 kept, 1 and 2 redone
    after = {p.name: p.read_bytes() for p in out.iterdir()}
    assert after == before  # the damage is repaired, the partial file gone, nothing else changed
    code, _, err = cli(*args, "--jobs", "1", "--resume")  # resuming a complete run changes nothing
    assert code == 0 and "4 kept" in err
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before


def test_summary_state_round_trip_and_fields(library):
    pset = load_parameter_set()
    context = AuditContext(pset)
    summary = Summary(pset)
    for record in iter_records(library):
        summary.add(context.audit_record(record))
    # the codec knows every attribute Summary has: a new total must be added to it
    assert set(vars(summary)) == FIELDS
    state = json.loads(json.dumps(summary_state(summary)))
    assert summary_from_state(pset, state).to_dict() == summary.to_dict()
    with pytest.raises(ValueError, match="summary state version"):
        summary_from_state(pset, {**state, "state_version": 99})
    with pytest.raises(ValueError, match="malformed summary state"):
        summary_from_state(pset, {k: v for k, v in state.items() if k != "scores"})


def test_parquet_chunks_hold_the_jsonl_molecules(tmp_path, library, stdout_jsonl):
    pytest.importorskip("pyarrow")
    import pyarrow.dataset as ds

    out = tmp_path / "run"
    assert cli(library, "--chunk-size", "16", "--jobs", "1", "-o", f"{out}/")[0] == 0
    files = sorted(glob.glob(str(out / "chunk-*.parquet")))
    assert len(files) == 4
    rows = ds.dataset(files, format="parquet").to_table().to_pylist()
    molecules = [json.loads(line) for line in stdout_jsonl.splitlines()]
    assert [r["index"] for r in rows] == list(range(60))
    for row, molecule in zip(rows, molecules, strict=True):
        assert (row["name"], row["status"], row["score"]) == (
            molecule["name"],
            molecule["status"],
            molecule["score"],
        )
        assert row["source_line"] == molecule["source"]["line"]
        assert {k: dict(v) for k, v in row["counts"]} == molecule["counts"]
        assert len(row["terms"]) == len(molecule["terms"])
        for term_row, term in zip(row["terms"], molecule["terms"], strict=True):
            assert term_row["classes"] == term["classes"] and term_row["tier"] == term["tier"]
            assert json.loads(term_row["values_json"]) == term["values"]
            assert json.loads(term_row["provenance_json"] or "null") == term["provenance"]
            assert term_row["order"] == term.get("order")
            assert term_row["extra_json"] is None or json.loads(term_row["extra_json"]) == {
                k: v for k, v in term.items() if k in ("substitutions",)
            }


def test_progress_is_quiet_unless_forced(library):
    _, _, quiet = cli(library, "--jobs", "1", "--format", "csv")
    assert "rec/s" not in quiet
    _, out_forced, forced = cli(library, "--jobs", "1", "--format", "csv", "--progress")
    assert "rec/s" in forced and "60/60" in forced
    _, out_quiet, _ = cli(library, "--jobs", "1", "--format", "csv")
    assert out_forced == out_quiet  # the bar never touches the report


def _directory_files(tmp_path: Path, library: str, mode: str, parquet: bool) -> dict[str, bytes]:
    from ffaudit.engine.base import ChunkOptions, audit_chunks
    from ffaudit.engine.outdir import OutputDirectory, run_into_directory
    from ffaudit.engine.rawsplit import plan_library

    context = AuditContext(load_parameter_set())
    path = tmp_path / f"{mode}-{parquet}"
    out = OutputDirectory.open(path, {"library": library, "parquet": parquet}, resume=False)
    options = ChunkOptions(
        terms="all",
        encode=True,
        parquet=parquet,
        directory=str(path) if mode == "worker" else None,
    )
    run_into_directory(
        out,
        plan_library(library, chunk_size=16),
        lambda jobs: audit_chunks(context, jobs, options=options, backend="processes", n_jobs=2),
        context.pset,
        summary_doc=lambda summary: summary.to_dict(),
    )
    return {p.name: p.read_bytes() for p in sorted(path.iterdir())}


@pytest.mark.parametrize("parquet", [False, pytest.param(True, marks=needs_pyarrow)])
def test_chunk_files_written_by_workers_equal_those_sent_to_the_parent(tmp_path, library, parquet):
    """Local workers write their chunk files themselves; a remote cluster's workers send the bytes to the
    parent, which writes them. Both give the same directory, byte for byte (manifest included)."""
    by_workers = _directory_files(tmp_path, library, "worker", parquet)
    by_parent = _directory_files(tmp_path, library, "parent", parquet)
    assert by_workers == by_parent
    assert sum(name.endswith(".jsonl") for name in by_workers) == 4


def test_a_worker_report_that_does_not_match_the_directory_is_refused(tmp_path):
    from ffaudit.engine.base import ChunkResult, EngineError
    from ffaudit.engine.outdir import OutputDirectory, write_chunk_files

    pset = load_parameter_set()
    out = OutputDirectory.open(tmp_path / "run", {"library": "x", "parquet": False}, resume=False)
    files = write_chunk_files(out.path, 0, {"jsonl": b"{}\n"})

    def result(reported):
        return ChunkResult(0, 0, 1, Summary(pset), files=reported, lines=1)

    with pytest.raises(EngineError, match="has 3 bytes, the worker wrote 99"):
        out.write_chunk(result({"jsonl": {**files["jsonl"], "bytes": 99}}))
    with pytest.raises(EngineError, match="expected"):
        out.write_chunk(result({}))
    (out.path / files["jsonl"]["name"]).unlink()
    with pytest.raises(EngineError, match="is not there"):
        out.write_chunk(result(files))
    assert out.done == {}


@needs_pyarrow
@pytest.mark.parametrize("terms", ["all", "problems", "none"])
def test_parquet_from_term_tables_equals_parquet_from_dicts(tmp_path, library, terms):
    """Workers build Parquet chunks from the audits' term tables; the bytes must be those of the dict
    path (molecules_to_parquet of to_dict), on NCI records plus molecules with rule estimates, an
    unclassified atom and an unreadable record."""
    from ffaudit.engine.batch import fast_auditor
    from ffaudit.engine.parquet import audits_to_parquet, molecules_to_parquet

    extra = tmp_path / "extra.smi"
    extra.write_text("C[Se]C selenide\nB(O)(O)c1ccccc1 boronic\nC1CC unclosed\n[Xe] xenon\n")
    context = AuditContext(load_parameter_set())
    records = [*iter_records(library), *iter_records(str(extra))]
    audits = list(fast_auditor(context).audit_records(records))
    statuses = {a.status for a in audits}
    assert {"estimated", "unreadable"} <= statuses
    assert any(r.tier == "estimate" for a in audits for r in a.resolutions)
    dicts = [a.to_dict(context.pset, terms) for a in audits]
    assert audits_to_parquet(audits, context.pset, terms) == molecules_to_parquet(dicts)
