"""The engine: every back-end gives the output of a plain sequential audit, byte for byte.

The reference is computed without the engine: records from :func:`ffaudit.read.open.iter_records`, audited
one by one with :meth:`AuditContext.audit_record`, written by the JSONL / JSON reporters. Input is RDKit's
shipped NCI sample ``first_200.props.sdf`` (rdkit/Data/NCI, public NCI open data), the file the issue names.
Back-ends: in-process, local processes, a Dask LocalCluster, and a real Dask scheduler with two workers
started here as separate processes on 127.0.0.1. A worker killed mid-run (processes and Dask) loses and
duplicates nothing; a CLI run killed with SIGKILL and resumed ends with the same directory as an
uninterrupted run.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import re
import signal
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
from rdkit import Chem, RDConfig

from ffaudit.audit import AuditContext, Summary, cautions_for, parameter_set_info
from ffaudit.cli.main import run as cli_run
from ffaudit.engine.base import (
    ChunkJob,
    ChunkOptions,
    ChunkResult,
    EngineError,
    ParsedRecords,
    audit_chunks,
    audit_stream,
    check_result,
    chunk_records,
    open_backend,
    ordered,
)
from ffaudit.engine.processes import ProcessBackend
from ffaudit.engine.rawsplit import plan_library
from ffaudit.paramset.load import load_parameter_set
from ffaudit.read.open import iter_records
from ffaudit.report.json_ import JsonReporter
from ffaudit.report.jsonl import JsonlReporter

NCI = Path(RDConfig.RDDataDir) / "NCI"
SDF200 = str(NCI / "first_200.props.sdf")  # 200 SD records shipped with the rdkit wheel
SMI5K = NCI / "first_5K.smi"  # 4999 SMILES lines shipped with the rdkit wheel
CSV200 = str(NCI / "first_200.tpsa.csv")  # 200 headerless SMILES,TPSA rows (a comment line first)
BROKEN = Path(__file__).parent / "data" / "broken_inputs"

try:
    import distributed  # noqa: F401

    HAVE_DASK = True
except ImportError:
    HAVE_DASK = False

needs_dask = pytest.mark.skipif(not HAVE_DASK, reason="dask.distributed is not installed (dask extra)")


# --------------------------------------------------------------------------- helpers and references


@pytest.fixture(scope="module")
def pset():
    return load_parameter_set()  # the embedded default set


@pytest.fixture(scope="module")
def context(pset):
    return AuditContext(pset)


def sequential(context, path: str, fmt: str = "jsonl", terms: str = "all") -> str:
    """The reference output: no engine, no chunks, one record after another."""
    pset = context.pset
    out = io.StringIO()
    reporter = JsonlReporter(out) if fmt == "jsonl" else JsonReporter(out)
    reporter.start(
        {"parameter_set": parameter_set_info(pset), "cautions": cautions_for(pset), "terms_mode": terms}
    )
    summary = Summary(pset)
    for record in iter_records(path):
        audit = context.audit_record(record)
        summary.add(audit)
        reporter.add(audit.to_dict(pset, terms))
    reporter.finish(summary.to_dict())
    return out.getvalue()


@pytest.fixture(scope="module")
def reference_jsonl(context) -> str:
    return sequential(context, SDF200, "jsonl")


@pytest.fixture(scope="module")
def reference_json(context) -> str:
    return sequential(context, SDF200, "json")


def cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli_run(["audit", *argv], out, err)
    return code, out.getvalue(), err.getvalue()


def joined(results: Iterator[ChunkResult]) -> tuple[str, list[int]]:
    """JSONL text and record indices of results as the engine delivered them."""
    text = []
    indices: list[int] = []
    for result in results:
        molecules = result.molecules
        assert molecules is not None
        for molecule in molecules:
            text.append(json.dumps(molecule, ensure_ascii=False, separators=(",", ":")) + "\n")
            indices.append(molecule["index"])
    return "".join(text), indices


def record_key(record):
    mol = record.mol
    parsed = None
    if mol is not None:
        parsed = (Chem.MolToSmiles(mol), Chem.MolToMolBlock(mol), sorted(mol.GetPropsAsDict().items()))
    return (record.index, record.path, record.record, record.line, record.name, record.error,
            dict(record.meta), parsed)


# --------------------------------------------------------------------------- raw-record path


def _raw_inputs() -> list[str]:
    files = [SDF200]
    files += sorted(str(p) for p in BROKEN.glob("*.sdf"))
    files += sorted(str(p) for p in BROKEN.glob("*.smi"))
    return files


@pytest.mark.parametrize("path", _raw_inputs(), ids=lambda p: Path(p).name)
def test_raw_records_are_the_readers_records(path):
    # the workers' parse path must give exactly the records of ffaudit.read.open.iter_records
    expected = [record_key(r) for r in iter_records(path)]
    got = [record_key(r) for job in plan_library(path, chunk_size=3) for r in job.payload.records()]
    assert got == expected


def test_raw_smiles_records_match_on_nci_sample(tmp_path):
    # first 600 lines of rdkit's first_5K.smi, plus a header line, blank and comment lines
    lines = SMI5K.read_text().splitlines()[:600]
    path = tmp_path / "nci600.smi"
    path.write_text("SMILES NAME\n\n# comment\n" + "\n".join(lines) + "\n")
    expected = [record_key(r) for r in iter_records(str(path))]
    jobs = list(plan_library(str(path), chunk_size=64))
    assert [j.count for j in jobs] == [64] * 9 + [24]
    assert [j.first for j in jobs] == list(range(0, 600, 64))
    got = [record_key(r) for job in jobs for r in job.payload.records()]
    assert len(got) == 600 and got == expected


# --------------------------------------------------------------------------- ordering and checks


def test_check_result_refuses_lost_or_duplicated_records(context):
    records = list(iter_records(SDF200))[:10]
    job = next(chunk_records(records, 10))
    from ffaudit.engine.work import run_chunk

    good = run_chunk(context, job, ChunkOptions())
    assert check_result(job, good) is good
    short = ChunkResult(good.number, good.first, good.count, good.summary, molecules=good.molecules[:-1])
    with pytest.raises(EngineError, match="9 molecules delivered, expected 10"):
        check_result(job, short)
    shifted = ChunkResult(good.number, good.first + 1, good.count, good.summary, molecules=good.molecules)
    with pytest.raises(EngineError, match="returned chunk 0 with 10 records from index 1"):
        check_result(job, shifted)
    # a payload that skips a record is caught in the worker
    gap = ChunkJob(0, 0, 3, ParsedRecords((records[0], records[2], records[3])))
    with pytest.raises(EngineError, match="has index 2, expected 1"):
        run_chunk(context, gap, ChunkOptions())


def test_parsed_record_path_agrees_across_backends(context):
    # csv input is parsed in the parent and shipped as RDKit pickles (the fallback path)
    reference = [context.audit_record(r).to_dict(context.pset, "all") for r in iter_records(CSV200)]
    expected = "".join(json.dumps(m, ensure_ascii=False, separators=(",", ":")) + "\n" for m in reference)
    for backend, jobs in (("inprocess", 1), ("processes", 2)):
        text, indices = joined(
            audit_stream(context, iter_records(CSV200), backend=backend, jobs=jobs, chunk_size=30)
        )
        assert indices == list(range(200))
        assert text == expected, backend


# --------------------------------------------------------------------------- CLI agreement


@pytest.mark.parametrize(
    "engine",
    [("--jobs", "1"), ("--jobs", "2", "--chunk-size", "7"), ("--jobs", "2", "--chunk-size", "64")],
    ids=["inprocess", "2proc-chunk7", "2proc-chunk64"],
)
def test_cli_jsonl_is_identical_to_sequential_audit(engine, reference_jsonl):
    code, out, err = cli(SDF200, "--format", "jsonl", "--fail-on", "never", *engine)
    assert code == 0, err
    assert out == reference_jsonl
    assert "200 records" in err


def test_spooled_chunks_reach_a_report_file_whole_and_leave_nothing_behind(
    tmp_path, monkeypatch, reference_jsonl
):
    """--jobs 2 writing a JSONL file: the workers leave their chunks in a spool directory and the parent
    copies them into the file (os.sendfile): the file is the sequential output byte for byte, and the
    spool directory is gone afterwards."""
    spool_root = tmp_path / "tmp"
    spool_root.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(spool_root))
    target = tmp_path / "out.jsonl"
    code, _, err = cli(SDF200, "--format", "jsonl", "--fail-on", "never", "--jobs", "2",
                       "--chunk-size", "16", "-o", str(target))
    assert code == 0, err
    assert target.read_bytes() == reference_jsonl.encode("utf-8")
    assert list(spool_root.iterdir()) == []


def test_jsonl_reporter_copies_a_file_into_text_and_binary_streams(tmp_path):
    """add_file writes a file's lines as add_lines would: into a text stream without a buffer (decoded),
    and into a real file after text already written to it (flushed first, then the kernel copy)."""
    lines = "".join(f'{{"index":{i},"name":"caf\u00e9 {i}"}}\n' for i in range(3000)).encode("utf-8")
    source = tmp_path / "chunk.jsonl"
    source.write_bytes(lines)
    text = io.StringIO()
    JsonlReporter(text).add_file(str(source))
    assert text.getvalue() == lines.decode("utf-8")
    target = tmp_path / "report.jsonl"
    with open(target, "w", encoding="utf-8", newline="\n") as out:
        reporter = JsonlReporter(out)
        reporter.add({"index": -1})
        reporter.add_file(str(source))
        reporter.add({"index": 3000})
        reporter.add_lines(lines[:40])
    expected = b'{"index":-1}\n' + lines + b'{"index":3000}\n' + lines[:40]
    assert target.read_bytes() == expected


def test_cli_json_report_is_identical_to_sequential_audit(reference_json):
    code, out, err = cli(SDF200, "--format", "json", "--fail-on", "never", "--jobs", "2",
                         "--chunk-size", "30")
    assert code == 0, err
    assert out == reference_json
    assert json.loads(out)["summary"]["records"] == 200


def test_cli_table_and_csv_agree_between_backends():
    for fmt in ("table", "csv"):
        one = cli(SDF200, "--format", fmt, "--jobs", "1")
        two = cli(SDF200, "--format", fmt, "--jobs", "2", "--chunk-size", "40")
        assert one[0] == two[0]
        assert one[1] == two[1] and one[1], fmt


@needs_dask
def test_dask_local_cluster_agrees(reference_jsonl):
    code, out, err = cli(SDF200, "--format", "jsonl", "--fail-on", "never", "--scheduler", "local",
                         "--jobs", "2", "--chunk-size", "25")
    assert code == 0, err
    assert out == reference_jsonl


@pytest.mark.parametrize(
    "backend",
    ["inprocess", "processes", pytest.param("dask", marks=needs_dask)],
)
def test_a_backend_runs_two_streams_one_after_the_other(context, backend, tmp_path, reference_jsonl):
    """Chunk numbers start at 0 again in the second stream: its results must be its own (a Dask key made of
    the chunk number alone gave the second stream the first stream's chunk)."""
    small = tmp_path / "small.smi"
    small.write_text("[He] 0\n[He] 1\n")  # two quick chunks (seen to trip the Dask key reuse every time)
    runner = open_backend(
        context,
        ChunkOptions(terms="all", encode=True),
        backend=backend,
        jobs=2,
        scheduler="local" if backend == "dask" else None,
    )
    expected_small = sequential(context, str(small), "jsonl")
    try:
        for _ in range(3):
            small_jobs = plan_library(str(small), chunk_size=1)
            first = b"".join(r.jsonl or b"" for r in ordered(runner, small_jobs))
            second = b"".join(r.jsonl or b"" for r in ordered(runner, plan_library(SDF200, chunk_size=25)))
            # the reference: each file audited record by record without the engine
            assert first.decode() == expected_small
            assert second.decode() == reference_jsonl
    finally:
        runner.close()


# --------------------------------------------------------------------------- a real Dask cluster


def _start(args: list[str], log: Path) -> subprocess.Popen[bytes]:
    return subprocess.Popen(
        [sys.executable, "-m", *args],
        stdout=subprocess.DEVNULL,
        stderr=open(log, "wb"),  # noqa: SIM115 - closed with the process
        start_new_session=True,
    )


def _stop(process: subprocess.Popen[bytes]) -> None:
    if process.poll() is None:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=15)
    if process.stderr is not None:
        process.stderr.close()


class Cluster:
    """A scheduler and workers on 127.0.0.1, each its own process (``python -m distributed.cli.*``)."""

    def __init__(self, root: Path) -> None:
        self.root = root
        self.file = root / "scheduler.json"
        self.processes: list[subprocess.Popen[bytes]] = []
        self.scheduler = _start(
            ["distributed.cli.dask_scheduler", "--host", "127.0.0.1", "--port", "0", "--no-dashboard",
             "--scheduler-file", str(self.file), "--idle-timeout", "600"],
            root / "scheduler.log",
        )
        self.processes.append(self.scheduler)
        deadline = time.monotonic() + 60
        while not self.file.exists() or not self.file.read_text().strip():
            if time.monotonic() > deadline or self.scheduler.poll() is not None:
                raise RuntimeError(f"scheduler did not start: {(root / 'scheduler.log').read_text()}")
            time.sleep(0.1)
        time.sleep(0.2)
        self.address = json.loads(self.file.read_text())["address"]
        assert self.address.startswith("tcp://127.0.0.1:")

    def add_worker(self, name: str) -> subprocess.Popen[bytes]:
        worker = _start(
            ["distributed.cli.dask_worker", self.address, "--nthreads", "1", "--no-nanny",
             "--no-dashboard", "--host", "127.0.0.1", "--name", name, "--death-timeout", "60",
             "--local-directory", str(self.root / name)],
            self.root / f"{name}.log",
        )
        self.processes.append(worker)
        return worker

    def wait_for_workers(self, n: int) -> None:
        from distributed import Client

        with Client(self.address, timeout="30s") as client:
            client.wait_for_workers(n, timeout=90)

    def close(self) -> None:
        for process in reversed(self.processes):
            _stop(process)


@pytest.fixture(scope="module")
def cluster(tmp_path_factory) -> Iterator[Cluster]:
    if not HAVE_DASK:
        pytest.skip("dask.distributed is not installed (dask extra)")
    c = Cluster(tmp_path_factory.mktemp("dask"))
    try:
        c.add_worker("w1")
        c.add_worker("w2")
        c.wait_for_workers(2)
        yield c
    finally:
        c.close()


@needs_dask
def test_real_scheduler_with_two_worker_processes_agrees(cluster, reference_jsonl):
    code, out, err = cli(SDF200, "--format", "jsonl", "--fail-on", "never", "--scheduler",
                         cluster.address, "--chunk-size", "20")
    assert code == 0, err
    assert out == reference_jsonl


@needs_dask
def test_dask_worker_killed_mid_run_loses_and_duplicates_nothing(cluster, context, reference_jsonl):
    from distributed import Client

    extra = cluster.add_worker("w3")
    cluster.wait_for_workers(3)
    state: dict[str, object] = {}

    def remember(backend) -> None:
        state["client"] = backend.client

    results = audit_chunks(
        context,
        plan_library(SDF200, chunk_size=8),
        options=ChunkOptions(terms="all"),
        backend="dask",
        scheduler=cluster.address,
        n_jobs=3,
        on_start=remember,
    )
    delivered: list[ChunkResult] = [next(results)]
    client: Client = state["client"]  # type: ignore[assignment]
    killed = None
    deadline = time.monotonic() + 60
    while killed is None and time.monotonic() < deadline:
        # a worker computing a chunk, or else one holding results not yet fetched (with the fast
        # path the chunks in flight may all be done before this loop looks): either loss is mid-run
        busy = {addr for addr, keys in client.processing().items() if keys}
        busy = busy or {addr for addr, keys in client.has_what().items() if keys}
        pids = {addr: pid for addr, pid in client.run(os.getpid).items() if addr in busy}
        if pids:
            # every worker is a process this test started; prefer the extra one
            killed = extra.pid if extra.pid in pids.values() else pids[sorted(pids)[0]]
            os.kill(killed, signal.SIGKILL)
        else:
            time.sleep(0.05)
    assert killed is not None, "no worker was busy: the kill did not happen mid-run"
    delivered.extend(results)
    text, indices = joined(iter(delivered))
    assert indices == list(range(200))  # nothing lost, nothing duplicated, in input order
    assert text == reference_jsonl
    with Client(cluster.address, timeout="30s") as probe:
        alive = set(probe.run(os.getpid).values())
    assert killed not in alive
    if killed != extra.pid:  # keep two workers for any later test
        cluster.wait_for_workers(2)


# --------------------------------------------------------------------------- local worker killed


def test_process_worker_killed_mid_run_loses_and_duplicates_nothing(context, reference_jsonl):
    state: dict[str, ProcessBackend] = {}
    results = audit_chunks(
        context,
        plan_library(SDF200, chunk_size=8),
        backend="processes",
        n_jobs=2,
        on_start=lambda backend: state.setdefault("backend", backend),  # type: ignore[arg-type,func-returns-value]
    )
    delivered = [next(results)]
    backend = state["backend"]
    pids = backend.worker_pids()
    assert pids
    os.kill(pids[0], signal.SIGKILL)  # one of the pool's workers, started by this test
    delivered.extend(results)
    text, indices = joined(iter(delivered))
    assert backend.restarts >= 1
    assert indices == list(range(200))
    assert text == reference_jsonl


def test_a_pending_chunk_whose_worker_died_unnoticed_counts_as_a_break(context, monkeypatch):
    # A worker killed while it holds the pool's result queue can leave a future pending for ever
    # (the pool never marks it broken). The wait polls the workers and turns that into the break.
    from concurrent.futures import Future
    from concurrent.futures.process import BrokenProcessPool

    import ffaudit.engine.processes as processes

    monkeypatch.setattr(processes, "POLL_SECONDS", 0.05)
    backend = ProcessBackend(context, ChunkOptions(), jobs=1)
    try:
        never: Future[object] = Future()  # nothing will ever complete it
        with pytest.raises(TimeoutError):  # all workers alive: the wait keeps waiting
            never.result(timeout=0.2)
        assert not backend._lost_worker()

        class Dead:
            exitcode = -signal.SIGKILL

        monkeypatch.setattr(backend._pool, "_processes", {1: Dead()})
        with pytest.raises(BrokenProcessPool, match="died while chunks were pending"):
            backend._result(never)  # type: ignore[arg-type]
    finally:
        monkeypatch.undo()
        backend.close()


def test_a_discarded_pool_does_not_wait_for_half_a_result(context):
    # A worker killed while it wrote a result leaves half a message in the pool's result pipe; the pool's
    # manager thread then waits for the rest for ever and the interpreter hangs at exit (it joins that
    # thread). Here the half message is written by hand: a length header promising 1,000 bytes, then 10.
    import struct

    backend = ProcessBackend(context, ChunkOptions(), jobs=1)
    pool = backend._pool
    try:
        pool.submit(int, 0).result(timeout=60)  # the workers and the manager thread are running
        manager = pool._executor_manager_thread
        assert manager is not None and manager.is_alive()
        pool._result_queue._writer._send(struct.pack("!i", 1000) + b"x" * 10)
        time.sleep(0.5)  # the manager thread reads the header and waits for the other 990 bytes
        assert manager.is_alive()
        backend._discard_pool()
        manager.join(timeout=15)
        assert not manager.is_alive()
    finally:
        backend._pool = backend._start()
        backend.close()


# --------------------------------------------------------------------------- SIGKILL and --resume


def _files(directory: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(directory.iterdir())}


def test_sigkill_then_resume_gives_the_uninterrupted_result(tmp_path, reference_jsonl):
    args = [SDF200, "--fail-on", "never", "--chunk-size", "10"]
    whole = tmp_path / "whole"
    code, _, err = cli(*args, "--jobs", "1", "-o", f"{whole}/")
    assert code == 0, err

    killed = tmp_path / "killed"
    process = subprocess.Popen(
        [sys.executable, "-m", "ffaudit.cli.main", "audit", *args, "--jobs", "2", "-o", f"{killed}/"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        start_new_session=True,  # its own process group: the kill takes its workers too
    )
    journal = killed / "journal.jsonl"
    deadline = time.monotonic() + 120
    try:
        while time.monotonic() < deadline and process.poll() is None:
            if journal.exists() and journal.read_text().count("\n") >= 3:
                break
            time.sleep(0.02)
        assert process.poll() is None, process.stderr.read().decode() if process.stderr else ""
        os.killpg(process.pid, signal.SIGKILL)
    finally:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(process.pid, signal.SIGKILL)
        process.wait(timeout=30)
        if process.stderr is not None:
            process.stderr.close()
    manifest = json.loads((killed / "manifest.json").read_text())
    assert manifest["complete"] is False  # it really stopped mid-way
    done_before = journal.read_text().count("\n")
    assert 3 <= done_before < 20

    resumed = subprocess.run(
        [sys.executable, "-m", "ffaudit.cli.main", "audit", *args, "--jobs", "1", "-o", f"{killed}/",
         "--resume"],
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert resumed.returncode == 0, resumed.stderr
    assert "kept from the earlier run" in resumed.stderr
    kept = int(re.search(r"(\d+) kept from the earlier run", resumed.stderr).group(1))
    assert kept >= done_before - 2  # chunks written before the kill were not audited again
    assert _files(killed) == _files(whole)  # manifest, summary.json and every chunk file
    chunks = sorted(p for p in killed.glob("chunk-*.jsonl"))
    assert "".join(p.read_text() for p in chunks) == reference_jsonl
