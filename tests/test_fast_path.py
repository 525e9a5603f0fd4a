"""The batched fast path (ffaudit.engine.batch) against the reference path (AuditContext.audit_record).

Outside check data:
- RDKit's shipped NCI data set rdkit/Data/NCI/first_5K.smi (every record, the embedded default set);
- RDKit's own SMARTS matching on molecules with and without explicit hydrogens (Chem.AddHs), which is the
  ground truth for the claim that a query primitive does not depend on explicit hydrogens.

"Identical" means: equal MoleculeAudit objects (dataclass equality: record, status, reason, SMILES, every
class assignment, every term with its atoms, classes and qualifiers, every resolution with tier, entry,
score, reason and substitutions, findings, fragments, elements, proposals) and, on samples, equal to_dict()
output, and the fast path's to_json() text equal to the reference's to_dict() encoded by the JSONL encoder.
"""

from __future__ import annotations

import os
import pickle
from collections.abc import Iterator
from pathlib import Path

import pytest
from rdkit import Chem, RDConfig, rdBase

from ffaudit.audit import AuditContext, MoleculeAudit
from ffaudit.engine import batch as batch_module
from ffaudit.engine import work
from ffaudit.engine.base import ChunkOptions
from ffaudit.engine.batch import FastAuditor, audit_records
from ffaudit.engine.rawsplit import plan_library
from ffaudit.paramset.load import load_parameter_set
from ffaudit.paramset.model import KINDS, EnvClass, Header, ParameterSet, SourceLocation
from ffaudit.perceive.batch import (
    INVARIANT_PRIMITIVES,
    BatchRules,
    element_set,
    heavy_step,
    parse_description,
)
from ffaudit.perceive.classes import ClassRules
from ffaudit.read.open import iter_records
from ffaudit.read.record import Record
from ffaudit.read.smiles import parse_smiles
from ffaudit.report.jsonl import dump_compact

NCI_5K = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")


# --- shared data -------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def default_set() -> ParameterSet:
    return load_parameter_set()


@pytest.fixture(scope="module")
def nci_records() -> list[Record]:
    return list(iter_records(NCI_5K))


@pytest.fixture(scope="module")
def nci_reference(default_set: ParameterSet, nci_records: list[Record]) -> list[MoleculeAudit]:
    context = AuditContext(default_set)
    with rdBase.BlockLogs():
        return [context.audit_record(r) for r in nci_records]


def _first_difference(a: MoleculeAudit, b: MoleculeAudit) -> str:
    for name in (
        "status",
        "reason",
        "smiles",
        "assignments",
        "findings",
        "fragments",
        "elements",
        "proposed",
    ):
        if getattr(a, name) != getattr(b, name):
            return f"record {a.record.index}: {name} differs: {getattr(a, name)!r} vs {getattr(b, name)!r}"[
                :600
            ]
    for x, y in zip(a.resolutions, b.resolutions, strict=False):
        if x != y:
            return f"record {a.record.index}: first differing term {x!r} vs {y!r}"[:600]
    return f"record {a.record.index}: {len(a.resolutions)} vs {len(b.resolutions)} terms"


def _assert_identical(
    expected: list[MoleculeAudit], got: list[MoleculeAudit], pset: ParameterSet, dict_every: int = 1
) -> None:
    assert len(got) == len(expected)
    for n, (a, b) in enumerate(zip(expected, got, strict=True)):
        assert a.record is b.record
        assert a == b, _first_difference(a, b)
        # the totals the library summary takes from each audit (it sorts the missing tuples itself)
        assert a.table.missing_tuples(a.elements) == b.table.missing_tuples(b.elements), a.record.index
        assert a.table.unreviewed() == b.table.unreviewed(), a.record.index
        if n % dict_every == 0 or a.status != "covered":
            assert a.to_dict(pset, "all") == b.to_dict(pset, "all"), a.record.index
            # the JSON text made straight from the fast path's term table is the reference's dict encoded
            for terms in ("all", "problems"):
                assert b.to_json(pset, terms) == dump_compact(a.to_dict(pset, terms)), (
                    a.record.index,
                    terms,
                )


# --- NCI first_5K --------------------------------------------------------------------------------------


def test_nci_5k_identical_to_reference(
    default_set: ParameterSet, nci_records: list[Record], nci_reference: list[MoleculeAudit]
) -> None:
    auditor = FastAuditor(AuditContext(default_set))
    # the default set runs without added H
    assert auditor.heavy, auditor.batch_rules.heavy_layout_problem
    got = list(auditor.audit_records(nci_records))
    # equality of every audit and of every record's to_dict (terms="all"): the whole of first_5K
    _assert_identical(nci_reference, got, default_set, dict_every=1)
    statuses = {a.status for a in got}
    # the data set exercises them all
    assert {"covered", "estimated", "incomplete", "unreadable"} <= statuses
    assert sum(len(a.resolutions) for a in got) > 500_000


def test_nci_explicit_layout_identical(
    default_set: ParameterSet, nci_records: list[Record], nci_reference: list[MoleculeAudit]
) -> None:
    auditor = FastAuditor(AuditContext(default_set), layout="explicit", batch_size=40)
    assert not auditor.heavy
    got = list(auditor.audit_records(nci_records[:1200]))
    _assert_identical(nci_reference[:1200], got, default_set, dict_every=50)


def test_set_tiers_only_identical(default_set: ParameterSet, nci_records: list[Record]) -> None:
    # without the estimate tier the missing tuples are shared outcomes, whose totals (counts, missing
    # tuples, lowest score) the fast path counts per batch; the reference counts them term by term
    tiers = ("wildcard", "parent", "analogy")
    reference_context = AuditContext(default_set, tiers=tiers)
    with rdBase.BlockLogs():
        expected = [reference_context.audit_record(r) for r in nci_records[:600]]
    got = list(FastAuditor(AuditContext(default_set, tiers=tiers)).audit_records(nci_records[:600]))
    _assert_identical(expected, got, default_set, dict_every=1)
    # a missing tuple without "?" is a shared outcome (terms with an unclassified atom are their own)
    shared_missing = [
        a
        for a in got
        if any(
            not any(c.startswith("?") for c in classes)
            for _, classes in a.table.missing_tuples(a.elements)
        )
    ]
    assert len(shared_missing) > 100  # the per-batch totals of missing outcomes are exercised


def test_lowest_score_without_packing_identical(
    default_set: ParameterSet,
    nci_records: list[Record],
    nci_reference: list[MoleculeAudit],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # a batch with too many terms to pack (molecule, score rank, position) into one integer finds each
    # molecule's lowest score by a three-key sort instead; forced here for every batch
    monkeypatch.setattr(batch_module, "_PACK_BITS", 0)
    got = list(FastAuditor(AuditContext(default_set)).audit_records(nci_records[:400]))
    _assert_identical(nci_reference[:400], got, default_set, dict_every=1)


def test_engine_call_matches_reference(
    default_set: ParameterSet, nci_records: list[Record], nci_reference: list[MoleculeAudit]
) -> None:
    context = AuditContext(default_set)
    got = list(audit_records(context, iter(nci_records[:300])))
    _assert_identical(nci_reference[:300], got, default_set, dict_every=1)


def test_chunk_worker_uses_fast_path_and_matches_reference_bytes(
    default_set: ParameterSet, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The engine's chunk function (every back-end runs it) audits with the fast path, and its JSONL lines
    and chunk summaries are byte-identical to the reference path forced by FFAUDIT_REFERENCE_PATH=1.

    Input: the first 400 lines of RDKit's first_5K.smi with unparseable and awkward SMILES mixed in."""
    with open(NCI_5K, encoding="utf-8") as handle:
        lines = [line.rstrip("\n") for line, _ in zip(handle, range(400), strict=False)]
    for n, smiles in enumerate(WEIRD_SMILES[:35]):
        lines.insert(7 * n + 3, f"{smiles} weird{n}")
    path = tmp_path / "mixed.smi"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    context = AuditContext(default_set)
    options = ChunkOptions(terms="all", encode=True)

    def run(reference: bool) -> list[tuple[str | None, dict[str, object]]]:
        if reference:
            monkeypatch.setenv(work.REFERENCE_PATH_VARIABLE, "1")
        else:
            monkeypatch.delenv(work.REFERENCE_PATH_VARIABLE, raising=False)
        with rdBase.BlockLogs():
            results = [
                work.run_chunk(context, job, options)
                for job in plan_library(str(path), chunk_size=90)
            ]
        return [(r.jsonl, r.summary.to_dict()) for r in results]

    calls: list[int] = []
    real_reference = AuditContext.audit_record

    def counted(self: AuditContext, record: Record) -> MoleculeAudit:
        calls.append(record.index)
        return real_reference(self, record)

    monkeypatch.setattr(AuditContext, "audit_record", counted)
    fast = run(reference=False)
    fast_calls = len(calls)
    calls.clear()
    reference = run(reference=True)
    assert len(calls) == len(lines)  # the variable really forces the reference for every record
    # only records without a usable molecule fell back to the reference
    assert fast_calls <= 10, fast_calls
    assert len(fast) == len(reference) == 5
    for (fast_text, fast_summary), (ref_text, ref_summary) in zip(fast, reference, strict=True):
        assert fast_text == ref_text
        assert fast_summary == ref_summary
    # bad records inside chunks were audited
    assert sum(s["status"]["unreadable"] for _, s in fast) >= 2


# --- weird records -----------------------------------------------------------------------------------

WEIRD_SMILES = [
    "CCO",
    "not a smiles",
    "C1CC(",
    "[CH3]",
    "[CH2]C",
    "[O]",
    "[C]",
    "[NH4+]",
    "CC(=O)[O-].[Na+]",
    "CCO.O",
    "[Cl-].[K+]",
    "[OH-]",
    "[2H]C([2H])([2H])C",
    "[13CH4]",
    "[2H]OC",
    "[H][H]",
    "[H+]",
    "[H-]",
    "[HH]",
    "C1" + "C" * 119 + "1",
    "C1CCCCCCCCCCCCCCCCCCCCCCCCCCCC1",
    "C" * 1400,
    "[Fe+2]",
    "[Na]",
    "[Pt]",
    "*C",
    "*",
    "[NH3]->[Cu+2]",
    "CP(C)C",
    "OB(O)c1ccccc1",
    "[Se]",
    "CC(C)(C)[Si](C)(C)O",
    "F[B-](F)(F)F",
    "C[C@H](O)F",
    "F/C=C/F",
    "C=C=C",
    "CC#N",
    "C#C",
    "N=[N+]=[N-]",
    "S=C=S",
    "O=C=O",
    "CS(=O)(=O)N",
    "c1ccccc1",
    "C1=CC=CC=C1",
    "c1ccc2c(c1)[nH]c1ccccc12",
    "O=[N+]([O-])c1ccccc1",
    "[O-][n+]1ccccc1",
    "c1ccsc1",
    "c1ccoc1",
    "C1CC1",
    "C12C3C4C1C5C2C3C45",
    "CN1C=NC2=C1C(=O)N(C(=O)N2C)C",
    "O",
]


def weird_records() -> list[Record]:
    """Records of every awkward kind; each comment says how the molecule was made."""
    records = []
    for i, smiles in enumerate(WEIRD_SMILES):
        # ffaudit's SMILES reader: unparseable -> mol None + reason
        mol, reason = parse_smiles(smiles)
        records.append(Record(i, "weird.smi", i + 1, i + 1, smiles[:30], mol, reason))
    extra: list[Chem.Mol] = []
    extra.append(Chem.AddHs(Chem.MolFromSmiles("CC(=O)O")))  # explicit H atoms, all plain
    keep_h = Chem.SmilesParserParams()
    keep_h.removeHs = False
    extra.append(Chem.MolFromSmiles("[H]OC([H])([H])[2H]", keep_h))  # explicit H and D atoms
    # H bonded to H: explicit layout
    extra.append(Chem.MolFromSmiles("[H][H].[H]C([H])([H])[H]", keep_h))
    unsanitised = Chem.MolFromSmiles("c1ccccc1O", sanitize=False)
    unsanitised.UpdatePropertyCache(False)
    extra.append(unsanitised)  # valences known, no ring information: goes the reference's way
    edited = Chem.RWMol(Chem.MolFromSmiles("CCO"))
    edited.AddAtom(Chem.Atom(7))
    # valences never computed for the new atom: the reference fails, so must we
    extra.append(edited)
    extra.append(Chem.Mol())  # no atoms at all
    extra.append(Chem.RWMol(Chem.MolFromSmiles("CC")))  # an editable copy
    n = len(records)
    for j, mol in enumerate(extra):
        records.append(Record(n + j, "weird.smi", n + j + 1, n + j + 1, f"made {j}", mol))
    return records


@pytest.mark.parametrize("batch_size", [50, 7, 1])
@pytest.mark.parametrize("layout", ["auto", "explicit"])
def test_weird_batch_identical(default_set: ParameterSet, batch_size: int, layout: str) -> None:
    records = weird_records()
    with rdBase.BlockLogs():
        expected = [AuditContext(default_set).audit_record(r) for r in records]
    got = FastAuditor(AuditContext(default_set), batch_size=batch_size, layout=layout).audit_batch(
        records
    )
    _assert_identical(expected, got, default_set)
    by_name = {a.record.name: a for a in got}
    assert by_name["not a smiles"].status == "unreadable"
    assert by_name["made 4"].status == "unreadable" and "audit failed" in (
        by_name["made 4"].reason or ""
    )
    assert by_name["made 5"].status == "covered" and by_name["made 5"].resolutions == ()
    assert by_name["[Se]"].findings[0].code == "unclassified-atom"


def test_failing_batch_costs_nobody_their_result(
    default_set: ParameterSet, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A batch step that raises sends only its own batch the reference's way; a record whose own step raises
    goes alone; every record still gets exactly the reference's audit, and no other record loses its batch
    result (the reference is called for nobody else)."""
    records = weird_records()
    # records are picked by input index: the record name is the SMILES cut to 30 characters, so a name
    # comparison would never match the 31-character ring and the failure would never be injected
    ring = WEIRD_SMILES.index("C1CCCCCCCCCCCCCCCCCCCCCCCCCCCC1")
    nitrile = WEIRD_SMILES.index("CC#N")
    with rdBase.BlockLogs():
        expected = [AuditContext(default_set).audit_record(r) for r in records]

    def calls_to_reference(auditor: FastAuditor) -> list[int]:
        calls: list[int] = []
        real_reference = auditor.context.audit_record

        def reference(record: Record) -> MoleculeAudit:
            calls.append(record.index)
            return real_reference(record)

        monkeypatch.setattr(auditor.context, "audit_record", reference)
        return calls

    # without injected failures: which records the reference must take anyway (no molecule, no ring
    # information, valences never computed)
    plain = FastAuditor(AuditContext(default_set), batch_size=10)
    baseline_calls = calls_to_reference(plain)
    _assert_identical(expected, plain.audit_batch(records), default_set)
    baseline = set(baseline_calls)
    assert ring not in baseline and nitrile not in baseline  # both normally come from the batch

    auditor = FastAuditor(AuditContext(default_set), batch_size=10)
    real_compute = auditor._compute
    real_finish = auditor._finish
    failed_batches: list[list[int]] = []
    failed_records: list[int] = []

    def compute(items):  # type: ignore[no-untyped-def]
        if any(item.record.index == ring for item in items):
            failed_batches.append([item.record.index for item in items])
            raise RuntimeError("simulated RDKit failure")
        return real_compute(items)

    def finish(record, done, m):  # type: ignore[no-untyped-def]
        if record.index == nitrile:
            failed_records.append(record.index)
            raise ValueError("simulated failure of one record")
        return real_finish(record, done, m)

    monkeypatch.setattr(auditor, "_compute", compute)
    monkeypatch.setattr(auditor, "_finish", finish)
    reference_calls = calls_to_reference(auditor)
    got = auditor.audit_batch(records)
    # every record, the failing batch's and the failing record's included, is identical to the reference
    _assert_identical(expected, got, default_set)
    assert len(failed_batches) == 1 and failed_records == [nitrile]
    failed_batch = set(failed_batches[0])
    assert ring in failed_batch and len(failed_batch) > 1 and nitrile not in failed_batch
    # exactly the failing batch, the failing record and the baseline went the reference's way, each once
    assert sorted(reference_calls) == sorted(baseline | failed_batch | {nitrile})
    assert len(reference_calls) == len(set(reference_calls))
    assert len(records) - len(reference_calls) > 20  # the rest kept their batch results


def test_auditor_survives_pickling(default_set: ParameterSet, nci_records: list[Record]) -> None:
    records = nci_records[:120]
    auditor = pickle.loads(pickle.dumps(FastAuditor(AuditContext(default_set), batch_size=30)))
    with rdBase.BlockLogs():
        expected = [AuditContext(default_set).audit_record(r) for r in records]
    _assert_identical(expected, auditor.audit_batch(records), default_set, dict_every=20)


# --- rule translation on hand-built sets ---------------------------------------------------------------


def _set(patterns: list[tuple[str, str, str]]) -> ParameterSet:
    classes = tuple(
        EnvClass(cid, element, (smarts,), location=SourceLocation("hand.yaml", n + 1))
        for n, (cid, element, smarts) in enumerate(patterns)
    )
    return ParameterSet(Header("hand", "1"), {}, classes, {k: {} for k in KINDS})


# Rules the heavy layout can take: hydrogen roots, hydrogen leaves, recursion, ring primitives,
# catch-alls. Order matters (first match wins), as in any set.
TRANSLATABLE = [
    ("h_me", "H", "[#1][CX4]([#1])[#1]"),
    ("h_ar", "H", "[#1]c"),
    ("h_co", "H", "[#1][CX3]=O"),
    ("h_hv", "H", "[#1][!#6]"),
    ("h_any", "H", "[#1]*"),
    ("c_me", "C", "[CX4]([#1])([#1])[#1]"),
    ("c_h2", "C", "[CH2;R]"),
    ("c_r5", "C", "[c;r5]"),
    ("c_x3", "C", "[#6;x3]"),
    ("c_oh", "C", "[C;$(C-[OX2H1])]"),
    ("c_nco", "C", "[#6;!$(*=O);$(*-[#7])]"),
    ("c_sp", "C", "[C;^1]"),
    ("c_z2", "C", "[C;z2]"),
    ("c_v4", "C", "[C;v4;d3]"),
    ("c_ccc", "C", "[CX4][CX4][CX4]"),
    ("c_ring", "C", "C@C"),
    ("o_h", "O", "[OX2][#1]"),
    ("n_h", "N", "[N;!H0]"),
    ("n_am", "N", "[N;$(N-c),$(N-C=O)]"),
    ("x", "F", "[F,Cl,Br,I]"),
    ("heavy", "C", "[!#1]"),
    ("h", "H", "[#1]"),
]

# Each of these makes the heavy layout unusable, for the reason given.
UNTRANSLATABLE = [
    ("[C;D3]", "AtomExplicitDegree"),
    ("[C;h2]", "AtomImplicitHCount"),
    ("[CX4]*", "could be a hydrogen"),
    ("[$([#1][#6])]", "could be a hydrogen"),
    ("[#1][#1]", "two hydrogens"),
    ("[#6;$(*[#1])]", "could be a hydrogen"),
    ("C.O", "several components"),
]


@pytest.fixture(scope="module")
def mixed_records(nci_records: list[Record]) -> list[Record]:
    picked = nci_records[:250] + weird_records()
    return [
        Record(i, r.path, r.record, r.line, r.name, r.mol, r.error, r.meta)
        for i, r in enumerate(picked)
    ]


def test_translatable_rules_use_heavy_layout_and_agree(mixed_records: list[Record]) -> None:
    pset = _set(TRANSLATABLE)
    auditor = FastAuditor(AuditContext(pset))
    assert auditor.heavy, auditor.batch_rules.heavy_layout_problem
    assert auditor.batch_rules.needs_ring_info  # C@C, r5, x3, R: ring information is copied
    with rdBase.BlockLogs():
        expected = [AuditContext(pset).audit_record(r) for r in mixed_records]
    got = auditor.audit_batch(mixed_records)
    _assert_identical(expected, got, pset, dict_every=25)
    used = {a.class_id for audit in got for a in audit.assignments}
    # the set is not vacuous: hydrogen roots, hydrogen leaves and recursion all decide atoms
    assert {
        "h_me",
        "h_ar",
        "h_co",
        "h_hv",
        "c_me",
        "o_h",
        "c_oh",
        "c_r5",
        "c_ring",
        "heavy",
    } <= used


@pytest.mark.parametrize(("smarts", "why"), UNTRANSLATABLE)
def test_untranslatable_rule_falls_back_to_explicit_layout(
    smarts: str, why: str, mixed_records: list[Record]
) -> None:
    pset = _set([("odd", "C", smarts), *TRANSLATABLE])
    auditor = FastAuditor(AuditContext(pset))
    assert not auditor.heavy
    assert why in (auditor.batch_rules.heavy_layout_problem or "")
    records = mixed_records[::6]
    with rdBase.BlockLogs():
        expected = [AuditContext(pset).audit_record(r) for r in records]
    _assert_identical(expected, auditor.audit_batch(records), pset, dict_every=10)


# --- the analysis itself, against RDKit --------------------------------------------------------------

# One SMARTS per primitive the heavy layout relies on (INVARIANT_PRIMITIVES), and two it refuses.
PRIMITIVE_PROBES = {
    "AtomAtomicNum": "[#7]",
    "AtomType": "[c]",
    "AtomTotalDegree": "[C;X3]",
    "AtomHCount": "[C;H2]",
    "AtomFormalCharge": "[N;+1]",
    "AtomIsAromatic": "[a]",
    "AtomIsAliphatic": "[A;!#1]",
    "AtomInNRings": "[C;R2]",
    "AtomMinRingSize": "[C;r5]",
    "AtomRingBondCount": "[C;x3]",
    "AtomInRing": "[C;r]",  # "r" without a size; RDKit reads "R" as AtomInNRings
    "AtomTotalValence": "[N;v3]",
    "AtomIsotope": "[13C,2H]",
    "AtomHybridization": "[C;^2]",
    "AtomNull": "*",
    "AtomNumHeteroatomNeighbors": "[C;z1]",
    "AtomNumAliphaticHeteroatomNeighbors": "[C;Z2]",
    "AtomNonHydrogenDegree": "[C;d2]",
    "AtomNumRadicalElectrons": "[C;!#1]",
    "RecursiveStructure": "[C;$(C=O)]",
}


def _probe_molecules(nci_records: list[Record]) -> Iterator[Chem.Mol]:
    for record in nci_records[:600]:
        if record.mol is not None:
            yield record.mol
    for smiles in (
        "[CH2]C",
        "[CH3]",
        "[13CH3]C",
        "[NH4+]",
        "C[N+](C)(C)C",
        "c1cc[nH]c1",
        "[2H]C([2H])C",
    ):
        yield Chem.MolFromSmiles(smiles)


def _heavy_matches(mol: Chem.Mol, query: Chem.Mol) -> set[int]:
    return {m[0] for m in mol.GetSubstructMatches(query, uniquify=False, maxMatches=10_000)}


@pytest.mark.parametrize("primitive", sorted(PRIMITIVE_PROBES))
def test_invariant_primitives_do_not_depend_on_explicit_hydrogens(
    primitive: str, nci_records: list[Record]
) -> None:
    """RDKit matches the probe on the same non-hydrogen atoms with and without explicit hydrogens."""
    assert primitive in INVARIANT_PRIMITIVES
    query = Chem.MolFromSmarts(PRIMITIVE_PROBES[primitive])
    names = {n.base for a in query.GetAtoms() for n in parse_description(a.DescribeQuery()).walk()}
    if primitive != "AtomNumRadicalElectrons":
        assert primitive in names, names  # the probe really uses the primitive
    hits = 0
    for mol in _probe_molecules(nci_records):
        molh = Chem.AddHs(mol)
        heavy = _heavy_matches(mol, query)
        with_h = {i for i in _heavy_matches(molh, query) if i < mol.GetNumAtoms()}
        assert heavy == with_h, (Chem.MolToSmiles(mol), PRIMITIVE_PROBES[primitive])
        hits += len(heavy)
    assert hits > 0  # the probe matched something, so the comparison could have failed


@pytest.mark.parametrize(
    ("smarts", "primitive"), [("[C;D2]", "AtomExplicitDegree"), ("[C;h1]", "AtomImplicitHCount")]
)
def test_refused_primitives_do_depend_on_explicit_hydrogens(smarts: str, primitive: str) -> None:
    """The check above can fail: these primitives give other atoms once hydrogens are explicit."""
    assert primitive not in INVARIANT_PRIMITIVES
    query = Chem.MolFromSmarts(smarts)
    mol = Chem.MolFromSmiles("CCC(C)CC")
    molh = Chem.AddHs(mol)
    assert _heavy_matches(mol, query) != {
        i for i in _heavy_matches(molh, query) if i < mol.GetNumAtoms()
    }
    assert primitive in (heavy_step(0, smarts) if isinstance(heavy_step(0, smarts), str) else "")


def test_root_element_sets_cover_every_match(
    default_set: ParameterSet, nci_records: list[Record]
) -> None:
    """A rule is skipped when no atom of its first atom's elements is left, so the element set read from
    the query must contain the element of every atom RDKit matches (checked on NCI molecules with H)."""
    patterns = [r.smarts for r in ClassRules(default_set).rules] + [s for _, _, s in TRANSLATABLE]
    patterns += ["[!C;!N]", "[!#6]", "[!c]", "[!13C]", "[C,N;H1]", "[#6]", "[!*]", "*"]
    sets = {}
    for smarts in patterns:
        first_atom = Chem.MolFromSmarts(smarts).GetAtomWithIdx(0).DescribeQuery()
        # the whole pattern, matched as a recursive query rooted at its first atom
        sets[smarts] = (
            element_set(parse_description(first_atom)),
            Chem.MolFromSmarts(f"[$({smarts})]"),
        )
    checked = 0
    for record in nci_records[:300]:
        if record.mol is None:
            continue
        molh = Chem.AddHs(record.mol)
        for smarts, (elements, rooted) in sets.items():
            for (atom,) in molh.GetSubstructMatches(rooted, maxMatches=10_000):
                assert molh.GetAtomWithIdx(atom).GetAtomicNum() in elements, smarts
                checked += 1
    assert checked > 10_000
    # aromatic carbon matches [!C;!N] (C is aliphatic carbon), so the set must keep carbon
    assert 6 in sets["[!C;!N]"][0] and 6 in sets["[!c]"][0] and 1 in sets["[!13C]"][0]
    # and the sets are not all "any element": an element-only query gives exactly its element
    assert 6 in sets["[#6]"][0] and 1 not in sets["[#6]"][0] and 8 not in sets["[#6]"][0]
    assert 7 in sets["[C,N;H1]"][0] and 8 not in sets["[C,N;H1]"][0]


def test_batch_rules_report_why_not() -> None:
    rules = BatchRules(ClassRules(_set([("a", "C", "[C;D2]"), ("b", "C", "[#6]")])))
    assert rules.heavy_steps is None
    assert "class 'a' pattern 1 ([C;D2])" in (rules.heavy_layout_problem or "")
    rules = BatchRules(ClassRules(_set([("b", "C", "[#6]"), ("h", "H", "[#1][#6]")])))
    assert rules.heavy_steps is not None and rules.heavy_layout_problem is None
    assert rules.heavy_steps[1].hydrogens and rules.heavy_steps[1].single_atom


def test_bad_arguments() -> None:
    pset = _set(TRANSLATABLE)
    with pytest.raises(ValueError, match="layout"):
        FastAuditor(AuditContext(pset), layout="sideways")
    with pytest.raises(ValueError, match="batch_size"):
        FastAuditor(AuditContext(pset), batch_size=0)
