"""Domain exceptions.

Every error a user can cause is one of these. Each subclasses a built-in so library
callers can catch ``ValueError`` as usual, and the marker base ``StillhookError`` lets the
CLI print one clear line instead of a traceback.
"""


class StillhookError(Exception):
    """Marker base of every error caused by user input or an impossible request."""


class ConfigError(StillhookError, ValueError):
    """A project file or option is malformed or out of range (names key, value, allowed range)."""


class RigError(StillhookError, ValueError):
    """Physical rig parameters that make no sense (negative mass, non-positive length, NaN)."""


class DesignError(StillhookError, ValueError):
    """A filter or shaper design that cannot be made as asked (impossible tolerance, band, rate)."""


class EmitError(StillhookError, ValueError):
    """Code generation refused: fixed-point limits, RAM budget or table size exceeded."""


class InputFileError(StillhookError, OSError):
    """A file that cannot be read or parsed (missing, unreadable, malformed)."""
