"""Transferability score: how far a resolved value can be trusted to transfer to this term, in [0, 1].

Meaning: 1 means the set has a parameter for exactly this class tuple; lower values mean the value was
obtained by generalising (wildcards, parent classes), by copying from a similar tuple (analogy) or by a
published rule (estimate); 0 means no value at all. The score ranks terms for review; it is not an error bar.

Formula (constants are data, :class:`ScoreModel`, so calibration can replace them)::

    score = base[tier] * decay[tier] ** (n - 1)      n = size of the generalisation, n >= 1

where n is the number of wildcards used (wildcard tier), the number of parent steps (parent tier), the number
of class substitutions (analogy tier) or 1 + the number of the term's atoms without a class (estimate
tier, whose base may be given per rule). ``exact`` is always 1 and ``missing`` always 0. A molecule's score is the minimum over its terms.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

TIERS: tuple[str, ...] = ("exact", "wildcard", "parent", "analogy", "estimate", "missing")
"""Resolution tiers, in the order they are tried."""

RESOLVED_FROM_SET = frozenset({"exact", "wildcard", "parent"})
"""Tiers whose value is a parameter of the set itself (not an estimate)."""


@dataclass(frozen=True)
class ScoreModel:
    base: Mapping[str, float] = field(
        default_factory=lambda: {
            "exact": 1.0,
            "wildcard": 0.9,
            "parent": 0.8,
            "analogy": 0.6,
            "estimate": 0.4,
            "missing": 0.0,
        }
    )
    decay: Mapping[str, float] = field(
        default_factory=lambda: {"wildcard": 0.95, "parent": 0.9, "analogy": 0.85, "estimate": 0.75}
    )
    rule_base: Mapping[str, float] = field(default_factory=dict)
    """Optional per-rule base for the estimate tier (rule id -> base)."""

    def score(self, tier: str, size: int = 1, rule: str | None = None) -> float:
        """Score of one term. Raises ``ValueError`` for an unknown tier."""
        if tier not in TIERS:
            raise ValueError(f"unknown tier {tier!r}")
        if tier == "exact":
            return 1.0
        if tier == "missing":
            return 0.0
        base = self.base[tier]
        if tier == "estimate" and rule is not None:
            base = self.rule_base.get(rule, base)
        n = max(1, size)
        return round(base * self.decay.get(tier, 1.0) ** (n - 1), 6)


DEFAULT_SCORE_MODEL = ScoreModel()
