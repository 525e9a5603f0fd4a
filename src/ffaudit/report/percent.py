"""Percentages for people: exact arithmetic, and never a misleading 0 or 100.

A library of 2000 molecules with one incomplete molecule is not "100.0 %" covered, and one unreadable record
is not "0.0 %" unreadable. :func:`display_percent` rounds half up to ``precision`` decimals, then moves a value
that rounded to 0 (but is not 0) up to the smallest step, and one that rounded to 100 (but is not all) down to
the largest step below 100.
"""

from __future__ import annotations

NOT_APPLICABLE = "-"
"""What :func:`display_percent` shows for a percentage of nothing (``total == 0``)."""


def display_percent(part: int, total: int, precision: int = 1) -> str:
    """``part`` of ``total`` as a percentage string with ``precision`` decimals, without a ``%`` sign.

    Exactly 0 and exactly ``total`` give ``"0.0"`` and ``"100.0"`` (for ``precision=1``); anything strictly
    between is shown strictly between: ``1`` of ``100000`` is ``"0.1"`` and ``99999`` of ``100000`` is
    ``"99.9"``. Halves round up (``1`` of ``8`` at ``precision=0`` is ``"13"``). ``total == 0`` gives
    :data:`NOT_APPLICABLE`.

    Raises ``ValueError`` when ``precision`` is negative, ``total`` is negative, or ``part`` is outside
    ``0..total``.
    """
    if precision < 0:
        raise ValueError(f"precision must be >= 0, got {precision}")
    if total < 0 or not 0 <= part <= max(total, 0):
        raise ValueError(f"need 0 <= part <= total, got part={part}, total={total}")
    if total == 0:
        return NOT_APPLICABLE
    scale = 10**precision
    # Integer arithmetic, so that no float rounding decides what is shown.
    steps, remainder = divmod(100 * scale * part, total)
    if 2 * remainder >= total:
        steps += 1
    if steps == 0 and part > 0:
        steps = 1
    elif steps == 100 * scale and part < total:
        steps = 100 * scale - 1
    whole, fraction = divmod(steps, scale)
    return f"{whole}.{fraction:0{precision}d}" if precision else str(whole)
