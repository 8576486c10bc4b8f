"""Closed-loop sway damping from a sway sensor: design plant, observer + state feedback per rope-length row,
robustness over the envelope, and the per-cycle controller.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "FeedbackController": "stillhook.feedback.controller",
    "check_envelope": "stillhook.feedback.robustness",
    "EnvelopeCheck": "stillhook.feedback.robustness",
    "SENSOR_KINDS": "stillhook.model.sensors",
    "design_plant": "stillhook.feedback.plant",
    "FeedbackDesign": "stillhook.feedback.design",
    "FeedbackRow": "stillhook.feedback.design",
    "design_feedback": "stillhook.feedback.design",
    "feedback_for_project": "stillhook.feedback.robust",
    "robust_feedback": "stillhook.feedback.robust",
    "RowReport": "stillhook.feedback.robust",
    "min_damping_ratio": "stillhook.feedback.design",
    "lqr_gain": "stillhook.feedback.riccati",
    "kalman_predictor": "stillhook.feedback.riccati",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
