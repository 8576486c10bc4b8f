"""Small helpers shared by the command modules (argument patterns, tables, JSON)."""

from __future__ import annotations

import argparse
import sys


def add_project_argument(parser: argparse.ArgumentParser, *, optional: bool = False) -> None:
    """Positional PROJECT.toml (the word ``demo`` selects the built-in demo project)."""
    parser.add_argument("project", nargs="?" if optional else None, metavar="PROJECT.toml",
                        help="project file; 'demo' uses the built-in demo project")


def add_json_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON instead of a table")


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
