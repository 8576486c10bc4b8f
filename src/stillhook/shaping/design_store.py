"""Designs kept on disk between runs: every command after the first reuses the project's design.

``shaper``, ``compare``, ``sweep``, ``emit``, ``report`` and ``demo`` each need the same design of
a project, and a design costs seconds (hundreds of LPs). A finished design is pickled into
``<cache>/designs/<sha256>.pickle`` (``<cache>`` as for the simulator kernel:
``$STILLHOOK_CACHE_DIR`` or ``~/.cache/stillhook``), keyed by the SHA-256 of the design inputs
(envelope, drive and design sections, canonical JSON), every source file of the installed
stillhook package, and the numpy and scipy versions: a change to any of them designs afresh, so a
cached design is always the design this code would compute. Files are written to a temporary
name and renamed into place; an unreadable file is ignored and replaced.
``STILLHOOK_DESIGN_CACHE=off`` turns the disk cache off.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import pickle
import tempfile
from importlib import resources
from pathlib import Path

import numpy as np
import scipy

from stillhook.sim.kernel import cache_dir

__all__ = ["code_identity", "design_store_path", "load_or_make", "load_stored"]

_IDENTITY: list[str] = []


def code_identity() -> str:
    """SHA-256 over the package's source files (path and bytes, sorted) and the numpy/scipy versions."""
    if not _IDENTITY:
        h = hashlib.sha256(f"numpy {np.__version__} scipy {scipy.__version__}".encode())
        root = Path(str(resources.files("stillhook")))
        for path in sorted(root.rglob("*.py")):
            h.update(str(path.relative_to(root)).encode())
            h.update(path.read_bytes())
        _IDENTITY.append(h.hexdigest())
    return _IDENTITY[0]


def design_store_path(key: str) -> Path | None:
    """Cache file of the design with in-process key ``key``; None when the disk cache is off."""
    if os.environ.get("STILLHOOK_DESIGN_CACHE", "").lower() == "off":
        return None
    digest = hashlib.sha256((code_identity() + "\0" + key).encode()).hexdigest()
    return cache_dir() / "designs" / f"{digest}.pickle"


def load_stored(key: str):
    """The stored design for ``key``; None when there is none (or the store is off, or the file is unreadable)."""
    path = design_store_path(key)
    if path is not None and path.is_file():
        try:
            with open(path, "rb") as f:
                return pickle.load(f)
        except (OSError, EOFError, pickle.UnpicklingError, AttributeError, ImportError, TypeError):
            pass  # unreadable or from an incompatible object layout: design afresh and replace it
    return None


def load_or_make(key: str, make):
    """The cached design for ``key``, or ``make()`` stored for next time."""
    stored = load_stored(key)
    if stored is not None:
        return stored
    path = design_store_path(key)
    value = make()
    if path is not None:
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=".tmp")
            with os.fdopen(fd, "wb") as f:
                pickle.dump(value, f, protocol=pickle.HIGHEST_PROTOCOL)
            os.replace(tmp, path)
        except OSError:  # a read-only or full cache folder only costs the next run the design time
            with contextlib.suppress(OSError, NameError):
                os.unlink(tmp)
    return value
