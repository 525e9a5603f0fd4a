"""Transferability score formula (documented in ffaudit.score)."""

import pytest

from ffaudit.score import DEFAULT_SCORE_MODEL, ScoreModel


def test_exact_is_one_and_missing_is_zero():
    assert DEFAULT_SCORE_MODEL.score("exact", 5) == 1.0
    assert DEFAULT_SCORE_MODEL.score("missing") == 0.0


def test_tiers_are_ordered_for_equal_size():
    scores = [
        DEFAULT_SCORE_MODEL.score(t, 1)
        for t in ("exact", "wildcard", "parent", "analogy", "estimate")
    ]
    assert scores == sorted(scores, reverse=True)
    assert all(0.0 < s <= 1.0 for s in scores)


def test_larger_generalisation_scores_lower():
    model = ScoreModel()
    assert model.score("wildcard", 2) == pytest.approx(0.9 * 0.95)
    assert model.score("parent", 3) == pytest.approx(0.8 * 0.9**2)
    assert model.score("parent", 3) < model.score("parent", 1)


def test_constants_are_data():
    model = ScoreModel(base={**ScoreModel().base, "parent": 0.5}, rule_base={"uff-bond": 0.3})
    assert model.score("parent") == 0.5
    assert model.score("estimate", rule="uff-bond") == 0.3
    with pytest.raises(ValueError):
        model.score("guess")
