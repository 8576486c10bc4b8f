"""Compile an emitted folder for Python with cffi (API mode), for checks and software-in-the-loop runs.

``load_emitted(folder, build_dir)`` compiles the runtime and the tables of one or more emitted
folders into one extension module and returns a :class:`CRuntime` per prefix, whose methods run
the compiled C on numpy arrays. Needs a C compiler (cffi uses the one Python was built with).

Example::

    rt = load_emitted(["out"], tmp)["sway"]
    y = rt.shaper_run(x_q15, rows)      # the C shaper, state kept between calls
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import re
from pathlib import Path

import cffi
import numpy as np

from stillhook.errors import EmitError
from stillhook.firmware.qformat import SAMPLE_C_TYPES, WIDE_C_TYPES
from stillhook.firmware.runtime import RUNTIME_FILES, runtime_dir

__all__ = ["CRuntime", "load_emitted", "runtime_cdef"]

#: Runtime headers whose declarations cffi needs, in include order.
_CDEF_HEADERS = ("shk_fixed.h", "shk_schedule.h", "shk_shaper.h", "shk_biquad.h", "shk_feedback.h")


def runtime_cdef(folder: Path | None = None) -> str:
    """cffi declarations read from the runtime headers themselves (one source of truth).

    Comments, preprocessor lines (with their continuations), static asserts and ``static inline``
    function bodies are dropped; what remains are the typedefs and prototypes. cffi's API mode
    then checks them against the real headers when it compiles.
    """

    base = Path(folder) if folder is not None else Path(str(runtime_dir()))
    out = []
    for name in _CDEF_HEADERS:
        text = (base / name).read_text()
        text = re.sub(r"/\*.*?\*/", "", text, flags=re.S)
        # array sizes given by a numeric #define (e.g. SHK_FB_MAX_OBS) become the number for cffi
        for macro, value in re.findall(r"^#define\s+(\w+)\s+(\d+)\s*$", text, flags=re.M):
            text = text.replace(f"[{macro}]", f"[{value}]")
        kept, continued = [], False
        for line in text.splitlines():
            drop = continued or line.lstrip().startswith(("#", "SHK_STATIC_ASSERT"))
            continued = drop and line.rstrip().endswith("\\")
            if not drop:
                kept.append(line)
        text = "\n".join(kept)
        while (m := re.search(r"static\s+inline[^;{]*\{", text)) is not None:
            depth, i = 1, m.end()
            while depth:
                depth += {"{": 1, "}": -1}.get(text[i], 0)
                i += 1
            text = text[: m.start()] + text[i:]
        out.append(text.strip())
    return "\n".join(out) + "\n"

_NPTYPE = {"q15": np.int16, "q31": np.int32}


def _table_getters(manifest: dict) -> list[tuple[str, str]]:
    """(C type, symbol) of each table a prefix exports; cffi reaches them through getter functions
    (it copies ``extern const`` objects instead of giving their address)."""
    p, f = manifest["prefix"], manifest["format"]
    out = [(f"shk_shaper_{f}_table_t", f"{p}_shaper_table"), ("shk_schedule_t", f"{p}_schedule")]
    if "notch" in manifest:
        out.append((f"shk_biquad_{manifest['notch']['format']}_table_t", f"{p}_notch_table"))
    return out


def _getter_decls(manifest: dict) -> str:
    return "".join(f"const {t} *{name}_ptr(void);\n" for t, name in _table_getters(manifest))


def _getter_defs(manifest: dict) -> str:
    return "".join(f"const {t} *{name}_ptr(void) {{ return &{name}; }}\n" for t, name in _table_getters(manifest))


class CRuntime:
    """The compiled C for one emitted prefix: shaper, lookup and notch on numpy arrays.

    Attributes
    ----------
    ffi, lib : the cffi objects (all runtime functions and the prefix's tables).
    manifest : dict
        The folder's manifest.json.
    """

    def __init__(self, ffi, lib, manifest: dict):
        self.ffi, self.lib, self.manifest = ffi, lib, manifest
        self.prefix, self.fmt = manifest["prefix"], manifest["format"]
        self.reset()

    def reset(self) -> None:
        """Fresh instances (accumulator ring, remainder and notch state zeroed by init)."""
        ffi, lib, p, f = self.ffi, self.lib, self.prefix, self.fmt
        self._shaper = ffi.new(f"shk_shaper_{f}_t *")
        n = self.manifest["ring_len"]
        self._ring = ffi.new(f"{WIDE_C_TYPES[f]}[]", n)
        table = getattr(lib, f"{p}_shaper_table_ptr")()
        st = getattr(lib, f"shk_shaper_{f}_init")(self._shaper, table, self._ring, n)
        if st != 0:
            raise EmitError(f"shaper init returned status {st}")
        self._notch = None
        if "notch" in self.manifest:
            nf = self.manifest["notch"]["format"]
            self._notch = ffi.new(f"shk_biquad_{nf}_t *")
            self._state = ffi.new(f"{SAMPLE_C_TYPES[nf]}[]", 4 * self.manifest["notch"]["stages"])
            st = getattr(lib, f"shk_biquad_{nf}_init")(self._notch, getattr(lib, f"{p}_notch_table_ptr")(),
                                                       self._state, 4 * self.manifest["notch"]["stages"])
            if st != 0:
                raise EmitError(f"notch init returned status {st}")

    def lookup(self, lengths) -> tuple[np.ndarray, np.ndarray]:
        """(rows, status) of shk_schedule_lookup for each uint32 count."""
        sched = getattr(self.lib, f"{self.prefix}_schedule_ptr")()
        row = self.ffi.new("uint32_t *")
        rows, status = [], []
        for L in np.asarray(lengths, dtype=np.int64):
            status.append(self.lib.shk_schedule_lookup(sched, int(L), row))
            rows.append(row[0])
        return np.array(rows, dtype=np.int64), np.array(status, dtype=np.int64)

    @property
    def clipped(self) -> int:
        """Outputs the C shaper clamped since the last reset (the instance's ``clipped``)."""
        return int(self._shaper.clipped)

    @property
    def remainder(self) -> int:
        """The C shaper's carried rounding remainder e (units 2^-F LSB)."""
        return int(self._shaper.remainder)

    def select(self, row: int) -> int:
        return getattr(self.lib, f"shk_shaper_{self.fmt}_select")(self._shaper, int(row))

    def shaper_block(self, x) -> np.ndarray:
        """The C block function over x with the selected row."""
        xs = np.ascontiguousarray(x, dtype=_NPTYPE[self.fmt])
        y = np.empty_like(xs)
        f = self.fmt
        getattr(self.lib, f"shk_shaper_{f}_block")(self._shaper, self.ffi.from_buffer(f"{SAMPLE_C_TYPES[f]}[]", xs),
                                                    self.ffi.from_buffer(f"{SAMPLE_C_TYPES[f]}[]", y), xs.size)
        return y.astype(np.int64)

    def shaper_run(self, x, rows) -> np.ndarray:
        """Step the C shaper: row ``rows[k]`` selected before sample k (blocks between switches)."""
        xs = np.asarray(x, dtype=np.int64)
        r = np.broadcast_to(np.asarray(rows, dtype=np.int64), xs.shape)
        out = np.empty(xs.size, dtype=np.int64)
        start = 0
        for k in range(1, xs.size + 1):
            if k == xs.size or r[k] != r[start]:
                if self.select(int(r[start])) != 0:
                    raise EmitError(f"row {int(r[start])} rejected by the C shaper")
                out[start:k] = self.shaper_block(xs[start:k])
                start = k
        return out

    def notch_block(self, x) -> np.ndarray:
        """The C notch cascade over x (state kept between calls)."""
        nf = self.manifest["notch"]["format"]
        xs = np.ascontiguousarray(x, dtype=_NPTYPE[nf])
        y = np.empty_like(xs)
        getattr(self.lib, f"shk_biquad_{nf}_block")(self._notch, self.ffi.from_buffer(f"{SAMPLE_C_TYPES[nf]}[]", xs),
                                                    self.ffi.from_buffer(f"{SAMPLE_C_TYPES[nf]}[]", y), xs.size)
        return y.astype(np.int64)


def load_emitted(folders, build_dir, *, extra_compile_args=("-std=c99", "-O1")) -> dict[str, CRuntime]:
    """Compile emitted folders (same runtime, distinct prefixes) into one module.

    Parameters
    ----------
    folders : sequence of path
        Emitted folders; the runtime is taken from the first.
    build_dir : path
        Scratch folder for the build (e.g. a pytest tmp_path).

    Returns
    -------
    dict prefix -> CRuntime
    """
    folders = [Path(f) for f in folders]
    manifests = [json.loads((f / "manifest.json").read_text(encoding="utf-8")) for f in folders]
    prefixes = [m["prefix"] for m in manifests]
    if len(set(prefixes)) != len(prefixes):
        raise EmitError(f"folders must have distinct prefixes, got {prefixes}")
    header = "".join(f'#include "{n}"\n' for n in RUNTIME_FILES if n.endswith(".h"))
    header += "".join(f'#include "{m["prefix"]}_tables.h"\n' for m in manifests)
    header += "".join(_getter_defs(m) for m in manifests)
    sources = [str(folders[0] / n) for n in RUNTIME_FILES if n.endswith(".c")]
    sources += [str(f / f"{m['prefix']}_tables.c") for f, m in zip(folders, manifests, strict=True)]
    digest = hashlib.sha256("".join(Path(s).read_text() for s in sources).encode()).hexdigest()[:12]
    name = f"_stillhook_c_{digest}"
    ffi = cffi.FFI()
    ffi.cdef(runtime_cdef(folders[0]) + "".join(_getter_decls(m) for m in manifests))
    ffi.set_source(name, header, sources=sources, include_dirs=[str(f) for f in folders],
                   extra_compile_args=list(extra_compile_args))
    path = ffi.compile(tmpdir=str(build_dir), verbose=False)
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return {m["prefix"]: CRuntime(module.ffi, module.lib, m) for m in manifests}
