"""--format jsonl: one molecule per line, input order, key order kept, valid against the molecule schema."""

from __future__ import annotations

import io
import json
import math

import pytest

import report_fixtures as fx
from ffaudit.report.jsonl import JsonlReporter
from ffaudit.report.schemas import iter_molecule_errors


@pytest.mark.parametrize("name", sorted(fx.STREAMS))
def test_one_valid_line_per_molecule_in_input_order(name: str) -> None:
    stream = fx.STREAMS[name]()
    molecules = stream[1]
    text = fx.render("jsonl", stream)
    lines = text.splitlines()
    assert len(lines) == len(molecules)
    assert text == "" or text.endswith("\n")
    for line, molecule in zip(lines, molecules, strict=True):
        obj = json.loads(line)
        assert obj == molecule
        assert list(obj) == list(molecule)  # key order as given, not sorted
        assert [e.message for e in iter_molecule_errors(obj)] == []


def test_compact_and_not_ascii_escaped() -> None:
    text = fx.render("jsonl", fx.mixed_stream())
    assert '"name":"formaldéhyde"' in text  # ensure_ascii=False
    for line in text.splitlines():
        # Already in the most compact form: re-serialising without any whitespace changes nothing.
        assert json.dumps(json.loads(line), ensure_ascii=False, separators=(",", ":")) == line


def test_nothing_but_molecules_is_written() -> None:
    run, molecules, summary = fx.mixed_stream()
    out = io.StringIO()
    reporter = JsonlReporter(out)
    reporter.start(run)
    assert out.getvalue() == ""
    reporter.add(molecules[0])
    assert out.getvalue().count("\n") == 1  # written as it comes
    reporter.finish(summary)
    assert out.getvalue().count("\n") == 1


def test_nan_is_refused_not_written() -> None:
    molecule = fx.water()
    molecule["score"] = math.nan
    with pytest.raises(ValueError):
        JsonlReporter(io.StringIO()).add(molecule)
