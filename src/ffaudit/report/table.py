"""``--format table`` (the default): the audit of a library rendered for a person, with rich.

Sections, top to bottom: the parameter set (name, version, hash, files) with a boxed notice when it is a
demonstration set; molecules by status with percentages (the total equals the records read); transferability
scores; terms by kind and tier; the most needed missing tuples; classes never assigned; elements with no
class; unreadable records (file:line and reason); the cautions.

Written for a terminal (colour, its width) or, anywhere else, as plain text 100 columns wide with no colour and
no escape codes, so that the output of a run is the same byte for byte on every machine. Values from the data
(names, reasons, classes) are never read as rich markup.

The table is a summary: molecules are only counted as they arrive (to check that the summary accounts for every
one of them); the per-molecule detail is in the machine formats.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any, TextIO

from rich import box
from rich.console import Console, Group, RenderableType
from rich.padding import Padding
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from ffaudit.paramset.model import KINDS
from ffaudit.report.percent import display_percent
from ffaudit.score import TIERS

PLAIN_WIDTH = 100
"""Line width when the output is not a terminal (files, pipes, tests)."""

LIST_LIMIT = 20
"""Rows shown in the missing-tuple and unreadable-record lists before "... and N more"."""

DEMONSTRATION_NOTICE = "demonstration set - not for production simulations"

STATUS_MEANINGS: tuple[tuple[str, str], ...] = (
    ("covered", "every term has a parameter of the set (exact, wildcard, parent)"),
    ("estimated", "some terms only estimated (analogy, rule): review them first"),
    ("incomplete", "some term has no value"),
    ("unreadable", "the record could not be read or audited"),
)

HASH_DIGITS = 12
"""Leading hex digits of the set's sha256 shown in the header (the machine formats carry all of it)."""


def make_console(out: TextIO) -> Console:
    """A rich console writing to ``out``: the terminal's width and colours if ``out`` is a terminal,
    otherwise :data:`PLAIN_WIDTH` columns and no colour, whatever the environment variables say."""
    try:
        is_tty = bool(out.isatty())
    except (AttributeError, ValueError):  # no isatty, or a closed stream
        is_tty = False
    if is_tty:
        return Console(file=out, highlight=False, markup=False, emoji=False)
    return Console(
        file=out,
        width=PLAIN_WIDTH,
        color_system=None,
        force_terminal=False,
        force_jupyter=False,
        force_interactive=False,
        legacy_windows=False,
        highlight=False,
        markup=False,
        emoji=False,
    )


class TableReporter:
    """Prints the header on ``start`` and everything else on ``finish``."""

    def __init__(self, out: TextIO) -> None:
        self.out = out
        self.console = make_console(out)
        self._cautions: list[str] = []
        self._molecules = 0
        self._statuses: dict[str, int] = {}

    def start(self, run: Mapping[str, Any]) -> None:
        """Print the parameter-set header (and the demonstration notice). Raises ``KeyError`` without
        ``parameter_set``."""
        self._cautions = [str(c) for c in run.get("cautions", ())]
        self._emit(header(run["parameter_set"]))

    def add(self, molecule: Mapping[str, Any]) -> None:
        """Count the molecule (by status); nothing is printed per molecule."""
        self._molecules += 1
        status = str(molecule.get("status"))
        self._statuses[status] = self._statuses.get(status, 0) + 1

    def finish(self, summary: Mapping[str, Any]) -> None:
        """Print the summary sections and the cautions."""
        parts: list[RenderableType] = [status_table(summary)]
        parts += self._consistency_warnings(summary)
        parts += [
            score_section(summary.get("score") or {}),
            term_table(summary.get("terms") or {}),
            missing_table(summary.get("top_missing") or ()),
            classes_never_assigned(summary.get("classes_never_assigned") or ()),
            elements_without_class(summary.get("elements_without_class") or {}),
            unreadable_table(
                summary.get("unreadable") or (), (summary.get("status") or {}).get("unreadable", 0)
            ),
            cautions_section(self._cautions),
        ]
        for number, part in enumerate(parts, start=1):
            self._emit(part, blank_after=number < len(parts))
        self.out.flush()

    def _emit(self, renderable: RenderableType, blank_after: bool = True) -> None:
        """Render ``renderable`` (then a blank line) without trailing spaces, so gold files stay clean."""
        with self.console.capture() as capture:
            self.console.print(renderable)
        for line in capture.get().splitlines():
            self.out.write(line.rstrip(" ") + "\n")
        if blank_after:
            self.out.write("\n")

    def _consistency_warnings(self, summary: Mapping[str, Any]) -> list[RenderableType]:
        records = int(summary.get("records", 0))
        status = summary.get("status") or {}
        warnings = []
        if self._molecules != records:
            warnings.append(
                f"{self._molecules} molecules were reported, but the summary counts {records} records"
            )
        if sum(status.values()) != records:
            warnings.append(f"the status counts add up to {sum(status.values())}, not {records}")
        elif self._molecules == records and dict(status) != {
            s: self._statuses.get(s, 0) for s in status
        }:
            warnings.append("the status counts of the summary differ from those of the molecules")
        return [Text(f"warning: {w} (please report this)", style="bold red") for w in warnings]


def _heading(text: str) -> Text:
    return Text(text, style="bold")


def _more(shown: int, total: int) -> list[RenderableType]:
    return [Text(f"... and {total - shown} more")] if total > shown else []


def header(parameter_set: Mapping[str, Any]) -> RenderableType:
    """The report head: set name, version, hash and files; a boxed notice for a demonstration set."""
    name = str(parameter_set.get("name", "?"))
    version = str(parameter_set.get("version", "?"))
    line = Text.assemble(
        ("ffaudit audit", "bold"), " - parameter set ", (f"{name} {version}", "bold")
    )
    digest = str(parameter_set.get("hash") or "")
    if digest:
        line.append(f" (sha256 {digest.removeprefix('sha256:')[:HASH_DIGITS]})")
    lines: list[RenderableType] = [line]
    paths = [str(p) for p in parameter_set.get("paths") or ()]
    if paths:
        lines.append(Text("files: " + ", ".join(paths)))
    if parameter_set.get("demonstration"):
        notice = Group(
            Text(DEMONSTRATION_NOTICE.upper(), style="bold", justify="center"),
            Text(
                f"{name} {version} is an example set: its values show how ffaudit works and must not be "
                "used to run simulations.",
                justify="center",
            ),
        )
        lines.append(Panel(notice, box=box.HEAVY, border_style="bold red"))
    return Group(*lines)


def status_table(summary: Mapping[str, Any]) -> Table:
    """Molecules by status with percentages of the records read, and the total."""
    records = int(summary.get("records", 0))
    status = summary.get("status") or {}
    table = Table(
        title=_heading("Molecules by status"),
        title_justify="left",
        box=box.SIMPLE_HEAD,
        show_edge=False,
        pad_edge=False,
    )
    table.add_column("status")
    table.add_column("molecules", justify="right")
    table.add_column("%", justify="right")
    table.add_column("meaning")
    for name, meaning in STATUS_MEANINGS:
        n = int(status.get(name, 0))
        table.add_row(name, str(n), display_percent(n, records), meaning)
    table.add_section()
    table.add_row("total", str(records), display_percent(records, records), "records read")
    return table


def score_section(score: Mapping[str, Any]) -> RenderableType:
    """Lowest and median molecule score, and the histogram as counts per score bin."""
    title = _heading("Transferability score (each molecule's lowest term score; 1 = exact)")
    low, median = score.get("min"), score.get("median")
    if low is None:
        return Group(title, Text("no molecule has a scored term"))
    histogram: Sequence[Sequence[Any]] = score.get("histogram") or ()
    table = Table(box=None, show_header=False, pad_edge=False, padding=(0, 1, 0, 0))
    table.add_column("bin")
    table.add_column("molecules", justify="right")
    table.add_column("bar")
    largest = max((int(b[2]) for b in histogram), default=0)
    for lo, hi, n in histogram:
        bar = "#" * (round(40 * n / largest) if largest else 0)
        if n and not bar:
            bar = "#"  # a bin that holds molecules is never drawn empty
        table.add_row(f"{lo:.1f} - {hi:.1f}", str(n), bar)
    # Six significant digits, as the machine output rounds them (a median of two can carry float noise).
    median_text = "-" if median is None else f"{float(median):.6g}"
    line = Text(f"lowest {float(low):.6g}, median {median_text}")
    return Group(title, line, Padding(table, (0, 0, 0, 2)) if histogram else Text(""))


def _kind_order(kinds: Mapping[str, Any]) -> list[str]:
    return [k for k in KINDS if k in kinds] + sorted(k for k in kinds if k not in KINDS)


def term_table(terms: Mapping[str, Mapping[str, int]]) -> RenderableType:
    """Terms of the whole library by kind (rows) and tier (columns), with totals."""
    title = _heading("Terms by kind and tier")
    if not terms:
        return Group(title, Text("no terms (no readable molecule)"))
    table = Table(
        title=title, title_justify="left", box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False
    )
    table.add_column("kind")
    for tier in TIERS:
        table.add_column(tier, justify="right")
    table.add_column("total", justify="right")
    column_totals = dict.fromkeys(TIERS, 0)
    for kind in _kind_order(terms):
        counts = terms[kind]
        row = [int(counts.get(tier, 0)) for tier in TIERS]
        for tier, n in zip(TIERS, row, strict=True):
            column_totals[tier] += n
        table.add_row(kind, *map(str, row), str(sum(row)))
    table.add_section()
    table.add_row("all", *(str(column_totals[t]) for t in TIERS), str(sum(column_totals.values())))
    return table


def missing_table(top_missing: Sequence[Mapping[str, Any]]) -> RenderableType:
    """The missing tuples that affect the most molecules (as ordered by the summary)."""
    title = _heading("Missing parameters, most needed first")
    if not top_missing:
        return Group(title, Text("none (no term lacks a value)"))
    table = Table(
        title=title, title_justify="left", box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False
    )
    table.add_column("kind")
    table.add_column("classes")
    table.add_column("molecules", justify="right")
    table.add_column("terms", justify="right")
    for item in top_missing[:LIST_LIMIT]:
        classes = " ".join(str(c) for c in item.get("classes", ()))
        table.add_row(
            str(item.get("kind")), classes, str(item.get("molecules")), str(item.get("terms"))
        )
    return Group(table, *_more(min(len(top_missing), LIST_LIMIT), len(top_missing)))


def classes_never_assigned(classes: Sequence[str]) -> RenderableType:
    """The set's classes that no atom of the library received."""
    title = _heading(f"Classes never assigned ({len(classes)})")
    return Group(title, Text(", ".join(map(str, classes)) if classes else "none"))


def elements_without_class(elements: Mapping[str, int]) -> RenderableType:
    """Elements for which the set has no class at all, with the number of molecules containing them."""
    title = _heading("Elements with no class (molecules affected)")
    if not elements:
        return Group(title, Text("none"))
    ordered = sorted(elements.items(), key=lambda kv: (-int(kv[1]), kv[0]))
    return Group(title, Text(", ".join(f"{element} {n}" for element, n in ordered)))


def unreadable_table(unreadable: Sequence[Mapping[str, Any]], count: int) -> RenderableType:
    """The first :data:`LIST_LIMIT` unreadable records (file:line, record number, reason).

    ``count`` is the number of unreadable records of the status table; "... and N more" counts from the larger
    of it and the list's length, so a list shortened by the driver still says how many are not shown.
    """
    title = _heading(f"Unreadable records ({max(count, len(unreadable))})")
    if not unreadable and not count:
        return Group(title, Text("none"))
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
    table.add_column("where")
    table.add_column("record", justify="right")
    table.add_column("reason", overflow="fold")
    shown = unreadable[:LIST_LIMIT]
    for item in shown:
        where = f"{item.get('path')}:{item.get('line')}"
        table.add_row(where, str(item.get("record")), str(item.get("reason")))
    return Group(title, table, *_more(len(shown), max(count, len(unreadable))))


def cautions_section(cautions: Sequence[str]) -> RenderableType:
    """The run's cautions, one bullet each."""
    table = Table(box=None, show_header=False, pad_edge=False, padding=(0, 1, 0, 0))
    table.add_column("bullet")
    table.add_column("text", overflow="fold")
    for caution in cautions:
        table.add_row("-", caution)
    return Group(_heading("Cautions"), table if cautions else Text("none"))
