"""Instruction counts of an audit, with valgrind's callgrind: a measure the machine's noise does not touch.

Wall times on a shared machine move by tens of percent from minute to minute; the number of instructions a
run executes does not (the same binary, inputs and environment give the same count, whatever else the
machine is doing). This script counts, in fresh processes under ``valgrind --tool=callgrind``:

- *start-up*: Python starting, ffaudit's modules imported, the embedded set loaded and compiled, and one
  trivial record audited (so the fast path's modules are imported too);
- *audit*: the same, then the first ``--records`` records of RDKit's shipped NCI ``first_5K.smi`` audited
  in-process through the engine's chunk function, as ``ffaudit audit`` runs them and as
  ``bench_library.py`` times them (its ``ffaudit_run``; ``--terms`` as given; the caches start cold, as in
  every worker);

and prints both and their difference, the audit's own count. ``--src DIR`` runs another checkout's
``src`` (for an A/B of two commits: ``git worktree add /tmp/old REV``, then ``--src /tmp/old/src``); both
runs of one call use the same tree. The audit's count repeats to about 0.1% between runs in a row and
has varied by up to 2% between runs further apart (0.840 to 0.859 G for 200 records in six runs), so
compare several runs each way before crediting a change of a few percent. Needs valgrind on the PATH;
under callgrind the audit runs about 50 times slower than natively (a few minutes for 5K records).

Usage: ``python benchmarks/count_instructions.py [--records N] [--terms all|problems|none] [--src DIR]``
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from bench_library import NCI, smiles_lines

BENCHMARKS = Path(__file__).resolve().parent

# what both child processes run (the start-up count's library is one trivial record): the audit exactly as
# benchmarks/bench_library.py times it (its ffaudit_run), then the package it ran and the records audited
CHILD = f"""
import sys
sys.path.insert(0, {str(BENCHMARKS)!r})
from rdkit import rdBase
import ffaudit
from bench_library import ffaudit_run
rdBase.DisableLog("rdApp.*")
_, n = ffaudit_run(sys.argv[1], "inprocess", 1, terms=sys.argv[2])
print(ffaudit.__file__)
print(n)
"""

_TOTAL = re.compile(r"^(?:summary|totals):\s+(\d+)", re.MULTILINE)


def instructions(path: str, terms: str, src: str | None, out: Path) -> tuple[int, int, str]:
    """(instructions, records audited, the ``ffaudit`` package file it ran) of one child process auditing
    ``path`` under callgrind.

    Raises ``RuntimeError`` with the end of valgrind's output when the child fails or no count is found.
    """
    env = dict(os.environ, PYTHONHASHSEED="0")  # the same hashing, so the same work, in every run
    if src is not None:
        env["PYTHONPATH"] = os.pathsep.join(filter(None, [src, env.get("PYTHONPATH")]))
    argv = [
        "valgrind",
        "--tool=callgrind",
        f"--callgrind-out-file={out}",
        sys.executable,
        "-c",
        CHILD,
        path,
        terms,
    ]
    proc = subprocess.run(argv, capture_output=True, text=True, env=env, check=False)
    if proc.returncode != 0 or not out.exists():
        raise RuntimeError(f"callgrind run failed ({proc.returncode}):\n{proc.stderr[-2000:]}")
    found = _TOTAL.search(out.read_text(errors="replace"))
    if found is None:
        raise RuntimeError(f"no instruction total in {out}")
    package, audited = proc.stdout.split()[-2:]
    return int(found.group(1)), int(audited), package


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--records", type=int, default=5000, metavar="N", help="default 5000")
    parser.add_argument("--terms", choices=("all", "problems", "none"), default="none")
    parser.add_argument("--src", metavar="DIR", help="the src directory of another checkout to run")
    args = parser.parse_args()
    if shutil.which("valgrind") is None:
        print("count_instructions: valgrind is not on the PATH", file=sys.stderr)
        return 2
    lines = smiles_lines(args.records)
    with tempfile.TemporaryDirectory() as tmp:
        library = Path(tmp, "library.smi")
        library.write_text("\n".join(lines) + "\n")
        trivial = Path(tmp, "one.smi")
        trivial.write_text("C methane\n")
        base, _, _ = instructions(str(trivial), args.terms, args.src, Path(tmp, "start.out"))
        total, n, package = instructions(str(library), args.terms, args.src, Path(tmp, "audit.out"))
    print(f"input: {NCI.name}, {n} records, --terms {args.terms}; ffaudit from {Path(package).parent}")
    print(f"start-up (imports, set, one trivial record): {base / 1e9:8.3f} G instructions")
    print(f"start-up and audit:                          {total / 1e9:8.3f} G instructions")
    print(f"audit alone:                                 {(total - base) / 1e9:8.3f} G instructions")
    print(f"per record:                                  {(total - base) / max(n, 1) / 1e6:8.3f} M")
    return 0


if __name__ == "__main__":
    sys.exit(main())
