"""The pass/fail policy of an audit run: one pure function, tested at its edges."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

FAIL_ON: tuple[str, ...] = ("missing", "estimated", "never")


@dataclass(frozen=True)
class Verdict:
    ok: bool
    message: str


def gate(
    status: Mapping[str, int],
    fail_on: str = "missing",
    min_score: float | None = None,
    lowest_score: float | None = None,
) -> Verdict:
    """Decide whether a run meets the policy.

    ``fail_on="missing"`` fails when any record is incomplete or unreadable (an unreadable record was not
    checked, so it cannot pass); ``"estimated"`` also fails on estimated records; ``"never"`` only applies
    ``min_score``. ``min_score`` fails when the lowest molecule score is below it. Raises ``ValueError`` for
    an unknown ``fail_on``.
    """
    if fail_on not in FAIL_ON:
        raise ValueError(
            f"unknown --fail-on value {fail_on!r} (expected one of {', '.join(FAIL_ON)})"
        )
    failing: list[str] = []
    if fail_on in ("missing", "estimated"):
        failing += ["incomplete", "unreadable"]
    if fail_on == "estimated":
        failing.append("estimated")
    bad = {s: status.get(s, 0) for s in failing if status.get(s, 0)}
    if bad:
        detail = ", ".join(f"{n} {s}" for s, n in bad.items())
        return Verdict(False, f"{sum(bad.values())} records fail --fail-on {fail_on} ({detail}).")
    if min_score is not None and lowest_score is not None and lowest_score < min_score:
        return Verdict(
            False, f"lowest molecule score {lowest_score:g} is below --min-score {min_score:g}."
        )
    return Verdict(True, "all records meet the policy.")
