"""Compile emitted Structured Text with matiec's iec2c and run its function blocks from Python.

iec2c (an IEC 61131-3 compiler, a test tool only: built from ../shared/tools/matiec, never part of the
repository) is found through the environment variable STILLHOOK_IEC2C or on the PATH; its C library
is ``lib/`` beside the executable. Where it is absent the tests skip with that reason, unless
STILLHOOK_REQUIRE_IEC2C=1 (CI), which turns the skip into a failure.

The harness is generated from the blocks' interfaces: for each FB a loop reads one int64 per input,
sets the inputs, calls ``<FB>_body__`` once (one PLC cycle) and writes one int64 per output. It is
built with gcc and -fsanitize=undefined without recovery, so a signed overflow anywhere in the
translated ST stops the run.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

IEC2C_ENV = "STILLHOOK_IEC2C"
REQUIRE_ENV = "STILLHOOK_REQUIRE_IEC2C"


def find_iec2c() -> Path | None:
    given = os.environ.get(IEC2C_ENV)
    if given:
        return Path(given) if Path(given).is_file() else None
    found = shutil.which("iec2c")
    return Path(found) if found else None


def require_iec2c() -> Path:
    """The iec2c path, or skip (fail when STILLHOOK_REQUIRE_IEC2C=1) with the reason."""
    path = find_iec2c()
    if path is not None and (path.parent / "lib" / "C" / "iec_std_lib.h").is_file() and shutil.which("gcc"):
        return path
    why = (f"matiec's iec2c not found (set {IEC2C_ENV} or put iec2c on PATH, with lib/ beside it; build it with "
           "../shared/tools/matiec/build.sh) or gcc missing")
    if os.environ.get(REQUIRE_ENV) == "1":
        pytest.fail(why + f"; {REQUIRE_ENV}=1 makes this a failure")
    pytest.skip(why)


def iec2c(st_file: Path, out_dir: Path) -> subprocess.CompletedProcess:
    """Translate ``st_file`` to C in ``out_dir`` (POUS.c, POUS.h); returns the finished process."""
    exe = require_iec2c()
    out_dir.mkdir(parents=True, exist_ok=True)
    return subprocess.run([str(exe), "-I", str(exe.parent / "lib"), "-T", str(out_dir), str(st_file)],
                          capture_output=True, text=True, timeout=120)


def _harness(blocks) -> str:
    out = ["#include <stdio.h>", "#include <stdint.h>", "#include <string.h>", '#include "iec_std_lib.h"',
           "TIME __CURRENT_TIME;", "BOOL __DEBUG;", '#include "POUS.h"', '#include "POUS.c"', "",
           "int main(int argc, char **argv)", "{",
           "    FILE *fi;", "    FILE *fo;", "    int64_t in[16];", "    int64_t out[16];",
           "    if (argc != 4) { return 2; }",
           '    fi = fopen(argv[1], "rb");', '    fo = fopen(argv[2], "wb");',
           "    if (fi == NULL || fo == NULL) { return 2; }"]
    for b in blocks:
        name = b.pou.name.upper()
        types = {v.name: v.type for s in ("VAR_INPUT", "VAR_OUTPUT") for v in b.pou.variables(s)}
        out += [f'    if (strcmp(argv[3], "{name}") == 0) {{',
                f"        static {name} fb;", "        memset(&fb, 0, sizeof fb);", f"        {name}_init__(&fb, 0);",
                f"        while (fread(in, sizeof(int64_t), {len(b.inputs)}u, fi) == {len(b.inputs)}u) {{"]
        out += [f"            __SET_VAR(fb.,{v.upper()},,({types[v]})in[{i}]);" for i, v in enumerate(b.inputs)]
        out += [f"            {name}_body__(&fb);"]
        out += [f"            out[{i}] = (int64_t)__GET_VAR(fb.{v.upper()},);" for i, v in enumerate(b.outputs)]
        out += [f"            fwrite(out, sizeof(int64_t), {len(b.outputs)}u, fo);", "        }", "    }"]
    out += ["    fclose(fi);", "    fclose(fo);", "    return 0;", "}", ""]
    return "\n".join(out)


def build_harness(st_file: Path, blocks, work: Path) -> Path:
    """iec2c + gcc (UBSan, no recovery): the path of a program ``prog IN OUT FBNAME``."""
    exe = require_iec2c()
    res = iec2c(st_file, work / "c")
    assert res.returncode == 0, f"iec2c refused {st_file.name}:\n{res.stdout}\n{res.stderr}"
    src = work / "harness.c"
    src.write_text(_harness(blocks))
    prog = work / "harness"
    cmd = ["gcc", "-std=gnu99", "-O1", "-w", "-fsanitize=undefined", "-fno-sanitize-recover=all",
           "-I", str(exe.parent / "lib" / "C"), "-I", str(work / "c"), str(src), "-o", str(prog), "-lm"]
    res = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert res.returncode == 0, f"gcc failed on the iec2c output:\n{res.stderr[-4000:]}"
    return prog


def run_fb(prog: Path, block, inputs: np.ndarray, work: Path) -> np.ndarray:
    """Feed ``inputs`` (cycles x len(block.inputs)) through the compiled FB; (cycles x outputs) int64."""
    a = np.ascontiguousarray(np.asarray(inputs, dtype=np.int64))
    assert a.ndim == 2 and a.shape[1] == len(block.inputs)
    fin, fout = work / f"{block.key}.in", work / f"{block.key}.out"
    a.tofile(fin)
    res = subprocess.run([str(prog), str(fin), str(fout), block.pou.name.upper()], capture_output=True, text=True,
                         timeout=120)
    assert res.returncode == 0, f"harness failed (UBSan stops on signed overflow):\n{res.stderr[-2000:]}"
    return np.fromfile(fout, dtype=np.int64).reshape(-1, len(block.outputs))
