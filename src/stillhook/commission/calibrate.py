"""Calibrate the rig model: fit hook mass, rigging length and rope offset to identified frequencies.

Weighted least squares over every identified mode i (rope length L_i from the encoder, payload mass
m2_i, mode number k_i)::

    minimize sum_i ((f_k(m1, m2_i, L_i + dL, L2) - f_i) / sd_i)^2      over free p in {m1, L2, dL}

with f_k the undamped frequencies of the two-mode model (:func:`stillhook.model.rig.mode_frequencies_rad_s`).
The covariance is (J^T W J)^-1 at the optimum, scaled by the reduced chi-square when that exceeds 1
(the identified sds miss model error). The damping ratio does not move the frequencies; the model has one
modal damping ratio, estimated as the inverse-variance weighted mean of the identified ones (its sd
scaled the same way).

Before fitting, parameters the data cannot separate are fixed at the project's values, each with the
reason: the rope offset when all logs share one rope length (it cannot be told from the length itself);
then, while the weighted Jacobian (columns scaled to unit norm) has fewer rows than free columns or a
singular value under COLLINEAR_RTOL of the largest, the parameter with the largest share in the null
direction; after fitting, a parameter whose sd exceeds UNDETERMINED_SHARE of its scale.

Notes
-----
Weighted nonlinear least squares and its covariance: Seber & Wild, *Nonlinear Regression*, Wiley 1989
(from memory). Scaling by the reduced chi-square (the Birge ratio): Birge, Phys. Rev. 40:207-227, 1932
(from memory). Collinearity diagnosis from the singular values of the column-scaled Jacobian: Belsley,
Kuh & Welsch, *Regression Diagnostics*, Wiley 1980 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from stillhook.errors import ConfigError
from stillhook.model.rig import mode_frequencies_rad_s

__all__ = [
    "COLLINEAR_RTOL", "Calibration", "GEOMETRY", "Observation", "PARAMETERS", "UNDETERMINED_SHARE", "calibrate",
    "observations_from_segments", "predicted_hz",
]

#: Every parameter calibration may fit, in the order of the project's [rig] keys.
PARAMETERS = ("hook_mass_kg", "rigging_length_m", "rope_offset_m", "damping_ratio")
#: The parameters the frequencies depend on.
GEOMETRY = PARAMETERS[:3]
#: Relative singular value of the column-scaled Jacobian under which columns count as collinear.
COLLINEAR_RTOL = 1e-3
#: A fitted parameter whose sd exceeds this share of its scale is not determined by the data.
UNDETERMINED_SHARE = 0.5


@dataclass(frozen=True)
class Observation:
    """One identified mode: where it was measured and what was measured."""

    log: str
    rope_length_m: float
    payload_mass_kg: float
    mode: int
    measured_hz: float
    measured_sd_hz: float
    damping_ratio: float
    damping_ratio_sd: float


@dataclass
class Calibration:
    """The fit. ``values``/``sds``/``free`` per PARAMETERS key (sd None when fixed); ``nominal`` the project's."""

    values: dict
    sds: dict
    free: dict
    nominal: dict
    correlation: dict
    observations: list
    predicted_hz: list
    chi2_reduced: float
    notes: list = field(default_factory=list)

    def as_dict(self) -> dict:
        """The issue's JSON fields, plus correlations and notes."""
        return {
            "parameters": {k: {"value": self.values[k], "sd": self.sds[k], "free": self.free[k]} for k in PARAMETERS},
            "predicted_vs_measured": [
                {"rope_length_m": o.rope_length_m, "payload_mass_kg": o.payload_mass_kg, "mode": o.mode,
                 "measured_hz": o.measured_hz, "predicted_hz": p} for o, p in zip(self.observations,
                                                                                  self.predicted_hz, strict=True)],
            "correlation": self.correlation, "chi2_reduced": self.chi2_reduced, "notes": list(self.notes),
        }


def predicted_hz(values: dict, gravity_m_s2: float, observations) -> np.ndarray:
    """Model frequency (Hz) of each observation's mode at ``values`` (hook mass, rigging length, rope offset)."""
    L = np.array([o.rope_length_m for o in observations]) + values["rope_offset_m"]
    m2 = np.array([o.payload_mass_kg for o in observations])
    k = np.array([o.mode for o in observations]) - 1
    w = mode_frequencies_rad_s(values["hook_mass_kg"], np.maximum(m2, 1e-9), L, values["rigging_length_m"],
                               gravity_m_s2)
    return w[np.arange(k.size), k] / (2 * np.pi)


def observations_from_segments(name: str, segments) -> list[Observation]:
    """Observations of one log's identified segments; segments need rope length, payload mass and mode numbers."""
    out = []
    for seg in segments:
        if seg.rope_length_m is None:
            raise ConfigError(f"{name}: no rope_length_m column; give the rope length of this log "
                              f"(--rope-length-m {name}=METRES)")
        for mode, number in zip(seg.modes, seg.mode_numbers, strict=True):
            out.append(Observation(name, seg.rope_length_m, seg.payload_mass_kg, number, mode.frequency_hz,
                                   mode.frequency_sd_hz, mode.damping_ratio, mode.damping_ratio_sd))
    return out


def _nominal(envelope) -> dict:
    return {"hook_mass_kg": envelope.hook_mass_kg, "rigging_length_m": envelope.rigging_length_m,
            "rope_offset_m": envelope.rope_offset_m, "damping_ratio": envelope.damping_ratio}


def _scales(nominal: dict, observations) -> dict:
    """What "determined" is measured against: half the hook mass, half the rigging + mean rope length."""
    length = nominal["rigging_length_m"] + float(np.mean([o.rope_length_m for o in observations]))
    return {"hook_mass_kg": nominal["hook_mass_kg"], "rigging_length_m": length, "rope_offset_m": length}


def _problem(nominal, g, observations, free):
    """Weighted residual r(p) and the full values dict of a free-parameter vector p."""
    f = np.array([o.measured_hz for o in observations])
    sd = np.array([o.measured_sd_hz for o in observations])

    def values(p):
        return {**nominal, **dict(zip(free, p, strict=True))}

    def residual(p):
        return (predicted_hz(values(p), g, observations) - f) / sd

    return residual, values


def _jacobian(residual, p: np.ndarray) -> np.ndarray:
    """Central differences, step 1e-6 of each value (or 1e-6 m / kg near 0)."""
    cols = []
    for i in range(p.size):
        h = 1e-6 * max(abs(p[i]), 1.0)
        e = np.zeros(p.size)
        e[i] = h
        cols.append((residual(p + e) - residual(p - e)) / (2 * h))
    return np.column_stack(cols) if cols else np.zeros((0, 0))


def _structurally_free(free: list, nominal, g, observations, notes: list) -> list:
    """Drop what the data cannot separate (one rope length; too few rows; collinear columns), saying why."""
    free = list(free)
    lengths = sorted({round(o.rope_length_m, 3) for o in observations})
    if "rope_offset_m" in free and len(lengths) < 2:
        free.remove("rope_offset_m")
        notes.append(f"rope_offset_m fixed at the project's {nominal['rope_offset_m']:g} m: every log is at one "
                     f"rope length ({lengths[0]:g} m), where an offset cannot be told from the length itself")
    modes = sorted({o.mode for o in observations})
    only = f" (only mode {modes[0]} was identified)" if len(modes) == 1 else ""
    while free:
        residual, _ = _problem(nominal, g, observations, free)
        J = _jacobian(residual, np.array([nominal[k] for k in free]))
        norms = np.linalg.norm(J, axis=0)
        if norms.min() <= 1e-9 * norms.max():
            k = int(np.argmin(norms))
            notes.append(f"{free[k]} fixed at the project's {nominal[free[k]]:g}: it does not change the "
                         f"frequencies of these logs")
            free.pop(k)
            continue
        Jn = J / norms
        _, sv, Vt = np.linalg.svd(Jn, full_matrices=True)
        if J.shape[0] >= len(free) and sv[-1] >= COLLINEAR_RTOL * sv[0]:
            break
        null = np.abs(Vt[-1])
        k = int(np.argmax(null))
        others = [free[i] for i in np.argsort(-null) if i != k and null[i] > 0.2]
        why = (f"{J.shape[0]} identified frequencies cannot fix {len(free)} parameters" if J.shape[0] < len(free)
               else "its effect on the frequencies is collinear with that of " + (", ".join(others) or "the others"))
        notes.append(f"{free[k]} fixed at the project's {nominal[free[k]]:g}: {why}{only}")
        free.pop(k)
    return free


def _fit(nominal, g, observations, free):
    """(values, covariance of the free parameters, chi2 reduced) by weighted least squares."""
    residual, values = _problem(nominal, g, observations, free)
    if not free:
        r = residual(np.zeros(0))
        return values(np.zeros(0)), np.zeros((0, 0)), float(r @ r) / max(1, r.size)
    p0 = np.array([nominal[k] for k in free])
    L_min = min(o.rope_length_m for o in observations)
    lower = {"hook_mass_kg": 1e-3 * nominal["hook_mass_kg"], "rigging_length_m": 0.0, "rope_offset_m": 0.05 - L_min}
    lo = np.array([lower[k] for k in free])
    res = least_squares(residual, np.maximum(p0, lo + 1e-9), bounds=(lo, np.inf), method="trf", x_scale="jac",
                        ftol=1e-14, xtol=1e-14, gtol=1e-14)
    J = _jacobian(residual, res.x)
    dof = len(observations) - len(free)
    chi2 = float(res.fun @ res.fun) / dof if dof > 0 else float("nan")
    cov = np.linalg.pinv(J.T @ J) * (max(1.0, chi2) if dof > 0 else 1.0)
    return values(res.x), cov, chi2


def _damping(observations) -> tuple[float, float]:
    """Inverse-variance weighted mean of the identified damping ratios and its sd (Birge-scaled)."""
    z = np.array([o.damping_ratio for o in observations])
    w = 1.0 / np.maximum(np.array([o.damping_ratio_sd for o in observations]), 1e-12) ** 2
    mean = float(np.sum(w * z) / np.sum(w))
    chi2 = float(np.sum(w * (z - mean) ** 2)) / (z.size - 1) if z.size > 1 else 1.0
    return mean, float(np.sqrt(max(1.0, chi2) / np.sum(w)))


def calibrate(envelope, observations, free=PARAMETERS) -> Calibration:
    """Fit the free rig parameters to identified frequencies (see module docstring).

    Parameters
    ----------
    envelope : stillhook.model.Envelope
        The project's rig: starting point and the values of every parameter not fitted.
    observations : list of Observation
        Identified modes of every log (at least one).
    free : iterable of str
        Subset of PARAMETERS to fit.

    Returns
    -------
    Calibration
    """
    unknown = sorted(k for k in free if k not in PARAMETERS)
    free = [k for k in PARAMETERS if k in set(free)]
    if unknown or not observations:
        raise ConfigError("nothing to calibrate: no identified mode" if not observations else
                          f"unknown parameters {unknown}; allowed: {', '.join(PARAMETERS)}")
    nominal, g, notes = _nominal(envelope), envelope.gravity_m_s2, []
    geo = _structurally_free([k for k in free if k in GEOMETRY], nominal, g, observations, notes)
    scales = _scales(nominal, observations)
    while True:
        values, cov, chi2 = _fit(nominal, g, observations, geo)
        sd = np.sqrt(np.maximum(np.diag(cov), 0.0))
        share = [sd[i] / scales[k] for i, k in enumerate(geo)]
        if not geo or max(share) <= UNDETERMINED_SHARE:
            break
        k = geo[int(np.argmax(share))]
        notes.append(f"{k} fixed at the project's {nominal[k]:g}: these logs do not determine it (sd "
                     f"{sd[geo.index(k)]:.3g} would exceed {100 * UNDETERMINED_SHARE:g} % of {scales[k]:.3g})")
        geo.remove(k)
    sds = {k: (float(sd[geo.index(k)]) if k in geo else None) for k in GEOMETRY}
    values = dict(values)
    if "damping_ratio" in free:
        z, zsd = _damping(observations)
        values["damping_ratio"], sds["damping_ratio"] = min(max(z, 0.0), 0.99), zsd
    else:
        sds["damping_ratio"] = None
    corr = cov / np.outer(sd, sd) if geo else cov
    return Calibration(values={k: float(values[k]) for k in PARAMETERS}, sds=sds,
                       free={k: sds[k] is not None for k in PARAMETERS}, nominal=nominal,
                       correlation={"parameters": list(geo), "matrix": np.round(corr, 6).tolist()},
                       observations=list(observations),
                       predicted_hz=[float(f) for f in predicted_hz(values, g, observations)],
                       chi2_reduced=chi2 if np.isfinite(chi2) else None, notes=notes)
