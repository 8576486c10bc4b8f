"""Notch filters: design per mode, the cascade object, fixed-point coefficient rounding analysis.

Every name below is loaded from its module on first use (see :mod:`stillhook.lazy`).
"""

from stillhook.lazy import lazy_exports

_EXPORTS = {
    "NotchSection": "stillhook.notch.cascade",
    "sos_response": "stillhook.notch.cascade",
    "NotchDesign": "stillhook.notch.cascade",
    "TAIL_DECAY": "stillhook.notch.cascade",
    "design_notches": "stillhook.notch.design",
    "notch_for_project": "stillhook.notch.design",
    "quantized_notch_shift": "stillhook.notch.design",
    "NotchShift": "stillhook.notch.design",
    "band_centre_hz": "stillhook.notch.design",
    "pole_damping_for_band": "stillhook.notch.design",
    "notch_section": "stillhook.notch.design",
    "auto_post_shift": "stillhook.notch.rounding",
    "quantize_sos": "stillhook.notch.rounding",
    "section_notch_frequencies_hz": "stillhook.notch.rounding",
    "MAX_ANALYSIS_POST_SHIFT": "stillhook.notch.rounding",
    "cascade_tf": "stillhook.notch.transfer",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
