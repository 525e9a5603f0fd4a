"""Options shared by several commands."""

from __future__ import annotations

import argparse

from ffaudit.paramset.model import ParameterSet


def positive_int(text: str) -> int:
    """An argparse ``type`` for counts: a whole number of at least 1.

    Raises ``argparse.ArgumentTypeError`` (argparse turns it into a usage error, exit 2) otherwise.
    """
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {value}")
    return value


def add_params_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--params",
        action="append",
        metavar="SET",
        help="parameter set: a YAML path or the name of an embedded set (default: generic-organic); "
        "repeat to layer sets, later ones extending and overriding earlier ones",
    )


def add_reader_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--input-format",
        metavar="FMT",
        help="input format, overriding the file extension (smi, csv, tsv, sdf, mol2, pdb)",
    )
    parser.add_argument("--smiles-column", metavar="NAME", help="SMILES column of a CSV/TSV file")
    parser.add_argument("--name-column", metavar="NAME", help="name column of a CSV/TSV file")


def reader_options(args: argparse.Namespace) -> dict[str, object]:
    options: dict[str, object] = {}
    if getattr(args, "smiles_column", None):
        options["smiles_column"] = args.smiles_column
    if getattr(args, "name_column", None):
        options["name_column"] = args.name_column
    return options


def load_params(args: argparse.Namespace) -> ParameterSet:
    from ffaudit.paramset.load import load_parameter_set

    return load_parameter_set(*(args.params or []))
