"""``ffaudit`` command line: parse arguments -> ``run(args, stdout, stderr)`` -> exit code -> ``main``.

Each command is a module of this package with ``add_parser(subparsers)`` (which sets ``run`` as the parser's
default); modules are found by scanning the package, so adding a command is adding a module.
Reports go to stdout, diagnostics to stderr. Every :class:`ffaudit.errors.FfauditError` is printed as one
message (no traceback) with exit code 2.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence
from typing import TextIO

from ffaudit import __version__
from ffaudit.cli import exitcodes
from ffaudit.errors import FfauditError

ORDER: tuple[str, ...] = ("audit", "explain", "lint", "compare", "worklist", "report", "init_set")
"""Help order of the commands; any other command module found in this package comes after them."""


def command_modules() -> list[str]:
    """Names of the modules of this package that define a command (they have ``add_parser``)."""
    import pkgutil

    import ffaudit.cli as package

    found = []
    for info in pkgutil.iter_modules(package.__path__):
        module = importlib.import_module(f"ffaudit.cli.{info.name}")
        if hasattr(module, "add_parser"):
            found.append(info.name)
    return sorted(found, key=lambda n: (ORDER.index(n) if n in ORDER else len(ORDER), n))


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        raise _UsageExit(f"{self.prog}: error: {message}")


class _UsageExit(Exception):
    pass


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="ffaudit",
        description="Audit force-field parameter coverage of compound libraries.",
    )
    parser.add_argument("--version", action="version", version=f"ffaudit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for name in command_modules():
        module = importlib.import_module(f"ffaudit.cli.{name}")
        module.add_parser(sub)
    return parser


def run(argv: Sequence[str], stdout: TextIO, stderr: TextIO) -> int:
    """Run one command with explicit streams; returns the exit code (never raises for user errors)."""
    parser = build_parser()
    try:
        args = parser.parse_args(list(argv))
    except _UsageExit as exc:
        print(parser.format_usage().rstrip(), file=stderr)
        print(str(exc), file=stderr)
        return exitcodes.USAGE_OR_INPUT
    except SystemExit as exc:  # --help / --version
        return int(exc.code or 0)
    try:
        return int(args.run(args, stdout, stderr))
    except FfauditError as exc:
        print(f"ffaudit: error: {exc}", file=stderr)
        return exitcodes.USAGE_OR_INPUT
    except BrokenPipeError:
        return exitcodes.OK


def main(argv: Sequence[str] | None = None) -> int:
    """Console entry point; streams are resolved at call time so tests can replace them. The command's
    process gets ffaudit's allocator settings (:mod:`ffaudit.engine.allocator`), as its workers do."""
    from ffaudit.engine import allocator

    allocator.tune()
    return run(sys.argv[1:] if argv is None else argv, sys.stdout, sys.stderr)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
