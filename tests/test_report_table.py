"""--format table: exact text against gold files (width 100, no colour), plus the properties gold files
cannot state on their own."""

from __future__ import annotations

import io

import pytest

import report_fixtures as fx
from ffaudit.report.table import (
    DEMONSTRATION_NOTICE,
    LIST_LIMIT,
    PLAIN_WIDTH,
    TableReporter,
    make_console,
)
from goldtest import GoldChecker


@pytest.mark.parametrize("name", sorted(fx.STREAMS))
def test_matches_gold(name: str, gold: GoldChecker) -> None:
    gold.check(f"table_{name}.txt", fx.render("table", fx.STREAMS[name]()))


@pytest.mark.parametrize("name", sorted(fx.STREAMS))
def test_plain_text_within_the_width(name: str) -> None:
    text = fx.render("table", fx.STREAMS[name]())
    assert "\x1b" not in text  # no escape codes outside a terminal
    assert max(len(line) for line in text.splitlines()) <= PLAIN_WIDTH
    assert all(line == line.rstrip() for line in text.splitlines())


def test_demonstration_notice_only_for_a_demonstration_set() -> None:
    assert DEMONSTRATION_NOTICE.upper() in fx.render("table", fx.mixed_stream())
    assert DEMONSTRATION_NOTICE.upper() not in fx.render("table", fx.many_unreadable_stream())


def test_status_total_equals_records_and_percentages_add_up() -> None:
    text = fx.render("table", fx.mixed_stream())
    rows = {line.split()[0]: line.split() for line in text.splitlines() if line.split()[:1]}
    # covered 2, estimated 1, incomplete 1, unreadable 1 of 5 records (report_fixtures.mixed_stream).
    assert [
        rows[s][1:3] for s in ("covered", "estimated", "incomplete", "unreadable", "total")
    ] == [
        ["2", "40.0"],
        ["1", "20.0"],
        ["1", "20.0"],
        ["1", "20.0"],
        ["5", "100.0"],
    ]


def test_unreadable_list_is_cut_after_the_limit() -> None:
    text = fx.render("table", fx.many_unreadable_stream())
    listed = [line for line in text.splitlines() if line.startswith("big.smi:")]
    assert len(listed) == LIST_LIMIT == 20
    assert listed[0].split()[0] == "big.smi:2" and listed[-1].split()[0] == "big.smi:21"
    assert "... and 5 more" in text.splitlines()


def test_cautions_come_last() -> None:
    run, _, _ = stream = fx.mixed_stream()
    lines = fx.render("table", stream).rstrip("\n").splitlines()
    cautions_at = lines.index("Cautions")
    assert all(
        not line.startswith(("Unreadable", "Missing", "Terms")) for line in lines[cautions_at:]
    )
    assert lines[cautions_at + 1] == "- " + run["cautions"][0]


def test_text_from_the_data_is_not_read_as_markup() -> None:
    run, molecules, summary = fx.mixed_stream()
    summary["unreadable"][0]["reason"] = "bad [bold]bracket[/bold] and [link=x]"
    summary["classes_never_assigned"] = ["[red]c9"]
    text = fx.render("table", (run, molecules, summary))
    assert "bad [bold]bracket[/bold] and [link=x]" in text
    assert "[red]c9" in text


def test_summary_that_loses_records_is_flagged() -> None:
    run, molecules, summary = fx.mixed_stream()
    text = fx.render("table", (run, molecules[:4], summary))
    assert "warning: 4 molecules were reported, but the summary counts 5 records" in text
    summary["status"]["covered"] = 1
    text = fx.render("table", (run, molecules, summary))
    assert "warning: the status counts add up to 4, not 5" in text
    assert "warning" not in fx.render("table", fx.mixed_stream())


class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_terminal_gets_its_own_width(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("COLUMNS", "132")
    assert make_console(FakeTerminal()).width == 132
    assert make_console(io.StringIO()).width == PLAIN_WIDTH
    assert make_console(io.StringIO()).color_system is None


def test_terminal_output_carries_the_same_text(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("COLUMNS", "100")
    monkeypatch.delenv("NO_COLOR", raising=False)
    run, molecules, summary = fx.mixed_stream()
    out = FakeTerminal()
    reporter = TableReporter(out)
    reporter.start(run)
    for molecule in molecules:
        reporter.add(molecule)
    reporter.finish(summary)
    assert "Molecules by status" in out.getvalue()
