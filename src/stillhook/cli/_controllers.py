"""Options shared by ``simulate`` and ``compare`` for closed-loop runs (controller choice, disturbances)."""

from __future__ import annotations

import argparse

CONTROLLER_CHOICES = ("none", "shaper", "feedback", "shaper+feedback")


def add_scenario_arguments(p: argparse.ArgumentParser, *, many: bool) -> None:
    """--controller, --initial-sway-rad, --gust-n, --gust-s."""
    if many:
        p.add_argument("--controller", action="append", choices=CONTROLLER_CHOICES, default=None,
                       help="closed-loop controller to compare (repeat for several; default with a disturbance "
                            "option: all four)")
    else:
        p.add_argument("--controller", choices=CONTROLLER_CHOICES, default=None,
                       help="run in closed loop with the drive's speed loop and the [sensor]: none (raw command), "
                            "shaper, feedback ([feedback] design) or shaper+feedback")
    p.add_argument("--initial-sway-rad", type=float, default=0.0, metavar="RAD",
                   help="load released with this sway angle (rad, rope and rigging)")
    p.add_argument("--gust-n", type=float, default=0.0, metavar="N",
                   help="horizontal force on the payload (N), from the end of the operator's command")
    p.add_argument("--gust-s", type=float, default=0.0, metavar="S", help="how long the force acts (s)")


def wants_closed_loop(args: argparse.Namespace) -> bool:
    return bool(args.controller) or args.initial_sway_rad != 0.0 or args.gust_n != 0.0


def scenario_from_args(args: argparse.Namespace, *, include_hoist: bool = True):
    from stillhook.study.controllers import Scenario

    return Scenario(args.distance_m, include_hoist, args.initial_sway_rad, args.gust_n, args.gust_s)


def metrics_rows(results: dict) -> tuple[list[str], list[list]]:
    headers = ["controller", "residual mm", "settle s", "peak m/s", "peak m/s2", "end error mm"]
    rows = []
    for name, r in results.items():
        m = r.metrics()
        settle = "not at rest" if m["settle_s"] is None else m["settle_s"]
        rows.append([name, 1000 * m["residual_payload_sway_m"], settle, m["peak_speed_m_s"],
                     m["peak_accel_m_s2"], 1000 * m["end_error_m"]])
    return headers, rows
