"""Where reports go and writing them safely: atomic replace, never over an input, never by surprise."""

from __future__ import annotations

import os
from pathlib import Path

from ..capture import replace_atomically
from ..errors import InputError

#: The report formats every command can write; the default set.
FORMATS = ("json", "html", "pdf")
DEFAULT_FORMATS = ("json", "html")


def base_name(capture: Path, name: str | None = None) -> str:
    """The base name of a capture's reports: ``name`` if given, else the capture's name less its suffix."""
    if name:
        return name
    capture = Path(capture)
    if capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        return capture.name[:-len(".sigmf-meta")]
    return capture.stem


def input_files(capture: Path) -> list[Path]:
    """The files a capture is made of (both halves of a SigMF recording), which no report may replace."""
    p = Path(capture)
    out = [p]
    if p.name.endswith(".sigmf-meta"):
        out.append(p.with_name(p.name[:-len("meta")] + "data"))
    elif p.name.endswith(".sigmf-data"):
        out.append(p.with_name(p.name[:-len("data")] + "meta"))
    elif not p.exists():                       # the base name of a SigMF recording
        out += [p.with_name(p.name + ".sigmf-meta"), p.with_name(p.name + ".sigmf-data")]
    return out


def parse_formats(text: str | None, overrides: dict[str, Path | None] | None = None) -> tuple[str, ...]:
    """The formats of ``--formats json,html,pdf`` (default json,html), plus any named by --json/--html/--pdf."""
    if text is None:
        chosen = list(DEFAULT_FORMATS)
    else:
        chosen = [t.strip().lower() for t in text.split(",") if t.strip()]
        bad = [t for t in chosen if t not in FORMATS]
        if bad or not chosen:
            raise InputError(f"unknown report format {', '.join(bad) or repr(text)}", None,
                             "--formats takes a comma list of json, html, pdf (for example --formats json)")
    for k, v in (overrides or {}).items():
        if v is not None and k not in chosen:
            chosen.append(k)
    return tuple(k for k in FORMATS if k in chosen)


def output_paths(out: Path, base: str, formats: tuple[str, ...],
                 overrides: dict[str, Path | None] | None = None) -> dict[str, Path]:
    """OUT/BASE.EXT for each format, unless --json/--html/--pdf names the file."""
    ov = overrides or {}
    return {k: (ov.get(k) or Path(out) / f"{base}.{k}") for k in formats}


def report_paths(capture: Path, out: Path, name: str | None, json_path: Path | None,
                 html_path: Path | None, pdf_path: Path | None = None,
                 annotate: bool = False, formats: tuple[str, ...] | None = None, bits_path: Path | None = None,
                 frames_path: Path | None = None) -> dict[str, Path]:
    """Where each report of one capture goes (annotated SigMF metadata, decisions and frames only when asked for)."""
    overrides = {"json": json_path, "html": html_path, "pdf": pdf_path}
    formats = parse_formats(None, overrides) if formats is None else formats
    paths = output_paths(out, base_name(capture, name), formats, overrides)
    if annotate:
        paths["annotated"] = Path(out) / f"{base_name(capture, name)}.annotated.sigmf-meta"
    if bits_path is not None:
        paths["bits"] = bits_path
    if frames_path is not None:
        paths["frames"] = frames_path
    return paths


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


def _write_one(path: Path, data: bytes | str) -> Path:
    raw = data.encode("utf-8") if isinstance(data, str) else data
    return replace_atomically(path, lambda tmp: tmp.write_bytes(raw), hint="choose a writable --out folder")


def write_all(items: list[tuple[Path, bytes | str]]) -> list[Path]:
    """Write every (path, data) atomically; on any failure remove those already written."""
    written: list[Path] = []
    try:
        for path, data in items:
            written.append(_write_one(path, data))
    except BaseException:
        for p in written:
            Path(p).unlink(missing_ok=True)
        raise
    return written
