"""Studies of designs: the comparison on the project's move and the envelope sweep.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "run_controllers": "stillhook.study.controllers",
    "CONTROLLERS": "stillhook.study.controllers",
    "Scenario": "stillhook.study.controllers",
    "Candidate": "stillhook.study.compare",
    "Row": "stillhook.study.compare",
    "Comparison": "stillhook.study.compare",
    "candidates": "stillhook.study.compare",
    "time_at_rest_s": "stillhook.study.compare",
    "compare_project": "stillhook.study.compare",
    "METHODS": "stillhook.study.compare",
    "DEFINITIONS": "stillhook.study.compare",
    "ModalBatch": "stillhook.study.modal_sweep",
    "AccelRuns": "stillhook.study.modal_sweep",
    "end_amplitudes": "stillhook.study.modal_sweep",
    "end_amplitudes_dense": "stillhook.study.modal_sweep",
    "peak_after_end": "stillhook.study.modal_sweep",
    "residual_sway_m": "stillhook.study.modal_sweep",
    "POINTS_PER_PERIOD": "stillhook.study.modal_sweep",
    "MAX_GRID_STEP_S": "stillhook.study.modal_sweep",
    "BLOCK_RIGS": "stillhook.study.modal_sweep",
    "RUN_RTOL": "stillhook.study.modal_sweep",
    "DENSE_RUNS_FRACTION": "stillhook.study.modal_sweep",
    "Ranked": "stillhook.study.ranking",
    "rank_designs": "stillhook.study.ranking",
    "ranking_sentence": "stillhook.study.ranking",
    "SLOW_FACTOR": "stillhook.study.ranking",
    "DESIGN_KEYS": "stillhook.study.sweep",
    "SpotCheck": "stillhook.study.sweep",
    "SweepDesign": "stillhook.study.sweep",
    "SweepResult": "stillhook.study.sweep",
    "project_designs": "stillhook.study.sweep",
    "residuals": "stillhook.study.sweep",
    "spot_checks": "stillhook.study.sweep",
    "sweep_project": "stillhook.study.sweep",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
