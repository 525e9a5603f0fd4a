"""A chunk :class:`~ffaudit.audit.Summary` as plain JSON, so a resumed run can merge chunks it did not audit.

The state keeps every total the summary merges (not its rendered ``to_dict`` form, which cannot be merged):
record and status counts, term counts, every molecule score, the missing-tuple counters, the classes
assigned, the elements without a class and the unreadable records. Collections are written in sorted order
so that the same totals always give the same bytes. Scores are floats written with ``repr`` precision, so
they read back exactly.

:data:`FIELDS` lists the summary attributes this codec knows. A test fails when :class:`Summary` gains or
loses one, so a new total cannot be silently dropped from resumed runs.
"""

from __future__ import annotations

from array import array
from collections import Counter
from collections.abc import Mapping
from typing import Any

from ffaudit.audit import Summary, TierCounts
from ffaudit.paramset.model import ParameterSet

STATE_VERSION = 1

FIELDS: frozenset[str] = frozenset(
    {
        "pset",
        "top",
        "records",
        "status",
        "counts",
        "scores",
        "missing_molecules",
        "missing_terms",
        "assigned",
        "elements_without_class",
        "unreadable",
        "_known_elements",
    }
)
"""Attributes of :class:`Summary` (``pset``, ``top`` and ``_known_elements`` come from the set, not the
state)."""


def _tuple_counter(counter: Counter[tuple[str, tuple[str, ...]]]) -> list[list[Any]]:
    return [[kind, list(classes), n] for (kind, classes), n in sorted(counter.items())]


def summary_state(summary: Summary) -> dict[str, Any]:
    """The mergeable totals of ``summary`` as a JSON-ready dict (deterministic for equal totals)."""
    return {
        "state_version": STATE_VERSION,
        "records": summary.records,
        "status": dict(sorted(summary.status.items())),
        "counts": {kind: dict(tiers) for kind, tiers in sorted(summary.counts.counts.items())},
        "scores": list(summary.scores),
        "missing_molecules": _tuple_counter(summary.missing_molecules),
        "missing_terms": _tuple_counter(summary.missing_terms),
        "assigned": sorted(summary.assigned),
        "elements_without_class": dict(sorted(summary.elements_without_class.items())),
        "unreadable": list(summary.unreadable),
    }


def summary_from_state(pset: ParameterSet, state: Mapping[str, Any]) -> Summary:
    """Rebuild a :class:`Summary` of ``pset`` from :func:`summary_state` output.

    Raises :class:`ValueError` naming the problem when ``state`` is not such a dict (wrong version, a key
    missing or of the wrong type).
    """
    if state.get("state_version") != STATE_VERSION:
        raise ValueError(
            f"summary state version {state.get('state_version')!r}, expected {STATE_VERSION}"
        )
    summary = Summary(pset)
    try:
        summary.records = int(state["records"])
        summary.status = Counter({str(k): int(v) for k, v in state["status"].items()})
        summary.counts = TierCounts(
            {
                str(kind): {str(t): int(n) for t, n in tiers.items()}
                for kind, tiers in state["counts"].items()
            }
        )
        summary.scores = array("d", (float(s) for s in state["scores"]))
        summary.missing_molecules = Counter(
            {(str(kind), tuple(classes)): int(n) for kind, classes, n in state["missing_molecules"]}
        )
        summary.missing_terms = Counter(
            {(str(kind), tuple(classes)): int(n) for kind, classes, n in state["missing_terms"]}
        )
        summary.assigned = {str(c) for c in state["assigned"]}
        summary.elements_without_class = Counter(
            {str(k): int(v) for k, v in state["elements_without_class"].items()}
        )
        summary.unreadable = [dict(u) for u in state["unreadable"]]
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise ValueError(f"malformed summary state: {type(exc).__name__}: {exc}") from exc
    return summary
