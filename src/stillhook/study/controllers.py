"""The project's move under each controller (none, shaper, feedback, shaper+feedback) and disturbances.

Every run is a closed-loop co-simulation on the nonlinear model (:func:`stillhook.sim.closed_loop.run_closed_loop`)
with the drive's speed loop (``[drive] speed_loop_time_constant_s``) and the ``[sensor]`` as the project
gives it (noise, resolution, delay). The operator's command is the project's reference move; ``shaper``
filters it with the project's envelope shaper (:func:`stillhook.shaping.envelope_design.design_for_project`);
``feedback`` adds the scheduled observer + state feedback (:mod:`stillhook.feedback`), which sees only the
sensor, the rope length and its own command; behind a shaper it damps the deviation from the shaped
move's own sway (:class:`stillhook.feedback.controller.FeedbackController` ``follow_reference``).

Scenarios: the load released with sway (``initial_sway_rad``, both angles), a horizontal force on the
payload (``gust_n`` for ``gust_s`` seconds from the end of the operator's command), hoisting during the
move (``[move] hoist_to_m``).
"""

from __future__ import annotations

from dataclasses import dataclass

from stillhook.errors import ConfigError
from stillhook.feedback.controller import FeedbackController
from stillhook.feedback.robust import feedback_for_project
from stillhook.shaping.envelope_design import design_for_project
from stillhook.sim.closed_loop import ClosedLoopResult, Sensor, run_closed_loop
from stillhook.sim.profiles import project_move

__all__ = ["CONTROLLERS", "Scenario", "run_controllers"]

#: Controller choices, in table order.
CONTROLLERS = ("none", "shaper", "feedback", "shaper+feedback")


@dataclass(frozen=True)
class Scenario:
    """Disturbances of a run (see the module docstring)."""

    distance_m: float | None = None
    include_hoist: bool = True
    initial_sway_rad: float = 0.0
    gust_n: float = 0.0
    gust_s: float = 0.0

    def as_dict(self) -> dict:
        return {"distance_m": self.distance_m, "hoist_during_move": self.include_hoist,
                "initial_sway_rad": self.initial_sway_rad, "gust_n": self.gust_n, "gust_s": self.gust_s}


def run_controllers(project, controllers=CONTROLLERS, scenario: Scenario = Scenario(), *, design=None,
                    feedback=None) -> dict[str, ClosedLoopResult]:
    """{controller: ClosedLoopResult} for each requested controller, same move and disturbances.

    ``design`` and ``feedback`` may be given to reuse a shaper design and a feedback design.
    """
    unknown = [c for c in controllers if c not in CONTROLLERS]
    if unknown:
        raise ConfigError(f"unknown controller(s) {', '.join(unknown)}; allowed: {', '.join(CONTROLLERS)}")
    speed, hoist = project_move(project, scenario.distance_m)
    if not scenario.include_hoist:
        hoist = None
    T, tau = project.drive["cycle_s"], project.drive["speed_loop_time_constant_s"]
    s = project.sensor
    sensor = Sensor(s["kind"], s["noise_sd"], s["resolution"], s["delay_cycles"])
    rig = project.envelope.nominal_rig
    out = {}
    for name in controllers:
        reference = speed
        if "shaper" in name:
            design = design_for_project(project) if design is None else design
            reference = design.shaper.apply(speed, T)
        step = None
        if "feedback" in name:
            feedback = feedback_for_project(project) if feedback is None else feedback
            ctrl = FeedbackController(feedback, follow_reference="shaper" in name)
            offset = project.envelope.rope_offset_m

            def step(y, pendulum_m, r, ctrl=ctrl, offset=offset):  # the drive reads the encoder's rope length
                return ctrl.step(y, pendulum_m - offset, r)
        out[name] = run_closed_loop(rig, reference, T, tau, step, sensor=sensor, hoist_m_s=hoist,
                                    initial_angles_rad=(scenario.initial_sway_rad, scenario.initial_sway_rad),
                                    gust_n=scenario.gust_n, gust_s=scenario.gust_s)
    return out
