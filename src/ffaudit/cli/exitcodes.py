"""Exit codes of the ``ffaudit`` command (documented in README)."""

OK = 0
"""The run meets the policy (``--fail-on``, ``--min-score``; for lint: no errors)."""
POLICY_FAILED = 1
"""The run completed but does not meet the policy."""
USAGE_OR_INPUT = 2
"""Usage error, or a parameter set or input file that cannot be read at all."""
