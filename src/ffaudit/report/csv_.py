"""``--format csv``: one row per molecule, for spreadsheets and data frames.

Columns (header row first): ``index, path, record, line, name, status, reason, score, terms, exact, wildcard,
parent, analogy, estimate, missing``. ``terms`` is the molecule's number of terms and each tier column the
number of terms resolved at that tier, summed over all term kinds (from ``counts``, so they cover every term
whatever ``--terms`` says). Empty cells stand for null (no reason, no score). Fields are quoted by the
:mod:`csv` module when they need it; lines end with ``"\\n"``. Cells are written as given: a name starting with
``=`` is not altered, so treat the file as data, not as a spreadsheet to open blindly.
"""

from __future__ import annotations

import csv
from collections.abc import Mapping
from typing import Any, TextIO

TIERS: tuple[str, ...] = ("exact", "wildcard", "parent", "analogy", "estimate", "missing")
"""Resolution tiers, from the most to the least trustworthy."""

COLUMNS: tuple[str, ...] = (
    "index",
    "path",
    "record",
    "line",
    "name",
    "status",
    "reason",
    "score",
    "terms",
) + TIERS


def tier_totals(counts: Mapping[str, Mapping[str, int]]) -> dict[str, int]:
    """Sum ``counts`` ({kind: {tier: n}}) over kinds: {tier: n} for every tier of :data:`TIERS`.

    Raises ``KeyError`` naming a tier outside :data:`TIERS`, so that no count is silently dropped.
    """
    totals = dict.fromkeys(TIERS, 0)
    for kind, by_tier in counts.items():
        for tier, n in by_tier.items():
            if tier not in totals:
                raise KeyError(f"unknown tier {tier!r} in counts of {kind!r}")
            totals[tier] += n
    return totals


def _cell(value: Any) -> Any:
    return "" if value is None else value


class CsvReporter:
    """Writes the header on ``start`` and one row per molecule as it comes."""

    def __init__(self, out: TextIO) -> None:
        self.out = out
        self._writer = csv.writer(out, lineterminator="\n")

    def start(self, run: Mapping[str, Any]) -> None:
        """Write the header row."""
        self._writer.writerow(COLUMNS)

    def add(self, molecule: Mapping[str, Any]) -> None:
        """Write one row. Raises ``KeyError`` for a molecule dict missing a contract key."""
        source = molecule["source"]
        totals = tier_totals(molecule.get("counts") or {})
        self._writer.writerow(
            [
                molecule["index"],
                source["path"],
                source["record"],
                source["line"],
                molecule["name"],
                molecule["status"],
                _cell(molecule.get("reason")),
                _cell(molecule.get("score")),
                sum(totals.values()),
                *(totals[tier] for tier in TIERS),
            ]
        )

    def finish(self, summary: Mapping[str, Any]) -> None:
        """Flush the stream; the summary is not part of the CSV output."""
        self.out.flush()
