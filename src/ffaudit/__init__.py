"""ffaudit: audit force-field parameter coverage of compound libraries.

Python API::

    from ffaudit import load_parameter_set, audit_molecule, audit_library

    pset = load_parameter_set()                 # the embedded demonstration set "generic-organic"
    result = audit_molecule("CCO", pset)        # a MoleculeAudit
    for audit in audit_library("library.sdf", pset):
        print(audit.record.name, audit.status, audit.score)
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

__all__ = ["__version__", "audit_library", "audit_molecule", "load_parameter_set"]

if TYPE_CHECKING:
    from ffaudit.audit import audit_library, audit_molecule
    from ffaudit.paramset.load import load_parameter_set


def __getattr__(name: str) -> Any:
    # Lazy so that `import ffaudit` (and the CLI's --help) does not import RDKit.
    if name in ("audit_molecule", "audit_library"):
        from ffaudit import audit

        return getattr(audit, name)
    if name == "load_parameter_set":
        from ffaudit.paramset.load import load_parameter_set

        return load_parameter_set
    raise AttributeError(name)
