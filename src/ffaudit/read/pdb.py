"""Small-molecule PDB files (``.pdb``): atoms, CONECT records, several records or models per file.

The file is streamed and cut at ``END`` and ``ENDMDL`` lines; each block with ATOM/HETATM records is one
record, read with RDKit's PDB parser (hydrogens kept). Connectivity comes from the CONECT records, or from
interatomic distances when the block has none (``meta["connectivity"]`` = ``"conect"`` | ``"proximity"``).

PDB files rarely carry bond orders, so the reader decides them, and says how in ``meta["bond_orders"]``:

- ``"template"``: a template SMILES was given; its bond orders and formal charges are put on the record's
  atoms with ``AllChem.AssignBondOrdersFromTemplate``. The template must have the same heavy atoms and the
  result the same formula, else the record is unreadable.
- ``"as-read"``: the CONECT records repeat bonds to state their order (as RDKit's writer does), and those
  orders are used.
- ``"determined-from-3d"``: otherwise, ``rdDetermineBonds.DetermineBondOrders`` works the orders out from the
  coordinates for a total charge of ``total_charge`` (default: the sum of the charges in columns 79-80,
  which is 0 when the file gives none; stored in ``meta["total_charge"]``). This needs every hydrogen: a
  record without any hydrogen atom is refused with a hint to give a template.

The name is the first ``COMPND`` text of the record (models of one file without their own ``COMPND`` get
the file's name plus their model number), or ``record N``. Chirality is assigned from the 3D coordinates.

Unreadable records: a CONECT record naming an atom serial the record does not have (RDKit would silently
drop that bond), a repeated atom serial, coordinates that are not numbers, CONECT records with no atoms (as
after the last ``ENDMDL`` of a multi-model file: CONECT records there are not applied to the models above,
since the file is streamed), text that is not PDB records, or anything RDKit or the bond-order step refuses.
Blocks of blank lines and header records only are not records.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from typing import Any

from rdkit import Chem
from rdkit.Chem import AllChem, rdDetermineBonds, rdMolDescriptors

from ffaudit.errors import UsageError
from ffaudit.read.blocks import split_at_terminators
from ffaudit.read.common import ParseResult, clean_name, default_name, make_record
from ffaudit.read.rdkit_log import call_quietly
from ffaudit.read.record import Record
from ffaudit.read.source import Line, display_path

TEMPLATE = "template"
DETERMINED = "determined-from-3d"
AS_READ = "as-read"

#: PDB record names that carry no atoms; a block made only of these (and blank lines) is not a record.
HEADER_RECORDS = frozenset(
    [
        "HEADER",
        "OBSLTE",
        "TITLE",
        "SPLIT",
        "CAVEAT",
        "COMPND",
        "SOURCE",
        "KEYWDS",
        "EXPDTA",
        "NUMMDL",
        "MDLTYP",
        "AUTHOR",
        "REVDAT",
        "SPRSDE",
        "JRNL",
        "REMARK",
        "DBREF",
        "DBREF1",
        "DBREF2",
        "SEQADV",
        "SEQRES",
        "MODRES",
        "HET",
        "HETNAM",
        "HETSYN",
        "FORMUL",
        "HELIX",
        "SHEET",
        "SSBOND",
        "LINK",
        "CISPEP",
        "SITE",
        "CRYST1",
        "ORIGX1",
        "ORIGX2",
        "ORIGX3",
        "SCALE1",
        "SCALE2",
        "SCALE3",
        "MTRIX1",
        "MTRIX2",
        "MTRIX3",
        "MODEL",
        "TER",
        "MASTER",
        "ANISOU",
        "SIGATM",
        "SIGUIJ",
    ]
)
_CONECT_FIELDS = ((6, 11), (11, 16), (16, 21), (21, 26), (26, 31))


def record_name(text: str) -> str:
    """The PDB record name of a line (columns 1-6, upper case, stripped)."""
    return text[:6].strip().upper()


def is_terminator(text: str) -> bool:
    """True for the ``END`` / ``ENDMDL`` lines that end a PDB record."""
    return record_name(text) in ("END", "ENDMDL")


def parse_template(template_smiles: str) -> Chem.Mol:
    """Parse a template SMILES once. Raises :class:`UsageError` with RDKit's message when it is not valid."""
    mol, message = call_quietly(lambda: Chem.MolFromSmiles(template_smiles))
    if mol is None:
        raise UsageError(
            f"the template SMILES {template_smiles!r} is not valid: {message or 'RDKit refused it'}"
        )
    return mol


def check_block(lines: list[str], *, first_line: int = 1) -> str | None:
    """The first problem RDKit's PDB parser would not report (or report badly), citing file lines, or None.

    Checks atom coordinates, repeated atom serials and CONECT records that name atoms not in the record.
    """
    serials: dict[str, int] = {}
    for offset, text in enumerate(lines):
        if record_name(text) not in ("ATOM", "HETATM"):
            continue
        at = first_line + offset
        try:
            [float(text[start:end]) for start, end in ((30, 38), (38, 46), (46, 54))]
        except ValueError:
            return f"the atom at file line {at} has coordinates that are not numbers: {text[30:54].strip()!r}"
        serial = text[6:11].strip()
        if serial in serials:
            return f"atom serial {serial} appears twice (file lines {serials[serial]} and {at})"
        serials[serial] = at
    for offset, text in enumerate(lines):
        if record_name(text) != "CONECT":
            continue
        for start, end in _CONECT_FIELDS:
            serial = text[start:end].strip()
            if serial and serial not in serials:
                return (
                    f"the CONECT record at file line {first_line + offset} refers to atom serial {serial}, "
                    "which is not in this record"
                )
    return None


def parse_pdb_block(
    lines: list[str],
    *,
    first_line: int = 1,
    template: Chem.Mol | None = None,
    total_charge: int | None = None,
) -> tuple[ParseResult, dict[str, Any]]:
    """Read one PDB record and decide its bond orders (see the module docstring).

    Returns the result and the record's ``meta``. Never raises.
    """
    meta: dict[str, Any] = {}
    problem = check_block(lines, first_line=first_line)
    if problem is not None:
        return ParseResult(None, problem), meta
    has_conect = any(record_name(text) == "CONECT" for text in lines)
    meta["connectivity"] = "conect" if has_conect else "proximity"
    text = "".join(line + "\n" for line in lines)
    mol, message = call_quietly(
        lambda: Chem.MolFromPDBBlock(
            text, sanitize=False, removeHs=False, proximityBonding=not has_conect
        )
    )
    if mol is None:
        return ParseResult(
            None, f"cannot parse the PDB record: {message or 'RDKit gave no reason'}"
        ), meta
    if mol.GetNumAtoms() == 0:
        return ParseResult(None, "the PDB record has no atoms"), meta
    if template is not None:
        meta["bond_orders"] = TEMPLATE
        mol, reason = _apply_template(mol, template)
    elif any(bond.GetBondTypeAsDouble() > 1 for bond in mol.GetBonds()):
        meta["bond_orders"] = AS_READ
        reason = None
    else:
        meta["bond_orders"] = DETERMINED
        charge = (
            total_charge
            if total_charge is not None
            else sum(a.GetFormalCharge() for a in mol.GetAtoms())
        )
        meta["total_charge"] = charge
        mol, reason = _determine(mol, charge)
    if mol is None:
        return ParseResult(None, reason), {"connectivity": meta["connectivity"]}
    _, message = call_quietly(lambda: Chem.SanitizeMol(mol))
    if message:
        reason = (
            f"RDKit cannot sanitise the PDB record ({meta['bond_orders']} bond orders): {message}"
        )
        return ParseResult(None, reason), {"connectivity": meta["connectivity"]}
    call_quietly(lambda: Chem.AssignStereochemistryFrom3D(mol))
    return ParseResult(mol, None), meta


def _apply_template(mol: Chem.Mol, template: Chem.Mol) -> tuple[Chem.Mol | None, str | None]:
    heavy = sum(1 for atom in mol.GetAtoms() if atom.GetAtomicNum() > 1)
    template_heavy = sum(1 for atom in template.GetAtoms() if atom.GetAtomicNum() > 1)
    if heavy != template_heavy:
        return (
            None,
            f"the template SMILES has {template_heavy} heavy atoms but the record has {heavy}",
        )
    hydrogens = mol.GetNumAtoms() - heavy
    template_h = sum(atom.GetTotalNumHs() for atom in template.GetAtoms()) + (
        template.GetNumAtoms() - template_heavy
    )
    if hydrogens and hydrogens != template_h:
        return None, (
            f"the record has {hydrogens} hydrogen atoms but the template SMILES implies {template_h} "
            "(a different protonation state or tautomer, or hydrogens missing from the file)"
        )
    # With hydrogens in the file, match them too, so that (say) the OH of an acid gets the single bond.
    reference = Chem.AddHs(template) if hydrogens else template
    assigned, message = call_quietly(
        lambda: AllChem.AssignBondOrdersFromTemplate(reference, mol)  # type: ignore[no-untyped-call]
    )
    if assigned is None:
        return (
            None,
            f"the template SMILES does not match the record's connectivity: {message or 'no match'}",
        )
    copy, message = call_quietly(lambda: _sanitised_copy(assigned))
    if copy is None:
        return None, f"the template's bond orders do not fit the record: {message}"
    formula = rdMolDescriptors.CalcMolFormula(copy)
    expected = rdMolDescriptors.CalcMolFormula(template)
    if formula != expected:
        return (
            None,
            f"with the template's bond orders the record is {formula}, the template is {expected}",
        )
    return assigned, None


def _sanitised_copy(mol: Chem.Mol) -> Chem.Mol:
    copy = Chem.Mol(mol)
    Chem.SanitizeMol(copy)
    return copy


def _determine(mol: Chem.Mol, charge: int) -> tuple[Chem.Mol | None, str | None]:
    if not any(atom.GetAtomicNum() == 1 for atom in mol.GetAtoms()) and mol.GetNumAtoms() > 1:
        return None, (
            "the record has no hydrogen atoms and no bond orders in its CONECT records; bond orders can "
            "only be determined from 3D coordinates when every hydrogen is present - give a template SMILES"
        )
    editable = Chem.RWMol(mol)
    _, message = call_quietly(lambda: rdDetermineBonds.DetermineBondOrders(editable, charge=charge))
    if message:
        return None, (
            f"cannot determine bond orders from the 3D coordinates for total charge {charge}: {message} "
            "(give a template SMILES or the total charge)"
        )
    return editable.GetMol(), None


def read_pdb(
    lines: Iterable[Line],
    path: str,
    *,
    template_smiles: str | None = None,
    total_charge: int | None = None,
    start_index: int = 0,
) -> Iterator[Record]:
    """Yield one :class:`Record` per PDB record or model (see the module docstring).

    Raises :class:`UsageError` (before reading anything) when ``template_smiles`` is not valid SMILES. Bad
    records become unreadable records.
    """
    template = parse_template(template_smiles) if template_smiles is not None else None
    return _read(lines, display_path(path), template, total_charge, start_index)


def _read(
    lines: Iterable[Line],
    shown: str,
    template: Chem.Mol | None,
    total_charge: int | None,
    start_index: int,
) -> Iterator[Record]:
    record = 0
    file_name: str | None = None
    for block in split_at_terminators(lines, is_terminator):
        names = {record_name(text) for text in block.lines}
        structural = names & {"ATOM", "HETATM", "CONECT"}
        if block.problem is None and not structural and names <= HEADER_RECORDS | {""}:
            continue
        record += 1
        line = block.first_content_line()
        meta: dict[str, Any] = {}
        name: str | None = None
        if block.problem is not None:
            result = ParseResult(None, block.problem)
        elif not names & {"ATOM", "HETATM"}:
            result = ParseResult(
                None, _no_atoms_reason(block.lines, line - block.first_line, names)
            )
        else:
            result, meta = parse_pdb_block(
                block.lines,
                first_line=block.first_line,
                template=template,
                total_charge=total_charge,
            )
            name = _compound_name(block.lines)
            if name is not None and file_name is None:
                file_name = name
            model = _model_number(block.lines)
            if name is None and model is not None and file_name is not None:
                name = f"{file_name} (model {model})"
        yield make_record(
            index=start_index + record - 1,
            path=shown,
            record=record,
            line=line,
            name=clean_name(name, record) if name is not None else default_name(record),
            result=result,
            meta=meta,
        )


def _no_atoms_reason(lines: list[str], first: int, names: set[str]) -> str:
    if "CONECT" in names:
        return (
            "CONECT records but no ATOM/HETATM records; CONECT records after the last ENDMDL are not "
            "applied to the models above (give each model its own CONECT records)"
        )
    return (
        f"no ATOM/HETATM records; the text starts {lines[first].strip()[:40]!r}, not a PDB record"
    )


def _compound_name(lines: list[str]) -> str | None:
    for text in lines:
        if record_name(text) == "COMPND" and text[10:].strip():
            return text[10:].strip()
    return None


def _model_number(lines: list[str]) -> str | None:
    for text in lines:
        if record_name(text) == "MODEL":
            return text[6:].strip() or None
    return None
