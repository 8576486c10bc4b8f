"""The cautions every design output carries (README, reports, emitted C, CLI output).

They are added at the output edge only: the command line, the report and the emitted files.
Design objects do not carry them.
"""

__all__ = ["CAUTIONS", "FEEDBACK_CAUTIONS"]

CAUTIONS = (
    "Anti-sway control is not a safety function: it does not replace limit switches, "
    "overload protection, brakes or the operator's judgement.",
    "Verify every design on the real crane at low speed before normal operation.",
    "Use the design only inside the envelope it was made for (rope length, payload mass, "
    "drive cycle, speed and acceleration limits).",
    "Follow local codes, the crane maker's instructions and licensed practice.",
)

#: Added wherever a feedback controller's design, simulation or code is output.
FEEDBACK_CAUTIONS = (
    "A feedback controller acts on the trolley drive from a sensor: a failed, stale or jumping sensor "
    "reading must switch the feedback off (command shaping alone remains).",
    "Verify the feedback on the crane at low speed first, with the sensor's fault paths tested "
    "(unplugged, frozen, out of range) before normal operation.",
    "Sway feedback is not a safety function.",
)
