"""``ffaudit audit LIBRARY``: audit a structure library against a parameter set.

The records are audited in chunks by the engine (:mod:`ffaudit.engine`): in this process (``--jobs 1``),
in local worker processes (``--jobs N``, default all cores) or on a Dask cluster (``--scheduler``). The
output is the same byte for byte whichever runs it.

Output goes to stdout, to a file (``-o FILE``), or, for large runs, to an output directory (``-o DIR/``,
``-o`` naming an existing directory, or ``--output-dir DIR``) of per-chunk JSONL (and Parquet) files, a
manifest and ``summary.json``, which ``--resume`` continues after an interruption
(:mod:`ffaudit.engine.outdir`).
"""

from __future__ import annotations

import argparse
import contextlib
import os
import tempfile
from collections.abc import Iterable, Iterator
from typing import Any, TextIO

from ffaudit import __version__
from ffaudit.audit import TERMS_MODES, AuditContext, Summary, cautions_for, parameter_set_info
from ffaudit.cli import exitcodes
from ffaudit.cli.common import (
    add_params_option,
    add_reader_options,
    load_params,
    positive_int,
    reader_options,
)
from ffaudit.engine.base import (
    DEFAULT_CHUNK_SIZE,
    ChunkJob,
    ChunkOptions,
    audit_chunks,
    default_jobs,
)
from ffaudit.errors import UsageError
from ffaudit.policy import FAIL_ON, gate

FORMATS: tuple[str, ...] = ("table", "json", "jsonl", "csv")
DEFAULT_FORMAT = "table"
TERM_LISTING_FORMATS: tuple[str, ...] = ("json", "jsonl")
"""Formats that write each molecule's term list; for the others (the table counts statuses, the CSV reads
``counts``) workers leave the list out, which keeps the molecules shipped back small."""
DIRECTORY_FORMATS: tuple[str, ...] = ("jsonl",)
"""``--format`` values accepted with an output directory (whose chunk files are JSONL, plus Parquet)."""


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "audit",
        help="audit a structure library against a parameter set",
        description="Read LIBRARY (SMILES, SDF, MOL2, PDB; .gz too), assign environment classes, enumerate "
        "terms and report which terms the parameter set covers, how, and which it lacks. The output is "
        "the same byte for byte whatever --jobs, --scheduler and --chunk-size are.",
    )
    p.add_argument("library", metavar="LIBRARY", help="structure file, or - for standard input")
    add_params_option(p)
    add_reader_options(p)
    p.add_argument(
        "--format",
        choices=FORMATS,
        default=None,
        help=f"output format (default: {DEFAULT_FORMAT}; with an output directory the chunk files are "
        "always JSONL, plus Parquet when pyarrow is installed)",
    )
    out = p.add_mutually_exclusive_group()
    out.add_argument(
        "-o",
        "--output",
        metavar="PATH",
        help="write the report to PATH (default: stdout). PATH is an output directory when it ends "
        "with / or is an existing directory: per-chunk JSONL (and Parquet) files, manifest.json and "
        "summary.json are written there, and --resume can continue the run",
    )
    out.add_argument(
        "--output-dir",
        metavar="DIR",
        help="write the run into the output directory DIR (as -o DIR/), created if missing",
    )
    p.add_argument(
        "--resume",
        action="store_true",
        help="continue the run in the output directory: chunks already written and matching their "
        "recorded sha256 are kept, the others audited again (the options must be the same)",
    )
    p.add_argument(
        "--terms",
        choices=TERMS_MODES,
        default="all",
        help="which terms machine formats list per molecule: all, problems (not exact), none; "
        "counts always cover every term (default: all)",
    )
    p.add_argument(
        "--fail-on",
        choices=FAIL_ON,
        default="missing",
        help="exit 1 when any record is incomplete or unreadable (missing), also estimated (estimated), "
        "or never (default: missing)",
    )
    p.add_argument(
        "--min-score", type=float, metavar="X", help="exit 1 when a molecule scores below X"
    )
    estimates = p.add_argument_group("estimates")
    estimates.add_argument(
        "--no-analogy",
        action="store_true",
        help="do not copy values from similar parameterised tuples (the analogy tier)",
    )
    estimates.add_argument(
        "--no-estimate",
        action="store_true",
        help="do not estimate values from published rules (the UFF estimate tier)",
    )
    estimates.add_argument(
        "--emit-params",
        metavar="FILE.yaml",
        help="write every estimated value (analogy or rule) and the proposed classes as a parameter-set "
        "fragment for review; --params BASE --params FILE.yaml then uses them (flagged as estimated "
        "entries). The fragment is made in a separate pass in this process",
    )
    engine = p.add_argument_group("engine")
    engine.add_argument(
        "-j",
        "--jobs",
        type=positive_int,
        metavar="N",
        help="worker processes (default: all cores, here %(default_jobs)s; 1 audits in this process); "
        "with --scheduler local, the number of Dask workers".replace(
            "%(default_jobs)s", str(default_jobs())
        ),
    )
    engine.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="audit on a Dask cluster: a scheduler address (tcp://HOST:PORT), or 'local' to start a "
        "LocalCluster of --jobs workers for this run (needs the dask extra)",
    )
    engine.add_argument(
        "--chunk-size",
        type=positive_int,
        default=DEFAULT_CHUNK_SIZE,
        metavar="N",
        help=f"records per chunk sent to a worker and per chunk file (default: {DEFAULT_CHUNK_SIZE})",
    )
    engine.add_argument(
        "--progress",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="show a progress bar on stderr (default: only when stderr is a terminal)",
    )
    p.set_defaults(run=run)


def output_directory(args: argparse.Namespace) -> str | None:
    """The output directory the arguments ask for, or None for a report file or stdout.

    ``--output-dir DIR`` always; ``-o PATH`` when PATH ends with a path separator or is an existing
    directory.
    """
    if getattr(args, "output_dir", None):
        return str(args.output_dir)
    path = args.output
    if path is None or path == "-":
        return None
    if path.endswith(("/", os.sep)) or os.path.isdir(path):
        return str(path)
    return None


def _engine(args: argparse.Namespace) -> tuple[str, int]:
    jobs = args.jobs or default_jobs()
    if args.scheduler:
        return "dask", jobs
    return ("inprocess" if jobs == 1 else "processes"), jobs


def _local_scheduler(args: argparse.Namespace) -> bool:
    """True when the chunks run on this machine: no scheduler, or a LocalCluster started for the run."""
    return args.scheduler in (None, "", "local")  # "local": ffaudit.engine.dask_backend.LOCAL


def _peek(jobs: Iterator[ChunkJob]) -> tuple[list[ChunkJob], Iterator[ChunkJob]]:
    head: list[ChunkJob] = []
    for job in jobs:
        head.append(job)
        if len(head) == 2:
            break
    return head, jobs


def _chain(head: list[ChunkJob], rest: Iterator[ChunkJob]) -> Iterator[ChunkJob]:
    yield from head
    yield from rest


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.engine.progress import estimate_records, wants_progress
    from ffaudit.engine.rawsplit import plan_library, resolve_format

    directory = output_directory(args)
    fmt = args.format or DEFAULT_FORMAT
    if args.resume and directory is None:
        raise UsageError("--resume needs an output directory (-o DIR/ or --output-dir DIR)")
    if directory is not None and args.format is not None and args.format not in DIRECTORY_FORMATS:
        raise UsageError(
            f"--format {args.format} writes one report; an output directory holds JSONL (and Parquet) "
            "chunk files and summary.json instead. Drop --format, or write the report with -o FILE"
        )
    if directory is not None and args.resume and args.library == "-":
        raise UsageError("--resume cannot continue a run read from standard input; audit a file")
    options: dict[str, Any] = reader_options(args)
    input_format = resolve_format(args.library, args.input_format)
    pset = load_params(args)
    tiers = ["wildcard", "parent"]
    tiers += [] if args.no_analogy else ["analogy"]
    tiers += [] if args.no_estimate else ["estimate"]
    context = AuditContext(pset, tiers=tiers)
    if args.emit_params:
        _emit_params(args, context, options, stderr)
    backend, n_jobs = _engine(args)
    plan = plan_library(args.library, args.input_format, chunk_size=args.chunk_size, **options)
    head, rest = _peek(plan)
    if backend == "processes" and len(head) < 2:
        backend = "inprocess"  # one chunk: starting worker processes would only cost time
    chunk_jobs = _chain(head, rest)
    run_info = {
        "parameter_set": parameter_set_info(pset),
        "cautions": cautions_for(pset),
        "terms_mode": args.terms,
    }
    show = wants_progress(stderr, args.progress)
    total = estimate_records(args.library, input_format) if show else None

    def audit(jobs: Iterable[ChunkJob], chunk_options: ChunkOptions) -> Iterator[Any]:
        return audit_chunks(
            context,
            jobs,
            options=chunk_options,
            backend=backend,
            n_jobs=n_jobs,
            scheduler=args.scheduler,
        )

    if directory is not None:
        result = _run_directory(
            args,
            directory,
            input_format,
            options,
            pset,
            run_info,
            chunk_jobs,
            audit,
            stderr,
            show,
            total,
        )
    else:
        # workers of this machine in processes of their own (--jobs N, a LocalCluster) spool their lines
        spooling = backend == "processes" or (backend == "dask" and _local_scheduler(args))
        result = _run_report(
            args, fmt, pset, run_info, chunk_jobs, audit, stdout, stderr, show, total, spooling
        )
    status = result["status"]
    print(
        f"ffaudit: {result['records']} records: "
        + ", ".join(f"{n} {s}" for s, n in status.items()),
        file=stderr,
    )
    verdict = gate(status, args.fail_on, args.min_score, result["score"]["min"])
    if not verdict.ok:
        print(f"ffaudit: {verdict.message}", file=stderr)
        return exitcodes.POLICY_FAILED
    return exitcodes.OK


def _emit_params(
    args: argparse.Namespace, context: AuditContext, options: dict[str, Any], stderr: TextIO
) -> None:
    from ffaudit.emit import FragmentBuilder
    from ffaudit.read.open import iter_records
    from ffaudit.report.base import open_output

    if args.library == "-":
        raise UsageError("--emit-params needs a library file (it reads the library twice)")
    builder = FragmentBuilder(context.pset)
    for record in iter_records(args.library, args.input_format, **options):
        builder.add(context.audit_record(record))
    with open_output(args.emit_params) as out:
        out.write(builder.document())
    print(
        f"ffaudit: wrote {len(builder.entries)} estimated entries and {len(builder.classes)} proposed "
        f"classes to {args.emit_params}; review them before use",
        file=stderr,
    )


def _run_report(
    args: argparse.Namespace,
    fmt: str,
    pset: Any,
    run_info: dict[str, Any],
    chunk_jobs: Iterator[ChunkJob],
    audit: Any,
    stdout: TextIO,
    stderr: TextIO,
    show: bool,
    total: int | None,
    spooling: bool = False,
) -> dict[str, Any]:
    from ffaudit.engine.progress import ProgressBar
    from ffaudit.report.base import make_reporter, open_output
    from ffaudit.report.jsonl import JsonlReporter

    to_terminal = args.output in (None, "-") and _isatty(stdout) and fmt != "table"
    summary = Summary(pset)
    with open_output(args.output, stdout) as out:
        reporter = make_reporter(fmt, out)
        reporter.start(run_info)
        with ProgressBar(stderr, total, enabled=show and not to_terminal) as bar:
            terms = args.terms if fmt in TERM_LISTING_FORMATS else "none"
            # JSON lines are encoded by the workers (as in directory mode), so that the parent only
            # writes them: encoding in the parent would serialise the run on one core.
            encoded = isinstance(reporter, JsonlReporter)
            with contextlib.ExitStack() as stack:
                # worker processes on this machine leave their chunks' lines in a spool directory, which
                # this process copies into the report: pickled through a pipe or a socket instead, the
                # bytes (about 100 KB per molecule with --terms all) cost this process more CPU than the
                # writing, CPU the workers need
                spool = (
                    stack.enter_context(tempfile.TemporaryDirectory(prefix="ffaudit-spool-"))
                    if encoded and spooling
                    else None
                )
                options = ChunkOptions(terms=terms, encode=encoded, spool=spool)
                for chunk in audit(chunk_jobs, options):
                    summary.merge(chunk.summary)
                    if isinstance(reporter, JsonlReporter):
                        if chunk.spooled is not None:
                            reporter.add_file(chunk.spooled)
                            os.remove(chunk.spooled)
                        else:
                            reporter.add_lines(chunk.jsonl or b"")
                    else:
                        for molecule in chunk.molecules or ():
                            reporter.add(molecule)
                    bar.advance(chunk.count)
        result = summary.to_dict()
        reporter.finish(result)
    return result


def _run_directory(
    args: argparse.Namespace,
    directory: str,
    input_format: str,
    options: dict[str, Any],
    pset: Any,
    run_info: dict[str, Any],
    chunk_jobs: Iterator[ChunkJob],
    audit: Any,
    stderr: TextIO,
    show: bool,
    total: int | None,
) -> dict[str, Any]:
    from ffaudit.engine.outdir import (
        SUMMARY_FORMAT_NAME,
        OutputDirectory,
        library_identity,
        run_into_directory,
    )
    from ffaudit.engine.parquet import HAVE_PYARROW
    from ffaudit.engine.progress import ProgressBar

    identity = {
        "library": library_identity(args.library, input_format),
        "reader_options": dict(sorted((k, v) for k, v in options.items())),
        "parameter_set": run_info["parameter_set"],
        "terms_mode": args.terms,
        "chunk_size": args.chunk_size,
        "parquet": HAVE_PYARROW and _recorded_parquet(directory, args.resume),
        "ffaudit_version": __version__,
    }
    out = OutputDirectory.open(directory, identity, resume=args.resume)
    # workers on this machine (in-process, --jobs, a LocalCluster) write their chunk files themselves, so
    # the chunks' bytes need not pass through this process; a remote cluster's workers send them here
    local = _local_scheduler(args)
    chunk_options = ChunkOptions(
        terms=args.terms,
        encode=True,
        parquet=out.parquet,
        directory=str(out.path.resolve()) if local else None,
    )

    def summary_doc(summary: Summary) -> dict[str, Any]:
        return {
            "format": SUMMARY_FORMAT_NAME,
            "format_version": 1,
            **run_info,
            "summary": summary.to_dict(),
        }

    with ProgressBar(stderr, total, enabled=show) as bar:
        summary = run_into_directory(
            out,
            chunk_jobs,
            lambda jobs: audit(jobs, chunk_options),
            pset,
            summary_doc=summary_doc,
            on_chunk=bar.advance,
        )
    chunks = len(out.done)
    kept = f", {out.kept} kept from the earlier run" if args.resume else ""
    print(f"ffaudit: results in {directory} ({chunks} chunks{kept})", file=stderr)
    result: dict[str, Any] = summary.to_dict()
    return result


def _recorded_parquet(directory: str, resume: bool) -> bool:
    """False when resuming a run that was started without Parquet files (pyarrow missing then)."""
    from ffaudit.engine.outdir import recorded_identity

    recorded = recorded_identity(directory) if resume else None
    return True if recorded is None else bool(recorded.get("parquet", True))


def _isatty(stream: TextIO) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False
