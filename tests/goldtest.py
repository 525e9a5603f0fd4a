"""Gold-file comparison for exact renderer output.

``GoldChecker.check(name, actual)`` compares ``actual`` with the UTF-8 text of ``tests/gold/NAME`` exactly
(line ends read as ``"\\n"``, so a checkout with CRLF line ends still compares equal). On a mismatch it
writes ``actual`` to ``tests/gold_mismatch/NAME`` (git-ignored) and fails with a unified diff and the way to
accept the new output. The gold file is (re)written only
when pytest runs with ``--update-gold``; a missing gold file is a failure otherwise, never created silently.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from pathlib import Path

import pytest

TESTS_DIR = Path(__file__).resolve().parent
GOLD_DIR = TESTS_DIR / "gold"
MISMATCH_DIR = TESTS_DIR / "gold_mismatch"


@dataclass(frozen=True)
class GoldChecker:
    update: bool = False
    gold_dir: Path = GOLD_DIR
    mismatch_dir: Path = MISMATCH_DIR

    def check(self, name: str, actual: str) -> None:
        """Fail (``pytest.fail``) unless ``actual`` equals the gold file ``name``, or rewrite it on update."""
        __tracebackhide__ = True
        gold_file = self.gold_dir / name
        saved = self.mismatch_dir / name
        if self.update:
            gold_file.parent.mkdir(parents=True, exist_ok=True)
            gold_file.write_text(actual, encoding="utf-8", newline="")
            saved.unlink(missing_ok=True)
            return
        expected = gold_file.read_text(encoding="utf-8") if gold_file.is_file() else None
        if expected == actual:
            saved.unlink(missing_ok=True)
            return
        saved.parent.mkdir(parents=True, exist_ok=True)
        saved.write_text(actual, encoding="utf-8", newline="")
        if expected is None:
            pytest.fail(
                f"no gold file {gold_file}; the output was saved to {saved}. "
                "Review it, then run pytest with --update-gold to accept it."
            )
        diff = "".join(
            difflib.unified_diff(
                expected.splitlines(keepends=True),
                actual.splitlines(keepends=True),
                fromfile=str(gold_file),
                tofile=str(saved),
            )
        )
        pytest.fail(
            f"output differs from {gold_file}; saved to {saved}. If the change is intended, run "
            f"pytest with --update-gold.\n{diff}"
        )
