"""The portable C runtime shipped in every emitted folder: its files, its version, where it lives.

The runtime sources are the repository's top-level ``codegen/`` folder. A wheel carries them as
package data (``stillhook/_codegen``); a development checkout finds the ``codegen/`` folder beside
the ``pyproject.toml`` that owns this package, by walking up from this file until it finds it.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from stillhook.errors import EmitError

__all__ = ["INSTANCE_BYTES_32BIT", "RUNTIME_FILES", "RUNTIME_VERSION", "runtime_dir", "runtime_sources"]

#: Runtime files copied verbatim from codegen/ into every emitted folder.
RUNTIME_FILES = ("shk_fixed.h", "shk_schedule.h", "shk_schedule.c", "shk_shaper.h", "shk_shaper.c",
                 "shk_biquad.h", "shk_biquad.c", "shk_feedback.h", "shk_feedback.c")
#: Must equal SHK_RUNTIME_VERSION in codegen/shk_fixed.h; the tables #error on a mismatch.
RUNTIME_VERSION = 2
#: Bytes of the runtime's instance structs on a 32-bit target (pointers 4 bytes): shaper, notch.
INSTANCE_BYTES_32BIT = {"shaper": 24, "notch": 8}


def _checkout_codegen() -> Path | None:
    """``codegen/`` beside the nearest enclosing folder that holds a ``pyproject.toml``."""
    for folder in Path(__file__).resolve().parents:
        if (folder / "pyproject.toml").is_file():
            candidate = folder / "codegen"
            return candidate if candidate.is_dir() else None
    return None


def runtime_dir():
    """Folder holding the C runtime sources (package data in a wheel, ``codegen/`` in a checkout)."""
    packaged = resources.files("stillhook") / "_codegen"
    if packaged.is_dir():
        return packaged
    repo = _checkout_codegen()
    if repo is not None:
        return repo
    raise EmitError("the C runtime sources are missing from this installation (looked for "
                    "stillhook/_codegen and a codegen/ folder beside the project's pyproject.toml); "
                    "reinstall stillhook")


def runtime_sources() -> dict[str, str]:
    """``{file name: text}`` of every runtime file, in RUNTIME_FILES order."""
    root = runtime_dir()
    return {name: (root / name).read_text(encoding="utf-8") for name in RUNTIME_FILES}
