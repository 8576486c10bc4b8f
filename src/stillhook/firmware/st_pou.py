"""IEC 61131-3 program organisation units (POUs) as objects, and their Structured Text.

A POU is declared once, as data (:class:`StPou`: name, kind, variable sections, body text), and
both the ``.st`` file (:func:`st_text`) and the PLCopen XML (:mod:`stillhook.firmware.plcopen`) are
rendered from that one object, so the two cannot disagree: the XML body is the ST body, character
for character.

Portable subset used everywhere (IEC 61131-3, 3rd edition, 2013): FUNCTION and FUNCTION_BLOCK
only, elementary integer types (INT, DINT, LINT, UDINT) and BOOL, one-dimensional arrays with
literal bounds, initialised VAR CONSTANT tables, no pragmas, no vendor library, no pointers,
no dynamic memory.

Notes
-----
Identifier rule (letters, digits, single underscores, not ending in one) and the comment syntax
``(* ... *)``: IEC 61131-3:2013, sections 6.1.2 and 6.1.5 (from memory).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from stillhook.errors import EmitError

__all__ = ["POU_KINDS", "SECTIONS", "StPou", "StVar", "st_comment", "st_identifier", "st_text", "st_var_lines"]

#: ST keyword of each POU kind (the PLCopen pouType is in plcopen.py).
POU_KINDS = ("FUNCTION", "FUNCTION_BLOCK")
#: Variable sections in the order they are written.
SECTIONS = ("VAR_INPUT", "VAR_OUTPUT", "VAR CONSTANT", "VAR")
_IDENT = re.compile(r"^[A-Za-z](?:_?[A-Za-z0-9])*$")
_TYPES = ("BOOL", "INT", "DINT", "LINT", "UDINT")


def st_identifier(name: str) -> str:
    """``name`` if it is a portable IEC identifier (letter first, no double or trailing underscore)."""
    if not isinstance(name, str) or not _IDENT.match(name):
        raise EmitError(f"{name!r} is not a portable IEC 61131-3 identifier; allowed: a letter, then letters, "
                        "digits and single underscores, not ending in an underscore")
    return name


def st_comment(lines) -> str:
    """One ``(* ... *)`` block. Text from the user (a project file name) is made safe: characters outside
    ASCII become '?', and comment delimiters inside the text are split ('( *', '* )')."""
    safe = ["".join(ch if ch.isascii() else "?" for ch in str(ln)).replace("(*", "( *").replace("*)", "* )")
            for ln in lines]
    if len(safe) == 1:
        return f"(* {safe[0]} *)"
    return "(*\n" + "\n".join(("   " + ln).rstrip() for ln in safe) + "\n*)"


@dataclass(frozen=True)
class StVar:
    """One variable: elementary type, optional array bounds [0 .. length - 1], initial value, comment."""

    name: str
    type: str
    length: int | None = None
    init: int | bool | tuple[int, ...] | None = None
    comment: str = ""

    def __post_init__(self) -> None:
        st_identifier(self.name)
        if self.type not in _TYPES:
            raise EmitError(f"ST type {self.type!r} is not used here; allowed: {', '.join(_TYPES)}")
        if self.length is not None and self.length < 1:
            raise EmitError(f"array {self.name} needs at least one element, got {self.length}")
        if isinstance(self.init, tuple) and len(self.init) != self.length:
            raise EmitError(f"array {self.name}: {len(self.init)} initial values for {self.length} elements")

    @property
    def type_text(self) -> str:
        return self.type if self.length is None else f"ARRAY[0..{self.length - 1}] OF {self.type}"


def _literal(v) -> str:
    if isinstance(v, bool):
        return "TRUE" if v else "FALSE"
    return str(int(v))


def st_var_lines(var: StVar, per_line: int = 8) -> list[str]:
    """Declaration lines of one variable (indented by 4), arrays wrapped ``per_line`` values a line."""
    tail = f" {st_comment([var.comment])}" if var.comment else ""
    if var.init is None:
        return [f"    {var.name} : {var.type_text};{tail}"]
    if not isinstance(var.init, tuple):
        return [f"    {var.name} : {var.type_text} := {_literal(var.init)};{tail}"]
    vals = [_literal(v) for v in var.init]
    chunks = [", ".join(vals[i:i + per_line]) for i in range(0, len(vals), per_line)]
    out = [f"    {var.name} : {var.type_text} := [{tail}"]
    out += [f"        {c}," for c in chunks[:-1]] + [f"        {chunks[-1]}];"]
    return out


@dataclass(frozen=True)
class StPou:
    """A FUNCTION or FUNCTION_BLOCK: header comment, sections ``((section, vars), ...)``, body text.

    ``body`` is the statement list exactly as written between the declarations and the END keyword
    (ends with a newline). A FUNCTION has a ``return_type``.
    """

    name: str
    kind: str
    comment: tuple[str, ...]
    sections: tuple[tuple[str, tuple[StVar, ...]], ...]
    body: str
    return_type: str | None = None

    def __post_init__(self) -> None:
        st_identifier(self.name)
        if self.kind not in POU_KINDS:
            raise EmitError(f"POU kind {self.kind!r}; allowed: {', '.join(POU_KINDS)}")
        if (self.kind == "FUNCTION") != (self.return_type is not None):
            raise EmitError(f"{self.name}: a FUNCTION (and only a FUNCTION) has a return type")
        order = [s for s, _ in self.sections]
        if any(s not in SECTIONS for s in order) or order != sorted(order, key=SECTIONS.index):
            raise EmitError(f"{self.name}: sections {order}; allowed, in this order: {', '.join(SECTIONS)}")
        names = [v.name.upper() for _, vs in self.sections for v in vs]
        if len(set(names)) != len(names) or self.name.upper() in names:
            raise EmitError(f"{self.name}: variable names repeat (ST names are case-insensitive)")
        if not self.body.endswith("\n"):
            raise EmitError(f"{self.name}: the body must end with a newline")

    def variables(self, section: str) -> tuple[StVar, ...]:
        return next((vs for s, vs in self.sections if s == section), ())


def st_text(pou: StPou) -> str:
    """The POU in Structured Text: comment, header, declarations, body, END keyword."""
    head = pou.kind + " " + pou.name + (f" : {pou.return_type}" if pou.return_type else "")
    out = [st_comment(pou.comment), head]
    for section, variables in pou.sections:
        out.append(section)
        for v in variables:
            out += st_var_lines(v)
        out.append("END_VAR")
    return "\n".join(out) + "\n" + pou.body + f"END_{pou.kind}\n"
