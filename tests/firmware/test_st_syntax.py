"""A second, independent check of the emitted Structured Text: a general-purpose IEC 61131-3 ST parser
from the package index (tree-sitter-iec61131-3-st, MIT) parses every emitted file without error, and the
operation counts the README and manifest state are recounted from its syntax tree.

The recount walks the parsed FB body as one cycle runs it (reset FALSE, tables checked): the first-call
check and every branch that ends in RETURN are the not-taken exits; for other IF statements the worst
branch counts (with the conditions evaluated to reach it); a FOR loop counts its bound once and one add
and one compare per pass; a WHILE loop its test once more than its passes; a call of one of the file's own
helper functions counts the helper's body; conversions are free."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from stillhook.firmware.render_st import render_st_files, st_blocks, st_file_names
from stillhook.firmware.st_shaper import shaper_cost

ts = pytest.importorskip("tree_sitter", reason="tree-sitter is in the [test] extra: pip install -e '.[test]'")
st_grammar = pytest.importorskip("tree_sitter_iec61131_3_st", reason="tree-sitter-iec61131-3-st is in the [test] "
                                 "extra: pip install -e '.[test]'")

KEYS = ("multiplies", "divisions", "adds", "compares", "array_reads", "array_writes")
_OPS = {"*": "multiplies", "/": "divisions", "+": "adds", "-": "adds",
        **{c: "compares" for c in ("<", "<=", ">", ">=", "=", "<>")}}


def parser():
    return ts.Parser(ts.Language(st_grammar.language()))


@pytest.fixture(scope="module")
def plans(st_plans):
    return st_plans


_TEXTS: dict[str, bytes] = {}


def _st(plan) -> bytes:
    """The plan's .st text (rendered once per prefix; the st_plans prefixes are distinct)."""
    if plan.prefix not in _TEXTS:
        _TEXTS[plan.prefix] = render_st_files(plan)[st_file_names(plan)["st"]].encode()
    return _TEXTS[plan.prefix]


@pytest.mark.parametrize("key", sorted(["sa", "sb", "sc", "sd", "se"]))
def test_emitted_st_parses_without_error(plans, key):
    tree = parser().parse(_st(plans[key]))
    assert not tree.root_node.has_error
    kinds = [n.type for n in tree.root_node.children if n.type != "comment"]
    assert kinds.count("function_block_declaration") == len(st_blocks(plans[key]))


def test_the_parser_does_report_broken_st(plans):
    """The check can fail: a missing END_IF and a C-style shift are syntax errors to it."""
    text = _st(plans["sa"])
    assert parser().parse(text.replace(b"END_IF;", b";", 1)).root_node.has_error
    assert parser().parse(text.replace(b"head := head + 1;", b"head := head << 1;")).root_node.has_error


# -- operation count from the syntax tree ---------------------------------------------------------------
def _zero() -> dict[str, int]:
    return dict.fromkeys(KEYS, 0)


def _add(a, b, k=1):
    return {key: a[key] + k * b[key] for key in KEYS}


class Counter:
    def __init__(self, root, loops: dict[str, int], passes: int):
        self.loops, self.passes = loops, passes
        self.helpers = {}
        for n in root.children:
            if n.type == "function_declaration":
                self.helpers[n.child_by_field_name("name").text.decode().upper()] = n

    def expr(self, n, write=False):
        c = _zero()
        if n.type == "binary_expression":
            op = n.children[1].type
            if op in _OPS:
                c[_OPS[op]] += 1
        elif n.type == "index_expression":
            c["array_writes" if write else "array_reads"] += 1
            return _add(c, self.expr(n.child_by_field_name("index")))
        elif n.type == "call_expression":
            name = n.child_by_field_name("function").text.decode().upper()
            if name in self.helpers:
                c = _add(c, self.body([x for x in self.helpers[name].children_by_field_name("body")]))
            return _add(c, self.expr(n.child_by_field_name("arguments")))
        for ch in n.named_children:
            c = _add(c, self.expr(ch))
        return c

    def ends_in_return(self, stmts) -> bool:
        return any(s.type == "return_statement" for s in stmts)

    def stmt(self, s):
        if s.type == "assignment_statement":
            return _add(self.expr(s.child_by_field_name("left"), write=True), self.expr(s.child_by_field_name("right")))
        if s.type == "if_statement":
            branches = [(s.child_by_field_name("condition"), s.children_by_field_name("consequence"))]
            branches += [(e.child_by_field_name("condition"), e.children_by_field_name("body"))
                         for e in s.named_children if e.type == "elsif_clause"]
            els = [e for e in s.named_children if e.type == "else_clause"]
            worst, conds = None, _zero()
            for cond, body in branches:
                conds = _add(conds, self.expr(cond))
                if not self.ends_in_return(body):
                    cand = _add(conds, self.body(body))
                    worst = cand if worst is None or sum(cand.values()) > sum(worst.values()) else worst
            if els:
                cand = _add(conds, self.body(els[0].named_children))
                worst = cand if worst is None or sum(cand.values()) > sum(worst.values()) else worst
            return worst if worst is not None else conds
        if s.type == "for_statement":
            var = s.child_by_field_name("control").text.decode()
            once = _add(self.expr(s.child_by_field_name("start")), self.expr(s.child_by_field_name("end")))
            per = _add(self.body(s.children_by_field_name("body")), {**_zero(), "adds": 1, "compares": 1})
            return _add(once, per, self.loops[var])
        if s.type == "while_statement":
            cond = self.expr(s.child_by_field_name("condition"))
            return _add(cond, _add(cond, self.body(s.children_by_field_name("body"))), self.passes)
        return _zero()

    def body(self, stmts):
        c = _zero()
        for s in stmts:
            c = _add(c, self.stmt(s))
        return c


def _fb_cost(plan, fb_name: str, loops: dict[str, int]) -> dict[str, int]:
    root = parser().parse(_st(plan)).root_node
    fb = next(n for n in root.children if n.type == "function_block_declaration"
              and n.child_by_field_name("name").text.decode() == fb_name)
    stmts = fb.children_by_field_name("body")
    rows = plan.shaper.n_rows
    counter = Counter(root, loops, math.ceil(math.log2(rows)) if rows > 1 else 0)
    first = stmts[0]
    assert first.type == "if_statement" and b"NOT checked" in first.child_by_field_name("condition").text
    return counter.body(stmts[1:])  # the first-call table check is not part of a cycle


@pytest.mark.parametrize("key", sorted(["sa", "sb", "sc", "sd", "se"]))
def test_stated_operation_counts_match_the_syntax_tree(plans, key):
    plan = plans[key]
    blocks = {b.key: b for b in st_blocks(plan)}
    taps = sorted({len(r.amplitudes) for r in plan.rows})
    for row in blocks["shaper"].cost:
        counted = _fb_cost(plan, blocks["shaper"].pou.name, {"i": row["taps"]})
        assert {k: row[k] for k in KEYS} == counted, row["label"]
    assert sorted({c["taps"] for c in blocks["shaper"].cost}) == taps
    if "notch" in blocks:
        stages = plan.notch.table.n_stages
        root = parser().parse(_st(plan)).root_node
        fb = next(n for n in root.children if n.type == "function_block_declaration"
                  and n.child_by_field_name("name").text.decode() == blocks["notch"].pou.name)
        counted = Counter(root, {"n": stages, "t": 4}, 0).body(fb.children_by_field_name("body"))
        assert {k: blocks["notch"].cost[0][k] for k in KEYS} == counted


def test_shaper_cost_grows_with_the_taps_of_the_row_only(plans):
    """O(taps) per cycle (issue 15 section 3): one fixed increment per tap, the same for every plan and
    format, and nothing that depends on the ring length (the recount above walks the real body)."""
    increments = {tuple(np.subtract(shaper_cost(p, n + 1).as_tuple(), shaper_cost(p, n).as_tuple()))
                  for p in plans.values() for n in (1, 2, 7, 40)}
    assert len(increments) == 1
    assert len({p.shaper.ring_len for p in plans.values()}) > 1  # plans with different rings agree


def test_a_project_name_with_non_ascii_and_comment_delimiters_still_gives_valid_st(plans):
    plan = dataclasses.replace(plans["se"], project_name="Kr\u00e4ne *) (* x", prefix="pz")
    text = render_st_files(plan)[st_file_names(plan)["st"]]
    assert text.isascii() and "Kr?ne * ) ( * x" in text
    assert not parser().parse(text.encode()).root_node.has_error
