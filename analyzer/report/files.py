"""Writing report files safely: atomic replace, never over an input, never by surprise."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ..errors import InputError


def check_output(path: Path, inputs: list[Path], overwrite: bool) -> None:
    """Refuse an output path that is an input, or that exists (unless ``overwrite``)."""
    p = Path(path)
    for q in inputs:
        try:
            same = p.resolve() == Path(q).resolve()
        except OSError:
            same = False
        if same:
            raise InputError("an output path is the same file as an input", p,
                             "choose another --out/--json/--html name; inputs are never overwritten")
    if p.exists() and not overwrite:
        raise InputError("the output file exists already", p, "remove it, choose another name, or add --overwrite")
    parent = p.parent if str(p.parent) else Path(".")
    if parent.exists() and not parent.is_dir():
        raise InputError("the output folder is not a folder", parent, "choose another --out folder")
    # the nearest folder that exists must be a folder we can write in (it is created below it)
    up = parent
    while not up.exists() and up != up.parent:
        up = up.parent
    if up.exists() and not up.is_dir():
        raise InputError(f"cannot create the output folder: {up} is a file, not a folder", parent,
                         "choose another --out folder")
    if up.is_dir() and not os.access(up, os.W_OK | os.X_OK):
        raise InputError("the output folder cannot be written", up, "choose a writable --out folder")
    if p.exists() and p.is_dir():
        raise InputError("the output path is a folder", p, "name a file for --json/--html")


def umask_mode() -> int:
    """The mode a new file gets here (0666 less the process umask), as any file a user makes."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def write_atomic(path: Path, data: bytes | str) -> Path:
    """Write ``data`` to a temporary file beside ``path``, then rename it into place."""
    p = Path(path)
    try:
        p.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder ({exc.strerror or exc})", p.parent,
                         "choose a writable --out folder") from None
    raw = data.encode("utf-8") if isinstance(data, str) else data
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=p.parent)
    except OSError as exc:
        raise InputError(f"cannot write in the output folder ({exc.strerror or exc})", p.parent,
                         "choose a writable --out folder") from None
    try:
        os.fchmod(fd, umask_mode())           # a temporary file is made 0600; the report is not private
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return p
