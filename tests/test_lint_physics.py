"""Physics lint rules: each against its broken set, the default set, and named handbook values."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import pytest

from ffaudit.findings import Severity
from ffaudit.lint.classinfo import PROBE_SMILES, set_info
from ffaudit.lint.physics_data import IR_RANGES, ir_range, mass
from ffaudit.lint.rules import (
    angle_domain,
    angle_ideal,
    bond_length_radii,
    bond_wavenumber,
    lj_radius_vdw,
    morse_curvature,
    negative_force_constant,
)
from ffaudit.paramset.load import embedded_set_path, load_parameter_set
from ffaudit.paramset.model import Entry
from ffaudit.units import wavenumber
from lint_rule_helpers import (
    LINT_DATA,
    context,
    docstring_example,
    example_context,
    line_of,
    patched_context,
    run,
    text_context,
)

DEFAULT = embedded_set_path("generic-organic")
PHYSICS = (
    angle_domain,
    angle_ideal,
    bond_length_radii,
    bond_wavenumber,
    lj_radius_vdw,
    morse_curvature,
    negative_force_constant,
)


@pytest.mark.parametrize(
    ("module", "needle"),
    [
        (bond_length_radii, "r0: 1.20"),
        (bond_wavenumber, "k: 331.0"),
        (angle_domain, "theta0: 250.0"),
        (angle_ideal, "theta0: 90.0"),
        (morse_curvature, "width: 18.0"),
        (lj_radius_vdw, "rmin_half: 3.85"),
    ],
)
def test_broken_set_flagged_at_its_line(module: object, needle: str) -> None:
    path = LINT_DATA / f"{module.ID}.yaml"  # type: ignore[attr-defined]
    findings = run(module, context(path))  # type: ignore[arg-type]
    # one finding (Morse: width and the curvature it gives, both at the width) at the broken line only
    assert findings and {(f.code, f.line) for f in findings} == {(module.ID, line_of(path, needle))}  # type: ignore[attr-defined]
    assert all(f.path == str(path) for f in findings)


def test_negative_force_constant_at_its_line(tmp_path: Path) -> None:
    # The schema already refuses k < 0; the rule covers sets built without it (a laxer schema, code).
    path = LINT_DATA / "negative-force-constant.yaml"
    text = path.read_text(encoding="utf-8").replace("k: -699.6", "k: +699.6")

    def negate(entry: Entry) -> Entry:
        if entry.kind == "bond" and entry.classes == ("c4", "c4"):
            return dataclasses.replace(entry, values={**entry.values, "k": -entry.values["k"]})
        return entry

    findings = run(negative_force_constant, patched_context(path, text, tmp_path, negate))
    assert [(f.code, f.line, f.severity) for f in findings] == [
        ("negative-force-constant", line_of(path, "k: -699.6"), Severity.ERROR)
    ]
    assert "-699.6" in findings[0].message


def test_morse_depth_out_of_range(tmp_path: Path) -> None:
    text = (LINT_DATA / "morse-curvature.yaml").read_text(encoding="utf-8")
    text = text.replace("width: 18.0", "width: 1.8").replace("depth: 88.0", "depth: 880.0")
    ctx = text_context(tmp_path, text)
    findings = run(morse_curvature, ctx)
    assert [f.doc_path for f in findings] == [("bonds", 0, "depth")]


# --- the default set -------------------------------------------------------------------------------


def test_default_set_has_no_errors_and_only_the_known_warnings() -> None:
    ctx = context(DEFAULT)
    findings = [f for module in PHYSICS for f in run(module, ctx)]
    assert not [f for f in findings if f.severity >= Severity.ERROR]
    # Two warnings, both about values the generator takes from UFF and both real (see the report):
    # C=S r0 1.433 A is 0.18 A below the Pyykko double-bond sum 1.61 A (thioformaldehyde C=S is about
    # 1.61 A [M]); the C#C constant gives 1650 cm^-1, 21 % below the observed 2100-2260 cm^-1.
    got = sorted((f.code, f.doc_path) for f in findings)
    pset = load_parameter_set(str(DEFAULT))
    where = {e.classes + (e.bond_order or "",): e.doc_path for e in pset.entries("bond").values()}
    assert got == sorted(
        [
            ("bond-length-radii", (*where[("c3", "s1", "double")], "r0")),
            ("bond-wavenumber", (*where[("c1", "c1", "triple")], "k")),
        ]
    )


def test_probe_inference_matches_the_default_sets_rdkit_tags() -> None:
    # The default set's descriptions name RDKit's hybridisation of the class's atoms ("[RDKit SP3]");
    # the probe inference must agree with every such tag it can decide.
    pset = load_parameter_set(str(DEFAULT))
    info = set_info(pset)
    compared = 0
    for cls in pset.classes:
        tag = re.search(r"\[RDKit (SP[23]?)\]", cls.description)
        if tag is None or info.hybridisation(cls.id) is None:
            continue
        compared += 1
        assert info.hybridisation(cls.id) == tag.group(1).lower(), cls.id
    assert compared >= 20
    assert len(PROBE_SMILES) == len(set(PROBE_SMILES))


# --- wavenumbers and the sqrt(2) convention check ---------------------------------------------------


def test_wavenumber_worked_example_and_masses() -> None:
    # check_values.md section 3 (b) [C]: C-H, k = 340 kcal/mol/A^2 in the E = k dr^2 convention
    # (curvature 680) gives 2936.8 cm^-1; read as E = 1/2 k dr^2 it gives 2076.6 cm^-1.
    assert wavenumber(680.0, mass("C"), mass("H")) == pytest.approx(2936.8, abs=0.5)
    assert wavenumber(340.0, mass("C"), mass("H")) == pytest.approx(2076.6, abs=0.5)
    # most common isotope masses (RDKit): 12C exactly 12 u, 1H 1.00782503 u (AME / CODATA [V])
    assert mass("C") == 12.0
    assert mass("H") == pytest.approx(1.00782503, abs=1e-7)
    low, high = bond_wavenumber.window(IR_RANGES["C-H:sp3"], 0.15, 0.10)
    assert bond_wavenumber.classify(2936.8, low, high) == "ok"
    assert bond_wavenumber.classify(2076.6, low, high) == "halved"
    assert bond_wavenumber.classify(2936.8 * 2**0.5, low, high) == "doubled"
    assert bond_wavenumber.classify(1000.0, low, high) == "low"


def test_ir_range_lookup() -> None:
    assert ir_range("H", "C", "single", "sp3") is IR_RANGES["C-H:sp3"]
    assert ir_range("C", "H", None, None) is None  # the three C-H ranges are not merged
    assert ir_range("O", "C", "double", "sp2") is IR_RANGES["C=O"]
    assert ir_range("N", "C", "triple", "sp") is IR_RANGES["C#N"]
    assert ir_range("C", "O", "single", "sp3") is None


_CHECKED = {
    # default-set bond -> the IR range it is checked against (ranges: UCLA / UMass IR tables, Morrison &
    # Boyd; check_values.md section 3 [V])
    ("c4", "h_c", "single"): "C-H:sp3",
    ("c3", "h_c", "single"): "C-H:sp2",
    ("c3ar", "h_c", "single"): "C-H:sp2",
    ("c1", "h_c", "single"): "C-H:sp",
    ("h_o", "o2h", "single"): "O-H",
    ("h_o", "o2hc", "single"): "O-H",
    ("c3o", "o1", "double"): "C=O",
    ("c1", "n1", "triple"): "C#N",
}


def _scaled_bonds(text: str, factor: float) -> str:
    """The set text with every bond constant ``k`` multiplied by ``factor`` (bonds section only)."""
    head, rest = text.split("\nbonds:\n", 1)
    bonds, tail = rest.split("\nangles:\n", 1)
    bonds = re.sub(
        r"(\n    k: )([0-9.]+)", lambda m: f"{m.group(1)}{float(m.group(2)) * factor:.6g}", bonds
    )
    return f"{head}\nbonds:\n{bonds}\nangles:\n{tail}"


def _by_entry(findings: list, pset) -> dict:  # type: ignore[no-untyped-def, type-arg]
    keys = {e.doc_path: e.classes + (e.bond_order or "",) for e in pset.entries("bond").values()}
    return {keys[f.doc_path[:2]]: f for f in findings if f.doc_path[0] == "bonds"}


@pytest.mark.parametrize(("factor", "direction"), [(0.5, "halved"), (2.0, "doubled")])
def test_halved_or_doubled_set_flagged_as_convention_mixup(
    tmp_path: Path, factor: float, direction: str
) -> None:
    text = DEFAULT.read_text(encoding="utf-8")
    ctx = text_context(tmp_path, _scaled_bonds(text, factor))
    assert ctx.pset is not None
    findings = run(bond_wavenumber, ctx)
    per_entry = _by_entry(findings, ctx.pset)
    for key in _CHECKED:
        finding = per_entry.get(key)
        assert finding is not None, f"{key} not flagged when {direction}"
        assert finding.cause == "convention-mixup", (key, finding.message)
        assert f"looks {direction}" in finding.message
    set_wide = [f for f in findings if f.doc_path == ("header", "conventions", "bond")]
    assert len(set_wide) == 1 and set_wide[0].severity == Severity.ERROR
    assert set_wide[0].line == line_of(DEFAULT, "conventions: {bond: half")


def test_correct_constants_are_not_flagged() -> None:
    ctx = context(DEFAULT)
    assert ctx.pset is not None
    per_entry = _by_entry(run(bond_wavenumber, ctx), ctx.pset)
    assert not set(per_entry) & set(_CHECKED)


def test_declared_full_convention_read_right(tmp_path: Path) -> None:
    # The same C-H constant 340 kcal/mol/A^2 (check_values.md section 3 (b)) is right under bond: full
    # and a probable mix-up under bond: half.
    base = (LINT_DATA / "bond-wavenumber.yaml").read_text(encoding="utf-8")
    body = base.split("bonds:\n")[0] + "bonds:\n  - {classes: [c4, h_c], k: 340, r0: 1.09}\n"
    full = body.replace("bond: half", "bond: full")
    assert run(bond_wavenumber, text_context(tmp_path, full, "full.yaml")) == []
    half = run(bond_wavenumber, text_context(tmp_path, body, "half.yaml"))
    assert [f.cause for f in half] == ["convention-mixup"]


# --- bond lengths against the CRC Handbook -----------------------------------------------------------

_CRC_HEAD = """format: ffaudit-parameter-set/1
header:
  name: crc-lengths
  version: "1"
  units: {length: angstrom, angle: degree, energy: kcal/mol}
  conventions: {bond: half, angle: half}
classes:
  - {id: h, element: H, smarts: ["[#1]"]}
  - {id: car, element: C, smarts: ["[c]"]}
  - {id: c1, element: C, smarts: ["[CX2]"]}
  - {id: c3, element: C, smarts: ["[CX3]"]}
  - {id: c4, element: C, smarts: ["[CX4]"]}
  - {id: n1, element: N, smarts: ["[NX1]"]}
  - {id: n2, element: N, smarts: ["[NX2]"]}
  - {id: n3, element: N, smarts: ["[NX3]"]}
  - {id: o1, element: O, smarts: ["[OX1]"]}
  - {id: o2, element: O, smarts: ["[OX2]"]}
  - {id: s2, element: S, smarts: ["[SX2]"]}
  - {id: f, element: F, smarts: ["[F]"]}
  - {id: cl, element: Cl, smarts: ["[Cl]"]}
  - {id: br, element: Br, smarts: ["[Br]"]}
bonds:
"""

# CRC Handbook of Chemistry and Physics, section 9, "Characteristic Bond Lengths in Free Molecules"
# (86th ed.), as listed in check_values.md section 1 [V]; C:C aromatic is benzene r_e 1.3914 [V].
_CRC = [
    ("c4", "h", "single", 1.09),
    ("c4", "c4", "single", 1.53),
    ("c3", "c3", "double", 1.34),
    ("c1", "c1", "triple", 1.20),
    ("car", "car", "aromatic", 1.39),
    ("c4", "n3", "single", 1.47),
    ("c3", "n2", "double", 1.28),
    ("c1", "n1", "triple", 1.16),
    ("c4", "o2", "single", 1.42),
    ("c3", "o1", "double", 1.21),
    ("h", "o2", "single", 0.96),
    ("h", "n3", "single", 1.02),
    ("c4", "f", "single", 1.39),
    ("c4", "cl", "single", 1.79),
    ("br", "c4", "single", 1.94),
    ("c4", "s2", "single", 1.82),
    ("h", "s2", "single", 1.34),
]


def _crc_text(rows: list[tuple[str, str, str, float]]) -> str:
    lines = [f"  - {{classes: [{a}, {b}], order: {o}, k: 500, r0: {r}}}" for a, b, o, r in rows]
    return _CRC_HEAD + "\n".join(lines) + "\n"


def test_crc_bond_lengths_pass(tmp_path: Path) -> None:
    assert run(bond_length_radii, text_context(tmp_path, _crc_text(_CRC))) == []


def test_cc_of_1_20_flagged(tmp_path: Path) -> None:
    text = _crc_text([*_CRC, ("c3", "c4", "single", 1.20)])
    findings = run(bond_length_radii, text_context(tmp_path, text))
    assert [(f.doc_path, f.line) for f in findings] == [
        (("bonds", len(_CRC), "r0"), _CRC_HEAD.count("\n") + len(_CRC) + 1)
    ]
    assert "single" in findings[0].message and "Cordero" in findings[0].message


def test_order_assumed_and_said(tmp_path: Path) -> None:
    # no order qualifier and no probe evidence beyond "both sp3": the message says single was assumed
    text = _CRC_HEAD + "  - {classes: [c4, c4], k: 500, r0: 1.20}\n"
    findings = run(bond_length_radii, text_context(tmp_path, text))
    assert len(findings) == 1
    assert "order single" in findings[0].message


def test_peroxide_is_a_documented_limitation(tmp_path: Path) -> None:
    # O-O 1.48 A (CRC, check_values.md section 1 [V]) is 0.16 A above the Cordero sum 1.32 A: flagged,
    # as the rule's docstring says (lone-pair repulsion).
    findings = run(
        bond_length_radii, text_context(tmp_path, _crc_text([("o2", "o2", "single", 1.48)]))
    )
    assert len(findings) == 1


def test_angle_ideal_passes_hydrides_and_small_heavy_angles(tmp_path: Path) -> None:
    # water 104.5 and ammonia 106.7 degrees [M], H2S 92.1 [M]: all pass at sp3 apexes
    text = (
        _CRC_HEAD.replace("bonds:\n", "angles:\n")
        + "  - {classes: [h, o2, h], k: 100, theta0: 104.5}\n"
        + "  - {classes: [h, n3, h], k: 100, theta0: 106.7}\n"
        + "  - {classes: [h, s2, h], k: 100, theta0: 92.1}\n"
        + "  - {classes: [h, c4, h], k: 100, theta0: 120.0}\n"
        + "  - {classes: [h, c4, h], k: 100, theta0: 60.0}\n"
    )
    text = text.replace("  - {classes: [h, c4, h], k: 100, theta0: 60.0}", "")
    assert run(angle_ideal, text_context(tmp_path, text)) == []
    bad = text.replace("theta0: 120.0", "theta0: 180.0")
    assert len(run(angle_ideal, text_context(tmp_path, bad, "bad.yaml"))) == 1


def test_lj_polar_hydrogen_may_be_small(tmp_path: Path) -> None:
    base = (LINT_DATA / "lj-radius-vdw.yaml").read_text(encoding="utf-8")
    text = base.replace("rmin_half: 3.85", "rmin_half: 1.90").replace(
        "rmin_half: 1.443", "rmin_half: 0.2245"
    )
    assert run(lj_radius_vdw, text_context(tmp_path, text)) == []
    nm = base.replace("rmin_half: 3.85", "rmin_half: 0.19")  # 1.9 A written in nm
    assert [f.doc_path for f in run(lj_radius_vdw, text_context(tmp_path, nm, "nm.yaml"))] == [
        ("nonbonded", 1, "rmin_half")
    ]


@pytest.mark.parametrize("module", PHYSICS, ids=lambda m: m.ID)
def test_docstring_examples(tmp_path: Path, module: object) -> None:
    # The docs are generated from these examples: the passing one must pass and the failing one fail.
    # The schema refuses negative constants, so that rule's failing example cannot load as a set.
    assert run(module, example_context(tmp_path, module, "Passing:")) == []  # type: ignore[arg-type]
    if module is negative_force_constant:
        assert docstring_example(module, "Failing:")["bonds"][0]["k"] < 0
        return
    failing = run(module, example_context(tmp_path, module, "Failing:"))  # type: ignore[arg-type]
    assert failing and {f.code for f in failing} == {module.ID}  # type: ignore[attr-defined]
