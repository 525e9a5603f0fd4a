"""The plots of the HTML report, drawn with matplotlib (Agg, no display) as SVG.

Each function takes plain numbers and returns an SVG document as text. Output is deterministic: the SVG id
salt is fixed per plot, the metadata (date, creator) is left out and text is written as text (no embedded
glyphs), so the same numbers give the same bytes. The page embeds each SVG as a ``data:`` image, so its ids
cannot clash with the page's and it needs nothing from the network.

Colours: one per tier and per status, the same in every plot; they are darker than the marks of the
molecule drawings (:mod:`ffaudit.report.depict`), so the two are never confused.
"""

from __future__ import annotations

import base64
import io
from collections.abc import Mapping, Sequence
from typing import Any

import matplotlib

matplotlib.use("Agg")

from matplotlib.figure import Figure  # noqa: E402 - after choosing the back-end

TIER_COLOURS: Mapping[str, str] = {
    "exact": "#1b5e20",
    "wildcard": "#43a047",
    "parent": "#a5d6a7",
    "analogy": "#7e57c2",
    "estimate": "#1565c0",
    "missing": "#b71c1c",
}
STATUS_COLOURS: Mapping[str, str] = {
    "covered": "#1b5e20",
    "estimated": "#1565c0",
    "incomplete": "#b71c1c",
    "unreadable": "#757575",
}
# typed loosely: matplotlib types rc keys as a Literal of every rc name
_RC: dict[Any, Any] = {"svg.fonttype": "none", "font.size": 9.0, "axes.spines.top": False, "axes.spines.right": False}
_METADATA = {"Date": None, "Creator": None, "Format": None, "Type": None}


def _svg(figure: Figure, name: str) -> str:
    buffer = io.StringIO()
    with matplotlib.rc_context({**_RC, "svg.hashsalt": f"ffaudit-report-{name}"}):
        figure.savefig(buffer, format="svg", metadata=_METADATA, bbox_inches="tight")
    return buffer.getvalue()


def data_uri(svg: str) -> str:
    """``svg`` as a ``data:image/svg+xml;base64,...`` URI for an ``<img>``."""
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


def _figure(height: float) -> Figure:
    with matplotlib.rc_context(_RC):
        return Figure(figsize=(6.4, height), dpi=100, layout="constrained")


def stacked_bars(
    name: str,
    labels: Sequence[str],
    parts: Sequence[str],
    values: Sequence[Sequence[float]],
    colours: Mapping[str, str],
    xlabel: str,
) -> str:
    """Horizontal bars, one per label (top to bottom), each split into ``parts``; ``values[i][j]`` is the
    size of part ``j`` of bar ``i``. Raises ``ValueError`` when the shapes disagree."""
    if len(values) != len(labels) or any(len(row) != len(parts) for row in values):
        raise ValueError("values must have one row per label and one column per part")
    figure = _figure(max(1.6, 0.32 * len(labels) + 1.1))
    with matplotlib.rc_context(_RC):
        axes = figure.add_subplot()
        positions = list(range(len(labels)))[::-1]
        left = [0.0] * len(labels)
        for j, part in enumerate(parts):
            widths = [float(row[j]) for row in values]
            if not any(widths):
                continue
            axes.barh(positions, widths, left=left, color=colours.get(part, "#999999"), label=part)
            left = [a + b for a, b in zip(left, widths, strict=True)]
        axes.set_yticks(positions, labels)
        axes.set_xlabel(xlabel)
        if labels:
            axes.legend(loc="lower center", bbox_to_anchor=(0.5, 1.0), ncol=len(parts), frameon=False)
    return _svg(figure, name)


def histogram(
    name: str, edges: Sequence[float], counts: Sequence[int], xlabel: str, ylabel: str
) -> str:
    """Bars of ``counts`` between consecutive ``edges``. Raises ``ValueError`` when
    ``len(edges) != len(counts) + 1``."""
    if len(edges) != len(counts) + 1:
        raise ValueError("need one more edge than counts")
    figure = _figure(2.6)
    with matplotlib.rc_context(_RC):
        axes = figure.add_subplot()
        widths = [b - a for a, b in zip(edges, edges[1:], strict=False)]
        axes.bar(edges[:-1], counts, width=widths, align="edge", color="#455a64", edgecolor="white")
        axes.set_xlim(edges[0], edges[-1])
        axes.set_xlabel(xlabel)
        axes.set_ylabel(ylabel)
    return _svg(figure, name)


def step_curve(name: str, ys: Sequence[float], xlabel: str, ylabel: str) -> str:
    """A step curve of ``ys`` at x = 0, 1, 2, ... (percentages, 0 to 100)."""
    figure = _figure(2.8)
    with matplotlib.rc_context(_RC):
        axes = figure.add_subplot()
        axes.step(range(len(ys)), ys, where="post", color="#1565c0")
        if len(ys) <= 40:
            axes.plot(range(len(ys)), ys, "o", color="#1565c0", markersize=3)
        axes.set_ylim(0, 100)
        axes.set_xlim(0, max(1, len(ys) - 1))
        axes.set_xlabel(xlabel)
        axes.set_ylabel(ylabel)
        axes.grid(True, axis="y", color="#dddddd")
    return _svg(figure, name)
