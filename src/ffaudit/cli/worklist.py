"""``ffaudit worklist RESULTS|LIBRARY``: which missing tuples to parameterise first, and capped fragments.

RESULTS is the output of ``ffaudit audit --format jsonl`` (``.jsonl``, ``.jsonl.gz``; or a ``--format json``
report, ``.json``) made with ``--terms all`` or ``--terms problems``; LIBRARY is a structure file, audited
here in this process with the set(s) given by ``--params``, as ``ffaudit audit`` would. The computation is
:mod:`ffaudit.worklist`, the fragments :mod:`ffaudit.fragments`.

Output: a table (rich; 100 columns without colour when not a terminal) or one JSON document
(``schemas/worklist.schema.json``), to stdout or ``-o FILE``. ``--fragments DIR`` also writes a capped
fragment per ranked tuple (``NAME.sdf`` with a 3D conformer, ``NAME.smi``) and ``DIR/fragments.jsonl``.
Exit code 0, or 2 for a usage error or an unreadable input or parameter set.
"""

from __future__ import annotations

import argparse
from typing import Any, TextIO

from ffaudit.audit import AuditContext, cautions_for, parameter_set_info
from ffaudit.cli import exitcodes
from ffaudit.cli.common import (
    add_params_option,
    add_reader_options,
    load_params,
    positive_int,
    reader_options,
)
from ffaudit.errors import UsageError
from ffaudit.worklist import (
    FORMAT_NAME,
    FORMAT_VERSION,
    Worklist,
    WorklistBuilder,
    audit_to_molecule,
    class_elements_of,
    is_results_path,
    iter_results,
)

FORMATS: tuple[str, ...] = ("table", "json")
RESULT_FORMATS: tuple[str, ...] = ("jsonl", "json")
"""``--input-format`` values that mean audit results rather than a structure library."""

TABLE_ROWS = 50
"""Tuples shown by the table when ``--top`` is not given."""

SIDE_ROWS = 20
"""Rows of the element, class and environment lists in the table."""

ESTIMATE_CAUTION = (
    "Tuples resolved only by analogy or rule estimates are listed as blockers only with "
    "--include-estimated; their values must be reviewed before production simulations either way."
)


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "worklist",
        help="rank the missing tuples by the molecules they would unblock; write capped fragments",
        description="Rank the class tuples a library lacks parameters for: alone (molecules for which the "
        "tuple is the only blocker) and greedily (the coverage curve: the share of the library complete "
        "after fitting the first k tuples). INPUT is audit results (.jsonl, .json, from ffaudit audit "
        "with --terms all or problems) or a structure library, audited here.",
    )
    p.add_argument("input", metavar="RESULTS|LIBRARY")
    add_params_option(p)
    add_reader_options(p)
    p.add_argument(
        "--include-estimated",
        action="store_true",
        help="count terms resolved only by analogy or rule estimates as blockers too",
    )
    p.add_argument(
        "--top", type=positive_int, metavar="N", help="list (and fragment) only the first N tuples"
    )
    p.add_argument(
        "--format", choices=FORMATS, default="table", help="output format (default: table)"
    )
    p.add_argument(
        "-o", "--output", metavar="FILE", help="write the report to FILE (default: stdout)"
    )
    p.add_argument(
        "--fragments",
        metavar="DIR",
        help="write a capped fragment per ranked tuple (SDF with a 3D conformer, SMILES) and "
        "DIR/fragments.jsonl",
    )
    p.set_defaults(run=run)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.report.base import open_output

    pset = load_params(args)
    context = AuditContext(pset)
    results = _is_results(args)
    builder = WorklistBuilder(args.include_estimated, class_elements_of(pset))
    if results:
        if args.smiles_column or args.name_column:
            raise UsageError(
                "--smiles-column and --name-column apply to a library, not to audit results"
            )
        for where, molecule in iter_results(args.input, args.input_format):
            builder.add(molecule, where)
    else:
        from ffaudit.read.open import iter_records

        for record in iter_records(args.input, args.input_format, **reader_options(args)):  # type: ignore[arg-type]
            molecule = audit_to_molecule(context.audit_record(record), pset)
            builder.add(molecule, f"{record.path}: record {record.record}")
    worklist = builder.finish()
    fragments = None
    if args.fragments:
        fragments = _write_fragments(worklist, context, args, stderr)
    document = worklist_document(worklist, pset, args.input, results, args.top, fragments)
    with open_output(args.output, stdout) as out:
        if args.format == "json":
            import json

            json.dump(document, out, ensure_ascii=False, indent=1)
            out.write("\n")
        else:
            render_table(document, out, limit=None if args.top else TABLE_ROWS)
    print(
        f"ffaudit: {worklist.records} records: {worklist.complete} complete, {worklist.coverable} coverable, "
        f"{worklist.needs_class} need a class, {worklist.unreadable} unreadable; "
        f"{len(worklist.tuples)} tuples ranked",
        file=stderr,
    )
    return exitcodes.OK


def _is_results(args: argparse.Namespace) -> bool:
    if args.input_format is not None:
        return str(args.input_format).lower() in RESULT_FORMATS
    return is_results_path(args.input)


def _write_fragments(
    worklist: Worklist, context: AuditContext, args: argparse.Namespace, stderr: TextIO
) -> dict[str, Any]:
    from ffaudit.fragments import INDEX_NAME, fragments_for_worklist, write_fragments

    lines = write_fragments(fragments_for_worklist(worklist, context, args.top), args.fragments)
    failed = [line for line in lines if line["error"] is not None]
    for line in failed:
        print(f"ffaudit: no fragment for {line['label']}: {line['error']}", file=stderr)
    print(
        f"ffaudit: {len(lines) - len(failed)} fragments written to {args.fragments} "
        f"(index {INDEX_NAME}){f', {len(failed)} tuples without one' if failed else ''}",
        file=stderr,
    )
    return {
        "directory": str(args.fragments),
        "index": INDEX_NAME,
        "written": len(lines) - len(failed),
        "failed": len(failed),
    }


def worklist_document(
    worklist: Worklist,
    pset: Any,
    path: str,
    results: bool,
    top: int | None,
    fragments: dict[str, Any] | None,
) -> dict[str, Any]:
    """The JSON document of ``schemas/worklist.schema.json``."""
    body = worklist.to_dict(top)
    notes = list(body.pop("notes"))
    if results:
        notes.append(
            "the results were read as given; the parameter set named here only supplies class elements "
            "and re-audits fragment sources, so it should be the set the results were made with"
        )
    return {
        "format": FORMAT_NAME,
        "format_version": FORMAT_VERSION,
        "input": {"path": path, "kind": "results" if results else "library"},
        "parameter_set": parameter_set_info(pset),
        "cautions": [*cautions_for(pset), ESTIMATE_CAUTION],
        **body,
        "notes": notes,
        "fragments": fragments,
    }


def render_table(document: dict[str, Any], out: TextIO, limit: int | None = TABLE_ROWS) -> None:
    """The worklist for people (see the module docstring for the width); at most ``limit`` tuples."""
    from rich import box
    from rich.table import Table

    from ffaudit.report.percent import display_percent
    from ffaudit.report.table import make_console

    console = make_console(out)
    pset = document["parameter_set"]
    mol = document["molecules"]
    records = mol["records"]

    def pct(n: int) -> str:
        return display_percent(n, records)

    console.print(
        f"ffaudit worklist - parameter set {pset['name']} {pset['version']} (sha256 {pset['hash'][:12]})"
    )
    kind = "audit results" if document["input"]["kind"] == "results" else "library, audited here"
    console.print(f"input: {document['input']['path']} ({kind})")
    console.print(f"blocking tiers: {', '.join(document['blocking_tiers'])}")
    console.print()

    status = Table(
        "molecules",
        "n",
        "%",
        "meaning",
        box=box.SIMPLE_HEAD,
        title="Molecules",
        title_justify="left",
    )
    rows = (
        ("complete", mol["complete"], "no blocking term"),
        ("coverable", mol["coverable"], "blocked only by tuples that a new parameter fixes"),
        ("needs a class", mol["needs_class"], "blocked by an atom without a class"),
        ("unreadable", mol["unreadable"], "the record could not be read or audited"),
        ("records", records, "records read"),
        ("can be covered", mol["can_be_covered"], "complete once every ranked tuple is fitted"),
    )
    for name, n, meaning in rows:
        status.add_row(name, str(n), pct(n), meaning)
    console.print(status)

    tuples = document["tuples"]
    shown = tuples if limit is None else tuples[:limit]
    table = Table(
        box=box.SIMPLE_HEAD,
        pad_edge=False,
        title="Worklist: each tuple completes the most molecules given those above it",
        title_justify="left",
    )
    table.add_column("rank", justify="right")
    table.add_column("alone", justify="right")
    table.add_column("tuple", min_width=30, overflow="fold")
    table.add_column("molecules", justify="right")
    table.add_column("only", justify="right")
    table.add_column("terms", justify="right")
    table.add_column("done", justify="right")
    table.add_column("complete after", justify="right", no_wrap=True)
    for t in shown:
        table.add_row(
            str(t["rank"]),
            str(t["alone_rank"]),
            t["label"],
            str(t["molecules"]),
            str(t["alone"]),
            str(t["terms"]),
            str(t["completes"]),
            f"{t['covered_after']} ({pct(t['covered_after'])}%)",
        )
    if shown:
        console.print(table)
    hidden = document["tuples_total"] - len(shown)
    if hidden > 0:
        console.print(f"... and {hidden} more tuples (see --format json, or --top N)")
    if not document["tuples_total"]:
        console.print(
            "no tuple to rank: nothing that a new parameter alone would fix"
            + (
                ""
                if document["include_estimated"]
                else " (estimated terms count only with --include-estimated)"
            )
        )
    curve = document["coverage_curve"]
    console.print(
        f"coverage curve: {pct(curve[0]['complete'])} % complete now, {pct(curve[-1]['complete'])} % after "
        f"all {len(curve) - 1} tuples (= the share that can be covered)"
    )
    console.print()

    for title, key in (
        ("By term kind", "by_kind"),
        ("By element", "by_element"),
        ("By class", "by_class"),
    ):
        side = Table(
            title.split()[-1],
            "tuples",
            "terms",
            "molecules",
            box=box.SIMPLE_HEAD,
            title=title,
            title_justify="left",
        )
        items = list(document[key].items())
        for name, counts in items[:SIDE_ROWS]:
            side.add_row(
                name, str(counts["tuples"]), str(counts["terms"]), str(counts["molecules"])
            )
        console.print(side)
        if len(items) > SIDE_ROWS:
            console.print(f"... and {len(items) - SIDE_ROWS} more")

    gaps = document["without_parameters"]
    console.print("Environments without parameters")
    if gaps["elements"]:
        elements = Table(
            "element", "atoms", "molecules", "set has a class for it", box=box.SIMPLE_HEAD
        )
        for g in gaps["elements"]:
            has = {True: "yes (no rule matches)", False: "no", None: "unknown"}[g["set_has_class"]]
            elements.add_row(g["element"], str(g["atoms"]), str(g["molecules"]), has)
        console.print(elements)
    else:
        console.print("every atom has a class")
    if gaps["tuples"]:
        env = Table(
            "tuple (atom without a class: ?element)", "molecules", "terms", box=box.SIMPLE_HEAD
        )
        for t in gaps["tuples"][:SIDE_ROWS]:
            env.add_row(t["label"], str(t["molecules"]), str(t["terms"]))
        console.print(env)
        if len(gaps["tuples"]) > SIDE_ROWS:
            console.print(f"... and {len(gaps['tuples']) - SIDE_ROWS} more")
    console.print()

    if document["fragments"] is not None:
        f = document["fragments"]
        console.print(
            f"Fragments: {f['written']} written to {f['directory']} (index {f['index']})"
            + (f", {f['failed']} tuples without one" if f["failed"] else "")
        )
        console.print()
    for title, key in (("Notes", "notes"), ("Cautions", "cautions")):
        console.print(title)
        grid = Table.grid(padding=(0, 1))
        grid.add_column(no_wrap=True)
        grid.add_column()
        for note in document[key]:
            grid.add_row("-", note)
        console.print(grid)
    console.print(
        "columns: alone = rank by molecules for which the tuple is the only blocker; only = those "
        "molecules; done = molecules complete once this tuple is fitted after those above it"
    )
