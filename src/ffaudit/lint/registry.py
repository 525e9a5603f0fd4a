"""The lint rule registry: every module of :mod:`ffaudit.lint.rules` is one rule (no hand-kept list)."""

from __future__ import annotations

import importlib
import pkgutil
from dataclasses import dataclass
from types import ModuleType
from typing import Any

from ffaudit.findings import Severity

FAMILIES = ("structure", "physics", "torsion")


@dataclass(frozen=True)
class Rule:
    id: str
    severity: Severity
    family: str
    options: dict[str, Any]
    needs_reference: bool
    needs_set: bool
    module: ModuleType

    @property
    def summary(self) -> str:
        return (self.module.__doc__ or "").strip().splitlines()[0]


def all_rules() -> list[Rule]:
    """Every rule, sorted by family then id. Raises ``ValueError`` for a malformed rule module."""
    import ffaudit.lint.rules as package

    rules = []
    for info in pkgutil.iter_modules(package.__path__):
        module = importlib.import_module(f"ffaudit.lint.rules.{info.name}")
        for name in ("ID", "SEVERITY", "FAMILY", "check"):
            if not hasattr(module, name):
                raise ValueError(f"lint rule module {info.name} lacks {name}")
        if module.FAMILY not in FAMILIES:
            raise ValueError(f"lint rule {module.ID}: unknown family {module.FAMILY!r}")
        rules.append(
            Rule(
                id=module.ID,
                severity=module.SEVERITY,
                family=module.FAMILY,
                options=dict(getattr(module, "OPTIONS", {})),
                needs_reference=bool(getattr(module, "NEEDS_REFERENCE", False)),
                needs_set=bool(getattr(module, "NEEDS_SET", True)),
                module=module,
            )
        )
    ids = [r.id for r in rules]
    if len(set(ids)) != len(ids):
        raise ValueError(f"duplicate lint rule ids: {sorted(i for i in ids if ids.count(i) > 1)}")
    return sorted(rules, key=lambda r: (FAMILIES.index(r.family), r.id))


def default_preset() -> list[str]:
    """The rules run by default: all of them (disable per set in header.lint.disable or --disable)."""
    return [r.id for r in all_rules()]
