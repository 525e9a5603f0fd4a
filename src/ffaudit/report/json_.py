"""``--format json``: one JSON document with the run, every molecule and the summary.

The document (``schemas/audit-report.schema.json``) is written as these lines::

    {"format":"ffaudit-audit","format_version":1,"parameter_set":{...},"cautions":[...],"terms_mode":"all","molecules":[
    {...first molecule...},
    {...second molecule...}
    ],"summary":{...}}

It is streamed: the head is written by ``start``, each molecule by ``add`` as it arrives (one per line, so the
document stays greppable), and the summary by ``finish``; no molecule is held in memory. The summary therefore
comes after the molecules (JSON object members have no order; readers must not rely on one). Molecules are
written compactly exactly as given (see :func:`ffaudit.report.jsonl.dump_compact`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, TextIO

from ffaudit.report.jsonl import dump_compact

FORMAT_NAME = "ffaudit-audit"
FORMAT_VERSION = 1
"""Increased when a change would break a reader of the previous version (a key removed, renamed or retyped)."""


class JsonReporter:
    """Streams one JSON document. Calling the methods out of order raises ``RuntimeError``."""

    def __init__(self, out: TextIO) -> None:
        self.out = out
        self._state = "new"
        self._count = 0

    def start(self, run: Mapping[str, Any]) -> None:
        """Write the document head. Raises ``KeyError`` if ``run`` lacks ``parameter_set``."""
        self._expect("new")
        head = {
            "format": FORMAT_NAME,
            "format_version": FORMAT_VERSION,
            "parameter_set": run["parameter_set"],
            "cautions": list(run.get("cautions", ())),
            "terms_mode": run.get("terms_mode", "all"),
        }
        text = dump_compact(head)
        self.out.write(text[:-1] + ',"molecules":[')
        self._state = "open"

    def add(self, molecule: Mapping[str, Any]) -> None:
        """Write one molecule. Raises ``ValueError`` / ``TypeError`` as :func:`dump_compact`."""
        self._expect("open")
        self.out.write(("\n" if self._count == 0 else ",\n") + dump_compact(molecule))
        self._count += 1

    def finish(self, summary: Mapping[str, Any]) -> None:
        """Close the molecule list, write the summary and end the document."""
        self._expect("open")
        self.out.write(
            ("\n" if self._count else "") + '],"summary":' + dump_compact(summary) + "}\n"
        )
        self.out.flush()
        self._state = "done"

    def _expect(self, state: str) -> None:
        if self._state != state:
            raise RuntimeError(f"JsonReporter: call out of order (state {self._state!r})")
