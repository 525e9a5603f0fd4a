"""Library benchmark: ffaudit against RDKit's MMFF94 pre-flight, measured in the same run.

Prints molecules per second for

- the reference: RDKit's MMFF94 pre-flight on the same molecules (parse SMILES, add hydrogens, MMFF typing,
  ``MMFFHasAllMoleculeParams``), one core;
- ffaudit's full audit with the embedded set (parse, classes, terms, resolution, estimates, the JSONL
  molecule objects with every term), one core, and the ratio of the two times;
- ffaudit with 2 worker processes (and a Dask LocalCluster of 2 workers with ``--dask``), as speed-ups;

and the peak RSS of a whole ``ffaudit audit`` process for 5K records and for 50K records (the file repeated).
With ``--big``: wall time and peak RSS of a 1,000,000-record run on all cores in output-directory mode.

Input: RDKit's shipped ``Data/NCI/first_5K.smi``. Ratios, not absolute times, are what to compare across
machines: both sides are measured on the same machine within minutes of each other.

Usage: ``python benchmarks/bench_library.py [--records N] [--dask] [--big]``
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

from rdkit import Chem, RDConfig, RDLogger
from rdkit.Chem import rdForceFieldHelpers

NCI = Path(RDConfig.RDDataDir) / "NCI" / "first_5K.smi"


def smiles_lines(limit: int) -> list[str]:
    lines = [line for line in NCI.read_text().splitlines() if line.strip()]
    return lines[:limit]


def mmff_preflight(lines: list[str]) -> float:
    """Seconds for RDKit's MMFF94 pre-flight over ``lines`` (one core)."""
    RDLogger.DisableLog("rdApp.*")
    start = time.perf_counter()
    for line in lines:
        mol = Chem.MolFromSmiles(line.split()[0])
        if mol is None:
            continue
        molh = Chem.AddHs(mol)
        props = rdForceFieldHelpers.MMFFGetMoleculeProperties(molh)
        if props is not None:
            rdForceFieldHelpers.MMFFHasAllMoleculeParams(molh)
    return time.perf_counter() - start


def ffaudit_run(path: str, backend: str, jobs: int, terms: str = "all") -> tuple[float, int]:
    """Seconds and records for a full audit of ``path`` with the embedded set (output objects built)."""
    from ffaudit.audit import AuditContext
    from ffaudit.engine.base import audit_chunks
    from ffaudit.engine.rawsplit import plan_library
    from ffaudit.engine.work import ChunkOptions
    from ffaudit.paramset.load import load_parameter_set

    context = AuditContext(load_parameter_set())
    start = time.perf_counter()
    n = 0
    for result in audit_chunks(
        context,
        plan_library(path, chunk_size=250),
        options=ChunkOptions(terms=terms),
        backend=backend,
        n_jobs=jobs,
        scheduler="local" if backend == "dask" else None,
    ):
        n += result.count
    return time.perf_counter() - start, n


def peak_rss_mib(argv: list[str]) -> tuple[float, float]:
    """Wall seconds and peak RSS (MiB) of ``python -m ffaudit.cli.main ARGV`` in a fresh process."""
    code = (
        "import resource, sys, time\n"
        "from ffaudit.cli.main import main\n"
        "t = time.perf_counter()\n"
        f"rc = main({argv!r})\n"
        "dt = time.perf_counter() - t\n"
        "self_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
        "kids_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss\n"
        "print(dt, max(self_kib, kids_kib) / 1024, file=sys.stderr)\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    last = proc.stderr.strip().splitlines()[-1]
    seconds, mib = last.split()
    return float(seconds), float(mib)


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
        "--dask", action="store_true", help="also measure a Dask LocalCluster (2 workers)"
    )
    parser.add_argument(
        "--big", action="store_true", help="also run 1,000,000 records on all cores"
    )
    args = parser.parse_args()

    lines = smiles_lines(args.records)
    print(
        f"machine: {platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}"
    )
    print(f"input: {NCI.name}, {len(lines)} molecules")
    with tempfile.TemporaryDirectory() as tmp:
        base = repeated(lines, 1, tmp)
        t_mmff = mmff_preflight(lines)
        t_one, n = ffaudit_run(base, "inprocess", 1)
        t_problems, _ = ffaudit_run(base, "inprocess", 1, terms="problems")
        t_two, _ = ffaudit_run(base, "processes", 2)
        print(f"RDKit MMFF94 pre-flight, 1 core:        {len(lines) / t_mmff:8.0f} molecules/s")
        print(f"ffaudit audit (--terms all), 1 core:    {n / t_one:8.0f} molecules/s")
        print(f"ffaudit audit (--terms problems), 1 core:{n / t_problems:7.0f} molecules/s")
        print(f"ratio ffaudit / MMFF94 time, 1 core:    {t_one / t_mmff:8.2f}  (terms all)")
        print(
            f"ratio ffaudit / MMFF94 time, 1 core:    {t_problems / t_mmff:8.2f}  (terms problems)"
        )
        print(f"speed-up with 2 processes:              {t_one / t_two:8.2f}x")
        if args.dask:
            t_dask, _ = ffaudit_run(base, "dask", 2)
            print(f"speed-up with Dask LocalCluster (2):    {t_one / t_dask:8.2f}x")
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
        _, rss5 = peak_rss_mib(["audit", base, *common, "--jobs", "1"])
        _, rss50 = peak_rss_mib(["audit", x10, *common, "--jobs", "1"])
        print(f"peak RSS, {len(lines)} records:                {rss5:8.1f} MiB")
        print(
            f"peak RSS, {10 * len(lines)} records:               {rss50:8.1f} MiB  (ratio {rss50 / rss5:.3f})"
        )
        if args.big:
            times = max(1, 1_000_000 // len(lines))
            big = repeated(lines, times, tmp)
            out = os.path.join(tmp, "big-run") + "/"
            wall, rss = peak_rss_mib(
                [
                    "audit",
                    big,
                    "--terms",
                    "problems",
                    "--fail-on",
                    "never",
                    "-o",
                    out,
                    "--no-progress",
                ]
            )
            print(
                f"{times * len(lines)} records, all cores, output directory: {wall:.0f} s, peak RSS {rss:.1f} MiB"
            )
    return 0


if __name__ == "__main__":
    sys.exit(main())
