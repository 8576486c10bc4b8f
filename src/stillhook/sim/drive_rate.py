"""The half-drive-rate rule: a filter at drive cycle T acts only on frequencies below 1 / (2 T).

The drive takes a new speed every cycle T, so the command is a sequence sampled at 1 / T and no
filter of it can act on a sway frequency above half that rate (sampling theorem). Every design
stage checks its frequencies with this one rule:

    f <= f_half = 1 / (2 T)      shapers (impulses on whole cycles; a mode at f_half is reachable)
    f <  f_half                  notches (the bilinear prewarp tan(pi f T) has its pole at f_half)

Notes
-----
Sampling theorem: Shannon, "Communication in the presence of noise", Proc. IRE 37(1):10-21, 1949.
Prewarping of the bilinear transform: Oppenheim & Schafer, *Discrete-Time Signal Processing*, 3rd
ed., Pearson, 2010, section 7.2 (from memory).
"""

from __future__ import annotations

from stillhook.errors import DesignError

__all__ = ["check_below_half_rate", "half_rate_hz"]


def half_rate_hz(cycle_s: float) -> float:
    """f_half = 1 / (2 cycle_s) (Hz) for a drive cycle ``cycle_s`` > 0 (s)."""
    return 0.5 / cycle_s


def check_below_half_rate(freqs_hz, cycle_s: float, *, what: str = "frequency", strict: bool = False,
                          detail: str = "") -> None:
    """DesignError naming the first frequency above half the drive rate (at or above it when ``strict``).

    Parameters
    ----------
    freqs_hz : iterable of float
        Frequencies to check (Hz).
    cycle_s : float > 0
        Drive cycle T (s).
    what : str
        How the message names each frequency ("frequency", "the high sway mode", ...).
    strict : bool
        True: f must be below f_half (notches); False: at most f_half (shapers).
    detail : str
        Added to the message after the numbers (e.g. why the frequency matters).
    """
    f_half = half_rate_hz(cycle_s)
    for f in freqs_hz:
        if f > f_half or (strict and f >= f_half):
            where = "at or above" if strict else "above"
            below = "below" if strict else "at most"
            raise DesignError(f"{what} {f:g} Hz is {where} half the drive rate ({f_half:g} Hz for a {cycle_s:g} s "
                              f"cycle){detail}; allowed: frequencies {below} {f_half:g} Hz, or a drive cycle "
                              f"{below} {0.5 / f:g} s")
