"""--format csv: one row per molecule; parsed back with the csv module, quoting survives commas, quotes,
newlines."""

from __future__ import annotations

import csv
import io

import pytest

import report_fixtures as fx
from ffaudit.report.csv_ import COLUMNS, tier_totals

HEADER = [
    "index", "path", "record", "line", "name", "status", "reason", "score", "terms",
    "exact", "wildcard", "parent", "analogy", "estimate", "missing",
]  # fmt: skip


def parse(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text, newline="")))


def test_header_and_one_row_per_molecule() -> None:
    stream = fx.mixed_stream()
    rows = parse(fx.render("csv", stream))
    assert rows[0] == HEADER == list(COLUMNS)
    assert len(rows) == 1 + len(stream[1])
    by_name = {row[4]: dict(zip(HEADER, row, strict=True)) for row in rows[1:]}
    # Hand-counted from the fixture molecules (report_fixtures.py).
    assert by_name["water"] == {
        "index": "0", "path": "lib.smi", "record": "1", "line": "1", "name": "water",
        "status": "covered", "reason": "", "score": "1.0", "terms": "8",
        "exact": "8", "wildcard": "0", "parent": "0", "analogy": "0", "estimate": "0", "missing": "0",
    }  # fmt: skip
    formaldehyde = by_name["formaldéhyde"]
    assert (formaldehyde["status"], formaldehyde["score"], formaldehyde["terms"]) == (
        "estimated",
        "0.4",
        "12",
    )
    assert [formaldehyde[t] for t in HEADER[9:]] == ["8", "1", "0", "1", "2", "0"]
    phosphine = by_name["methylphosphine"]
    assert (phosphine["terms"], phosphine["exact"], phosphine["missing"]) == ("28", "12", "16")
    assert phosphine["line"] == "29"
    unreadable = by_name["bad-valence"]
    assert (unreadable["score"], unreadable["terms"], unreadable["missing"]) == ("", "0", "0")
    assert unreadable["reason"].startswith("sanitisation failed")


def test_rows_follow_input_order() -> None:
    stream = fx.many_unreadable_stream()
    rows = parse(fx.render("csv", stream))
    assert [int(r[0]) for r in rows[1:]] == [m["index"] for m in stream[1]]


@pytest.mark.parametrize(
    "name", ['acetonitrile, "dry"', "two\nlines", 'a "quoted" name', "=SUM(A1)", " padded "]
)
def test_awkward_names_round_trip(name: str) -> None:
    run, _, summary = fx.empty_stream()
    molecule = fx.water()
    molecule["name"] = name
    rows = parse(fx.render("csv", (run, [molecule], summary)))
    assert rows[1][4] == name


def test_counts_with_an_unknown_tier_are_refused() -> None:
    with pytest.raises(KeyError, match="guess"):
        tier_totals({"bond": {"exact": 1, "guess": 2}})
