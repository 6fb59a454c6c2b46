"""Errors and warnings shared by every stage.

Every problem with the user's input (files, options, spec) is raised as
:class:`InputError`; the command line turns it into one line
``error: FILE: what is wrong; what to do`` and exit code 2.  Anything else that
escapes is a bug in tonepair and is shown with a traceback only under ``--debug``.
"""

from __future__ import annotations

import warnings
from pathlib import Path


class InputError(Exception):
    """An input file or option that tonepair cannot use.

    Parameters
    ----------
    problem : str
        What is wrong, in plain words.
    path : str or Path, optional
        The file concerned (omitted for pure option errors).
    hint : str, optional
        What the user can do about it.
    """

    def __init__(self, problem: str, path: str | Path | None = None, hint: str | None = None):
        self.problem = problem
        self.path = None if path is None else str(path)
        self.hint = hint
        super().__init__(self.line())

    def line(self) -> str:
        """The one-line message, without the ``error:`` prefix."""
        parts = []
        if self.path:
            parts.append(f"{self.path}: ")
        parts.append(self.problem)
        if self.hint:
            parts.append(f"; {self.hint}")
        return "".join(parts)


class CaptureWarning(UserWarning):
    """Something about a capture the user should know, but which does not stop analysis."""


def warn(message: str) -> None:
    """Issue a :class:`CaptureWarning` (collected by the pipeline, printed as ``warning: ...``)."""
    warnings.warn(message, CaptureWarning, stacklevel=2)
