"""``ffaudit report RESULTS -o report.html``: one self-contained HTML page of an audit's results.

RESULTS is the output of ``ffaudit audit LIBRARY --format jsonl`` (or ``--format json``), or an output
directory of ``ffaudit audit LIBRARY -o DIR/``. See :mod:`ffaudit.report.html` for what the page shows, how
large libraries are cut to a size a browser handles, and how the demonstration notice is decided.
"""

from __future__ import annotations

import argparse
from typing import Any, TextIO

from ffaudit.cli import exitcodes
from ffaudit.cli.common import add_params_option, add_reader_options, load_params, reader_options
from ffaudit.errors import UsageError


def _count(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"must be 0 or more, got {value}")
    return value


def add_parser(sub: Any) -> None:
    from ffaudit.report.limits import DEFAULT_MAX_DETAIL, DEFAULT_MAX_ROWS

    p = sub.add_parser(
        "report",
        help="write an HTML report (summary, plots, molecule table, drawings of the gaps)",
        description="Write one self-contained HTML page of audit results: the library summary with "
        "plots, a sortable and filterable molecule table, and for molecules with gaps a drawing with the "
        "atoms and bonds of missing and estimated terms marked, and their terms with tier, source and "
        "score. RESULTS is the output of 'ffaudit audit --format jsonl' (or json) or an output directory.",
    )
    p.add_argument(
        "results", metavar="RESULTS", help="JSONL or JSON results file, or output directory"
    )
    p.add_argument(
        "-o",
        "--output",
        metavar="FILE",
        default="-",
        help="the HTML file to write (default: stdout)",
    )
    add_params_option(p)
    p.add_argument(
        "--library",
        metavar="PATH",
        help="the audited library, where it is now (default: each record's source path); read again for "
        "the atom numbers of the drawings",
    )
    add_reader_options(p)
    p.add_argument(
        "--max-detail",
        type=_count,
        default=DEFAULT_MAX_DETAIL,
        metavar="N",
        help=f"molecules with gaps that get a drawing and their terms (default: {DEFAULT_MAX_DETAIL}); "
        "the others are counted in the summary",
    )
    p.add_argument(
        "--max-rows",
        type=_count,
        default=DEFAULT_MAX_ROWS,
        metavar="N",
        help=f"rows of the molecule table (default: {DEFAULT_MAX_ROWS}; molecules not covered first)",
    )
    p.add_argument("--title", metavar="TEXT", help="page title (default: from the results' name)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.report.base import open_output

    try:
        from ffaudit.report.html import ReportOptions, build_report, render
    except ImportError as exc:
        raise UsageError(
            f"the HTML report needs the html extra (pip install 'ffaudit[html]'): {exc}"
        ) from None
    from ffaudit.report.results import open_results

    results = open_results(args.results)
    pset = load_params(args) if args.params else None
    options = ReportOptions(
        max_detail=args.max_detail,
        max_rows=args.max_rows,
        library=args.library,
        input_format=args.input_format,
        reader_options=reader_options(args),
        title=args.title,
    )
    view = build_report(results, options, pset)
    page = render(view)
    with open_output(args.output, stdout) as out:
        out.write(page)
    drawn = sum(1 for d in view.details if d.svg is not None)
    print(
        f"ffaudit: report of {view.summary.records} records: {len(view.rows)} table rows, "
        f"{len(view.details)} molecules with gaps in detail ({drawn} drawn)",
        file=stderr,
    )
    for notice in view.notices:
        print(f"ffaudit: note: {notice}", file=stderr)
    return exitcodes.OK
