"""Commissioning: sway logs in, identified modes and a calibrated project out.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "SwayLog": "stillhook.commission.logs",
    "read_log": "stillhook.commission.logs",
    "parse_log": "stillhook.commission.logs",
    "matrix_pencil": "stillhook.commission.pencil",
    "decimate_zero_phase": "stillhook.commission.decimation",
    "fit_damped_sinusoids": "stillhook.commission.damped_fit",
    "identify_log": "stillhook.commission.identify",
    "identify_record": "stillhook.commission.identify",
    "Segment": "stillhook.commission.identify",
    "IdentifiedMode": "stillhook.commission.identify",
    "Calibration": "stillhook.commission.calibrate",
    "Observation": "stillhook.commission.calibrate",
    "calibrate": "stillhook.commission.calibrate",
    "calibrated_project_text": "stillhook.commission.project_file",
    "calibrate_logs": "stillhook.commission.session",
    "identify_logs": "stillhook.commission.session",
    "TRUE_CRANE": "stillhook.commission.demo_logs",
    "demo_log_bytes": "stillhook.commission.demo_logs",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
