"""Size limits of the HTML report (kept apart so the command line can show them without jinja2)."""

DEFAULT_MAX_DETAIL = 1000
"""Molecules with gaps that get a drawing and their term list."""
DEFAULT_MAX_ROWS = 10000
"""Rows of the per-molecule table."""
