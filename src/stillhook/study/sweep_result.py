"""Sweep designs and results: the commands each design gives, residual sway per design and rig, summaries."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from stillhook.errors import ConfigError
from stillhook.model.lookup import schedule_rows

__all__ = ["SpotCheck", "SweepDesign", "SweepResult"]


@dataclass(frozen=True)
class SweepDesign:
    """One design of the sweep and the command(s) it gives the drive.

    Attributes
    ----------
    key : str
        JSON key: 'unshaped', 'shaper', 'schedule' or 'notch'.
    label : str
        Human-readable name.
    added_s : float
        How much longer the command is than the unshaped one (s); the longest row for a schedule.
    commands : tuple of ndarray
        One speed command (m/s per cycle) for every rig, or one per schedule row.
    row_lengths_m : ndarray or None
        Schedule rows' rope lengths (m), ascending; None when one command serves every rig.
    lookup_rule : str
        How a rig's rope length picks its row ('nearest' or 'at_or_below').
    lsb_m : float or None
        Rope-length input resolution of the firmware (m per count). When set, rows are picked
        exactly as the emitted lookup does: the length rounded to counts, compared with the
        generator's integer thresholds (:func:`stillhook.model.lookup.lookup_thresholds`).
    """

    key: str
    label: str
    added_s: float
    commands: tuple
    row_lengths_m: np.ndarray | None = None
    lookup_rule: str = "nearest"
    lsb_m: float | None = None

    def rows_for(self, rope_length_m) -> np.ndarray:
        """Index of the command each rope length uses (0 for a single command)."""
        L = np.asarray(rope_length_m, dtype=float)
        if self.row_lengths_m is None:
            return np.zeros(L.shape, dtype=np.int64)
        return schedule_rows(self.row_lengths_m, L, self.lookup_rule, self.lsb_m)


@dataclass(frozen=True)
class SpotCheck:
    """Linear sweep against the nonlinear simulator at one rig, for every design.

    ``linear_m`` and ``nonlinear_m`` map design keys to residual sway (m). Two measures of the
    disagreement of a design: |linear - nonlinear| over the nonlinear unshaped residual (the scale
    the tolerance is on; large where the unshaped move happens to leave little sway), and over the
    peak unshaped sway during the move, ``unshaped_peak_m`` (the scale of the nonlinear terms,
    which are second order in the sway angle). ``rig`` holds the rig's hook mass, rigging length and
    damping ratio (sampled or nominal).
    """

    rope_length_m: float
    payload_mass_kg: float
    linear_m: dict
    nonlinear_m: dict
    unshaped_peak_m: float = 0.0
    rig: dict = field(default_factory=dict)

    def disagreement(self, key: str) -> float:
        base = self.nonlinear_m["unshaped"]
        return abs(self.linear_m[key] - self.nonlinear_m[key]) / base if base > 0 else 0.0

    def disagreement_of_peak(self, key: str) -> float:
        base = self.unshaped_peak_m
        return abs(self.linear_m[key] - self.nonlinear_m[key]) / base if base > 0 else 0.0

    def as_dict(self) -> dict:
        return {"rope_length_m": self.rope_length_m, "payload_mass_kg": self.payload_mass_kg, **self.rig,
                "linear_residual_m": dict(self.linear_m), "nonlinear_residual_m": dict(self.nonlinear_m),
                "unshaped_peak_during_move_m": self.unshaped_peak_m,
                "disagreement": {k: self.disagreement(k) for k in self.linear_m},
                "disagreement_of_peak": {k: self.disagreement_of_peak(k) for k in self.linear_m}}


@dataclass(frozen=True)
class SweepResult:
    """Residual sway of every design at every rig of the sweep.

    Attributes
    ----------
    rope_length_m, payload_mass_kg : ndarray (R,)
        The rigs. For a grid, rig index = i_rope * n_payload + i_payload.
    grid_shape : (int, int) or None
        (n_rope, n_payload) for a grid; None for random samples.
    designs : tuple of SweepDesign
    residual_m : dict of ndarray (R,)
        Residual payload sway (m) per design key.
    tolerance : float
        Fraction of the unshaped residual a design must stay within.
    move : dict
        distance_m, max_speed_m_s, max_accel_m_s2, cycle_s, command_end_s, settle_window_s.
    spot_checks : tuple of SpotCheck
        The envelope's corners (nominal rig), then for random samples each design's worst sampled rig.
    notes : tuple of str
    varied : dict
        {parameter: ndarray (R,)} of the uncertain parameters sampled per rig (hook_mass_kg,
        rigging_length_m, damping_ratio); empty when every rig has the nominal values.
    nominal_rig : dict
        The ``[rig]`` values of hook_mass_kg, rigging_length_m and damping_ratio (the design's).
    uncertainty : dict
        Range and source of each sampled parameter (``RigUncertainty.describe``); empty when none is sampled.
    spot_check_worst : int
        How many of ``spot_checks`` (the last ones) are worst sampled rigs.
    """

    rope_length_m: np.ndarray
    payload_mass_kg: np.ndarray
    grid_shape: tuple[int, int] | None
    designs: tuple[SweepDesign, ...]
    residual_m: dict
    tolerance: float
    move: dict
    spot_checks: tuple[SpotCheck, ...] = ()
    notes: tuple[str, ...] = field(default=())
    varied: dict = field(default_factory=dict)
    nominal_rig: dict = field(default_factory=dict)
    uncertainty: dict = field(default_factory=dict)
    spot_check_worst: int = 0

    @property
    def keys(self) -> list[str]:
        return [d.key for d in self.designs]

    def ratio(self, key: str) -> np.ndarray:
        """Residual of ``key`` over the unshaped residual at each rig (0 where unshaped is 0)."""
        base = self.residual_m["unshaped"]
        r = self.residual_m[key]
        return np.divide(r, base, out=np.zeros_like(r), where=base > 0)

    def grid(self, key: str, *, ratio: bool = False) -> np.ndarray:
        """Residual (or ratio) as an (n_rope, n_payload) array; ConfigError for random samples."""
        if self.grid_shape is None:
            raise ConfigError("this sweep is random samples, not a grid")
        values = self.ratio(key) if ratio else self.residual_m[key]
        return values.reshape(self.grid_shape)

    def rig_at(self, n: int) -> dict:
        """Every parameter of rig ``n``: rope length, payload mass, hook mass, rigging length, damping ratio."""
        out = {"rope_length_m": float(self.rope_length_m[n]), "payload_mass_kg": float(self.payload_mass_kg[n])}
        for key, value in self.nominal_rig.items():
            out[key] = float(self.varied[key][n]) if key in self.varied else value
        return out

    def summary(self) -> dict:
        """Per design: worst residual and its rig (all parameters), worst ratio and its rig, share of rigs
        within the tolerance."""
        out = {}
        for d in self.designs:
            r, q = self.residual_m[d.key], self.ratio(d.key)
            i, j = int(np.argmax(r)), int(np.argmax(q))
            out[d.key] = {
                "label": d.label,
                "added_s": d.added_s,
                "worst_residual_m": float(r[i]),
                "worst_residual_at": self.rig_at(i),
                "worst_ratio": float(q[j]),
                "worst_ratio_at": self.rig_at(j),
                "share_within_tolerance": float(np.mean(q <= self.tolerance * (1 + 1e-9))),
            }
        return out

    def max_disagreement_of_peak(self) -> float:
        """Largest spot-check disagreement as a fraction of the unshaped peak sway during the move."""
        return max((c.disagreement_of_peak(k) for c in self.spot_checks for k in c.linear_m), default=0.0)

    def max_disagreement(self) -> float:
        """Largest spot-check disagreement over rigs and designs (fraction of unshaped), 0 if none."""
        return max((c.disagreement(k) for c in self.spot_checks for k in c.linear_m), default=0.0)

    def iter_points(self):
        """Every rig as a JSON-ready dict (rope, payload, the sampled parameters, residual per design), one at a
        time (``outputs.write_json`` streams a million of them in bounded memory)."""
        keys, varied = self.keys, list(self.varied.items())
        for n, (L, m) in enumerate(zip(self.rope_length_m.tolist(), self.payload_mass_kg.tolist(), strict=True)):
            yield {"rope_length_m": L, "payload_mass_kg": m, **{k: float(v[n]) for k, v in varied},
                   "residual_payload_sway_m": {k: float(self.residual_m[k][n]) for k in keys}}

    def as_dict(self, *, points: bool = True) -> dict:
        """JSON-ready result (deterministic key order); ``points=False`` leaves ``"points"`` empty (to stream
        :meth:`iter_points` in its place)."""
        return {
            "move": dict(self.move),
            "tolerance": self.tolerance,
            "grid": None if self.grid_shape is None else {"n_rope": self.grid_shape[0],
                                                          "n_payload": self.grid_shape[1]},
            "designs": [{"key": d.key, "label": d.label, "added_s": d.added_s,
                         "schedule_rows": None if d.row_lengths_m is None else len(d.row_lengths_m),
                         "lookup_rule": d.lookup_rule if d.row_lengths_m is not None else None}
                        for d in self.designs],
            "summary": self.summary(),
            "accuracy": {
                "method": "exact discretization of the linear model (modal, piecewise-constant acceleration)",
                "spot_checks": [c.as_dict() for c in self.spot_checks],
                "spot_checks_worst_sampled": self.spot_check_worst,
                "max_disagreement": self.max_disagreement(),
                "disagreement_definition": "|linear - nonlinear| / nonlinear unshaped residual at that rig",
                "max_disagreement_of_peak": self.max_disagreement_of_peak(),
                "disagreement_of_peak_definition": "|linear - nonlinear| / nonlinear unshaped peak sway during "
                                                   "the move at that rig",
            },
            "rig": {"nominal": dict(self.nominal_rig), "sampled": dict(self.uncertainty)},
            "notes": list(self.notes),
            "points": list(self.iter_points()) if points else [],
        }
