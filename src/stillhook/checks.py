"""One number check for every user-facing parameter: finite, in range, one clear error.

Each module raises its own domain error (RigError, ConfigError, DesignError) through ``error``;
the message always names the parameter, the value and what is allowed.
"""

from __future__ import annotations

import math

from stillhook.errors import ConfigError


def finite_number(name: str, value, *, allowed: str, error: type[Exception] = ConfigError,
                  lo: float | None = None, lo_ok: bool = True, hi: float | None = None,
                  hi_ok: bool = True) -> float:
    """``float(value)`` when it is a finite number within [lo, hi] (ends open where ``*_ok`` is False).

    Raises ``error`` with "<name> = <value> is not a number | is not finite | is out of range;
    allowed: <allowed>". Booleans are not numbers.
    """
    if isinstance(value, bool):
        raise error(f"{name} = {value!r} is not a number; allowed: {allowed}")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise error(f"{name} = {value!r} is not a number; allowed: {allowed}") from None
    if not math.isfinite(v):
        raise error(f"{name} = {value!r} is not finite; allowed: {allowed}")
    below = lo is not None and (v < lo or (v == lo and not lo_ok))
    above = hi is not None and (v > hi or (v == hi and not hi_ok))
    if below or above:
        raise error(f"{name} = {value!r} is out of range; allowed: {allowed}")
    return v
