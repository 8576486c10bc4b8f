"""Lazy re-export of names from a package's modules (PEP 562), used by every package ``__init__``.

A package offers the names of its modules without importing them until first use, so importing a
package (or the top level) stays cheap and heavy libraries load only when a name that needs them
is touched.
"""

from __future__ import annotations

import importlib

__all__ = ["lazy_exports"]


def lazy_exports(package: str, exports: dict[str, str]):
    """``(__getattr__, __dir__)`` for a package offering ``{name: module}`` lazily.

    Parameters
    ----------
    package : str
        The package's ``__name__`` (used in the AttributeError message).
    exports : dict
        Public name -> fully qualified module that defines it.
    """
    def __getattr__(name: str):
        try:
            module = exports[name]
        except KeyError:
            raise AttributeError(f"module {package!r} has no attribute {name!r}") from None
        return getattr(importlib.import_module(module), name)

    def __dir__() -> list[str]:
        return sorted(exports)

    return __getattr__, __dir__
