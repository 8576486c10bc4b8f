"""Does the project's design hold its tolerance on the project's own move? Checked on the nonlinear simulator.

The shaper design (:mod:`stillhook.shaping.envelope_design`) meets the tolerance on the linear model at fixed
rope lengths. The project's move can hoist while travelling, which sweeps the sway frequencies during the move,
and the real pendulum is nonlinear. So the design is re-run on the project's move (hoisting included) at the
nominal rig and at each corner of the envelope, each against the unshaped move at the same rig:

    ratio = residual payload sway with the shaper / residual payload sway unshaped,

and every output that states the tolerance reports the worst ratio and whether it holds (issue 11).
At a corner the hoist moves the rope from the corner's rope length to ``[move] hoist_to_m``.

The ratio is ill-conditioned where the unshaped move happens to cancel its own sway: the swing its start
leaves and the swing its stop leaves superpose, so after the move the unshaped residual ranges from nearly
nothing (braking a whole number of periods after starting) to about the peak sway during the move. Where the
unshaped residual is below CANCELLED_SHARE of that peak (:func:`swings_cancel`), every output says so beside
the ratio, with both residuals in mm, instead of letting a small residual read as a failed design.

Notes
-----
Nonlinear double pendulum with a moving trolley and hoist: :func:`stillhook.sim.dynamics.simulate`
(Lagrange equations, Kibble & Berkshire, Classical Mechanics, 5th ed., 2004).
"""

from __future__ import annotations

from dataclasses import dataclass

from stillhook.sim.dynamics import simulate_batch
from stillhook.sim.profiles import hoist_speeds, project_move

__all__ = ["CANCELLED_SHARE", "MoveCheck", "cancelled_sway_note", "check_design_on_move", "check_points",
           "swings_cancel"]

#: An unshaped residual below this share of the unshaped move's peak sway (same rig) counts as cancelled: a step
#: of acceleration leaves a swing about as large as the lean it causes, so with the start and stop swings in
#: phase the residual is about the peak, and far below it only when they cancel (derived; threshold chosen).
CANCELLED_SHARE = 0.35


def swings_cancel(unshaped_residual_m: float, unshaped_peak_m: float) -> bool:
    """True when an unshaped move leaves below CANCELLED_SHARE of its peak sway after it (start and stop cancel)."""
    return unshaped_residual_m < CANCELLED_SHARE * unshaped_peak_m


def cancelled_sway_note(unshaped_residual_m: float, unshaped_peak_m: float) -> str:
    """The words every output adds where :func:`swings_cancel` holds."""
    return (f"the unshaped move leaves little sway ({1000 * unshaped_residual_m:.3g} mm after the move against a "
            f"{1000 * unshaped_peak_m:.3g} mm peak during it: its start and stop swings largely cancel), so a small "
            "residual is a large percentage")


@dataclass(frozen=True)
class MoveCheck:
    """Residual sway of the design against unshaped at each checked rig, on the project's move."""

    points: tuple[dict, ...]
    tolerance: float
    hoist: bool
    distance_m: float

    @property
    def worst(self) -> dict:
        return max(self.points, key=lambda p: p["ratio"])

    @property
    def holds(self) -> bool:
        return self.worst["ratio"] <= self.tolerance * (1 + 1e-9)

    @property
    def unshaped_cancels(self) -> bool:
        """True when, at the worst point, the unshaped residual is below CANCELLED_SHARE of the unshaped peak.

        There the move's start and stop swings (with hoisting, at changing frequencies) happen to cancel most of
        the unshaped sway after the move, so a small shaped residual is a large percentage of it.
        """
        return swings_cancel(self.worst["unshaped_m"], self.worst["unshaped_peak_m"])

    def sentence(self) -> str:
        """One line with the numbers, for every output that states the tolerance."""
        w = self.worst
        move = f"the project's {self.distance_m:g} m move" + (" with hoisting" if self.hoist else "")
        where = f"rope {w['rope_length_m']:g} m, payload {w['payload_mass_kg']:g} kg"
        verdict = "holds" if self.holds else "does NOT hold"
        mm = f"{1000 * w['shaped_m']:.3g} mm against {1000 * w['unshaped_m']:.3g} mm unshaped"
        text = (f"on {move} (nonlinear simulation, nominal rig and {len(self.points) - 1} envelope corners) the "
                f"tolerance {verdict}: worst {100 * w['ratio']:.3g} % of unshaped against {100 * self.tolerance:g} % "
                f"({where}: {mm})")
        if self.unshaped_cancels:
            text += "; there " + cancelled_sway_note(w["unshaped_m"], w["unshaped_peak_m"])
        return text

    def as_dict(self) -> dict:
        return {"tolerance": self.tolerance, "hoist": self.hoist, "distance_m": self.distance_m,
                "holds": self.holds, "unshaped_cancels": self.unshaped_cancels, "worst": dict(self.worst),
                "points": [dict(p) for p in self.points], "summary": self.sentence()}


def check_points(envelope) -> list[tuple[float, float]]:
    """The nominal rig first, then the envelope's distinct corners (rope length, payload mass)."""
    nominal = (envelope.nominal_rope_length_m, envelope.nominal_payload_mass_kg)
    return [nominal] + [c for c in envelope.corners() if c != nominal]


def check_design_on_move(project, shaper, *, rtol: float = 1e-7) -> MoveCheck:
    """Run ``shaper`` (on the drive-cycle grid) on the project's move at the nominal rig and envelope corners."""
    env, drive, move = project.envelope, project.drive, project.move
    T = drive["cycle_s"]
    speed, _ = project_move(project)
    shaped = shaper.apply(speed, T)
    points = []
    for L, m in check_points(env):
        rig = env.rig(L, m)
        hoist = None
        if move["hoist_to_m"] is not None:
            hoist = hoist_speeds(L, move["hoist_to_m"], drive["hoist_speed_m_s"], drive["hoist_accel_m_s2"], T,
                                 start_s=move["hoist_start_s"])
        plain, with_shaper = simulate_batch(rig, [speed, shaped], T, hoist_speed_m_s=hoist, rtol=rtol)
        r0, r1 = plain.residual_payload_sway_m, with_shaper.residual_payload_sway_m
        points.append({"rope_length_m": float(L), "payload_mass_kg": float(m), "unshaped_m": r0,
                       "unshaped_peak_m": plain.peak_payload_offset_m, "shaped_m": r1,
                       "ratio": r1 / r0 if r0 > 0 else 0.0})
    return MoveCheck(tuple(points), project.design["tolerance_pct"] / 100.0, move["hoist_to_m"] is not None,
                     float(T * speed.sum()))
