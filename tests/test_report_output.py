"""open_output (the one helper that owns the report file) and the reporter registry."""

from __future__ import annotations

import io
import os
import stat
import sys
from pathlib import Path

import pytest

from ffaudit.errors import UsageError
from ffaudit.report.base import REPORTERS, make_reporter, open_output
from ffaudit.report.csv_ import CsvReporter
from ffaudit.report.json_ import JsonReporter
from ffaudit.report.jsonl import JsonlReporter
from ffaudit.report.table import TableReporter


class Boom(Exception):
    pass


def test_success_writes_the_file_and_leaves_no_temporary(tmp_path: Path) -> None:
    target = tmp_path / "report.jsonl"
    with open_output(str(target)) as out:
        out.write("first\nzweite – ü\n")
    assert target.read_bytes() == "first\nzweite – ü\n".encode()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["report.jsonl"]


def test_exception_removes_the_partial_file(tmp_path: Path) -> None:
    target = tmp_path / "report.json"
    with pytest.raises(Boom), open_output(target) as out:
        out.write('{"format": "ffaudit-audit", "molecules": [')
        out.flush()
        # The partial output exists (beside the target, not as the target) while the report is written.
        partial = [p for p in tmp_path.iterdir() if p.name != "report.json"]
        assert len(partial) == 1 and partial[0].stat().st_size > 0
        assert not target.exists()
        raise Boom
    assert list(tmp_path.iterdir()) == []


def test_exception_keeps_an_existing_target_as_it_was(tmp_path: Path) -> None:
    target = tmp_path / "report.csv"
    target.write_text("old report\n")
    with pytest.raises(KeyboardInterrupt), open_output(target) as out:
        out.write("new, partial")
        raise KeyboardInterrupt
    assert target.read_text() == "old report\n"
    assert [p.name for p in tmp_path.iterdir()] == ["report.csv"]


def test_success_replaces_an_existing_target(tmp_path: Path) -> None:
    target = tmp_path / "report.csv"
    target.write_text("old report\n")
    with open_output(target) as out:
        out.write("new report\n")
    assert target.read_text() == "new report\n"


@pytest.mark.skipif(os.name != "posix", reason="file modes and umask are POSIX")
def test_new_file_mode_follows_the_umask(tmp_path: Path) -> None:
    # Expected: what a plain open() would give a new file (0o666 minus the umask), not a private temp mode.
    old = os.umask(0o022)
    try:
        target = tmp_path / "report.txt"
        with open_output(target) as out:
            out.write("x")
        assert stat.S_IMODE(target.stat().st_mode) == 0o644
    finally:
        os.umask(old)


def test_line_ends_are_newlines_in_files(tmp_path: Path) -> None:
    target = tmp_path / "t.csv"
    with open_output(target) as out:
        CsvReporter(out).start({})
    assert target.read_bytes().endswith(b"missing\n")
    assert b"\r" not in target.read_bytes()


@pytest.mark.parametrize("path", [None, "-"])
def test_dash_and_none_mean_stdout_resolved_at_call_time(
    path: str | None, monkeypatch: pytest.MonkeyPatch
) -> None:
    fake = io.StringIO()
    monkeypatch.setattr(sys, "stdout", fake)
    with open_output(path) as out:
        out.write("to stdout")
    assert fake.getvalue() == "to stdout"
    assert not fake.closed


def test_dash_uses_the_given_stdout_and_does_not_close_it() -> None:
    given = io.StringIO()
    with pytest.raises(Boom), open_output("-", given) as out:
        out.write("partial")
        raise Boom
    assert (
        given.getvalue() == "partial"
    )  # standard output cannot be taken back; it is not closed either
    assert not given.closed


def test_missing_directory_is_a_usage_error_naming_the_path(tmp_path: Path) -> None:
    target = tmp_path / "no-such-dir" / "report.json"
    with pytest.raises(UsageError, match="no-such-dir"), open_output(target):
        pass


def test_a_fifo_is_written_in_place_and_stays_a_fifo(tmp_path: Path) -> None:
    """A named pipe as the output (a consumer reading it) gets the text, and no file is renamed onto it."""
    import threading

    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    received: list[bytes] = []
    reader = threading.Thread(target=lambda: received.append(fifo.read_bytes()))
    reader.start()
    with open_output(fifo) as out:
        out.write("line 1\nline 2\n")
    reader.join(timeout=10)
    assert received == [b"line 1\nline 2\n"]
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["pipe"]


@pytest.mark.skipif(not os.path.exists(os.devnull), reason="no null device")
def test_the_null_device_stays_a_device() -> None:
    """-o /dev/null must not replace the device node with a regular file (it did, when run as root)."""
    assert not stat.S_ISREG(os.stat(os.devnull).st_mode)
    with open_output(os.devnull) as out:
        out.write("discarded\n")
    assert stat.S_ISCHR(os.stat(os.devnull).st_mode)
    parent = Path(os.devnull).parent
    assert not list(parent.glob(f".{Path(os.devnull).name}.*.part"))


def test_registry_names_and_classes() -> None:
    assert {
        "table": TableReporter,
        "json": JsonReporter,
        "jsonl": JsonlReporter,
        "csv": CsvReporter,
    } == REPORTERS
    out = io.StringIO()
    for name, cls in REPORTERS.items():
        assert type(make_reporter(name, out)) is cls


def test_unknown_format_lists_the_known_ones() -> None:
    with pytest.raises(UsageError, match="table, json, jsonl, csv"):
        make_reporter("xml", io.StringIO())
