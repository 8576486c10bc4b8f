"""The whole job on the built-in demo project: modes, design, comparison, sweep, firmware, self-test, report.

:func:`run_demo` builds the study (:func:`stillhook.report.study.build_study`), compiles and runs the emitted
host self-test with the system C compiler when there is one, and writes one folder at once::

    DIR/report.html, DIR/report.json, DIR/figures/*.png|svg
    DIR/firmware/   the emitted C tables, runtime, self-test source and manifest.json
    DIR/commissioning/  the sway logs, their identification, the fit and the calibrated project
"""

from __future__ import annotations

import os
import shlex
import shutil
import subprocess
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

from stillhook.errors import EmitError
from stillhook.outputs import check_out_dir, write_files
from stillhook.report.commissioning_demo import commission_demo, commissioning_files, finish_study, segment_figures
from stillhook.report.figure_data import frequency_map_data
from stillhook.report.figures import figure_files, submit_figures
from stillhook.report.folder import report_files
from stillhook.report.study import REPORT_GRID, build_study
from stillhook.workers import process_pool, start_in_background, worker_count

__all__ = ["COMPILERS", "DemoResult", "SELFTEST_SKIPPED", "SELFTEST_TIMEOUT_S", "find_compiler", "run_demo",
           "run_selftest"]

#: Compilers tried in order when $CC is not set.
COMPILERS = ("cc", "gcc", "clang")
#: Seconds the self-test may take to build and to run.
SELFTEST_TIMEOUT_S = 120
#: The self-test result when the caller asked for none.
SELFTEST_SKIPPED = {"ran": False, "passed": None, "compiler": None, "command": None, "exit_status": None,
                    "output": "", "summary": "skipped (--no-selftest)"}


def find_compiler() -> list[str] | None:
    """The C compiler command: ``$CC`` if set (split like a shell would), else the first of COMPILERS on PATH."""
    cc = os.environ.get("CC", "").strip()
    if cc:
        argv = shlex.split(cc)
        return argv if shutil.which(argv[0]) else None
    for name in COMPILERS:
        path = shutil.which(name)
        if path:
            return [name]
    return None


def run_selftest(files: dict, prefix: str, *, compiler: list[str] | None = None) -> dict:
    """Build the emitted folder's host self-test in a temporary folder and run it.

    Parameters
    ----------
    files : dict
        The emitted folder as ``{name: text}`` (:func:`stillhook.firmware.plan.render_files`).
    prefix : str
        The tables' C prefix.
    compiler : list of str, optional
        Default :func:`find_compiler`.

    Returns
    -------
    dict
        ``ran`` (bool), ``passed`` (bool or None), ``compiler``, ``command``, ``exit_status``,
        ``output`` (last lines), ``summary`` (one sentence).
    """
    cc = compiler if compiler is not None else find_compiler()
    if cc is None:
        return {"ran": False, "passed": None, "compiler": None, "command": None, "exit_status": None,
                "output": "", "summary": "skipped: no C compiler found ($CC, " + ", ".join(COMPILERS) + ")"}
    sources = [f"{prefix}_selftest.c", f"{prefix}_tables.c"] + sorted(n for n in files if n.startswith("shk_")
                                                                       and n.endswith(".c"))
    command = [*cc, "-std=c99", "-O2", "-o", f"{prefix}_selftest", *sources]
    with tempfile.TemporaryDirectory(prefix="stillhook-selftest-") as tmp:
        for name, text in files.items():
            Path(tmp, name).write_text(text, encoding="utf-8")
        try:
            build = subprocess.run(command, cwd=tmp, capture_output=True, text=True, timeout=SELFTEST_TIMEOUT_S)
        except (OSError, subprocess.TimeoutExpired) as exc:
            return _failed(cc, command, None, str(exc), "the compiler could not be run")
        if build.returncode != 0:
            return _failed(cc, command, build.returncode, build.stderr, "the self-test did not compile")
        try:
            run = subprocess.run([str(Path(tmp, f"{prefix}_selftest"))], cwd=tmp, capture_output=True, text=True,
                                 timeout=SELFTEST_TIMEOUT_S)
        except (OSError, subprocess.TimeoutExpired) as exc:
            return _failed(cc, command, None, str(exc), "the self-test could not be run")
    output = _tail(run.stdout + run.stderr)
    passed = run.returncode == 0
    summary = (f"passed: built with {cc[0]} and ran, bit-exact with the Python reference (exit status 0)" if passed
               else f"FAILED: exit status {run.returncode}")
    return {"ran": True, "passed": passed, "compiler": cc[0], "command": " ".join(command),
            "exit_status": run.returncode, "output": output, "summary": summary}


def _tail(text: str, lines: int = 8) -> str:
    return "\n".join(text.strip().splitlines()[-lines:])


def _failed(cc, command, status, text, what) -> dict:
    return {"ran": True, "passed": False, "compiler": cc[0], "command": " ".join(command), "exit_status": status,
            "output": _tail(text), "summary": f"FAILED: {what}"}


@dataclass(frozen=True)
class DemoResult:
    """What the demo did: the study, the self-test, the files written and how long each stage took."""

    study: object
    selftest: dict
    written: list
    timings_s: dict
    commissioning: object = None


def _draw_early_figures(demo) -> tuple[dict, object]:
    """Start drawing the figures known right after commissioning (segment fits, frequency maps).

    They are drawn in one background process while the study runs here (:func:`run_demo`); with one worker
    (``$STILLHOOK_WORKERS=1``) they are drawn here when asked for. Returns ``({name: figure data}, files)``,
    ``files()`` giving ``{"<name>.<fmt>": bytes}``.
    """
    data = {**segment_figures(demo), "frequency_maps": frequency_map_data(demo.project)}
    if worker_count(2) > 1:
        files = start_in_background(figure_files, data, n_workers=1)
    else:
        def files():
            return figure_files(data, n_workers=1)
    return data, files


def run_demo(out_dir, *, grid: tuple[int, int] | None = None, selftest: bool = True, progress=None,
             force: bool = False) -> DemoResult:
    """Run the whole job on the demo project and write ``out_dir`` (all files at once).

    The job starts from the commissioning logs: the demo project is calibrated against them
    (:mod:`stillhook.report.commissioning_demo`) and everything after is made from the calibrated project.

    Parameters
    ----------
    out_dir : path
        Output folder (created).
    grid : (int, int), optional
        Sweep grid; default :data:`stillhook.report.study.REPORT_GRID`.
    selftest : bool
        Compile and run the emitted self-test when a C compiler exists.
    progress : callable(str), optional
        Told the name of each stage as it starts.
    force : bool
        Replace what stillhook wrote into ``out_dir`` before (:mod:`stillhook.outputs`).

    Raises
    ------
    EmitError
        The firmware could not be emitted (the demo's design must always emit).
    """
    t_start = time.perf_counter()
    check_out_dir(out_dir, force=force)
    if progress is not None:
        progress("commissioning (identify, calibrate)")
    t0 = time.perf_counter()
    demo = commission_demo()
    t_commission = time.perf_counter() - t0
    early_data, early_files = _draw_early_figures(demo)
    study = build_study(demo.project, grid=grid or REPORT_GRID, progress=progress)
    finish_study(study, demo)
    study.timings_s["commissioning"] = t_commission
    if study.firmware_files is None:
        raise EmitError(f"the demo's firmware could not be emitted: {study.problems.get('firmware', 'unknown')}")
    if progress is not None:
        progress("self-test and figures")
    t0 = time.perf_counter()
    late = {name: data for name, data in study.figures.items() if early_data.get(name) != data}
    with process_pool(worker_count(len(late))) as pool:
        drawn = submit_figures(pool, late)  # the workers draw while this process builds the self-test
        study.selftest = run_selftest(study.firmware_files, study.emit_plan.prefix) if selftest else SELFTEST_SKIPPED
        study.timings_s["self-test"] = time.perf_counter() - t0
        figures = dict(sorted({**early_files(), **drawn()}.items()))
    if progress is not None:
        progress("report")
    t0 = time.perf_counter()
    files = report_files(study, figures)
    files.update(commissioning_files(demo))
    files.update({f"firmware/{name}": text for name, text in study.firmware_files.items()})
    study.timings_s["report"] = time.perf_counter() - t0
    written = write_files(out_dir, dict(sorted(files.items())), force=force)
    study.timings_s["total"] = time.perf_counter() - t_start
    return DemoResult(study, study.selftest, written, dict(study.timings_s), demo)
