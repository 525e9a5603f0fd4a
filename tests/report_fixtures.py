"""Hand-made audit streams (run info, molecule dicts, summary) for the reporter tests.

Made by hand for these tests, following the machine output contract (docs: schemas/audit-molecule.schema.json).
The parameter values are made-up numbers of plausible size that exercise every value form; they are NOT
parameters to rely on and are not checked against any source. The summaries are written out by hand too;
``test_report_schemas`` checks that they agree with their molecules (records, statuses, term counts).

Streams:
- :func:`mixed_stream`: five records (covered, estimated, covered, unreadable, incomplete) from two files,
  demonstration set, every term listed (``--terms all``);
- :func:`many_unreadable_stream`: one covered record and 25 unreadable ones, ordinary set, ``--terms none``;
- :func:`empty_stream`: a library with no records.
"""

from __future__ import annotations

import hashlib
import io
from typing import Any

from ffaudit.report.base import make_reporter

Stream = tuple[dict[str, Any], list[dict[str, Any]], dict[str, Any]]

TIERS = ("exact", "wildcard", "parent", "analogy", "estimate", "missing")
CAUTIONS = [
    "The parameter set 'demo-organic' is a demonstration set; do not use it for production simulations.",
    "A coverage check is not a validation of accuracy: a covered term can still carry a poor parameter "
    "for this molecule.",
]


def tiers(**counts: int) -> dict[str, int]:
    """All six tiers, zero unless given."""
    return {tier: counts.get(tier, 0) for tier in TIERS}


def parameter_set(demonstration: bool) -> dict[str, Any]:
    name = "demo-organic" if demonstration else "lab-set"
    return {
        "name": name,
        "version": "0.1.0",
        "hash": hashlib.sha256(name.encode()).hexdigest(),
        "demonstration": demonstration,
        "paths": [f"embedded:{name}"]
        if demonstration
        else ["sets/lab-set.yaml", "sets/local.yaml"],
    }


def _prov(line: int, entry: list[str], source: str | None = "made-up-2024") -> dict[str, Any]:
    return {"file": "embedded:demo-organic", "line": line, "source": source, "entry": entry}


def term(
    kind: str,
    atoms: list[int],
    classes: list[str],
    tier: str = "exact",
    form: str | None = "harmonic",
    values: dict[str, Any] | None = None,
    provenance: dict[str, Any] | None = None,
    score: float = 1.0,
    reason: str | None = None,
) -> dict[str, Any]:
    """One term dict in the driver's key order; a missing term gets no form, no values, no provenance."""
    if tier == "missing":
        form, values, provenance, score = None, {}, None, 0.0
    return {
        "kind": kind,
        "atoms": atoms,
        "classes": classes,
        "tier": tier,
        "score": score,
        "form": form,
        "values": values if values is not None else {},
        "provenance": provenance,
        "reason": reason,
    }


def _molecule(
    index: int,
    path: str,
    record: int,
    line: int,
    name: str,
    smiles: str | None,
    status: str,
    reason: str | None,
    atom_classes: list[str | None],
    counts: dict[str, dict[str, int]],
    terms: list[dict[str, Any]],
    findings: list[dict[str, Any]] | None = None,
) -> dict[str, Any]:
    scored = [t for t in terms]
    worst = min(scored, key=lambda t: t["score"]) if scored else None
    return {
        "index": index,
        "source": {"path": path, "record": record, "line": line},
        "name": name,
        "smiles": smiles,
        "status": status,
        "reason": reason,
        "score": None if worst is None else worst["score"],
        "score_term": None
        if worst is None
        else {"kind": worst["kind"], "atoms": worst["atoms"], "classes": worst["classes"]},
        "atoms": len(atom_classes),
        "fragments": 1,
        "atom_classes": atom_classes,
        "counts": counts,
        "findings": findings or [],
        "terms": terms,
    }


def unreadable(
    index: int, path: str, record: int, line: int, name: str, reason: str
) -> dict[str, Any]:
    """An unreadable record as the contract has it: no score, no atoms, no counts, no terms."""
    return {
        "index": index,
        "source": {"path": path, "record": record, "line": line},
        "name": name,
        "smiles": None,
        "status": "unreadable",
        "reason": reason,
        "score": None,
        "score_term": None,
        "atoms": 0,
        "fragments": 0,
        "atom_classes": [],
        "counts": {},
        "findings": [],
        "terms": [],
    }


def water(index: int = 0, path: str = "lib.smi", record: int = 1, line: int = 1) -> dict[str, Any]:
    lj_o = {"rmin_half": 1.77, "epsilon": 0.152}
    lj_h = {"rmin_half": 0.2245, "epsilon": 0.046}
    bond = {"k": 1106.0, "r0": 0.96}
    terms = [
        term("bond", [1, 0], ["h_o", "o2"], values=bond, provenance=_prov(40, ["h_o", "o2"])),
        term("bond", [2, 0], ["h_o", "o2"], values=bond, provenance=_prov(40, ["h_o", "o2"])),
        term(
            "angle",
            [1, 0, 2],
            ["h_o", "o2", "h_o"],
            values={"k": 100.0, "theta0": 104.5},
            provenance=_prov(61, ["h_o", "o2", "h_o"]),
        ),
        term(
            "nonbonded",
            [0],
            ["o2"],
            form="lennard_jones",
            values=lj_o,
            provenance=_prov(90, ["o2"]),
        ),
        term(
            "nonbonded",
            [1],
            ["h_o"],
            form="lennard_jones",
            values=lj_h,
            provenance=_prov(91, ["h_o"]),
        ),
        term(
            "nonbonded",
            [2],
            ["h_o"],
            form="lennard_jones",
            values=lj_h,
            provenance=_prov(91, ["h_o"]),
        ),
        term(
            "charge_increment",
            [1, 0],
            ["h_o", "o2"],
            form="increment",
            values={"increment": 0.41},
            provenance=_prov(101, ["h_o", "o2"]),
        ),
        term(
            "charge_increment",
            [2, 0],
            ["h_o", "o2"],
            form="increment",
            values={"increment": 0.41},
            provenance=_prov(101, ["h_o", "o2"]),
        ),
    ]
    counts = {
        "bond": tiers(exact=2),
        "angle": tiers(exact=1),
        "nonbonded": tiers(exact=3),
        "charge_increment": tiers(exact=2),
    }
    return _molecule(
        index,
        path,
        record,
        line,
        "water",
        "O",
        "covered",
        None,
        ["o2", "h_o", "h_o"],
        counts,
        terms,
    )


def formaldehyde() -> dict[str, Any]:
    """Estimated: a Morse C-H bond from a rule, an analogy angle, a wildcard out-of-plane term."""
    morse = {"r0": 1.1, "depth": 100.0, "width": 1.8, "k": 648.0}  # k = 2 depth width^2
    rule = {"file": None, "line": None, "source": "made-up-rule", "entry": None}
    lj_h = {"rmin_half": 1.34, "epsilon": 0.022}
    terms = [
        term(
            "bond",
            [0, 1],
            ["c3", "o1"],
            form="polynomial",
            values={"r0": 1.21, "c2": 570.0, "c3": -900.0, "c4": 0.0, "k": 1140.0},
            provenance=_prov(44, ["c3", "o1"]),
        ),
        term("bond", [0, 2], ["c3", "h_c"], "estimate", "morse", morse, rule, 0.4, "rule estimate"),
        term("bond", [0, 3], ["c3", "h_c"], "estimate", "morse", morse, rule, 0.4, "rule estimate"),
        term(
            "angle",
            [2, 0, 1],
            ["h_c", "c3", "o1"],
            values={"k": 80.0, "theta0": 121.0},
            provenance=_prov(66, ["h_c", "c3", "o1"]),
        ),
        term(
            "angle",
            [3, 0, 1],
            ["h_c", "c3", "o1"],
            values={"k": 80.0, "theta0": 121.0},
            provenance=_prov(66, ["h_c", "c3", "o1"]),
        ),
        term(
            "angle",
            [2, 0, 3],
            ["h_c", "c3", "h_c"],
            "analogy",
            "polynomial",
            {"theta0": 117.0, "c2": 35.0, "c3": -10.0, "k": 70.0},
            _prov(67, ["h_c", "c4", "h_c"]),
            0.6,
            "copied from h_c-c4-h_c",
        ),
        term(
            "out_of_plane",
            [0, 1, 2, 3],
            ["c3", "h_c", "h_c", "o1"],
            "wildcard",
            values={"k": 6.0, "chi0": 0.0},
            provenance=_prov(80, ["c3", "*", "*", "*"]),
            score=0.857375,
        ),
        term(
            "stretch_bend",
            [2, 0, 1],
            ["h_c", "c3", "o1"],
            form="cross",
            values={"k_ab": 10.0, "k_cb": 12.0},
            provenance=_prov(120, ["h_c", "c3", "o1"]),
        ),
        term(
            "nonbonded",
            [0],
            ["c3"],
            form="lennard_jones",
            values={"rmin_half": 2.0, "epsilon": 0.086},
            provenance=_prov(92, ["c3"]),
        ),
        term(
            "nonbonded",
            [1],
            ["o1"],
            form="lennard_jones",
            values={"rmin_half": 1.66, "epsilon": 0.21},
            provenance=_prov(93, ["o1"]),
        ),
        term(
            "nonbonded",
            [2],
            ["h_c"],
            form="lennard_jones",
            values=lj_h,
            provenance=_prov(94, ["h_c"]),
        ),
        term(
            "nonbonded",
            [3],
            ["h_c"],
            form="lennard_jones",
            values=lj_h,
            provenance=_prov(94, ["h_c"]),
        ),
    ]
    counts = {
        "bond": tiers(exact=1, estimate=2),
        "angle": tiers(exact=2, analogy=1),
        "out_of_plane": tiers(wildcard=1),
        "nonbonded": tiers(exact=4),
        "stretch_bend": tiers(exact=1),
    }
    return _molecule(
        1,
        "lib.smi",
        2,
        2,
        "formaldéhyde",
        "C=O",
        "estimated",
        "3 terms resolved only by estimates",
        ["c3", "o1", "h_c", "h_c"],
        counts,
        terms,
    )


def acetonitrile() -> dict[str, Any]:
    """Covered, with a linear angle and a Fourier dihedral-free chain; the name needs CSV quoting."""
    h_c4 = {"k": 662.0, "r0": 1.09}
    hch = {"k": 70.0, "theta0": 109.5}
    hcc = {"k": 75.0, "theta0": 109.5}
    lj_h = {"rmin_half": 1.34, "epsilon": 0.022}
    terms = [
        term(
            "bond",
            [0, 1],
            ["c1", "c4"],
            values={"k": 800.0, "r0": 1.46},
            provenance=_prov(45, ["c1", "c4"]),
        ),
        term(
            "bond",
            [1, 2],
            ["c1", "n1"],
            values={"k": 2400.0, "r0": 1.16},
            provenance=_prov(46, ["c1", "n1"]),
        ),
    ]
    terms += [
        term("bond", [0, h], ["c4", "h_c"], values=h_c4, provenance=_prov(47, ["c4", "h_c"]))
        for h in (3, 4, 5)
    ]
    terms.append(
        term(
            "angle",
            [0, 1, 2],
            ["c4", "c1", "n1"],
            form="linear",
            values={"k": 160.0, "theta0": 180.0},
            provenance=_prov(70, ["c4", "c1", "n1"]),
        )
    )
    terms += [
        term(
            "angle",
            [1, 0, h],
            ["c1", "c4", "h_c"],
            values=hcc,
            provenance=_prov(71, ["c1", "c4", "h_c"]),
        )
        for h in (3, 4, 5)
    ]
    terms += [
        term(
            "angle",
            [a, 0, b],
            ["h_c", "c4", "h_c"],
            values=hch,
            provenance=_prov(72, ["h_c", "c4", "h_c"]),
        )
        for a, b in ((3, 4), (3, 5), (4, 5))
    ]
    for atom, cls, line in (
        (0, "c4", 95),
        (1, "c1", 96),
        (2, "n1", 97),
        (3, "h_c", 94),
        (4, "h_c", 94),
        (5, "h_c", 94),
    ):
        values = lj_h if cls == "h_c" else {"rmin_half": 1.9, "epsilon": 0.1}
        terms.append(
            term(
                "nonbonded",
                [atom],
                [cls],
                form="lennard_jones",
                values=values,
                provenance=_prov(line, [cls]),
            )
        )
    counts = {"bond": tiers(exact=5), "angle": tiers(exact=7), "nonbonded": tiers(exact=6)}
    return _molecule(
        2,
        "more.sdf",
        1,
        1,
        'acetonitrile, "dry"',
        "CC#N",
        "covered",
        None,
        ["c4", "c1", "n1", "h_c", "h_c", "h_c"],
        counts,
        terms,
    )


def methylphosphine() -> dict[str, Any]:
    """Incomplete: phosphorus has no class, so every term through it is missing; a Fourier dihedral is absent
    because all six H-C-P-H dihedrals are missing."""
    h_c4 = {"k": 662.0, "r0": 1.09}
    hch = {"k": 70.0, "theta0": 109.5}
    why = "atom 1 has no class (no class rule matches)"
    terms = [term("bond", [1, 0], ["?", "c4"], "missing", reason=why)]
    terms += [term("bond", [1, h], ["?", "h_x"], "missing", reason=why) for h in (5, 6)]
    terms += [
        term("bond", [0, h], ["c4", "h_c"], values=h_c4, provenance=_prov(47, ["c4", "h_c"]))
        for h in (2, 3, 4)
    ]
    terms += [
        term("angle", [1, 0, h], ["?", "c4", "h_c"], "missing", reason=why) for h in (2, 3, 4)
    ]
    terms += [
        term(
            "angle",
            [a, 0, b],
            ["h_c", "c4", "h_c"],
            values=hch,
            provenance=_prov(72, ["h_c", "c4", "h_c"]),
        )
        for a, b in ((2, 3), (2, 4), (3, 4))
    ]
    terms += [term("angle", [0, 1, h], ["c4", "?", "h_x"], "missing", reason=why) for h in (5, 6)]
    terms.append(term("angle", [5, 1, 6], ["h_x", "?", "h_x"], "missing", reason=why))
    terms += [
        term("dihedral", [a, 0, 1, b], ["h_c", "c4", "?", "h_x"], "missing", reason=why)
        for a in (2, 3, 4)
        for b in (5, 6)
    ]
    terms.append(
        term(
            "nonbonded",
            [0],
            ["c4"],
            form="lennard_jones",
            values={"rmin_half": 1.9, "epsilon": 0.1},
            provenance=_prov(95, ["c4"]),
        )
    )
    terms.append(term("nonbonded", [1], ["?"], "missing", reason=why))
    for atom in (2, 3, 4):
        terms.append(
            term(
                "nonbonded",
                [atom],
                ["h_c"],
                form="lennard_jones",
                values={"rmin_half": 1.34, "epsilon": 0.022},
                provenance=_prov(94, ["h_c"]),
            )
        )
    for atom in (5, 6):
        terms.append(
            term(
                "nonbonded",
                [atom],
                ["h_x"],
                form="lennard_jones",
                values={"rmin_half": 1.2, "epsilon": 0.02},
                provenance=_prov(98, ["h_x"]),
            )
        )
    counts = {
        "bond": tiers(exact=3, missing=3),
        "angle": tiers(exact=3, missing=6),
        "dihedral": tiers(missing=6),
        "nonbonded": tiers(exact=6, missing=1),
    }
    finding = {
        "code": "unclassified-atom",
        "severity": "warning",
        "message": "atom 1 (P) matches no class rule",
        "molecule": "methylphosphine",
        "record": 3,
        "atoms": [1],
    }
    return _molecule(
        4,
        "more.sdf",
        3,
        29,
        "methylphosphine",
        "CP",
        "incomplete",
        "16 terms without a parameter (3 bond, 6 angle, 6 dihedral, 1 nonbonded); 1 atoms without a class",
        ["c4", None, "h_c", "h_c", "h_c", "h_x", "h_x"],
        counts,
        terms,
        [finding],
    )


def fourier_dihedral() -> dict[str, Any]:
    """A term with the dihedral Fourier form (not in any fixture molecule, checked against the schema alone)."""
    return term(
        "dihedral",
        [3, 0, 1, 5],
        ["h_c", "c4", "c4", "h_c"],
        form="fourier",
        values={
            "terms": [
                {"periodicity": 3, "phase": 0.0, "k": 0.15},
                {"periodicity": 1, "phase": 180.0, "k": 0.05},
            ]
        },
        provenance=_prov(75, ["*", "c4", "c4", "*"]),
    )


def mixed_stream() -> Stream:
    run = {"parameter_set": parameter_set(True), "cautions": list(CAUTIONS), "terms_mode": "all"}
    molecules = [
        water(),
        formaldehyde(),
        acetonitrile(),
        unreadable(
            3,
            "more.sdf",
            2,
            12,
            "bad-valence",
            "sanitisation failed: explicit valence of atom 2 (N) is 4",
        ),
        methylphosphine(),
    ]
    summary = {
        "records": 5,
        "status": {"covered": 2, "estimated": 1, "incomplete": 1, "unreadable": 1},
        "terms": {
            "bond": tiers(exact=11, estimate=2, missing=3),
            "angle": tiers(exact=13, analogy=1, missing=6),
            "dihedral": tiers(missing=6),
            "out_of_plane": tiers(wildcard=1),
            "nonbonded": tiers(exact=19, missing=1),
            "charge_increment": tiers(exact=2),
            "stretch_bend": tiers(exact=1),
        },
        "score": {
            "min": 0.0,
            "median": 0.7,
            "histogram": [[i / 10, (i + 1) / 10, {0: 1, 4: 1, 9: 2}.get(i, 0)] for i in range(10)],
        },
        "top_missing": [
            {"kind": "dihedral", "classes": ["h_c", "c4", "?", "h_x"], "molecules": 1, "terms": 6},
            {"kind": "angle", "classes": ["?", "c4", "h_c"], "molecules": 1, "terms": 3},
            {"kind": "angle", "classes": ["c4", "?", "h_x"], "molecules": 1, "terms": 2},
            {"kind": "bond", "classes": ["?", "h_x"], "molecules": 1, "terms": 2},
            {"kind": "angle", "classes": ["h_x", "?", "h_x"], "molecules": 1, "terms": 1},
            {"kind": "bond", "classes": ["?", "c4"], "molecules": 1, "terms": 1},
            {"kind": "nonbonded", "classes": ["?"], "molecules": 1, "terms": 1},
        ],
        "classes_never_assigned": ["c2", "n3", "o2h", "s2", "cl"],
        "elements_without_class": {"P": 1},
        "unreadable": [
            {
                "index": 3,
                "path": "more.sdf",
                "record": 2,
                "line": 12,
                "reason": "sanitisation failed: explicit valence of atom 2 (N) is 4",
            }
        ],
    }
    return run, molecules, summary


def many_unreadable_stream() -> Stream:
    """One readable record among 25 unreadable ones (more than the table lists), terms not listed."""
    run = {"parameter_set": parameter_set(False), "cautions": [CAUTIONS[1]], "terms_mode": "none"}
    first = water()
    first["terms"] = []
    molecules = [first]
    listed = []
    for i in range(1, 26):
        reason = f"SMILES parse error: unclosed ring at position {i}"
        molecules.append(unreadable(i, "big.smi", i + 1, i + 1, f"bad-{i}", reason))
        listed.append(
            {"index": i, "path": "big.smi", "record": i + 1, "line": i + 1, "reason": reason}
        )
    summary = {
        "records": 26,
        "status": {"covered": 1, "estimated": 0, "incomplete": 0, "unreadable": 25},
        "terms": dict(first["counts"]),
        "score": {
            "min": 1.0,
            "median": 1.0,
            "histogram": [[i / 10, (i + 1) / 10, 1 if i == 9 else 0] for i in range(10)],
        },
        "top_missing": [],
        "classes_never_assigned": [],
        "elements_without_class": {},
        "unreadable": listed,
    }
    return run, molecules, summary


def empty_stream() -> Stream:
    run = {"parameter_set": parameter_set(False), "cautions": [], "terms_mode": "problems"}
    summary = {
        "records": 0,
        "status": {"covered": 0, "estimated": 0, "incomplete": 0, "unreadable": 0},
        "terms": {},
        "score": {"min": None, "median": None, "histogram": []},
        "top_missing": [],
        "classes_never_assigned": ["c4", "h_c"],
        "elements_without_class": {},
        "unreadable": [],
    }
    return run, [], summary


STREAMS = {"mixed": mixed_stream, "many_unreadable": many_unreadable_stream, "empty": empty_stream}


def render(fmt: str, stream: Stream) -> str:
    """Run ``stream`` through the reporter of format ``fmt`` (start, add each molecule, finish); its output."""
    run, molecules, summary = stream
    out = io.StringIO()
    reporter = make_reporter(fmt, out)
    reporter.start(run)
    for molecule in molecules:
        reporter.add(molecule)
    reporter.finish(summary)
    return out.getvalue()


def report_document(stream: Stream) -> dict[str, Any]:
    """The ``--format json`` document of ``stream`` built directly (not by the reporter), for comparisons."""
    run, molecules, summary = stream
    return {
        "format": "ffaudit-audit",
        "format_version": 1,
        "parameter_set": run["parameter_set"],
        "cautions": run["cautions"],
        "terms_mode": run["terms_mode"],
        "molecules": molecules,
        "summary": summary,
    }
