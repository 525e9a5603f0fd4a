"""Parameter sets read from a git revision: ``git:REV:path``.

``git:REV:path`` means the bytes ``git show REV:path`` prints, so ``path`` follows git's own rule: relative to
the repository's top directory, or to the directory git runs in when written ``./path`` or ``../path``. Git
runs in ``repo`` when given (the ``--repo`` option of ``ffaudit compare``), else in the current directory;
either way it finds the repository containing that directory, as git always does.

The bytes are written to a temporary file that is loaded like any other set and then removed; every location
in the loaded set (entries, classes, sources, ``paths``) and every finding names ``git:REV:path`` instead of
the temporary file, so reports point at the revision a CI job compared against.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from dataclasses import replace
from pathlib import Path

from ffaudit.errors import ParameterSetError
from ffaudit.findings import Finding, Severity
from ffaudit.paramset.load import load_parameter_set
from ffaudit.paramset.model import EnvClass, ParameterSet, SourceLocation

PREFIX = "git:"


def is_git_spec(spec: str) -> bool:
    """True for ``git:REV:path`` (a ``git:`` prefix, a revision and a path)."""
    if not spec.startswith(PREFIX):
        return False
    rev, sep, path = spec[len(PREFIX) :].partition(":")
    return bool(rev and sep and path)


def read_git_bytes(spec: str, repo: str | os.PathLike[str] | None = None) -> bytes:
    """The bytes of ``git show REV:path`` for ``spec`` = ``git:REV:path``.

    Raises :class:`ParameterSetError` (exit code 2 on the command line) naming ``spec`` when the spec is
    malformed, git is not installed, ``repo`` is not a directory, or git fails (no repository, unknown
    revision, no such path in it); git's own message is quoted.
    """
    if not is_git_spec(spec):
        raise _error(spec, f"{spec!r} is not of the form git:REV:path")
    rev, _sep, path = spec[len(PREFIX) :].partition(":")
    git = shutil.which("git")
    if git is None:
        raise _error(spec, f"cannot read {spec}: git is not installed (not found on PATH)")
    where = os.fspath(repo) if repo is not None else os.getcwd()
    if not os.path.isdir(where):
        raise _error(spec, f"cannot read {spec}: repository directory {where} does not exist")
    try:
        done = subprocess.run(
            [git, "-C", where, "show", f"{rev}:{path}"],
            capture_output=True,
            check=False,
            timeout=60,
        )
    except (OSError, subprocess.TimeoutExpired) as exc:
        raise _error(spec, f"cannot read {spec}: running git failed: {exc}") from exc
    if done.returncode != 0:
        reason = done.stderr.decode("utf-8", "replace").strip() or f"exit code {done.returncode}"
        raise _error(spec, f"cannot read {spec} (git show in {where}): {reason}")
    return done.stdout


def load_set_spec(spec: str, repo: str | os.PathLike[str] | None = None) -> ParameterSet:
    """Load ``spec``: ``git:REV:path``, or anything :func:`load_parameter_set` takes (path, embedded name).

    Raises :class:`ParameterSetError` as :func:`read_git_bytes` and :func:`load_parameter_set` do; the
    findings of a set read from git name ``git:REV:path``.
    """
    if not is_git_spec(spec):
        return load_parameter_set(spec)
    data = read_git_bytes(spec, repo)
    with tempfile.TemporaryDirectory(prefix="ffaudit-git-") as tmp:
        file = Path(tmp) / "set.yaml"
        file.write_bytes(data)
        shown = str(file)
        try:
            pset = load_parameter_set(shown)
        except ParameterSetError as exc:
            findings = [_relabel_finding(f, shown, spec) for f in exc.findings]
            raise ParameterSetError(str(exc.args[0]).replace(shown, spec), findings) from None
    return relabel(pset, shown, spec)


def _error(spec: str, message: str) -> ParameterSetError:
    finding = Finding(code="missing-file", severity=Severity.ERROR, message=message, path=spec)
    return ParameterSetError(message, [finding])


def _relabel_finding(finding: Finding, old: str, new: str) -> Finding:
    path = new if finding.path == old else finding.path
    return finding.with_(path=path, message=finding.message.replace(old, new))


def _loc(where: SourceLocation | None, old: str, new: str) -> SourceLocation | None:
    if where is None or where.path != old:
        return where
    return replace(where, path=new)


def _class(cls: EnvClass, old: str, new: str) -> EnvClass:
    return replace(
        cls,
        location=_loc(cls.location, old, new),
        smarts_locations=tuple(_loc(s, old, new) for s in cls.smarts_locations),
    )


def relabel(pset: ParameterSet, old: str, new: str) -> ParameterSet:
    """``pset`` with every location whose path is ``old`` renamed to ``new`` (pure function)."""
    tables = {
        kind: {
            key: replace(entry, location=_loc(entry.location, old, new) or entry.location)
            for key, entry in table.items()
        }
        for kind, table in pset.tables.items()
    }
    sources = {
        key: replace(source, location=_loc(source.location, old, new))
        for key, source in pset.sources.items()
    }
    return replace(
        pset,
        tables=tables,
        sources=sources,
        classes=tuple(_class(c, old, new) for c in pset.classes),
        paths=tuple(new if p == old else p for p in pset.paths),
    )
