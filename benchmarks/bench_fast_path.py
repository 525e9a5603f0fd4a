"""Fast-path benchmark: reference audit vs batched fast path vs RDKit's MMFF94 pre-flight, one core, one run.

For RDKit's shipped ``Data/NCI/first_5K.smi`` (or ``--input``) and the embedded default set, measures

- ``mmff``: RDKit's MMFF94 pre-flight (parse SMILES, add hydrogens, MMFF typing, ``MMFFHasAllMoleculeParams``);
- ``read``: ffaudit's reader (``ffaudit.read.open.iter_records``);
- ``reference``: ``AuditContext.audit_record`` on every record (skip with ``--no-reference``: it is slow);
- ``fast``: ``FastAuditor.audit_records`` (:mod:`ffaudit.engine.batch`), fresh context each round;
- ``fast_warm``: the same with the resolver's tuple cache already filled (a long library's steady state);
- ``fast_dict``: fast audits plus ``to_dict(terms="problems")`` for every record (the JSONL objects);

each as the best of ``--repeats`` interleaved rounds (other work on the machine slows single rounds), and
prints molecules/s and the ratios to the MMFF94 pre-flight. The headline ratio is
(read + fast audit + output objects with ``--terms problems``) / mmff; ``read + fast`` leaves the output
objects out and so understates a real run. ``benchmarks/bench_library.py`` measures the audit exactly as
``ffaudit audit`` runs it (the engine's chunk function), which is the figure to quote.

Call :func:`measure` from another script for the same numbers as a dict.

Usage: ``python benchmarks/bench_fast_path.py [--limit N] [--repeats R] [--batch-size B] [--layout L]
[--no-reference] [--input FILE.smi]``
"""

from __future__ import annotations

import argparse
import gc
import os
import platform
import time
from collections.abc import Callable
from typing import Any

from rdkit import Chem, RDConfig, rdBase
from rdkit.Chem import rdForceFieldHelpers

NCI = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")


def _smiles(path: str, limit: int | None) -> list[str]:
    with open(path, encoding="utf-8") as handle:
        lines = [line.split()[0] for line in handle if line.strip() and not line.startswith("#")]
    return lines[:limit] if limit else lines


def mmff_preflight(smiles: list[str]) -> float:
    """Seconds for RDKit's MMFF94 pre-flight over ``smiles`` (one core)."""
    start = time.perf_counter()
    for text in smiles:
        mol = Chem.MolFromSmiles(text)
        if mol is None:
            continue
        molh = Chem.AddHs(mol)
        props = rdForceFieldHelpers.MMFFGetMoleculeProperties(molh)
        if props is not None:
            rdForceFieldHelpers.MMFFHasAllMoleculeParams(molh)
    return time.perf_counter() - start


def _timed(func: Callable[[], Any]) -> float:
    gc.collect()
    start = time.perf_counter()
    func()
    return time.perf_counter() - start


def measure(
    path: str = NCI,
    limit: int | None = None,
    repeats: int = 3,
    batch_size: int = 50,
    layout: str = "auto",
    reference: bool = True,
) -> dict[str, Any]:
    """Best-of-``repeats`` seconds for each measurement (see the module docstring) and the ratios.

    Returns ``{"records": n, "seconds": {...}, "per_second": {...}, "ratio_to_mmff": {...}}``.
    """
    from ffaudit.audit import AuditContext
    from ffaudit.engine.batch import FastAuditor
    from ffaudit.paramset.load import load_parameter_set
    from ffaudit.read.open import iter_records

    rdBase.DisableLog("rdApp.*")
    pset = load_parameter_set()
    smiles = _smiles(path, limit)
    records = list(iter_records(path))
    if limit:
        records = records[:limit]
    warm = FastAuditor(AuditContext(pset), batch_size=batch_size, layout=layout)
    list(warm.audit_records(records))

    def fast() -> None:
        list(
            FastAuditor(AuditContext(pset), batch_size=batch_size, layout=layout).audit_records(
                records
            )
        )

    def fast_dict() -> None:
        auditor = FastAuditor(AuditContext(pset), batch_size=batch_size, layout=layout)
        for audit in auditor.audit_records(records):
            audit.to_dict(pset, "problems")

    def read() -> None:
        for record in iter_records(path):
            if limit and record.index >= limit:
                break

    def ref() -> None:
        context = AuditContext(pset)
        for record in records:
            context.audit_record(record)

    jobs: dict[str, Callable[[], Any]] = {
        "mmff": lambda: mmff_preflight(smiles),
        "read": read,
        "fast": fast,
        "fast_warm": lambda: list(warm.audit_records(records)),
        "fast_dict": fast_dict,
    }
    if reference:
        jobs["reference"] = ref
    best: dict[str, float] = {}
    with rdBase.BlockLogs():
        for round_ in range(repeats):
            for name, job in jobs.items():
                if name == "reference" and round_ > 0:
                    continue  # one round is enough to see it is slow
                seconds = _timed(job)
                best[name] = min(seconds, best.get(name, seconds))
    n = len(records)
    totals = dict(best)
    totals["read+fast"] = best["read"] + best["fast"]
    totals["read+fast_dict"] = best["read"] + best["fast_dict"]
    if reference:
        totals["read+reference"] = best["read"] + best["reference"]
    mmff = best["mmff"]
    return {
        "records": n,
        "seconds": totals,
        "per_second": {k: n / v for k, v in totals.items() if v > 0},
        "ratio_to_mmff": {k: v / mmff for k, v in totals.items()},
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--input", default=NCI)
    parser.add_argument("--limit", type=int, default=None)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--batch-size", type=int, default=50)
    parser.add_argument("--layout", default="auto", choices=("auto", "explicit"))
    parser.add_argument("--no-reference", action="store_true")
    args = parser.parse_args(argv)
    result = measure(
        args.input, args.limit, args.repeats, args.batch_size, args.layout, not args.no_reference
    )
    print(
        f"ffaudit fast-path benchmark: {result['records']} records of {os.path.basename(args.input)}, "
        f"one core, best of {args.repeats}; {platform.processor() or platform.machine()}, "
        f"RDKit {rdBase.rdkitVersion}; batch size {args.batch_size}, layout {args.layout}"
    )
    print(f"{'measurement':<16}{'seconds':>10}{'mol/s':>12}{'/ mmff':>10}")
    for name in sorted(result["seconds"], key=lambda k: result["seconds"][k]):
        print(
            f"{name:<16}{result['seconds'][name]:>10.3f}{result['per_second'][name]:>12.0f}"
            f"{result['ratio_to_mmff'][name]:>10.2f}"
        )
    print(
        "audit with output objects / MMFF94 pre-flight (read + fast_dict): "
        f"{result['ratio_to_mmff']['read+fast_dict']:.2f}"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
