"""The gold helper itself: compares exactly, saves mismatches, writes gold files only on request."""

from __future__ import annotations

from pathlib import Path

import pytest

from goldtest import GoldChecker


def _checker(tmp_path: Path, update: bool = False) -> GoldChecker:
    return GoldChecker(
        update=update, gold_dir=tmp_path / "gold", mismatch_dir=tmp_path / "mismatch"
    )


def test_equal_text_passes_and_clears_an_old_mismatch(tmp_path: Path) -> None:
    (tmp_path / "gold").mkdir()
    (tmp_path / "gold" / "a.txt").write_text("same\n")
    (tmp_path / "mismatch").mkdir()
    (tmp_path / "mismatch" / "a.txt").write_text("stale\n")
    _checker(tmp_path).check("a.txt", "same\n")
    assert not (tmp_path / "mismatch" / "a.txt").exists()


def test_mismatch_fails_with_a_diff_and_saves_the_output(tmp_path: Path) -> None:
    (tmp_path / "gold").mkdir()
    (tmp_path / "gold" / "a.txt").write_text("line one\nline two\n")
    with pytest.raises(pytest.fail.Exception, match=r"(?s)-line two.*\+line 2"):
        _checker(tmp_path).check("a.txt", "line one\nline 2\n")
    assert (tmp_path / "mismatch" / "a.txt").read_text() == "line one\nline 2\n"
    assert (tmp_path / "gold" / "a.txt").read_text() == "line one\nline two\n"  # gold untouched


def test_trailing_space_is_a_difference(tmp_path: Path) -> None:
    (tmp_path / "gold").mkdir()
    (tmp_path / "gold" / "a.txt").write_text("x\n")
    with pytest.raises(pytest.fail.Exception):
        _checker(tmp_path).check("a.txt", "x \n")


def test_missing_gold_fails_and_is_not_created(tmp_path: Path) -> None:
    with pytest.raises(pytest.fail.Exception, match="--update-gold"):
        _checker(tmp_path).check("new.txt", "text\n")
    assert not (tmp_path / "gold" / "new.txt").exists()
    assert (tmp_path / "mismatch" / "new.txt").read_text() == "text\n"


def test_update_writes_the_gold_file(tmp_path: Path) -> None:
    _checker(tmp_path, update=True).check("new.txt", "text\n")
    assert (tmp_path / "gold" / "new.txt").read_bytes() == b"text\n"
    _checker(tmp_path).check("new.txt", "text\n")
