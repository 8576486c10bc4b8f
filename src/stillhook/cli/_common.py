"""Small helpers shared by the command modules (argument patterns, option checks, tables, JSON).

Options that carry a physical quantity are declared with :func:`add_quantity_option`: the option's name carries
the unit like the project key (``--hook-mass-kg``), its metavar is the one for that unit, and
:func:`check_quantity_options` (run by ``stillhook.cli.main`` before any command) checks every value against the
same :data:`stillhook.checks.LIMITS` as the project key, naming the option the user typed.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

#: One metavar per unit.
METAVARS = {"kg": "KG", "m": "M", "Hz": "HZ", "s": "S", "%": "PCT", "dB": "DB", "": "RATIO", "m/s2": "M_S2",
            "m/s": "M_S", "points": "N", "rigs": "N"}


def add_project_argument(parser: argparse.ArgumentParser, *, optional: bool = False) -> None:
    """Positional PROJECT.toml (the word ``demo`` selects the built-in demo project)."""
    parser.add_argument("project", nargs="?" if optional else None, metavar="PROJECT.toml",
                        help="project file; 'demo' uses the built-in demo project (./demo for a file named demo)")


def add_quantity_option(parser: argparse.ArgumentParser, flag: str, quantity: str, help: str, **kwargs) -> None:
    """An option holding ``quantity`` (a key of stillhook.checks.LIMITS), checked like the project key."""
    from stillhook.checks import LIMITS

    limit = LIMITS[quantity]
    kwargs.setdefault("type", int if limit.integer else float)
    if "metavar" not in kwargs:
        mv = "INT" if limit.integer and not limit.unit else METAVARS[limit.unit]  # a whole number is no RATIO
        kwargs["metavar"] = mv if kwargs.get("nargs") not in (2,) else (f"{mv}_LO", f"{mv}_HI")
    action = parser.add_argument(flag, help=help, **kwargs)
    known = parser.get_default("_quantities") or ()
    parser.set_defaults(_quantities=(*known, (action.dest, flag, quantity)))


def _flat(value):
    if isinstance(value, list | tuple):
        for v in value:
            yield from _flat(v)
    elif value is not None:
        yield value


def check_quantity_options(args: argparse.Namespace) -> None:
    """Check every quantity option given (stillhook.checks.LIMITS); the error names the option typed."""
    from stillhook.checks import check_quantity

    for dest, flag, quantity in getattr(args, "_quantities", ()) or ():
        for v in _flat(getattr(args, dest, None)):
            check_quantity(quantity, v, name=flag)


def add_out_arguments(parser: argparse.ArgumentParser, *, required: bool, default: str | None = None,
                      what: str = "") -> None:
    """``--out DIR`` and ``--force`` (stillhook.outputs: new or empty folder; --force replaces stillhook's own)."""
    parser.add_argument("--out", metavar="DIR", required=required, default=default,
                        help=(what + "; " if what else "") + "a new or empty folder (checked before any work; "
                        "written all at once)" + (f"; default ./{default}" if default else ""))
    parser.add_argument("--force", action="store_true",
                        help="write into a folder stillhook wrote before, replacing only its own files")


#: Nonlinear simulation speed for up-front estimates (drive cycles per second of wall time on one core,
#: measured: ``stillhook simulate demo --distance-m 200``, 84 000 cycles with the settle window, about 3 s).
SIM_CYCLES_PER_S = 25_000


def estimate_s(n_runs: int, n_cycles: float) -> str:
    """"about N s" for ``n_runs`` nonlinear simulations of ``n_cycles`` each (design time not included)."""
    return f"about {max(1, round(n_runs * n_cycles / SIM_CYCLES_PER_S))} s of simulation"


def say_progress(text: str) -> None:
    """One progress line on stderr, only on a terminal (pipes and files get nothing)."""
    if sys.stderr.isatty():
        sys.stderr.write(f"stillhook: {text} ...\n")
        sys.stderr.flush()


def load_project_arg(name: str | None):
    """The project the positional argument names; says on stderr which one when a file named ``demo`` exists."""
    from stillhook.project import load_project_or_demo

    if name == "demo" and Path("demo").exists():
        sys.stderr.write("stillhook: note: using the built-in demo project; a file named 'demo' is here too, "
                         "give ./demo to use that file\n")
    return load_project_or_demo(name)


def add_json_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON instead of text")


def print_json(obj) -> None:
    from stillhook.outputs import to_json

    sys.stdout.write(to_json(obj))


def format_table(headers: list[str], rows: list[list], *, floatfmt: str = ".4g") -> str:
    """Plain-text table with right-aligned numeric columns."""
    def cell(v):
        if isinstance(v, float):
            return format(v, floatfmt)
        return str(v)

    text = [[cell(v) for v in row] for row in rows]
    widths = [max(len(h), *(len(r[i]) for r in text)) if text else len(h) for i, h in enumerate(headers)]
    lines = ["  ".join(h.rjust(w) for h, w in zip(headers, widths, strict=True)),
             "  ".join("-" * w for w in widths)]
    lines += ["  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in text]
    return "\n".join(lines)


def print_bullets(title: str, items) -> None:
    """A blank line, ``title:``, then one ``  - item`` line each (nothing when items is empty)."""
    items = list(items)
    if items:
        print(f"\n{title}:")
        for item in items:
            print(f"  - {item}")


def print_cautions() -> None:
    """The safety cautions every design output carries (stillhook.CAUTIONS)."""
    from stillhook.cautions import CAUTIONS

    print_bullets("Cautions", CAUTIONS)
