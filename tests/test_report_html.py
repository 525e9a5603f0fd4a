"""``ffaudit report``: the self-contained HTML page of audit results.

Results are made here by running ``ffaudit audit`` in this process on the sample library
(sample_sets/formulation-lab.smi) plus molecules written by the tests (a name that is an HTML script element,
a salt whose SMILES is not in canonical atom order, an SD file whose hydrogens sit between the heavy atoms).
Checks against things outside the report code: the counts on the page against the JSONL counted here, atom
elements against RDKit's own parsing, and the page in headless Chromium (no console errors, the marks drawn).
"""

from __future__ import annotations

import io
import json
import os
import re
import shutil
import subprocess
from collections import Counter
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest
from rdkit import Chem

from ffaudit.cli.main import run as cli
from ffaudit.paramset.load import load_parameter_set
from ffaudit.report import depict
from ffaudit.report.gap_curve import coverage_curve
from ffaudit.report.html import ReportOptions, build_report, render
from ffaudit.report.numbering import from_record, from_smiles, read_records
from ffaudit.report.results import open_results

ROOT = Path(__file__).resolve().parent.parent
LAB = ROOT / "sample_sets" / "formulation-lab.smi"
SCRIPT_NAME = "<script>alert(1)</script>"
SODIUM_BENZOATE = "[Na+].[O-]C(=O)c1ccccc1"  # line 30 of the sample library: Na is atom 0 as written


def audit(library: Path, out: Path | str, *extra: str) -> None:
    """``ffaudit audit LIBRARY --format jsonl -o OUT`` in this process (exit 1 = some record incomplete)."""
    stderr = io.StringIO()
    code = cli(["audit", str(library), "-j", "1", *extra, "-o", str(out)], io.StringIO(), stderr)
    assert code in (0, 1), stderr.getvalue()


def report(results: Path, out: Path, *extra: str) -> str:
    stderr = io.StringIO()
    code = cli(["report", str(results), "-o", str(out), *extra], io.StringIO(), stderr)
    assert code == 0, stderr.getvalue()
    return out.read_text(encoding="utf-8")


def read_jsonl(path: Path) -> list[dict[str, Any]]:
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines() if line]


@pytest.fixture(scope="module")
def lab(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """The sample library plus 1-bromobutane (estimated in the default set) named like a script element."""
    work = tmp_path_factory.mktemp("lab")
    library = work / "lab.smi"
    library.write_text(LAB.read_text(encoding="utf-8") + f"CCCCBr {SCRIPT_NAME}\n", encoding="utf-8")
    results = work / "lab.jsonl"
    audit(library, results, "--format", "jsonl")
    page = work / "lab.html"
    report(results, page)
    return {"dir": work, "library": library, "results": results, "page": page}


class _Elements(HTMLParser):
    """Collects script element contents and the text of table cells."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.scripts: list[str] = []
        self.cells: list[str] = []
        self.molecule_sections = 0
        self.row_statuses: list[str] = []
        self._in: str | None = None

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        attributes = dict(attrs)
        if tag == "script":
            self._in = "script"
            self.scripts.append("")
        elif tag == "td":
            self._in = "td"
            self.cells.append("")
        elif tag == "section" and attributes.get("class") == "molecule":
            self.molecule_sections += 1
        elif tag == "tr" and "data-index" in attributes:
            self.row_statuses.append(str(attributes.get("data-status")))

    def handle_endtag(self, tag: str) -> None:
        if tag in ("script", "td"):
            self._in = None

    def handle_data(self, data: str) -> None:
        if self._in == "script":
            self.scripts[-1] += data
        elif self._in == "td":
            self.cells[-1] += data


def parse(page: str) -> _Elements:
    parser = _Elements()
    parser.feed(page)
    return parser


# ------------------------------------------------------------------------------------------ the page


def test_name_from_the_input_is_shown_as_text(lab: dict[str, Path]) -> None:
    page = lab["page"].read_text(encoding="utf-8")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert SCRIPT_NAME not in page
    parsed = parse(page)
    assert len(parsed.scripts) == 1  # the page's own script only
    assert "alert(1)" not in parsed.scripts[0]
    assert SCRIPT_NAME in parsed.cells  # the table cell's text is the name itself


def test_page_is_self_contained(lab: dict[str, Path]) -> None:
    page = lab["page"].read_text(encoding="utf-8")
    assert not re.search(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:|//|file:)""", page, re.I)
    assert not re.search(r"url\(\s*['\"]?\s*(?:https?:|//)", page, re.I)
    assert "<link" not in page and "@import" not in page
    assert "default-src 'none'" in page  # and the browser is told to fetch nothing


def test_same_results_give_the_same_bytes(lab: dict[str, Path], tmp_path: Path) -> None:
    again = tmp_path / "again.html"
    report(lab["results"], again)
    assert again.read_bytes() == lab["page"].read_bytes()


def test_counts_on_the_page_are_those_of_the_results(lab: dict[str, Path]) -> None:
    molecules = read_jsonl(lab["results"])
    status = Counter(m["status"] for m in molecules)
    view = build_report(open_results(lab["results"]))
    assert view.summary.records == len(molecules) == 31
    assert {r.status: r.count for r in view.summary.statuses} == {
        s: status.get(s, 0) for s in ("covered", "estimated", "incomplete", "unreadable")
    }
    kinds = {k.kind: k.total for k in view.summary.kinds}
    for kind in kinds:
        assert kinds[kind] == sum(sum(m["counts"].get(kind, {}).values()) for m in molecules)
    gaps = [m for m in molecules if m["status"] in ("estimated", "incomplete")]
    assert [d.index for d in view.details] == [m["index"] for m in gaps]
    assert all(d.svg is not None for d in view.details), [d.numbering for d in view.details]
    assert len(view.rows) == len(molecules)


def test_cautions_and_demonstration_notice_are_shown(lab: dict[str, Path]) -> None:
    from ffaudit.audit import CAUTIONS

    page = lab["page"].read_text(encoding="utf-8")
    # The embedded default set says demonstration: true in its header; the provenance names it.
    assert "Demonstration parameter set: not for production simulations." in page
    for caution in CAUTIONS:
        assert caution in page


def test_paging_says_what_was_left_out(lab: dict[str, Path], tmp_path: Path) -> None:
    molecules = read_jsonl(lab["results"])
    gaps = sum(m["status"] in ("estimated", "incomplete") for m in molecules)
    covered = sum(m["status"] == "covered" for m in molecules)
    page = report(lab["results"], tmp_path / "small.html", "--max-detail", "2", "--max-rows", "25")
    assert f"Details are shown for the first 2 of the {gaps} molecules with gaps" in page
    assert f"the other {gaps - 2} are counted in the summary" in page
    assert "The table lists 25 of the 31 records" in page
    parsed = parse(page)
    assert parsed.molecule_sections == 2
    # every molecule not covered is in the table; covered ones fill the rest
    assert len(parsed.row_statuses) == 25
    assert parsed.row_statuses.count("covered") == 25 - (31 - covered)


def test_an_empty_library_gives_a_page(tmp_path: Path) -> None:
    empty = tmp_path / "empty.jsonl"
    empty.write_text("", encoding="utf-8")
    page = report(empty, tmp_path / "empty.html")
    assert "No molecule has missing or estimated terms." in page
    assert "<th class=\"num\">0</th>" in page


# ------------------------------------------------------------------------------------ atom numbers


def test_atom_numbers_follow_the_input_not_the_canonical_smiles(lab: dict[str, Path]) -> None:
    from ffaudit.paramset.load import load_parameter_set
    from ffaudit.perceive.classes import ClassRules

    molecule = next(m for m in read_jsonl(lab["results"]) if m["name"] == "sodium-benzoate")
    missing = [t for t in molecule["terms"] if t["tier"] == "missing"]
    assert [(t["kind"], t["atoms"]) for t in missing] == [("nonbonded", [0])]
    # RDKit: atom 0 of the SMILES as written is Na; of the canonical SMILES of the results it is not.
    assert Chem.MolFromSmiles(SODIUM_BENZOATE).GetAtomWithIdx(0).GetSymbol() == "Na"
    naive = Chem.AddHs(Chem.MolFromSmiles(molecule["smiles"]))
    assert naive.GetAtomWithIdx(0).GetSymbol() != "Na"
    source = molecule["source"]
    records = read_records({source["path"]: [source["record"]]}).records
    by_record = from_record(records[(source["path"], source["record"])], molecule)
    by_classes = from_smiles(molecule, ClassRules(load_parameter_set()))
    for numbered in (by_record, by_classes):
        assert numbered.mol is not None, numbered.how
        assert numbered.mol.GetAtomWithIdx(0).GetSymbol() == "Na"
    # the drawing marks the sodium, and only it, in the missing style
    atom_style, bond_style = depict.marks(molecule["terms"])
    drawing = depict.draw(by_record.mol, atom_style, bond_style)
    marked = re.findall(r"<ellipse[^>]*class='atom-(\d+)'[^>]*fill:(#[0-9A-F]{6})", drawing.svg)
    assert [int(a) for a, c in marked if c == depict.MISSING_COLOUR] == [drawing.atom_index[0]]
    assert sum(c == depict.ESTIMATED_COLOUR for _, c in marked) == len(
        [a for a, s in atom_style.items() if s == depict.ESTIMATED]
    )


def _interleaved_sdf(path: Path) -> list[int]:
    """Sodium benzoate with explicit hydrogens written between the heavy atoms (each H after its carbon)
    and Na in the middle; returns the element numbers in file order."""
    mol = Chem.AddHs(Chem.MolFromSmiles(SODIUM_BENZOATE))
    heavy = [a for a in mol.GetAtoms() if a.GetAtomicNum() not in (1, 11)]
    order: list[int] = []
    for number, atom in enumerate(heavy):
        order.append(atom.GetIdx())
        order += [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
        if number == 4:
            order.append(0)  # Na, after the first ring carbons and their hydrogens
    shuffled = Chem.RenumberAtoms(mol, order)
    shuffled.SetProp("_Name", "benzoate-interleaved")
    with Chem.SDWriter(str(path)) as writer:
        writer.write(shuffled)
    return [a.GetAtomicNum() for a in shuffled.GetAtoms()]


def test_sd_file_with_hydrogens_between_heavy_atoms(tmp_path: Path) -> None:
    library = tmp_path / "interleaved.sdf"
    elements = _interleaved_sdf(library)
    assert elements.index(1) < max(i for i, z in enumerate(elements) if z != 1)  # really interleaved
    results = tmp_path / "interleaved.jsonl"
    audit(library, results, "--format", "jsonl")
    molecule = read_jsonl(results)[0]
    sodium = elements.index(11)
    assert [t["atoms"] for t in molecule["terms"] if t["tier"] == "missing"] == [[sodium]]
    view = build_report(open_results(results))
    (detail,) = view.details
    assert detail.svg is not None and "record 1" in detail.numbering
    # once the file is gone the numbers come from classes and bonds, still with Na where the file had it
    library.unlink()
    view = build_report(open_results(results))
    (detail,) = view.details
    assert detail.svg is not None and "matched by classes and bonds" in detail.numbering
    (term,) = detail.missing
    assert term.atoms == str(sodium)
    assert re.search(
        rf"<ellipse[^>]*class='atom-{term.drawn_atoms}'[^>]*fill:{depict.MISSING_COLOUR}", str(detail.svg)
    )


def test_without_library_or_bond_terms_the_terms_are_listed_undrawn(tmp_path: Path) -> None:
    library = tmp_path / "one.smi"
    library.write_text("OB(O)c1ccccc1 phenylboronic-acid\n", encoding="utf-8")
    results = tmp_path / "one.jsonl"
    audit(library, results, "--format", "jsonl", "--terms", "none")
    library.unlink()
    # JSON lines carry no header and --terms none leaves no provenance: the set is not known
    (detail,) = build_report(open_results(results)).details
    assert detail.svg is None and "the parameter set is not known" in detail.numbering
    # with the set stated (as --params does), the missing bond terms are what stops the drawing
    view = build_report(open_results(results), pset=load_parameter_set("generic-organic"))
    (detail,) = view.details
    assert detail.svg is None
    assert "do not list every bond term" in detail.numbering and "not found here" in detail.numbering
    assert "The results list 0 of the molecule's" in detail.terms_note
    # --library points at the file where it is now: the molecule is drawn (with nothing to mark)
    moved = tmp_path / "moved.smi"
    moved.write_text("OB(O)c1ccccc1 phenylboronic-acid\n", encoding="utf-8")
    view = build_report(open_results(results), ReportOptions(library=str(moved)))
    assert view.details[0].svg is not None and "moved.smi record 1" in view.details[0].numbering


def test_problem_terms_give_the_bonds_when_the_set_has_wildcard_dihedrals(tmp_path: Path) -> None:
    """With --terms problems the default set's wildcard dihedrals still list every bond, so the numbers
    can be matched without the library file."""
    library = tmp_path / "one.smi"
    library.write_text(f"{SODIUM_BENZOATE} sodium-benzoate\n", encoding="utf-8")
    results = tmp_path / "one.jsonl"
    audit(library, results, "--format", "jsonl", "--terms", "problems")
    library.unlink()
    (detail,) = build_report(open_results(results)).details
    assert detail.svg is not None and "matched by classes and bonds" in detail.numbering
    assert [t.atoms for t in detail.missing] == ["0"]


# ------------------------------------------------------------------------------- results and sets


def test_output_directory_gives_the_same_page_content(lab: dict[str, Path], tmp_path: Path) -> None:
    directory = tmp_path / "run"
    audit(lab["library"], f"{directory}/", "--chunk-size", "7")
    assert len(list(directory.glob("chunk-*.jsonl"))) == 5
    from_directory = build_report(open_results(directory))
    from_jsonl = build_report(open_results(lab["results"]))
    assert from_directory.summary == from_jsonl.summary
    assert from_directory.rows == from_jsonl.rows
    assert [d.index for d in from_directory.details] == [d.index for d in from_jsonl.details]
    assert from_directory.demonstration  # from summary.json's parameter_set
    assert "2b36bab3c5c8" in from_directory.parameter_set or "sha256" in from_directory.parameter_set


def _non_demonstration_set(tmp_path: Path) -> Path:
    """tests/data/sets/minimal.yaml renamed and with demonstration: false."""
    text = (ROOT / "tests" / "data" / "sets" / "minimal.yaml").read_text(encoding="utf-8")
    text = text.replace("name: minimal", "name: lab-set").replace(
        "demonstration: true", "demonstration: false"
    )
    path = tmp_path / "lab-set.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def test_demonstration_notice_follows_the_set(tmp_path: Path) -> None:
    library = tmp_path / "two.smi"
    library.write_text("CC ethane\nCCO ethanol\n", encoding="utf-8")
    own = _non_demonstration_set(tmp_path)
    results = tmp_path / "own.jsonl"
    audit(library, results, "--format", "jsonl", "--params", str(own))
    page = render(build_report(open_results(results)))
    assert "lab-set 0.1" in page and "named by the results" in page
    assert "Demonstration parameter set" not in page
    assert "A coverage check is not a validation of accuracy" in page
    # no terms listed: nothing names the set, and the page says it cannot tell
    bare = tmp_path / "bare.jsonl"
    audit(library, bare, "--format", "jsonl", "--params", str(own), "--terms", "none")
    page = render(build_report(open_results(bare)))
    assert "could not be identified" in page and "Pass --params SET" in page
    assert "Demonstration parameter set" not in page
    page = report(bare, tmp_path / "stated.html", "--params", "generic-organic")
    assert "Demonstration parameter set" in page
    assert "check that the right set was given" not in page  # no provenance to contradict it


def test_bad_results_line_is_reported_with_file_and_line(lab: dict[str, Path], tmp_path: Path) -> None:
    lines = lab["results"].read_text(encoding="utf-8").splitlines()
    broken = tmp_path / "broken.jsonl"
    broken.write_text("\n".join([lines[0], lines[1][:40], *lines[2:]]) + "\n", encoding="utf-8")
    stderr = io.StringIO()
    code = cli(["report", str(broken), "-o", str(tmp_path / "x.html")], io.StringIO(), stderr)
    assert code == 2
    assert f"{broken}:2: not valid JSON" in stderr.getvalue()
    assert not (tmp_path / "x.html").exists()
    code = cli(["report", str(tmp_path / "nothing.jsonl")], io.StringIO(), stderr)
    assert code == 2 and "no such file" in stderr.getvalue()


def test_report_to_stdout(lab: dict[str, Path]) -> None:
    stdout, stderr = io.StringIO(), io.StringIO()
    assert cli(["report", str(lab["results"]), "--max-detail", "1"], stdout, stderr) == 0
    assert stdout.getvalue().startswith("<!DOCTYPE html>")
    assert "1 molecules with gaps in detail (1 drawn)" in stderr.getvalue()


def test_greedy_curve_order() -> None:
    def molecule(status: str, *needs: str) -> dict[str, Any]:
        terms = [{"kind": "bond", "atoms": [0, 1], "classes": list(n), "tier": "missing"} for n in needs]
        return {"status": status, "terms": terms}

    molecules = [
        molecule("covered"),
        molecule("incomplete", "ab"),  # needs a-b only
        molecule("incomplete", "ab", "cd"),
        molecule("incomplete", "ef", "gh"),
        molecule("incomplete", "ef"),
        molecule("unreadable"),
    ]
    steps = coverage_curve(molecules)
    # a-b and e-f each complete one molecule and are needed by two: a-b first by sort order; then e-f
    # (completes one, needed by two) beats c-d (completes one, needed by one); then c-d, g-h.
    assert [s.key[1] for s in steps] == [("a", "b"), ("e", "f"), ("c", "d"), ("g", "h")]
    assert [s.covered for s in steps] == [2, 3, 4, 5]  # the unreadable record is never covered


# --------------------------------------------------------------------------------- headless Chromium

CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
)


def _chromium() -> str:
    found = shutil.which("chromium") or ("/usr/bin/chromium" if os.path.exists("/usr/bin/chromium") else None)
    if found is None:
        pytest.skip("headless Chromium is not installed (CI installs it: apt-get install chromium)")
    return found


def _browse(page: Path, tmp_path: Path, *action: str) -> subprocess.CompletedProcess[str]:
    profile = tmp_path / f"profile-{len(list(tmp_path.iterdir()))}"
    return subprocess.run(
        [_chromium(), *CHROMIUM_FLAGS, f"--user-data-dir={profile}", *action, page.as_uri()],
        capture_output=True,
        text=True,
        timeout=180,
        check=False,
    )


def test_page_runs_in_chromium_without_console_errors(lab: dict[str, Path], tmp_path: Path) -> None:
    """Two independent signals: Chromium logs every console message (console.error and uncaught
    exceptions included) to stderr as CONSOLE lines with --enable-logging=stderr; and the page's script
    marks <html data-script="ready"> only when it set everything up without an exception."""
    done = _browse(lab["page"], tmp_path, "--enable-logging=stderr", "--v=0", "--dump-dom")
    assert done.returncode == 0, done.stderr[-2000:]
    console = [line for line in done.stderr.splitlines() if "CONSOLE" in line or "Uncaught" in line]
    assert console == []
    assert '<html lang="en" data-script="ready">' in done.stdout
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in done.stdout  # still text in the live DOM
    assert done.stdout.count("<script") == 1


def _pixels(png: Path, colour: str) -> int:
    """Pixels of the screenshot within 3 levels per channel of ``colour`` (anti-aliased edges excluded)."""
    import numpy as np
    from PIL import Image

    target = np.array([int(colour[i : i + 2], 16) for i in (1, 3, 5)], dtype=np.int16)
    with Image.open(png) as image:
        rgb = np.asarray(image.convert("RGB"), dtype=np.int16)
    return int(np.all(np.abs(rgb - target) <= 3, axis=-1).sum())


def test_screenshot_shows_the_marked_atoms(tmp_path: Path) -> None:
    """A page with two molecules with gaps has many pixels of both mark colours (far more than the two
    legend swatches, about 200 pixels each); a page whose molecules are all covered has none."""
    gaps = tmp_path / "gaps.smi"
    gaps.write_text(f"OB(O)c1ccccc1 phenylboronic-acid\n{SODIUM_BENZOATE} sodium-benzoate\n", encoding="utf-8")
    covered = tmp_path / "covered.smi"
    covered.write_text("CC#N acetonitrile\nClCCl dichloromethane\n", encoding="utf-8")
    counts = {}
    for library in (gaps, covered):
        results = tmp_path / f"{library.stem}.jsonl"
        audit(library, results, "--format", "jsonl")
        page = tmp_path / f"{library.stem}.html"
        report(results, page)
        shot = tmp_path / f"{library.stem}.png"
        done = _browse(page, tmp_path, f"--screenshot={shot}", "--window-size=1280,5200")
        assert done.returncode == 0 and shot.exists(), done.stderr[-2000:]
        counts[library.stem] = (
            _pixels(shot, depict.MISSING_COLOUR),
            _pixels(shot, depict.ESTIMATED_COLOUR),
        )
    assert counts["gaps"][0] > 1500 and counts["gaps"][1] > 1500, counts
    assert counts["covered"] == (0, 0), counts
