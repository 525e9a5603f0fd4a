"""``ffaudit report RESULTS -o report.html``: one self-contained HTML page of an audit's results.

RESULTS is a ``--format jsonl`` file, a ``--format json`` document or an output directory
(:mod:`ffaudit.report.results`). The page needs nothing from the network: CSS and the small script that
sorts and filters the table are inline, plots are SVG ``data:`` images (:mod:`ffaudit.report.plots`) and the
molecule drawings inline SVG (:mod:`ffaudit.report.depict`).

How it is made: one streamed pass over the molecules fills a :class:`_Collector` (totals, a bounded
set of table rows, the first molecules with gaps in full, the needs for the coverage curve); then the
records of those molecules are read again from the library for their atom numbers
(:mod:`ffaudit.report.numbering`); then view dataclasses (:class:`ReportView` and the ones it holds) are
built, and finally the jinja2 template ``templates/report.html.j2`` (autoescaping on) turns them into HTML.
Every text from the input (names, SMILES, reasons, classes, citations, paths) reaches the page only as an
escaped template value; the only markup not escaped is SVG made here (plots from numbers, drawings from
atoms and bonds).

Size: a browser copes badly with a page of a million molecules, so ``max_detail`` (default 1000) molecules
with gaps (status estimated or incomplete) get a section with a drawing and their terms, and ``max_rows``
(default 10000) molecules a row of the table (those not covered first); the summary counts every record,
and the page says what was left out.

The cautions are always shown. The demonstration notice (the set is a demonstration set, not for production)
is decided, in this order, by: the run information of an output directory or JSON document
(``parameter_set.demonstration``); the set given with ``--params``; the set the results' provenance names,
when it is an embedded set or a single file that can be loaded and whose name and version match. When none
of these identifies the set (a JSONL file from a layered or moved set), the page says that it could not tell
and how to state the set.

Output is deterministic: the same results and options give the same bytes (no timestamps).
"""

from __future__ import annotations

import base64
import hashlib
import statistics
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, TextIO

from markupsafe import Markup

from ffaudit import __version__
from ffaudit.paramset.model import KINDS, ParameterSet
from ffaudit.report import depict, plots
from ffaudit.report.gap_curve import CurveBuilder, CurveStep, curve_percentages
from ffaudit.report.limits import DEFAULT_MAX_DETAIL, DEFAULT_MAX_ROWS
from ffaudit.report.numbering import Numbered, from_record, from_smiles, read_records
from ffaudit.report.percent import display_percent
from ffaudit.report.results import STATUSES, Results
from ffaudit.score import TIERS

GAP_STATUSES: frozenset[str] = frozenset({"estimated", "incomplete"})
"""Statuses of the molecules "with gaps", which get a detail section."""
FALLBACK_TIERS: frozenset[str] = frozenset({"wildcard", "parent"})
ELEMENT_LIMIT = 30
"""Elements shown in the element plot (the most frequent ones)."""
WORKLIST_ROWS = 20
"""Tuples listed under the coverage curve."""
UNREADABLE_ROWS = 50
TEMPLATE = "report.html.j2"
SCRIPT = "report.js"
STYLE = "report.css"

STATUS_MEANINGS: Mapping[str, str] = {
    "covered": "every term has a parameter of the set (exact, wildcard or parent tier)",
    "estimated": "every term has a value, some only estimated (analogy or rule): review before use",
    "incomplete": "some term has no value",
    "unreadable": "the record could not be read or audited",
}


# ----------------------------------------------------------------------------------------------- views


@dataclass(frozen=True)
class StatusRow:
    status: str
    count: int
    percent: str
    meaning: str


@dataclass(frozen=True)
class KindRow:
    kind: str
    counts: tuple[int, ...]
    """Terms per tier, in :data:`ffaudit.score.TIERS` order."""
    total: int


@dataclass(frozen=True)
class PlotView:
    title: str
    uri: str
    """``data:image/svg+xml;base64,...``"""
    caption: str


@dataclass(frozen=True)
class WorklistRow:
    rank: int
    kind: str
    classes: str
    molecules: int
    covered_percent: str


@dataclass(frozen=True)
class UnreadableRow:
    index: int
    where: str
    reason: str


@dataclass(frozen=True)
class SummaryView:
    records: int
    statuses: tuple[StatusRow, ...]
    score_min: str
    score_median: str
    scored: int
    tiers: tuple[str, ...]
    kinds: tuple[KindRow, ...]
    plots: tuple[PlotView, ...]
    worklist: tuple[WorklistRow, ...]
    worklist_note: str
    unreadable: tuple[UnreadableRow, ...]
    unreadable_more: int


@dataclass(frozen=True)
class MoleculeRow:
    index: int
    name: str
    status: str
    score: float | None
    score_text: str
    missing: int
    estimated: int
    fallback: int
    smiles: str
    anchor: str | None
    """Id of the molecule's detail section, when it has one."""


@dataclass(frozen=True)
class TermView:
    kind: str
    atoms: str
    classes: str
    tier: str
    style: str
    """``missing``, ``estimated`` or ``fallback`` (CSS class and group)."""
    score: str
    source: str
    reason: str
    drawn_atoms: str
    """Space-separated atom numbers in the drawing (for the hover mark); empty when not drawn."""
    drawn_bonds: str


@dataclass(frozen=True)
class FallbackGroup:
    """Fallback terms (wildcard or parent tier) of one molecule that used the same entry."""

    kind: str
    tier: str
    source: str
    count: int
    classes: str
    """The class tuples of the terms, up to a few, then "..."."""


@dataclass(frozen=True)
class DetailView:
    index: int
    anchor: str
    name: str
    status: str
    reason: str
    smiles: str
    where: str
    score: str
    svg: Markup | None
    numbering: str
    """How the atom numbers were matched, or why there is no drawing."""
    missing: tuple[TermView, ...]
    estimated: tuple[TermView, ...]
    fallback: tuple[FallbackGroup, ...]
    fallback_terms: int
    citations: tuple[str, ...]
    """The sources the listed terms cite, once each: ``key: citation``."""
    terms_note: str
    findings: tuple[str, ...]
    proposed: tuple[str, ...]


@dataclass(frozen=True)
class ReportView:
    title: str
    results: str
    parameter_set: str
    demonstration: bool
    notices: tuple[str, ...]
    """Warnings about the page itself: set not identified, run not complete, what was left out."""
    cautions: tuple[str, ...]
    summary: SummaryView
    rows: tuple[MoleculeRow, ...]
    rows_note: str
    details: tuple[DetailView, ...]
    details_note: str
    missing_colour: str
    estimated_colour: str
    version: str


@dataclass(frozen=True)
class ReportOptions:
    """What to show and where the library is (for the atom numbers of the drawings)."""

    max_detail: int = DEFAULT_MAX_DETAIL
    max_rows: int = DEFAULT_MAX_ROWS
    library: str | None = None
    """Path of the audited library, replacing the ``source.path`` of the results (a moved file)."""
    input_format: str | None = None
    reader_options: Mapping[str, Any] = field(default_factory=dict)
    title: str | None = None


# ------------------------------------------------------------------------------------------- collecting


def _tier_total(counts: Mapping[str, Any], tiers: Iterable[str]) -> int:
    total = 0
    for per_kind in counts.values():
        if isinstance(per_kind, Mapping):
            total += sum(int(per_kind.get(t, 0)) for t in tiers)
    return total


def _elements(molecule: Mapping[str, Any]) -> set[str]:
    from rdkit import Chem

    smiles = molecule.get("smiles")
    if not isinstance(smiles, str):
        return set()
    mol = Chem.MolFromSmiles(smiles, sanitize=False)
    if mol is None:
        return set()
    found = {a.GetSymbol() for a in mol.GetAtoms()}
    if int(molecule.get("atoms") or 0) > mol.GetNumAtoms():
        found.add("H")
    return found


@dataclass
class _Collector:
    options: ReportOptions
    records: int = 0
    status: Counter[str] = field(default_factory=Counter)
    terms: dict[str, Counter[str]] = field(default_factory=dict)
    scores: list[float] = field(default_factory=list)
    elements: dict[str, Counter[str]] = field(default_factory=dict)
    not_covered_rows: list[MoleculeRow] = field(default_factory=list)
    covered_rows: list[MoleculeRow] = field(default_factory=list)
    details: list[tuple[str, dict[str, Any]]] = field(default_factory=list)
    gap_molecules: int = 0
    unreadable: list[UnreadableRow] = field(default_factory=list)
    curve: CurveBuilder = field(default_factory=CurveBuilder)
    sets_seen: Counter[str] = field(default_factory=Counter)
    files_seen: dict[str, None] = field(default_factory=dict)
    listed_terms: int = 0
    total_terms: int = 0
    out_of_order: int = 0

    def add(self, where: str, molecule: dict[str, Any]) -> None:
        if molecule.get("index") != self.records:
            self.out_of_order += 1
        self.records += 1
        status = str(molecule["status"])
        self.status[status] += 1
        counts = molecule.get("counts") or {}
        for kind, per_tier in counts.items():
            if isinstance(per_tier, Mapping):
                bucket = self.terms.setdefault(str(kind), Counter())
                for tier, n in per_tier.items():
                    bucket[str(tier)] += int(n)
        score = molecule.get("score")
        if isinstance(score, (int, float)):
            self.scores.append(float(score))
        terms = molecule.get("terms") or []
        self.listed_terms += len(terms)
        self.total_terms += _tier_total(counts, TIERS)
        for term in terms:
            self._note_provenance(term.get("provenance"))
        if status == "unreadable":
            if len(self.unreadable) < UNREADABLE_ROWS:
                source = molecule.get("source") or {}
                self.unreadable.append(
                    UnreadableRow(
                        int(molecule.get("index", -1)),
                        f"{source.get('path')}:{source.get('line')} (record {source.get('record')})",
                        str(molecule.get("reason") or ""),
                    )
                )
        else:
            for element in _elements(molecule):
                self.elements.setdefault(element, Counter())[status] += 1
        self.curve.add(molecule)
        detailed = False
        if status in GAP_STATUSES:
            self.gap_molecules += 1
            if len(self.details) < self.options.max_detail:
                self.details.append((where, molecule))
                detailed = True
        row = self._row(molecule, detailed)
        rows = self.covered_rows if status == "covered" else self.not_covered_rows
        if len(rows) < self.options.max_rows:
            rows.append(row)

    def _note_provenance(self, provenance: Any) -> None:
        while isinstance(provenance, Mapping):
            if isinstance(provenance.get("set"), str):
                self.sets_seen[provenance["set"]] += 1
            if isinstance(provenance.get("file"), str):
                self.files_seen.setdefault(provenance["file"], None)
            provenance = provenance.get("donor")

    def _row(self, molecule: Mapping[str, Any], detailed: bool) -> MoleculeRow:
        counts = molecule.get("counts") or {}
        score = molecule.get("score")
        index = int(molecule.get("index", -1))
        return MoleculeRow(
            index=index,
            name=str(molecule.get("name", "")),
            status=str(molecule.get("status")),
            score=float(score) if isinstance(score, (int, float)) else None,
            score_text=_score_text(score),
            missing=_tier_total(counts, ("missing",)),
            estimated=_tier_total(counts, depict.ESTIMATED_TIERS),
            fallback=_tier_total(counts, FALLBACK_TIERS),
            smiles=str(molecule.get("smiles") or ""),
            anchor=_anchor(index) if detailed else None,
        )

    def table_rows(self) -> list[MoleculeRow]:
        room = max(0, self.options.max_rows - len(self.not_covered_rows))
        return sorted(self.not_covered_rows + self.covered_rows[:room], key=lambda r: r.index)


def _anchor(index: int) -> str:
    return f"molecule-{index}"


def _score_text(score: Any) -> str:
    return f"{float(score):.2f}" if isinstance(score, (int, float)) else "-"


# ------------------------------------------------------------------------------------ parameter set


@dataclass(frozen=True)
class SetIdentity:
    """What the report knows about the parameter set of the results."""

    label: str
    demonstration: bool | None
    """None: not known."""
    pset: ParameterSet | None
    """The set itself when it was given or could be loaded (for class perception of drawings)."""
    notice: str | None = None


def _loadable(paths: Sequence[str]) -> list[str]:
    from ffaudit.paramset.load import EMBEDDED_PREFIX

    return [p[len(EMBEDDED_PREFIX) :] if p.startswith(EMBEDDED_PREFIX) else p for p in paths]


def _try_load(paths: Sequence[str]) -> ParameterSet | None:
    from ffaudit.errors import FfauditError
    from ffaudit.paramset.load import load_parameter_set

    if not paths:
        return None
    try:
        return load_parameter_set(*_loadable(paths))
    except (FfauditError, OSError):
        return None


def identify_set(
    results: Results, given: ParameterSet | None, collector: _Collector
) -> SetIdentity:
    """Decide what the page says about the parameter set (see the module text for the order)."""
    seen = sorted(collector.sets_seen)
    info = results.run.parameter_set
    if info is not None:
        label = f"{info.get('name')} {info.get('version')} (sha256 {str(info.get('hash'))[:12]})"
        pset = given
        if pset is None:
            loaded = _try_load([str(p) for p in info.get("paths") or ()])
            pset = (
                loaded if loaded is not None and loaded.content_hash == info.get("hash") else None
            )
        return SetIdentity(label, bool(info.get("demonstration")), pset)
    if given is not None:
        name = f"{given.header.name} {given.header.version}"
        notice = None
        if seen and seen != [name]:
            notice = (
                f"--params names {name}, but the results' provenance names {', '.join(seen)}; "
                "check that the right set was given"
            )
        label = f"{name} (sha256 {given.content_hash[:12]}, as given with --params)"
        return SetIdentity(label, given.header.demonstration, given, notice)
    files = list(collector.files_seen)
    if len(seen) == 1 and len(files) == 1:
        loaded = _try_load(files)
        if loaded is not None and f"{loaded.header.name} {loaded.header.version}" == seen[0]:
            label = (
                f"{seen[0]} (sha256 {loaded.content_hash[:12]}, {files[0]}, named by the results)"
            )
            return SetIdentity(label, loaded.header.demonstration, loaded)
    label = ", ".join(seen) if seen else "not named in the results"
    notice = (
        "The parameter set could not be identified from the results (JSON lines carry no header"
        + (f"; the provenance names {', '.join(seen)} in {len(files)} files" if seen else "")
        + "), so whether it is a demonstration set is not known. Pass --params SET to state it."
    )
    return SetIdentity(label, None, None, notice)


def _cautions(results: Results, identity: SetIdentity) -> tuple[str, ...]:
    from ffaudit.audit import CAUTIONS, cautions_for

    if results.run.cautions is not None:
        notes = list(results.run.cautions)
        for caution in CAUTIONS:
            if caution not in notes:
                notes.append(caution)
        return tuple(notes)
    if identity.pset is not None and identity.demonstration is not None:
        return tuple(cautions_for(identity.pset))
    return tuple(CAUTIONS)


# ------------------------------------------------------------------------------------------- details


def _source_text(term: Mapping[str, Any]) -> tuple[str, str, str]:
    """(source for people, source key, citation) of a term."""
    provenance = term.get("provenance")
    tier = term.get("tier")
    subs = ", ".join(
        f"{s.get('from')}->{s.get('to')}"
        for s in term.get("substitutions") or ()
        if isinstance(s, Mapping)
    )
    if not isinstance(provenance, Mapping):
        return "-", "", ""
    if tier == "estimate":
        rule = str(provenance.get("rule", "?"))
        inputs = provenance.get("inputs") or {}
        assumed = inputs.get("uff_types") if isinstance(inputs, Mapping) else None
        text = f"ESTIMATE by rule {rule}"
        if isinstance(assumed, list) and assumed:
            text += f" [{', '.join(str(a) for a in assumed)}]"
        return text, rule, str(provenance.get("citation") or "")
    if tier == "analogy":
        donor = provenance.get("donor") or {}
        entry = "-".join(str(c) for c in donor.get("entry") or ())
        text = f"ESTIMATE by analogy ({subs}) from {entry} ({_entry_place(donor)})"
        return text, str(donor.get("source") or ""), str(donor.get("citation") or "")
    text = _entry_place(provenance)
    if subs:
        text += f" via {subs}"
    return text, str(provenance.get("source") or ""), str(provenance.get("citation") or "")


def _entry_place(provenance: Mapping[str, Any]) -> str:
    entry = "-".join(str(c) for c in provenance.get("entry") or ())
    return f"{provenance.get('source') or '-'} @ {provenance.get('file')}:{provenance.get('line')} [{entry}]"


def _term_view(term: Mapping[str, Any], drawing: depict.Drawing | None) -> TermView:
    atoms = [int(a) for a in term.get("atoms", ())]
    tier = str(term.get("tier"))
    style = depict.style_of(tier) or "fallback"
    kind = str(term.get("kind"))
    return TermView(
        kind=kind,
        atoms="-".join(map(str, atoms)),
        classes="-".join(str(c) for c in term.get("classes", ())),
        tier=tier,
        style=style,
        score=_score_text(term.get("score")),
        source=_source_text(term)[0],
        reason=str(term.get("reason") or ""),
        drawn_atoms=" ".join(map(str, depict.drawn_atoms(drawing, atoms))) if drawing else "",
        drawn_bonds=" ".join(map(str, depict.drawn_bonds(drawing, kind, atoms))) if drawing else "",
    )


FALLBACK_EXAMPLES = 4


def _fallback_groups(terms: Sequence[Mapping[str, Any]]) -> tuple[FallbackGroup, ...]:
    groups: dict[tuple[str, str, str], list[str]] = {}
    for term in terms:
        key = (str(term.get("kind")), str(term.get("tier")), _source_text(term)[0])
        groups.setdefault(key, []).append("-".join(str(c) for c in term.get("classes", ())))
    out = []
    for (kind, tier, source), classes in groups.items():
        distinct = sorted(set(classes))
        shown = ", ".join(distinct[:FALLBACK_EXAMPLES]) + (
            ", ..." if len(distinct) > FALLBACK_EXAMPLES else ""
        )
        out.append(FallbackGroup(kind, tier, source, len(classes), shown))
    return tuple(out)


def _citations(terms: Iterable[Mapping[str, Any]]) -> tuple[str, ...]:
    cited: dict[str, str] = {}
    for term in terms:
        _, key, citation = _source_text(term)
        if citation:
            cited.setdefault(key or "-", citation)
    return tuple(f"{key}: {citation}" for key, citation in sorted(cited.items()))


def _numbered(
    molecule: Mapping[str, Any],
    records: Mapping[tuple[str, int], Any],
    problems: Mapping[str, str],
    pset: ParameterSet | None,
    rules_cache: dict[str, Any],
) -> Numbered:
    source = molecule.get("source") or {}
    key = (str(source.get("path")), int(source.get("record") or 0))
    first: Numbered | None = None
    record = records.get(key)
    if record is not None:
        first = from_record(record, molecule)
        if first.mol is not None:
            return first
    if pset is not None and "rules" not in rules_cache:
        from ffaudit.perceive.classes import ClassRules

        rules_cache["rules"] = ClassRules(pset)
    second = from_smiles(molecule, rules_cache.get("rules"))
    if second.mol is not None:
        return second
    why_not_file = first.how if first is not None else problems.get(key[0], "not read")
    return Numbered(None, f"No drawing: {second.how}; library record: {why_not_file}.")


def _detail(
    where: str,
    molecule: Mapping[str, Any],
    numbered: Numbered,
) -> DetailView:
    terms = [t for t in molecule.get("terms") or () if t.get("tier") != "exact"]
    drawing: depict.Drawing | None = None
    how = numbered.how
    if numbered.mol is not None:
        atom_style, bond_style = depict.marks(terms)
        try:
            drawing = depict.draw(numbered.mol, atom_style, bond_style)
        except Exception as exc:  # RDKit cannot draw it: list the terms anyway
            how = f"No drawing: RDKit could not draw the molecule ({type(exc).__name__}: {exc})."
    fallback = [t for t in terms if t.get("tier") in FALLBACK_TIERS]
    gap_terms = [t for t in terms if t.get("tier") not in FALLBACK_TIERS]
    views = [_term_view(t, drawing) for t in gap_terms]
    counts = molecule.get("counts") or {}
    total = _tier_total(counts, TIERS)
    listed_gaps = len(gap_terms)
    gaps = _tier_total(counts, ("missing", *depict.ESTIMATED_TIERS))
    terms_note = ""
    if gaps > listed_gaps:
        terms_note = (
            f"The results list {listed_gaps} of the molecule's {gaps} missing and estimated terms "
            f"({len(molecule.get('terms') or ())} of {total} terms listed): audit with --terms all or "
            "--terms problems to see them."
        )
    source = molecule.get("source") or {}
    index = int(molecule.get("index", -1))
    return DetailView(
        index=index,
        anchor=_anchor(index),
        name=str(molecule.get("name", "")),
        status=str(molecule.get("status")),
        reason=str(molecule.get("reason") or ""),
        smiles=str(molecule.get("smiles") or ""),
        where=f"{source.get('path')}:{source.get('line')} (record {source.get('record')}; results {where})",
        score=_score_text(molecule.get("score")),
        svg=Markup(drawing.svg) if drawing is not None else None,  # noqa: S704 - drawn here from atoms
        numbering=how,
        missing=tuple(v for v in views if v.style == depict.MISSING),
        estimated=tuple(v for v in views if v.style == depict.ESTIMATED),
        fallback=_fallback_groups(fallback),
        fallback_terms=len(fallback),
        citations=_citations(terms),
        terms_note=terms_note,
        findings=tuple(
            f"{f.get('code')} ({f.get('severity')}): {f.get('message')}"
            + (f"; hint: {f.get('hint')}" if f.get("hint") else "")
            for f in molecule.get("findings") or ()
            if isinstance(f, Mapping)
        ),
        proposed=tuple(
            f"atom {p.get('atom')} ({p.get('element')}): class {p.get('id')}, rule {p.get('smarts')}"
            for p in molecule.get("proposed_classes") or ()
            if isinstance(p, Mapping)
        ),
    )


def _details(
    collector: _Collector, results: Results, options: ReportOptions, pset: ParameterSet | None
) -> list[DetailView]:
    wanted: dict[str, set[int]] = {}
    for _, molecule in collector.details:
        source = molecule.get("source") or {}
        wanted.setdefault(str(source.get("path")), set()).add(int(source.get("record") or 0))
    library = options.library
    fmt = options.input_format
    reader_options = dict(options.reader_options)
    if results.run.library is not None and library is None:
        fmt = fmt or results.run.library.get("format")
        reader_options = {**results.run.reader_options, **reader_options}
    # A relative source path is as the audit was given it: try it from here, then beside the results.
    search = [str(results.path.parent)]
    read = read_records(wanted, library=library, fmt=fmt, options=reader_options, search=search)
    records, problems = read.records, read.problems
    cache: dict[str, Any] = {}
    return [
        _detail(where, molecule, _numbered(molecule, records, problems, pset, cache))
        for where, molecule in collector.details
    ]


# -------------------------------------------------------------------------------------------- summary


def _summary(collector: _Collector) -> SummaryView:
    records = collector.records
    statuses = tuple(
        StatusRow(
            s,
            collector.status.get(s, 0),
            display_percent(collector.status.get(s, 0), records),
            STATUS_MEANINGS[s],
        )
        for s in STATUSES
    )
    kinds = tuple(
        KindRow(
            k,
            tuple(collector.terms[k].get(t, 0) for t in TIERS),
            sum(collector.terms[k].get(t, 0) for t in TIERS),
        )
        for k in KINDS
        if k in collector.terms and sum(collector.terms[k].get(t, 0) for t in TIERS) > 0
    )
    scores = collector.scores
    plot_views = [
        _element_plot(collector),
        _kind_plot(kinds),
        _score_plot(scores),
    ]
    steps = collector.curve.steps()
    curve_plot, worklist, worklist_note = _curve(collector, steps)
    if curve_plot is not None:
        plot_views.append(curve_plot)
    return SummaryView(
        records=records,
        statuses=statuses,
        score_min=_score_text(min(scores)) if scores else "-",
        score_median=_score_text(statistics.median(scores)) if scores else "-",
        scored=len(scores),
        tiers=TIERS,
        kinds=kinds,
        plots=tuple(p for p in plot_views if p is not None),
        worklist=worklist,
        worklist_note=worklist_note,
        unreadable=tuple(collector.unreadable),
        unreadable_more=collector.status.get("unreadable", 0) - len(collector.unreadable),
    )


def _element_plot(collector: _Collector) -> PlotView | None:
    if not collector.elements:
        return None
    ranked = sorted(collector.elements.items(), key=lambda kv: (-sum(kv[1].values()), kv[0]))
    shown = ranked[:ELEMENT_LIMIT]
    parts = ("covered", "estimated", "incomplete")
    svg = plots.stacked_bars(
        "elements",
        [element for element, _ in shown],
        parts,
        [[counts.get(p, 0) for p in parts] for _, counts in shown],
        plots.STATUS_COLOURS,
        "molecules containing the element",
    )
    more = len(ranked) - len(shown)
    caption = "Readable molecules that contain each element, by status" + (
        f"; the {more} rarer elements are not shown." if more else "."
    )
    return PlotView("Coverage by element", plots.data_uri(svg), caption)


def _kind_plot(kinds: Sequence[KindRow]) -> PlotView | None:
    if not kinds:
        return None
    svg = plots.stacked_bars(
        "kinds",
        [k.kind for k in kinds],
        TIERS,
        [[100.0 * n / k.total for n in k.counts] for k in kinds],
        plots.TIER_COLOURS,
        "percent of the kind's terms",
    )
    return PlotView(
        "Coverage by term kind",
        plots.data_uri(svg),
        "How the terms of each kind were resolved, over every readable molecule (the numbers are in the "
        "table below).",
    )


def _score_plot(scores: Sequence[float]) -> PlotView | None:
    if not scores:
        return None
    edges = [i / 10 for i in range(11)]
    counts = [0] * 10
    for s in scores:
        counts[min(9, max(0, int(s * 10)))] += 1
    svg = plots.histogram(
        "scores", edges, counts, "molecule score (lowest term score)", "molecules"
    )
    return PlotView(
        "Score histogram",
        plots.data_uri(svg),
        "A molecule's transferability score is the lowest score of its terms: 1 is a parameter of the set "
        "for exactly that tuple, 0 a missing term. It ranks molecules for review; it is not an error bar.",
    )


def _curve(
    collector: _Collector, steps: Sequence[CurveStep]
) -> tuple[PlotView | None, tuple[WorklistRow, ...], str]:
    builder = collector.curve
    records = collector.records
    if records == 0:
        return None, (), "No records."
    notes = [
        "Greedy order: each step adds the class tuple that completes the most molecules, on a tie the one "
        "most molecules need. A tuple with ?ELEMENT also needs a new class for that atom."
    ]
    if builder.unresolvable:
        notes.append(
            f"{builder.unresolvable} molecules that are not covered list no missing or estimated terms in "
            "these results (audited with --terms none?) and are left out of the curve."
        )
    if not steps:
        notes.append("No molecule needs a tuple: there is no curve to draw.")
        return None, (), " ".join(notes)
    ys = curve_percentages(builder.covered, steps, records)
    svg = plots.step_curve(
        "curve", ys, "class tuples parameterised (greedy order)", "percent of records covered"
    )
    rows = tuple(
        WorklistRow(
            i,
            s.key[0],
            "-".join(s.key[1]),
            s.molecules_needing,
            display_percent(s.covered, records),
        )
        for i, s in enumerate(steps[:WORKLIST_ROWS], start=1)
    )
    if len(steps) > WORKLIST_ROWS:
        notes.append(f"The table lists the first {WORKLIST_ROWS} of {len(steps)} tuples.")
    plot = PlotView(
        "Worklist coverage curve",
        plots.data_uri(svg),
        f"Records covered after parameterising the first k of {len(steps)} class tuples that missing or "
        f"estimated terms need (k = 0: {display_percent(builder.covered, records)} % covered now).",
    )
    return plot, rows, " ".join(notes)


# --------------------------------------------------------------------------------------------- build


def build_report(
    results: Results, options: ReportOptions | None = None, pset: ParameterSet | None = None
) -> ReportView:
    """Read every molecule of ``results`` and build the page's views.

    ``pset`` is the set given with ``--params`` (None: identify it from the results). Raises
    :class:`ffaudit.errors.InputFileError` (file and line) for a line of the results that is not a molecule
    object; problems with the library or drawings never raise, they are said on the page.
    """
    options = options or ReportOptions()
    collector = _Collector(options)
    for where, molecule in results.molecules():
        collector.add(where, molecule)
    identity = identify_set(results, pset, collector)
    notices: list[str] = []
    if identity.notice:
        notices.append(identity.notice)
    if results.kind == "directory" and not results.run.complete:
        notices.append(
            f"The run in {results.path} is not complete (no summary.json): the page shows the "
            f"{len(results.files)} chunk files written so far."
        )
    if collector.out_of_order:
        notices.append(
            f"{collector.out_of_order} molecules are not at the index their position gives: the results "
            "may be concatenated from several runs or reordered."
        )
    details = _details(collector, results, options, identity.pset)
    gaps = collector.gap_molecules
    details_note = ""
    if gaps > len(details):
        details_note = (
            f"Details are shown for the first {len(details)} of the {gaps} molecules with gaps "
            f"(--max-detail {options.max_detail}); the other {gaps - len(details)} are counted in the "
            "summary" + (" and listed in the table." if options.max_rows else ".")
        )
    rows = collector.table_rows()
    rows_note = ""
    if len(rows) < collector.records:
        rows_note = (
            f"The table lists {len(rows)} of the {collector.records} records (--max-rows "
            f"{options.max_rows}): those not covered first, in input order, then covered ones; the "
            "summary counts every record."
        )
    if details_note:
        notices.append(details_note)
    if rows_note:
        notices.append(rows_note)
    return ReportView(
        title=options.title or f"ffaudit report: {results.path.name}",
        results=str(results.path),
        parameter_set=identity.label,
        demonstration=bool(identity.demonstration),
        notices=tuple(notices),
        cautions=_cautions(results, identity),
        summary=_summary(collector),
        rows=tuple(rows),
        rows_note=rows_note,
        details=tuple(details),
        details_note=details_note,
        missing_colour=depict.MISSING_COLOUR,
        estimated_colour=depict.ESTIMATED_COLOUR,
        version=__version__,
    )


def render(view: ReportView) -> str:
    """The HTML page of ``view`` (jinja2, autoescaping on), with the inline script allowed by its sha256 in
    the page's Content-Security-Policy. Raises jinja2 errors for a broken template."""
    import jinja2

    environment = jinja2.Environment(
        loader=jinja2.FunctionLoader(_template_source),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        keep_trailing_newline=True,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    script = _template_source(SCRIPT)
    if "</" in script:
        raise ValueError(f"{SCRIPT} must not contain '</' (it is inlined in a script element)")
    digest = base64.b64encode(hashlib.sha256(script.encode("utf-8")).digest()).decode("ascii")
    return environment.get_template(TEMPLATE).render(
        view=view,
        script=Markup(script),  # noqa: S704 - ffaudit's own file
        script_hash=f"sha256-{digest}",
        style=Markup(_template_source(STYLE)),  # noqa: S704 - ffaudit's own file
    )


def _template_source(name: str) -> str:
    resource = resources.files("ffaudit.report").joinpath("templates").joinpath(name)
    return resource.read_text(encoding="utf-8")


def write_report(
    results: Results,
    out: TextIO,
    options: ReportOptions | None = None,
    pset: ParameterSet | None = None,
) -> ReportView:
    """Build the report of ``results`` and write the page to ``out``; returns the view (for messages)."""
    view = build_report(results, options, pset)
    out.write(render(view))
    return view


def report_file(path: str | Path, out: TextIO, **options: Any) -> ReportView:
    """Convenience for scripts: :func:`write_report` of the results at ``path``."""
    from ffaudit.report.results import open_results

    return write_report(open_results(path), out, ReportOptions(**options))
