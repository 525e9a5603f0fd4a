"""Library benchmark: ffaudit against RDKit's MMFF94 pre-flight, measured in the same run.

Prints molecules per second for

- the reference: RDKit's MMFF94 pre-flight on the same molecules (parse SMILES, add hydrogens, MMFF typing,
  ``MMFFHasAllMoleculeParams``), one core;
- ffaudit's full audit with the embedded set, as ``ffaudit audit`` runs it: the engine's chunk function
  (:func:`ffaudit.engine.work.run_chunk`: parse, batched fast path for classes, terms, resolution and
  estimates, the molecule objects with every term or with problems only), one core, and the ratio of the
  two times; the same with the reference path forced (``FFAUDIT_REFERENCE_PATH=1``), for comparison;
- for scale, the ratio to the pre-flight of RDKit parsing each SMILES and writing its canonical SMILES alone:
  work every audit does (for its output's ``smiles``) whatever its design;
- the engine making JSON lines (as for a JSONL report) on a started back-end: one core in-process, 2 worker
  processes, a Dask LocalCluster of 2 workers, as speed-ups over one core (start-up of workers or cluster
  excluded, caches cold at the start), on the 5K records and on them repeated ``--scaling-times`` times
  (20K by default: the later copies find their tuples resolved, as in a long library); the back-ends'
  rounds alternate and each keeps its best;
- whole ``ffaudit audit`` runs (set loading, worker start-up and writing included, as a user sees them) on
  one core, with 2 worker processes and with a Dask LocalCluster of 2 workers (skip it with ``--no-dask``),
  writing a JSONL report and writing an output directory, as wall times and speed-ups over one core;

and wall time and peak RSS of a whole ``ffaudit audit`` process (JSONL, ``--terms problems``, one core) for
5K records and for 50K records (the file repeated). With ``--big``: wall time and peak RSS of a
1,000,000-record run on all cores in output-directory mode (``--terms none`` unless ``--big-terms`` says
otherwise: the listed terms of the demonstration set would fill tens of gigabytes).

Each in-process time is the best of ``--repeats`` rounds, MMFF94 and ffaudit interleaved, because other work
on the machine slows single rounds; the load average is printed before and after.

Input: RDKit's shipped ``Data/NCI/first_5K.smi``. Ratios, not absolute times, are what to compare across
machines: both sides are measured on the same machine within minutes of each other.

Usage: ``python benchmarks/bench_library.py [--records N] [--repeats R] [--no-dask] [--scaling-times K]
[--big]``
"""

from __future__ import annotations

import argparse
import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from bench_fast_path import mmff_preflight as preflight_of_smiles
from rdkit import Chem, RDConfig, rdBase

NCI = Path(RDConfig.RDDataDir) / "NCI" / "first_5K.smi"


def smiles_lines(limit: int) -> list[str]:
    lines = [line for line in NCI.read_text().splitlines() if line.strip()]
    return lines[:limit]


def mmff_preflight(lines: list[str]) -> float:
    """Seconds for RDKit's MMFF94 pre-flight over the SMILES of ``lines`` (one core): the same reference
    as benchmarks/bench_fast_path.py measures, from its :func:`bench_fast_path.mmff_preflight`."""
    rdBase.DisableLog("rdApp.*")
    return preflight_of_smiles([line.split()[0] for line in lines])


def parse_and_smiles(lines: list[str]) -> float:
    """Seconds for the RDKit work every audited record needs whatever the design (one core): parse and
    sanitise its SMILES, and write the canonical SMILES of the output's ``smiles``. With the pre-flight's
    time it shows how much of the ratio target is left for everything else."""
    rdBase.DisableLog("rdApp.*")
    start = time.perf_counter()
    for line in lines:
        mol = Chem.MolFromSmiles(line.split()[0])
        if mol is not None:
            Chem.MolToSmiles(mol)
    return time.perf_counter() - start


def ffaudit_run(
    path: str,
    backend: str,
    jobs: int,
    terms: str = "all",
    reference: bool = False,
) -> tuple[float, int]:
    """Seconds and records for a full audit of ``path`` with the embedded set (output built).

    The chunks go through the engine exactly as in ``ffaudit audit`` (default chunk size, the chunk
    function of every back-end) and give the molecule dicts. ``reference`` sets ``FFAUDIT_REFERENCE_PATH=1`` for the run (in-process only: worker
    processes would read it when they start).
    """
    from ffaudit.audit import AuditContext
    from ffaudit.engine.base import DEFAULT_CHUNK_SIZE, ChunkOptions, audit_chunks
    from ffaudit.engine.rawsplit import plan_library
    from ffaudit.engine.work import REFERENCE_PATH_VARIABLE
    from ffaudit.paramset.load import load_parameter_set

    context = AuditContext(load_parameter_set())
    old = os.environ.pop(REFERENCE_PATH_VARIABLE, None)
    if reference:
        os.environ[REFERENCE_PATH_VARIABLE] = "1"
    try:
        start = time.perf_counter()
        n = 0
        for result in audit_chunks(
            context,
            plan_library(path, chunk_size=DEFAULT_CHUNK_SIZE),
            options=ChunkOptions(terms=terms),
            backend=backend,
            n_jobs=jobs,
            scheduler="local" if backend == "dask" else None,
        ):
            n += result.count
        return time.perf_counter() - start, n
    finally:
        os.environ.pop(REFERENCE_PATH_VARIABLE, None)
        if old is not None:
            os.environ[REFERENCE_PATH_VARIABLE] = old


def engine_run(path: str, backend: str, jobs: int, tmp: str) -> float:
    """Seconds to audit ``path`` on a started back-end, JSON lines made by the workers (``--terms all``) and
    received here (worker processes spool them to files, which are read back and removed, as
    ``ffaudit audit --format jsonl`` does).

    The back-end is opened and every worker is given one tiny chunk first (starting the worker processes
    or the cluster and loading the set there), untimed; the class rules and caches stay cold for the
    timed run. With ``jobs`` workers, ``jobs`` warm-up chunks are kept in flight so each worker gets one.
    """
    from ffaudit.audit import AuditContext
    from ffaudit.engine.base import DEFAULT_CHUNK_SIZE, ChunkOptions, open_backend, ordered
    from ffaudit.engine.rawsplit import plan_library
    from ffaudit.paramset.load import load_parameter_set

    warm = os.path.join(tmp, "warm-up.smi")
    with open(warm, "w") as handle:
        handle.write("".join(f"[He] {i}\n" for i in range(jobs)))
    context = AuditContext(load_parameter_set())
    # worker processes leave their lines in a spool directory, as in ``ffaudit audit --format jsonl``;
    # this process reads each chunk's file back (as the report would copy it) and removes it
    spool = None if backend == "inprocess" else tempfile.mkdtemp(dir=tmp, prefix="spool-")
    runner = open_backend(
        context,
        ChunkOptions(terms="all", encode=True, spool=spool),
        backend=backend,
        jobs=jobs,
        scheduler="local" if backend == "dask" else None,
    )
    try:
        for _ in ordered(runner, plan_library(warm, chunk_size=1)):
            pass
        start = time.perf_counter()
        for result in ordered(runner, plan_library(path, chunk_size=DEFAULT_CHUNK_SIZE)):
            if result.spooled is not None:
                with open(result.spooled, "rb") as spooled:
                    spooled.read()
                os.remove(result.spooled)
        return time.perf_counter() - start
    finally:
        runner.close()


def load_average() -> str:
    """The 1, 5 and 15 minute load averages, as ``uptime`` shows them."""
    try:
        return ", ".join(f"{x:.2f}" for x in os.getloadavg())
    except OSError:
        return "unknown"


def peak_rss_mib(argv: list[str]) -> tuple[float, float]:
    """Wall seconds and peak RSS (MiB) of ``python -m ffaudit.cli.main ARGV`` in a fresh process.

    Raises ``RuntimeError`` with the end of its stderr when the run fails.
    """
    # VmHWM (Linux) is the peak of this process's own memory since it was exec'ed; ru_maxrss would also
    # count what the benchmark process held when it forked this one (Linux keeps it across exec)
    code = (
        "import resource, sys, time\n"
        "from ffaudit.cli.main import main\n"
        "def own_peak_kib():\n"
        "    try:\n"
        "        with open('/proc/self/status') as status:\n"
        "            for line in status:\n"
        "                if line.startswith('VmHWM:'):\n"
        "                    return int(line.split()[1])\n"
        "    except OSError:\n"
        "        pass\n"
        "    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
        "t = time.perf_counter()\n"
        f"rc = main({argv!r})\n"
        "dt = time.perf_counter() - t\n"
        "kids_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss\n"
        "print(dt, max(own_peak_kib(), kids_kib) / 1024, file=sys.stderr)\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    lines = proc.stderr.strip().splitlines()
    try:
        seconds, mib = lines[-1].split()
        return float(seconds), float(mib)
    except (IndexError, ValueError):
        raise RuntimeError(f"ffaudit {' '.join(argv)} failed:\n" + "\n".join(lines[-20:])) from None


def repeated(lines: list[str], times: int, directory: str) -> str:
    path = os.path.join(directory, f"nci_x{times}.smi")
    with open(path, "w") as handle:
        for _ in range(times):
            handle.write("\n".join(lines) + "\n")
    return path


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--records", type=int, default=5000, help="molecules of first_5K.smi to use"
    )
    parser.add_argument(
        "--repeats", type=int, default=3, help="rounds of the one-core measurements (best is kept)"
    )
    parser.add_argument(
        "--no-dask", action="store_true", help="skip the Dask LocalCluster (2 workers)"
    )
    parser.add_argument(
        "--scaling-times",
        type=int,
        default=4,
        metavar="K",
        help="the engine's speed-ups are also measured on the records repeated K times (default 4; "
        "1 to skip)",
    )
    parser.add_argument(
        "--big", action="store_true", help="also run 1,000,000 records on all cores"
    )
    parser.add_argument(
        "--big-records",
        type=int,
        default=1_000_000,
        metavar="N",
        help="records of the --big run (default 1,000,000)",
    )
    parser.add_argument(
        "--big-only", action="store_true", help="with --big: skip the 5K/50K measurements"
    )
    parser.add_argument(
        "--big-terms",
        choices=("all", "problems", "none"),
        default="none",
        help="--terms of the --big run (default none: with the demonstration set, problems would "
        "write about 56 KB of JSON per molecule, 56 GB for 1M records)",
    )
    args = parser.parse_args()
    # the in-process measurements run as the ffaudit command does, with its allocator settings
    from ffaudit.engine import allocator

    allocator.tune()

    lines = smiles_lines(args.records)
    print(
        f"machine: {platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}"
    )
    print(f"input: {NCI.name}, {len(lines)} molecules; best of {args.repeats} rounds")
    print(f"load average before: {load_average()}")
    with tempfile.TemporaryDirectory() as tmp:
        if not args.big_only:
            small(args, lines, tmp)
        if args.big:
            big_run(args.big_records, lines, tmp, args.big_terms)
    print(f"load average after: {load_average()}")
    return 0


def small(args: argparse.Namespace, lines: list[str], tmp: str) -> None:
    """The 5K measurements: one core against MMFF94, 2 processes, Dask, RSS at 5K and 50K."""
    base = repeated(lines, 1, tmp)
    t_mmff = t_one = t_problems = t_floor = float("inf")
    n = 0
    for _ in range(max(1, args.repeats)):
        t_mmff = min(t_mmff, mmff_preflight(lines))
        t_floor = min(t_floor, parse_and_smiles(lines))
        seconds, n = ffaudit_run(base, "inprocess", 1)
        t_one = min(t_one, seconds)
        t_problems = min(t_problems, ffaudit_run(base, "inprocess", 1, terms="problems")[0])
    t_reference, _ = ffaudit_run(base, "inprocess", 1, reference=True)  # one round: it is slow
    print(f"RDKit MMFF94 pre-flight, 1 core:          {len(lines) / t_mmff:8.0f} molecules/s")
    print(f"ffaudit audit (--terms all), 1 core:      {n / t_one:8.0f} molecules/s")
    print(f"ffaudit audit (--terms problems), 1 core: {n / t_problems:8.0f} molecules/s")
    print(f"reference path (--terms all), 1 core:     {n / t_reference:8.0f} molecules/s")
    print(f"ratio ffaudit / MMFF94 time, 1 core:      {t_one / t_mmff:8.2f}  (terms all)")
    print(f"ratio ffaudit / MMFF94 time, 1 core:      {t_problems / t_mmff:8.2f}  (terms problems)")
    print(f"ratio reference path / MMFF94 time:       {t_reference / t_mmff:8.2f}  (terms all)")
    print(f"ratio RDKit parse + canonical SMILES only: {t_floor / t_mmff:7.2f}  (in every audit)")
    print(f"fast path speed-up over reference path:   {t_reference / t_one:8.2f}x")
    # the engine with JSON lines made by the workers (as for a JSONL report), once the back-end has started
    # (worker processes or cluster up, set loaded in each): the throughput of a long run. The back-ends'
    # rounds alternate (one core, 2 processes, Dask, one core, ...) and each keeps its best, so a slow
    # minute of the machine does not fall on one back-end only. The first stream is the 5K records (caches
    # cold at its start); the second is them repeated --scaling-times times (the later copies find the
    # tuples resolved: the steady state of a long library)
    backends = [("inprocess", 1), ("processes", 2)]
    if not args.no_dask:
        backends.append(("dask", 2))
    streams = [(base, n)]
    if args.scaling_times > 1:
        streams.append((repeated(lines, args.scaling_times, tmp), n * args.scaling_times))
    for path, records in streams:
        best = {backend: float("inf") for backend, _ in backends}
        for _ in range(max(1, args.repeats)):
            for backend, jobs in backends:
                best[backend] = min(best[backend], engine_run(path, backend, jobs, tmp))
        one = best["inprocess"]
        print(
            f"engine, JSON lines, {records} records, 1 core (started): {records / one:8.0f} molecules/s"
        )
        print(
            f"engine, JSON lines, {records} records, speed-up with 2 processes:          "
            f"{one / best['processes']:5.2f}x"
        )
        if "dask" in best:
            print(
                f"engine, JSON lines, {records} records, speed-up with Dask LocalCluster (2): "
                f"{one / best['dask']:5.2f}x"
            )
    # whole CLI runs (set loading, workers' start-up and writing included), one after another
    report = ["--format", "jsonl", "--terms", "all", "--fail-on", "never", "-o", os.devnull]
    engines: list[tuple[str, list[str]]] = [("1 core", ["--jobs", "1"])]
    engines.append(("2 processes", ["--jobs", "2"]))
    if not args.no_dask:
        engines.append(("Dask LocalCluster (2)", ["--scheduler", "local", "--jobs", "2"]))
    for mode, output in (
        ("JSONL report", report),
        ("output directory", ["--terms", "all", "--fail-on", "never", "--no-progress"]),
    ):
        walls: dict[str, float] = {}
        for label, engine in engines:
            extra = list(output)
            if mode == "output directory":
                extra += ["-o", os.path.join(tmp, f"dir-{len(walls)}") + "/"]
            walls[label], _ = peak_rss_mib(["audit", base, *extra, *engine])
        one = walls["1 core"]
        print(f"CLI, {mode}, 1 core: {one:6.1f} s, ratio to MMFF94 pre-flight {one / t_mmff:.2f}")
        for label, wall in walls.items():
            if label != "1 core":
                print(f"CLI, {mode}, speed-up with {label}: {one / wall:5.2f}x ({wall:.1f} s)")
    x10 = repeated(lines, 10, tmp)
    common = [
        "--format",
        "jsonl",
        "--terms",
        "problems",
        "--fail-on",
        "never",
        "-o",
        os.devnull,
    ]
    wall5, rss5 = peak_rss_mib(["audit", base, *common, "--jobs", "1"])
    wall50, rss50 = peak_rss_mib(["audit", x10, *common, "--jobs", "1"])
    print(
        f"CLI, JSONL --terms problems, {len(lines)} records, 1 core:  {wall5:6.1f} s, "
        f"peak RSS {rss5:7.1f} MiB"
    )
    print(
        f"CLI, JSONL --terms problems, {10 * len(lines)} records, 1 core: {wall50:6.1f} s, "
        f"peak RSS {rss50:7.1f} MiB  (RSS ratio {rss50 / rss5:.3f})"
    )


def tree_run(argv: list[str], interval: float = 0.1) -> tuple[float, float, float]:
    """Wall seconds, peak total RSS and peak single-process RSS (MiB) of ``ffaudit ARGV`` with its workers.

    The CLI runs as a subprocess; every ``interval`` seconds the RSS of it and of all its descendants
    (worker processes, the forkserver) is read with psutil and summed. Sampling can miss a peak shorter
    than the interval. Raises ``RuntimeError`` when the run fails or psutil is not installed.
    """
    try:
        import psutil
    except ImportError:
        raise RuntimeError(
            "the process-tree RSS needs psutil (installed with the dask extra)"
        ) from None
    start = time.perf_counter()
    proc = subprocess.Popen(
        [sys.executable, "-m", "ffaudit.cli.main", *argv],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    root = psutil.Process(proc.pid)
    total = single = 0
    while proc.poll() is None:
        try:
            members = [root, *root.children(recursive=True)]
        except psutil.NoSuchProcess:
            break
        sizes = []
        for member in members:
            try:
                sizes.append(member.memory_info().rss)
            except psutil.NoSuchProcess:
                continue
        if sizes:
            total = max(total, sum(sizes))
            single = max(single, max(sizes))
        time.sleep(interval)
    wall = time.perf_counter() - start
    _, err = proc.communicate()
    if proc.returncode not in (0, 1):
        raise RuntimeError(
            f"ffaudit {' '.join(argv)} failed:\n" + err.decode(errors="replace")[-2000:]
        )
    return wall, total / 2**20, single / 2**20


def big_run(records: int, lines: list[str], tmp: str, terms: str = "none") -> None:
    """Wall time and peak RSS of ``records`` records (the file repeated), all cores, output directory
    (``--terms terms``; the summary and every molecule's status, counts and score are written whatever
    the mode).

    The RSS is that of the whole process tree (the CLI and its worker processes), sampled."""
    times = max(1, records // len(lines))
    big = repeated(lines, times, tmp)
    out = os.path.join(tmp, "big-run") + "/"
    wall, total, single = tree_run(
        ["audit", big, "--terms", terms, "--fail-on", "never", "-o", out, "--no-progress"]
    )
    written = sum(f.stat().st_size for f in Path(out).rglob("*") if f.is_file())
    print(
        f"{times * len(lines)} records (--terms {terms}, {written / 2**30:.2f} GiB written), all "
        f"cores, output directory: {wall:.0f} s "
        f"({times * len(lines) / wall:.0f} records/s), peak RSS {total:.1f} MiB for all processes "
        f"(largest process {single:.1f} MiB)"
    )


if __name__ == "__main__":
    sys.exit(main())
