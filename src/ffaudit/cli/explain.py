"""``ffaudit explain SMILES|FILE:N``: one molecule's classes, deciding rules and every term's resolution."""

from __future__ import annotations

import argparse
import json
import os
from typing import Any, TextIO

from ffaudit.audit import AuditContext, MoleculeAudit, cautions_for
from ffaudit.cli import exitcodes
from ffaudit.cli.common import add_params_option, add_reader_options, load_params, reader_options
from ffaudit.errors import UsageError
from ffaudit.read.record import Record
from ffaudit.termdict import entry_values


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "explain",
        help="show one molecule's classes and how every term was resolved",
        description="MOLECULE is a SMILES string or FILE:N (the N-th record of FILE, 1-based).",
    )
    p.add_argument("molecule", metavar="SMILES|FILE:N")
    add_params_option(p)
    add_reader_options(p)
    p.add_argument("--format", choices=("table", "json"), default="table")
    p.set_defaults(run=run)


def _select_record(spec: str, args: argparse.Namespace) -> Record:
    from ffaudit.read.open import iter_records
    from ffaudit.read.smiles import parse_smiles

    path, sep, number = spec.rpartition(":")
    if sep and number.isdigit() and os.path.exists(path):
        wanted = int(number)
        if wanted < 1:
            raise UsageError(f"{spec}: record numbers start at 1")
        for record in iter_records(path, args.input_format, **reader_options(args)):  # type: ignore[arg-type]
            if record.record == wanted:
                return record
        raise UsageError(f"{path} has fewer than {wanted} records")
    mol, error = parse_smiles(spec)
    return Record(0, "<command line>", 1, 1, spec, mol, error)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    pset = load_params(args)
    context = AuditContext(pset)
    record = _select_record(args.molecule, args)
    audit = context.audit_record(record)
    if args.format == "json":
        json.dump(audit.to_dict(pset, "all"), stdout, ensure_ascii=False, indent=2)
        stdout.write("\n")
    else:
        _render(audit, context, stdout)
    return exitcodes.OK


def _render(audit: MoleculeAudit, context: AuditContext, stdout: TextIO) -> None:
    from rich import box
    from rich.console import Console
    from rich.table import Table

    pset = context.pset
    console = Console(
        file=stdout, width=120, color_system=None, highlight=False, soft_wrap=False, markup=False
    )
    console.print(f"{audit.record.name}  ({audit.smiles or 'unreadable'})")
    console.print(
        f"parameter set {pset.header.name} {pset.header.version}; status: {audit.status}"
        + (f" - {audit.reason}" if audit.reason else "")
    )
    if audit.status == "unreadable":
        return
    elements = audit.elements
    atoms = Table(
        "atom", "element", "class", "rule", "rule location", title="Atoms", box=box.SIMPLE
    )
    for a in audit.assignments:
        atoms.add_row(
            str(a.atom),
            elements[a.atom],
            a.class_id or "-",
            a.rule or "no rule matches",
            str(a.location) if a.location else "",
        )
    console.print(atoms)
    terms = Table(
        "kind",
        "atoms",
        "classes",
        "tier",
        "score",
        "values",
        "source",
        title="Terms",
        box=box.SIMPLE,
    )
    citations: dict[str, str] = {}
    for r in audit.resolutions:
        if r.entry is not None:
            values = json.dumps(entry_values(r.entry), separators=(",", ":"))
            where = f"{r.entry.location.path}:{r.entry.location.line}"
            if r.tier == "estimate":
                assumed = ", ".join(r.details.get("inputs", {}).get("uff_types", []))
                source = f"ESTIMATE {r.details.get('rule')} [{assumed}]"
                citations[str(r.details.get("rule"))] = str(r.details.get("citation"))
            elif r.tier == "analogy":
                subs = ", ".join(f"{old}->{new}" for _, old, new in r.substitutions)
                source = f"ESTIMATE by analogy ({subs}) from {'-'.join(r.entry.classes)} @ {where}"
            else:
                source = f"{r.entry.source or '-'} @ {where}"
                if r.substitutions:
                    source += " via " + ", ".join(
                        f"{old}->{new}" for _, old, new in r.substitutions
                    )
        else:
            values, source = "", r.reason or ""
        terms.add_row(
            r.term.kind,
            "-".join(map(str, r.term.atoms)),
            "-".join(r.term.classes),
            r.tier,
            f"{r.score:.2f}",
            values,
            source,
        )
    console.print(terms)
    for rule, citation in sorted(citations.items()):
        console.print(f"rule {rule}: {citation}")
    for finding in audit.findings:
        console.print(f"finding: {finding.format()}")
    for note in cautions_for(pset):
        console.print(f"caution: {note}")
