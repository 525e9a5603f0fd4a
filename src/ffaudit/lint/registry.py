"""The lint rule registry: every module of :mod:`ffaudit.lint.rules` is one rule (no hand-kept list).

Modules are found with :func:`pkgutil.iter_modules` over the rules package and checked on first use. A rule
module defines (see :mod:`ffaudit.lint.context`):

``ID``
    kebab-case, unique, equal to the module name with ``_`` for ``-`` (``bond_length_radii.py`` is
    ``bond-length-radii``);
``SEVERITY``
    the default :class:`~ffaudit.findings.Severity` of its findings;
``FAMILY``
    one of :data:`FAMILIES`;
``OPTIONS``
    a mapping of option names to their defaults (may be empty);
``NEEDS_REFERENCE`` / ``NEEDS_SET``
    booleans (defaults False / True): run only with a reference library / only when the set loaded;
``check(ctx, options)``
    a generator of findings;
``LOAD_CODES`` (optional)
    loader finding codes the rule reports (:mod:`ffaudit.paramset.load`); a rule with load codes is
    *required*: a set with such a problem does not load, so the rule cannot be switched off;
``EXAMPLE_LANGUAGE`` (optional, default ``yaml``)
    the language of the docstring examples, for the generated docs;

and a docstring: a one-line summary, then the reason and tolerance, then ``Passing:`` and ``Failing:``
examples as indented literal blocks.

A module that breaks these rules raises :class:`RuleModuleError` (naming the module and what is wrong) when
the registry is first used, so a broken rule is found by any test, never skipped silently.
"""

from __future__ import annotations

import functools
import importlib
import pkgutil
import re
import textwrap
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType, ModuleType
from typing import Any

from ffaudit.findings import Finding, Severity

FAMILIES: tuple[str, ...] = ("structure", "physics", "torsion")
"""Rule families, in documentation and listing order."""

_ID = re.compile(r"[a-z][a-z0-9]*(-[a-z0-9]+)*")

FALLBACK_RULE = "schema"
"""The rule that reports a loader finding whose code no rule declares (so none is lost)."""


class RuleModuleError(ValueError):
    """A module under :mod:`ffaudit.lint.rules` does not define a valid rule (a programming error)."""


@dataclass(frozen=True)
class Rule:
    """One lint rule as the registry found it."""

    id: str
    severity: Severity
    family: str
    options: Mapping[str, Any]
    needs_reference: bool
    needs_set: bool
    module: ModuleType
    load_codes: frozenset[str] = frozenset()
    example_language: str = "yaml"
    doc: str = field(default="", repr=False)

    @property
    def check(self) -> Callable[..., Iterator[Finding]]:
        check: Callable[..., Iterator[Finding]] = self.module.check
        return check

    @property
    def required(self) -> bool:
        """True for rules reporting load errors: they always run and cannot be disabled."""
        return bool(self.load_codes)

    @property
    def summary(self) -> str:
        """The docstring's first line."""
        return self.doc.strip().splitlines()[0].strip()

    @property
    def description(self) -> str:
        """The docstring between the summary and the ``Passing:`` example (reason, tolerance, options)."""
        body = self.doc.strip().split("\n", 1)
        text = body[1] if len(body) > 1 else ""
        return textwrap.dedent(text.split("\nPassing:", 1)[0]).strip()

    @property
    def passing(self) -> str:
        """The ``Passing:`` example, dedented."""
        return docstring_block(self.doc, "Passing:")

    @property
    def failing(self) -> str:
        """The ``Failing:`` example, dedented."""
        return docstring_block(self.doc, "Failing:")


def docstring_block(doc: str, label: str) -> str:
    """The indented literal block after the line ``label`` in ``doc``, dedented; ``""`` if there is none."""
    lines = textwrap.dedent(doc).splitlines()
    try:
        start = next(i for i, line in enumerate(lines) if line.strip() == label) + 1
    except StopIteration:
        return ""
    block: list[str] = []
    for line in lines[start:]:
        if line.strip() and not line.startswith((" ", "\t")):
            break
        block.append(line)
    return textwrap.dedent("\n".join(block)).strip("\n")


def _rule_from_module(name: str, module: ModuleType) -> Rule:
    def fail(what: str) -> RuleModuleError:
        return RuleModuleError(f"lint rule module ffaudit.lint.rules.{name}: {what}")

    for attribute in ("ID", "SEVERITY", "FAMILY", "check"):
        if not hasattr(module, attribute):
            raise fail(f"does not define {attribute}")
    rule_id = module.ID
    if not isinstance(rule_id, str) or not _ID.fullmatch(rule_id):
        raise fail(f"ID {rule_id!r} is not a kebab-case name")
    if rule_id.replace("-", "_") != name:
        raise fail(
            f"ID {rule_id!r} does not match the module name (expected {name.replace('_', '-')!r})"
        )
    if not isinstance(module.SEVERITY, Severity):
        raise fail(f"SEVERITY {module.SEVERITY!r} is not a ffaudit.findings.Severity")
    if module.FAMILY not in FAMILIES:
        raise fail(f"FAMILY {module.FAMILY!r} is not one of {', '.join(FAMILIES)}")
    options = getattr(module, "OPTIONS", {})
    if not isinstance(options, Mapping) or not all(isinstance(k, str) for k in options):
        raise fail("OPTIONS must be a mapping of option names to defaults")
    flags = {}
    for attribute, default in (("NEEDS_REFERENCE", False), ("NEEDS_SET", True)):
        value = getattr(module, attribute, default)
        if not isinstance(value, bool):
            raise fail(f"{attribute} must be True or False, not {value!r}")
        flags[attribute] = value
    if not callable(module.check):
        raise fail("check is not callable")
    codes: Any = getattr(module, "LOAD_CODES", frozenset())
    if isinstance(codes, str) or not all(isinstance(c, str) for c in codes):
        raise fail("LOAD_CODES must be a collection of loader finding codes")
    doc = module.__doc__ or ""
    if not doc.strip():
        raise fail("has no docstring (its first line is the rule's summary)")
    for label in ("Passing:", "Failing:"):
        if not docstring_block(doc, label):
            raise fail(f"the docstring has no {label} example (an indented block after {label!r})")
    return Rule(
        id=rule_id,
        severity=module.SEVERITY,
        family=module.FAMILY,
        options=MappingProxyType(dict(options)),
        needs_reference=flags["NEEDS_REFERENCE"],
        needs_set=flags["NEEDS_SET"],
        module=module,
        load_codes=frozenset(codes),
        example_language=str(getattr(module, "EXAMPLE_LANGUAGE", "yaml")),
        doc=doc,
    )


@functools.cache
def _discover() -> tuple[Rule, ...]:
    import ffaudit.lint.rules as package

    rules: list[Rule] = []
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        if info.ispkg or info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{package.__name__}.{info.name}")
        rules.append(_rule_from_module(info.name, module))
    owners: dict[str, str] = {}
    for rule in rules:
        for code in rule.load_codes:
            if code in owners:
                raise RuleModuleError(
                    f"loader code {code!r} is claimed by both {owners[code]} and {rule.id}"
                )
            owners[code] = rule.id
    return tuple(sorted(rules, key=lambda r: (FAMILIES.index(r.family), r.id)))


def all_rules() -> tuple[Rule, ...]:
    """Every rule, sorted by family (:data:`FAMILIES` order) then id.

    Raises :class:`RuleModuleError` for a malformed rule module or a loader code claimed twice.
    """
    return _discover()


def rule_ids() -> tuple[str, ...]:
    """The ids of :func:`all_rules`, in the same order."""
    return tuple(r.id for r in all_rules())


def get_rule(rule_id: str) -> Rule:
    """The rule ``rule_id``; ``KeyError`` naming the known ids when there is none."""
    for rule in all_rules():
        if rule.id == rule_id:
            return rule
    raise KeyError(f"unknown lint rule {rule_id!r} (known: {', '.join(rule_ids())})")


def rule_for_load_code(code: str) -> str:
    """The id of the rule that reports loader finding ``code`` (:data:`FALLBACK_RULE` if none claims it)."""
    for rule in all_rules():
        if code in rule.load_codes:
            return rule.id
    return FALLBACK_RULE


def default_preset() -> Mapping[str, Mapping[str, Any]]:
    """The rules run by default, each with its default options: every rule of the registry.

    Rules that need a reference library run only when one is given; any rule that is not required can be
    switched off in the set's header (``header.lint.disable``) or with ``--disable``.
    """
    return MappingProxyType({r.id: r.options for r in all_rules()})


def __getattr__(name: str) -> Any:
    # DEFAULT_PRESET is computed on first use, so that importing the registry never imports the rules.
    if name == "DEFAULT_PRESET":
        return default_preset()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
