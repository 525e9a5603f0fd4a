"""Safe YAML reading for parameter sets: plain data, source positions, and findings instead of exceptions.

The text is *composed* (parsed to a node graph, nothing constructed) with PyYAML's safe loader (the C one
when libyaml is present), then turned into plain Python data here, node by node. That gives us:

- a map from every document path (``("bonds", 3, "k")``) to its 1-based (line, column);
- duplicate mapping keys as findings naming both lines (plain loaders silently keep the last value);
- refusal of every tag outside plain data (str, int, float, bool, null; timestamps are kept as text);
- a cap on alias expansion (counting the nodes visited again through aliases), which stops
  "billion laughs" documents, and detection of recursive aliases;
- a cap on file size (16 MiB);
- syntax and encoding errors as findings with line and column.

Finding codes produced here: ``yaml-syntax``, ``duplicate-key``, ``unsafe-tag``, ``complex-key``,
``merge-key``, ``alias-expansion``, ``file-too-large``. All are errors. Only ``duplicate-key`` leaves the data
usable (the first value is kept); after any other the document is not validated further
(:attr:`YamlDocument.usable` is False).

Position rule: the mark of a path is where its value starts, except for a mapping member whose value is a
mapping or a list: that one is marked at its key (``bonds:`` rather than the first item below it).
"""

from __future__ import annotations

import os
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import yaml
from yaml.constructor import SafeConstructor
from yaml.nodes import MappingNode, Node, ScalarNode, SequenceNode

from ffaudit.findings import DocPath, Finding, Severity

MAX_FILE_BYTES = 16 * 1024 * 1024
"""Files larger than this are refused without being read."""

MAX_EXPANDED_NODES = 100_000
"""At most this many nodes may be visited again through aliases."""

Mark = tuple[int, int]
"""1-based (line, column)."""

_Loader: type[Any] = getattr(yaml, "CSafeLoader", yaml.SafeLoader)

_TAG = "tag:yaml.org,2002:"
_SCALAR_TAGS = frozenset(_TAG + t for t in ("str", "int", "float", "bool", "null", "timestamp"))
_CONSTRUCTOR = SafeConstructor()
_CONSTRUCT: dict[str, Any] = {
    _TAG + "int": _CONSTRUCTOR.construct_yaml_int,
    _TAG + "float": _CONSTRUCTOR.construct_yaml_float,
    _TAG + "bool": _CONSTRUCTOR.construct_yaml_bool,
    _TAG + "null": _CONSTRUCTOR.construct_yaml_null,
}

FATAL_CODES = frozenset(
    {"yaml-syntax", "unsafe-tag", "complex-key", "merge-key", "alias-expansion", "file-too-large"}
)
"""Codes after which the data is not trusted for further checks."""


@dataclass(frozen=True)
class YamlDocument:
    """The result of reading one YAML file.

    ``data`` is plain data (dict, list, str, int, float, bool, None) or None when the text could not be
    read; ``marks`` maps document paths to 1-based (line, column); ``findings`` lists every YAML-level
    problem; ``raw`` is the file's bytes as read (empty when the file was too large).
    """

    path: str
    data: Any
    marks: Mapping[DocPath, Mark]
    findings: tuple[Finding, ...] = ()
    raw: bytes = b""
    fatal: bool = False

    @property
    def usable(self) -> bool:
        """True when ``data`` can be validated and checked (no fatal YAML finding)."""
        return not self.fatal

    def locate(self, doc_path: DocPath) -> Mark | None:
        """The mark of ``doc_path`` or of its nearest existing ancestor; None when nothing is marked."""
        return locate(self.marks, doc_path)


def locate(marks: Mapping[DocPath, Mark], doc_path: DocPath) -> Mark | None:
    """The mark of ``doc_path``, else of the longest prefix of it that has one, else None."""
    for n in range(len(doc_path), -1, -1):
        mark = marks.get(tuple(doc_path[:n]))
        if mark is not None:
            return mark
    return None


def read_yaml(
    file: str | os.PathLike[str],
    *,
    display_path: str | None = None,
    max_bytes: int = MAX_FILE_BYTES,
    max_expanded_nodes: int = MAX_EXPANDED_NODES,
) -> YamlDocument:
    """Read and parse one YAML file; problems with its content are findings, not exceptions.

    ``display_path`` is the name used in findings (default: ``file`` as given). Raises ``OSError``
    (``FileNotFoundError``, ``IsADirectoryError``, ``PermissionError``) when the file cannot be opened;
    the caller decides how to report that.
    """
    shown = display_path if display_path is not None else os.fspath(file)
    size = os.stat(file).st_size
    if size > max_bytes:
        finding = Finding(
            code="file-too-large",
            severity=Severity.ERROR,
            message=f"file is {size} bytes; parameter sets are limited to {max_bytes} bytes",
            path=shown,
            hint="split the set into layered files",
        )
        return YamlDocument(shown, None, {}, (finding,), b"", fatal=True)
    with open(file, "rb") as handle:
        raw = handle.read(max_bytes + 1)
    return parse_yaml(raw, shown, max_bytes=max_bytes, max_expanded_nodes=max_expanded_nodes)


def parse_yaml(
    raw: bytes,
    path: str,
    *,
    max_bytes: int = MAX_FILE_BYTES,
    max_expanded_nodes: int = MAX_EXPANDED_NODES,
) -> YamlDocument:
    """Parse YAML ``raw`` bytes (UTF-8) named ``path`` in findings. Never raises for bad content."""

    def fail(
        message: str, mark: Mark | None, code: str = "yaml-syntax", hint: str | None = None
    ) -> YamlDocument:
        finding = Finding(
            code=code,
            severity=Severity.ERROR,
            message=message,
            path=path,
            line=mark[0] if mark else None,
            column=mark[1] if mark else None,
            hint=hint,
        )
        return YamlDocument(path, None, {}, (finding,), raw, fatal=True)

    if len(raw) > max_bytes:
        return fail(f"file is over {max_bytes} bytes", None, code="file-too-large")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        return fail(
            f"not UTF-8 text: byte 0x{raw[exc.start]:02x} cannot be decoded ({exc.reason})",
            (line, column),
            hint="save the file as UTF-8",
        )
    try:
        root = yaml.compose(text, Loader=_Loader)
    except yaml.MarkedYAMLError as exc:
        return fail(_syntax_message(exc), _mark(exc.problem_mark or exc.context_mark))
    except yaml.YAMLError as exc:  # reader errors (control characters) carry no mark
        return fail(f"YAML error: {exc}", None)
    builder = _Builder(path, max_expanded_nodes)
    try:
        data = builder.build(root, ()) if root is not None else None
    except _Stop:
        data = None
    except RecursionError:
        return fail("the document is nested too deeply to read", _node_mark(root))
    fatal = any(f.code in FATAL_CODES for f in builder.findings)
    return YamlDocument(
        path,
        None if fatal else data,
        builder.marks,
        tuple(builder.findings),
        raw,
        fatal=fatal,
    )


class _Stop(Exception):
    """Raised inside the builder to abandon a document (alias expansion)."""


@dataclass
class _Builder:
    path: str
    max_expanded: int
    marks: dict[DocPath, Mark] = field(default_factory=dict)
    findings: list[Finding] = field(default_factory=list)
    _seen: set[int] = field(default_factory=set)
    _stack: set[int] = field(default_factory=set)
    _expanded: int = 0
    _first_reuse: Node | None = None

    def _finding(self, code: str, message: str, node: Node, doc_path: DocPath, **kw: Any) -> None:
        line, column = _node_mark(node)
        self.findings.append(
            Finding(
                code=code,
                severity=Severity.ERROR,
                message=message,
                path=self.path,
                line=line,
                column=column,
                doc_path=doc_path,
                **kw,
            )
        )

    def build(self, node: Node, doc_path: DocPath, expanding: bool = False) -> Any:
        ident = id(node)
        if ident in self._stack:
            self._finding(
                "alias-expansion",
                "recursive alias: the node anchored here contains an alias of itself",
                node,
                doc_path,
                hint="aliases must not refer to an enclosing anchor",
            )
            raise _Stop
        if ident in self._seen and isinstance(node, (MappingNode, SequenceNode)):
            expanding = True
            if self._first_reuse is None:
                self._first_reuse = node
        self._seen.add(ident)
        if expanding:
            self._expanded += 1
            if self._expanded > self.max_expanded:
                self._finding(
                    "alias-expansion",
                    f"aliases expand the document by more than {self.max_expanded} nodes; "
                    "the first anchor used again is marked here",
                    self._first_reuse or node,
                    (),
                    hint="write the data out instead of nesting aliases",
                )
                raise _Stop
        self.marks.setdefault(doc_path, _node_mark(node))
        if isinstance(node, ScalarNode):
            return self._scalar(node, doc_path)
        self._stack.add(ident)
        try:
            if isinstance(node, SequenceNode):
                self._check_tag(node, _TAG + "seq", doc_path)
                return [
                    self.build(item, doc_path + (i,), expanding)
                    for i, item in enumerate(node.value)
                ]
            assert isinstance(node, MappingNode)
            self._check_tag(node, _TAG + "map", doc_path)
            return self._mapping(node, doc_path, expanding)
        finally:
            self._stack.discard(ident)

    def _mapping(self, node: MappingNode, doc_path: DocPath, expanding: bool) -> dict[str, Any]:
        out: dict[str, Any] = {}
        first_seen: dict[str, Node] = {}
        for key_node, value_node in node.value:
            if key_node.tag == _TAG + "merge":
                self._finding(
                    "merge-key",
                    "merge keys ('<<') are not supported",
                    key_node,
                    doc_path,
                    hint="write the keys out in full",
                )
                continue
            if not isinstance(key_node, ScalarNode):
                self._finding(
                    "complex-key",
                    "mapping keys must be plain scalars, not lists or mappings",
                    key_node,
                    doc_path,
                )
                continue
            key = str(key_node.value)
            member = doc_path + (key,)
            if key in first_seen:
                first_line = _node_mark(first_seen[key])[0]
                line = _node_mark(key_node)[0]
                self._finding(
                    "duplicate-key",
                    f"duplicate key {key!r} on line {line} (first on line {first_line}); "
                    "the first value is kept",
                    key_node,
                    member,
                    hint="remove or rename one of them",
                    extra=(("first_line", first_line), ("line", line)),
                )
                continue
            first_seen[key] = key_node
            if isinstance(value_node, (MappingNode, SequenceNode)):
                self.marks.setdefault(member, _node_mark(key_node))
            out[key] = self.build(value_node, member, expanding)
        return out

    def _scalar(self, node: ScalarNode, doc_path: DocPath) -> Any:
        tag = node.tag
        if tag not in _SCALAR_TAGS and tag != "!":
            self._refuse_tag(node, doc_path)
            return None
        construct = _CONSTRUCT.get(tag)
        if construct is None:  # str, timestamp (kept as written), non-specific "!"
            return str(node.value)
        try:
            return construct(node)
        except (ValueError, yaml.YAMLError) as exc:
            self._finding(
                "yaml-syntax", f"cannot read {node.value!r} as {tag}: {exc}", node, doc_path
            )
            return None

    def _check_tag(self, node: Node, expected: str, doc_path: DocPath) -> None:
        if node.tag != expected:
            self._refuse_tag(node, doc_path)

    def _refuse_tag(self, node: Node, doc_path: DocPath) -> None:
        self._finding(
            "unsafe-tag",
            f"tag {_short_tag(node.tag)} is not allowed: a parameter set holds plain data only",
            node,
            doc_path,
            hint="remove the tag; write plain strings, numbers, booleans, lists and mappings",
        )


def _short_tag(tag: str) -> str:
    return "!!" + tag[len(_TAG) :] if tag.startswith(_TAG) else tag


def _node_mark(node: Node | None) -> Mark:
    if node is None:
        return (1, 1)
    return (node.start_mark.line + 1, node.start_mark.column + 1)


def _mark(mark: Any) -> Mark | None:
    if mark is None:
        return None
    return (int(mark.line) + 1, int(mark.column) + 1)


_SPACES = re.compile(r"\s+")


def _syntax_message(exc: yaml.MarkedYAMLError) -> str:
    problem = _SPACES.sub(" ", exc.problem or "syntax error").strip()
    message = f"YAML syntax error: {problem}"
    if exc.context:
        context = _SPACES.sub(" ", exc.context).strip()
        where = _mark(exc.context_mark)
        if where is not None and exc.context_mark is not exc.problem_mark:
            context += f" started at line {where[0]}, column {where[1]}"
        message += f" ({context})"
    return message
