"""File output at the edge: deterministic JSON text and all-or-nothing folder writes."""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

from stillhook.errors import InputFileError


def to_json(obj) -> str:
    """Deterministic JSON text (indent 2, no NaN, trailing newline)."""
    try:
        return json.dumps(obj, indent=2, allow_nan=False) + "\n"
    except ValueError as exc:  # NaN or inf in results is a bug upstream, say so plainly
        raise ValueError(f"result is not finite and cannot be written as JSON: {exc}") from None


def write_files(out_dir: str | Path, files: dict[str, str | bytes]) -> list[Path]:
    """Write ``{relative name: text or bytes}`` into out_dir, all or nothing.

    Everything is first written into a temporary folder beside out_dir, then each file is moved
    into place (creating out_dir and sub-folders). A failure before the moves leaves out_dir as it
    was. Returns the written paths in the order given.
    """
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputFileError(f"output path {str(out)!r} exists and is not a folder")
    parent = out.resolve().parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=".stillhook-", dir=parent))
    except OSError as exc:
        raise InputFileError(f"cannot write to {str(parent)!r}: {exc.strerror}") from None
    try:
        for name, content in files.items():
            rel = Path(name)
            if rel.is_absolute() or ".." in rel.parts:
                raise ValueError(f"output name {name!r} must be a relative path inside the folder")
            p = tmp / rel
            p.parent.mkdir(parents=True, exist_ok=True)
            data = content.encode("utf-8") if isinstance(content, str) else content
            p.write_bytes(data)
        out.mkdir(parents=True, exist_ok=True)
        written = []
        for name in files:
            dest = out / name
            dest.parent.mkdir(parents=True, exist_ok=True)
            os.replace(tmp / name, dest)
            written.append(dest)
        return written
    except OSError as exc:
        raise InputFileError(f"cannot write to {str(out)!r}: {exc.strerror or exc}") from None
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def check_out_dir(out_dir) -> None:
    """Refuse early (before any work) an output path that exists and is not a folder."""
    p = Path(out_dir)
    if p.exists() and not p.is_dir():
        raise InputFileError(f"output path {str(p)!r} exists and is not a folder; allowed: a folder or a new path")
