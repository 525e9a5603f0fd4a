"""--format json: one streamed document, valid against the report schema (which $refs the molecule schema)."""

from __future__ import annotations

import io
import json

import pytest

import report_fixtures as fx
from ffaudit.report.json_ import FORMAT_NAME, FORMAT_VERSION, JsonReporter
from ffaudit.report.schemas import iter_report_errors


@pytest.mark.parametrize("name", sorted(fx.STREAMS))
def test_document_parses_validates_and_holds_everything(name: str) -> None:
    stream = fx.STREAMS[name]()
    doc = json.loads(fx.render("json", stream))
    assert [e.message for e in iter_report_errors(doc)] == []
    assert doc == fx.report_document(stream)
    assert doc["format"] == FORMAT_NAME == "ffaudit-audit"
    assert doc["format_version"] == FORMAT_VERSION == 1


def test_molecules_are_written_as_they_come() -> None:
    run, molecules, summary = fx.mixed_stream()
    out = io.StringIO()
    reporter = JsonReporter(out)
    reporter.start(run)
    head = out.getvalue()
    assert head.startswith('{"format":"ffaudit-audit","format_version":1,')
    for count, molecule in enumerate(molecules, start=1):
        reporter.add(molecule)
        # Every molecule added so far is already in the stream (nothing is held back).
        assert out.getvalue().count('"index":') == count
        assert f'"index":{molecule["index"]},' in out.getvalue()
    assert '"summary"' not in out.getvalue()
    reporter.finish(summary)
    text = out.getvalue()
    # One molecule per line between the head and the summary, so the document stays greppable.
    assert len(text.splitlines()) == len(molecules) + 2
    assert json.loads(text)["summary"] == summary


def test_key_order_of_molecules_is_kept() -> None:
    stream = fx.mixed_stream()
    doc = json.loads(fx.render("json", stream))
    for got, given in zip(doc["molecules"], stream[1], strict=True):
        assert list(got) == list(given)


def test_methods_out_of_order_raise() -> None:
    run, molecules, summary = fx.empty_stream()
    reporter = JsonReporter(io.StringIO())
    with pytest.raises(RuntimeError):
        reporter.add(fx.water())
    reporter.start(run)
    reporter.finish(summary)
    with pytest.raises(RuntimeError):
        reporter.finish(summary)
