"""The report stage: every file and screen a user reads.

JSON of an analysis and of a sweep (with their schemas), HTML pages (one Jinja2
environment) and A4 PDF pages of an analysis, a sweep and a batch, the figures
they share, SigMF annotations, decisions and frames as text, the terminal
summaries and progress bar; where the reports go and writing them atomically.

Modules: ``_json`` and ``_sweep`` (JSON), ``_html``, ``_pdf``, ``_figures``,
``_style`` (words, colours, number formats), ``_annotate``, ``_bits``,
``_terminal``, ``_files`` (paths, checks, atomic writes) and ``_outputs``
(every file of a command, rendered before any is written).
"""

from ._files import (
    base_name, check_output, input_files, output_paths, parse_formats, report_paths, write_all,
)
from ._json import SCHEMA_PATH, build_report, dumps
from ._outputs import analysis_files, batch_files, sweep_files
from ._style import failed_check_names
from ._sweep import sweep_report
from ._terminal import Progress, print_batch_summary, print_summary, print_sweep_summary

__all__ = [
    "base_name", "check_output", "input_files", "output_paths", "parse_formats",
    "report_paths", "write_all", "SCHEMA_PATH", "build_report", "dumps", "analysis_files", "batch_files",
    "sweep_files", "failed_check_names", "sweep_report", "Progress", "print_batch_summary", "print_summary",
    "print_sweep_summary",
]
