"""The pass/fail policy at its edges (pure function; no chemistry)."""

import pytest

from ffaudit.policy import gate

ALL_COVERED = {"covered": 3, "estimated": 0, "incomplete": 0, "unreadable": 0}


def test_all_covered_passes_every_policy():
    for fail_on in ("missing", "estimated", "never"):
        assert gate(ALL_COVERED, fail_on).ok


@pytest.mark.parametrize(
    ("status", "fail_on", "ok"),
    [
        ({"covered": 2, "estimated": 1}, "missing", True),
        ({"covered": 2, "estimated": 1}, "estimated", False),
        ({"covered": 2, "incomplete": 1}, "missing", False),
        ({"covered": 2, "incomplete": 1}, "never", True),
        ({"covered": 2, "unreadable": 1}, "missing", False),
        ({"covered": 2, "unreadable": 1}, "never", True),
    ],
)
def test_fail_on(status, fail_on, ok):
    verdict = gate(status, fail_on)
    assert verdict.ok is ok
    if not ok:
        assert "1 records fail" in verdict.message


def test_min_score_edges():
    assert gate(ALL_COVERED, "never", min_score=0.5, lowest_score=0.5).ok
    verdict = gate(ALL_COVERED, "never", min_score=0.5, lowest_score=0.49)
    assert not verdict.ok
    assert "0.49" in verdict.message and "0.5" in verdict.message


def test_unknown_policy_is_an_error():
    with pytest.raises(ValueError, match="fail-on"):
        gate(ALL_COVERED, "sometimes")
