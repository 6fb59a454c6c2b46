"""The report stage: JSON (with its schema), HTML, figures and the terminal summary."""

from .json_report import build_report, SCHEMA_PATH  # noqa: F401
