"""Shared pytest options and fixtures.

``--update-gold``: rewrite the gold files (tests/gold/) from the current output instead of comparing; see
tests/goldtest.py. Without it, a mismatch fails and the actual output is saved under tests/gold_mismatch/.
"""

from __future__ import annotations

import pytest

from goldtest import GoldChecker


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.addoption(
        "--update-gold",
        action="store_true",
        default=False,
        help="rewrite the gold files in tests/gold/ from the current output instead of comparing",
    )


@pytest.fixture
def gold(request: pytest.FixtureRequest) -> GoldChecker:
    """Compare text with a gold file: ``gold.check("name.txt", text)``."""
    return GoldChecker(update=bool(request.config.getoption("--update-gold")))
