"""stillhook: two-mode sway models, command shapers, notch filters and fixed-point C for crane loads.

The package is organised one module per concept; see DEVELOPERS.md for the map.
Heavy modules (scipy, python-control, matplotlib) are imported where they are used,
so ``import stillhook`` stays cheap.
"""

__version__ = "0.1.0"

CAUTIONS = (
    "Anti-sway control is not a safety function: it does not replace limit switches, "
    "overload protection, brakes or the operator's judgement.",
    "Verify every design on the real crane at low speed before normal operation.",
    "Use the design only inside the envelope it was made for (rope length, payload mass, "
    "drive cycle, speed and acceleration limits).",
    "Follow local codes, the crane maker's instructions and licensed practice.",
)
