"""The rig model: the two-mode linear pendulum, its envelope of rope lengths and payloads, the python-control view.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "Envelope": "stillhook.model.envelope",
    "BatchModes": "stillhook.model.modal_batch",
    "batch_modes": "stillhook.model.modal_batch",
    "Mode": "stillhook.model.rig",
    "Rig": "stillhook.model.rig",
    "mode_frequencies_rad_s": "stillhook.model.rig",
    "STANDARD_GRAVITY_M_S2": "stillhook.model.rig",
    "DEFAULT_DAMPING_RATIO": "stillhook.model.rig",
    "LOOKUP_RULES": "stillhook.model.lookup",
    "RULE_WORDS": "stillhook.model.lookup",
    "rule_words": "stillhook.model.lookup",
    "lookup_thresholds": "stillhook.model.lookup",
    "rope_length_counts": "stillhook.model.lookup",
    "row_edges_m": "stillhook.model.lookup",
    "rows_for_counts": "stillhook.model.lookup",
    "schedule_rows": "stillhook.model.lookup",
    "RigUncertainty": "stillhook.model.uncertainty",
    "UNCERTAIN_PARAMETERS": "stillhook.model.uncertainty",
    "SENSOR_KINDS": "stillhook.model.sensors",
    "SENSOR_ROWS": "stillhook.model.sensors",
    "OUTPUT_NAMES": "stillhook.model.statespace",
    "rig_state_space": "stillhook.model.statespace",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
