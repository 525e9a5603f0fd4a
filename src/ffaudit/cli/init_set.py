"""``ffaudit init-set PATH``: write the embedded default set out as a starting point for one's own."""

from __future__ import annotations

import argparse
import shutil
from pathlib import Path
from typing import Any, TextIO

from ffaudit.cli import exitcodes
from ffaudit.errors import UsageError


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "init-set", help="write the default parameter set to PATH as a starting point"
    )
    p.add_argument("path", metavar="PATH")
    p.add_argument("--from", dest="name", default="generic-organic", help="embedded set to copy")
    p.add_argument("--force", action="store_true", help="overwrite an existing file")
    p.set_defaults(run=run)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.paramset.load import embedded_set_path

    target = Path(args.path)
    if target.exists() and not args.force:
        raise UsageError(f"{target} exists; use --force to overwrite it")
    shutil.copyfile(embedded_set_path(args.name), target)
    print(
        f"wrote {target} (a copy of the embedded set {args.name!r}; rename it in its header)",
        file=stderr,
    )
    return exitcodes.OK
