"""The file named as a capture: checks every opener makes, JSON documents, a sidecar truth file."""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import InputError, warn

__all__: list[str] = []


def _load_json(path: Path, what: str) -> dict:
    try:
        with open(path, "rb") as fp:
            doc = json.loads(fp.read().decode("utf-8"))
    except UnicodeDecodeError:
        raise InputError(f"{what} is not UTF-8 text", path, "check that this is the right file") from None
    except json.JSONDecodeError as exc:
        raise InputError(f"{what} is not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})",
                         path, "repair the JSON or write the file again") from None
    except OSError as exc:
        raise InputError(f"cannot read {what}: {exc.strerror}", path, "check the file permissions") from None
    if not isinstance(doc, dict):
        raise InputError(f"{what} is not a JSON object", path, "check that this is the right file")
    return doc


def _sidecar_truth(*paths: Path) -> dict | None:
    for p in paths:
        side = p.with_name(p.name + ".truth.json")
        if side.is_file():
            try:
                doc = json.loads(side.read_text(encoding="utf-8"))
            except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
                warn(f"{side}: truth file ignored, it cannot be read ({exc})")
                continue
            if isinstance(doc, dict):
                return doc
            warn(f"{side}: truth file ignored, it is not a JSON object")
    return None


def _check_file(path: Path) -> None:
    if path.is_dir():
        raise InputError("is a folder, not a capture file", path, "name one capture file")
    if not path.exists():
        raise InputError("file not found", path, "check the name and folder")
    if not path.is_file():
        raise InputError("is not a regular file", path, "name a capture file")


def _ignored_options(path: Path, rate, fmt, what: str) -> None:
    if rate is not None or fmt is not None:
        warn(f"{path}: --rate/--format ignored, the {what} file gives its own sample rate and format")

