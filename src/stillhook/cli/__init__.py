"""Command-line entry point: ``stillhook COMMAND ...``.

The CLI is thin: each sub-command lives in its own module ``stillhook.cli.<name>``
with ``HELP`` (one line), ``EXAMPLES`` (worked examples, the end of its ``--help``),
``add_arguments(parser)`` and ``run(args) -> int``. Command
modules import only argparse-level things at the top; the numerical work (and heavy
imports such as scipy, python-control, matplotlib) happens inside ``run``.

Errors raised as :class:`stillhook.errors.StillhookError` become one line on stderr
and exit status 2, with no traceback.
"""

from __future__ import annotations

import os

#: One BLAS thread per process in the CLI (a user's own setting wins). The CLI's parallel work runs in worker
#: processes (:mod:`stillhook.workers`); BLAS threads beside them, or beside HiGHS, only spin on the other
#: core. Measured on 2 cores: ``stillhook feedback`` on the feedback example 3.8 s wall / 6.5 s CPU with
#: OpenBLAS's threads, 3.0 s / 3.0 s with one. Set before numpy loads (the imports below load it).
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
for variable in BLAS_THREAD_VARIABLES:
    os.environ.setdefault(variable, "1")

import argparse  # noqa: E402
import importlib  # noqa: E402
import sys  # noqa: E402

from stillhook.cli._common import check_quantity_options  # noqa: E402
from stillhook.errors import StillhookError  # noqa: E402
from stillhook.version import __version__  # noqa: E402

__all__ = ["BLAS_THREAD_VARIABLES", "COMMANDS", "build_parser", "main"]

#: Sub-commands in the order ``--help`` lists them; each is a module of this package.
COMMANDS = ("modes", "simulate", "shaper", "notch", "feedback", "compare", "sweep", "emit", "report", "identify",
            "calibrate", "demo")


def _available_commands() -> list[tuple[str, object]]:
    return [(name, importlib.import_module(f"stillhook.cli.{name}")) for name in COMMANDS]


def build_parser() -> argparse.ArgumentParser:
    """Return the top-level parser with every available sub-command."""
    parser = argparse.ArgumentParser(
        prog="stillhook",
        description="Design and verify anti-sway command shapers and notch filters for a "
        "two-mode (hook and payload) crane load, and emit fixed-point C for the drive.",
        epilog="examples:\n  stillhook demo                      # the whole job on the built-in demo project\n"
               "  stillhook shaper my_crane.toml      # the shaper design for your crane\n"
               "'stillhook COMMAND --help' ends with examples of that command.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"stillhook {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    for name, module in _available_commands():
        examples = "examples:\n" + getattr(module, "EXAMPLES", "")
        p = sub.add_parser(name, help=module.HELP, description=module.HELP, epilog=examples,
                           formatter_class=argparse.RawDescriptionHelpFormatter)
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the CLI; return the process exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        check_quantity_options(args)
        return int(args._run(args) or 0)
    except StillhookError as exc:
        print(f"stillhook: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("stillhook: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
