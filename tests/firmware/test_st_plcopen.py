"""The PLCopen XML (TC6 2.01) holds the same POUs as the .st file: well-formed, the TC6 namespace and
skeleton, each body exactly the ST text, each interface the same declarations as the ST (read back from
the .st with an independent parser, tree-sitter-iec61131-3-st).

Element names and order: PLCopen TC6, "XML Formats for IEC 61131-3", version 2.01 (from memory); no XSD
is used (none is shipped), so the structure is checked element by element."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import pytest

from stillhook.firmware.plcopen import PLCOPEN_NS, XHTML_NS
from stillhook.firmware.render_st import render_st_files, st_file_names, st_pous

ts = pytest.importorskip("tree_sitter", reason="tree-sitter is in the [test] extra: pip install -e '.[test]'")
st_grammar = pytest.importorskip("tree_sitter_iec61131_3_st", reason="tree-sitter-iec61131-3-st is in the [test] "
                                 "extra: pip install -e '.[test]'")

N = {"p": PLCOPEN_NS, "x": XHTML_NS}
_LIST_OF = {"inputVars": "VAR_INPUT", "outputVars": "VAR_OUTPUT", "localVars": "VAR"}
_ELEMENTARY = {"BOOL", "INT", "DINT", "LINT", "UDINT"}


@pytest.fixture(scope="module", params=["sb", "sd", "se"])
def folder(request, st_plans):
    plan = st_plans[request.param]
    files = render_st_files(plan)
    names = st_file_names(plan)
    return plan, files[names["st"]], files[names["xml"]]


def _type_of(type_el):
    (t,) = list(type_el)
    tag = t.tag.split("}")[1]
    if tag != "array":
        assert tag in _ELEMENTARY
        return tag, None
    dim = t.find("p:dimension", N)
    (base,) = list(t.find("p:baseType", N))
    assert dim.get("lower") == "0"
    return base.tag.split("}")[1], int(dim.get("upper")) + 1


def _xml_pous(xml_text: str) -> dict:
    root = ET.fromstring(xml_text)
    assert root.tag == f"{{{PLCOPEN_NS}}}project"
    assert [c.tag.split("}")[1] for c in root] == ["fileHeader", "contentHeader", "types", "instances"]
    header = root.find("p:fileHeader", N)
    assert header.get("productName") == "stillhook" and header.get("creationDateTime")
    assert root.find("p:contentHeader/p:coordinateInfo/p:fbd/p:scaling", N) is not None
    assert root.find("p:instances/p:configurations", N) is not None
    out = {}
    for pou in root.findall("p:types/p:pous/p:pou", N):
        assert [c.tag.split("}")[1] for c in pou] == ["interface", "body", "documentation"]
        iface = pou.find("p:interface", N)
        ret = iface.find("p:returnType", N)
        decls = []
        for lst in iface:
            tag = lst.tag.split("}")[1]
            if tag == "returnType":
                continue
            section = _LIST_OF[tag] + (" CONSTANT" if lst.get("constant") == "true" else "")
            for v in lst.findall("p:variable", N):
                typ, length = _type_of(v.find("p:type", N))
                init = v.find("p:initialValue", N)
                if init is None:
                    value = None
                elif init.find("p:arrayValue", N) is not None:
                    value = tuple(e.get("value") for e in init.findall("p:arrayValue/p:value/p:simpleValue", N))
                else:
                    value = init.find("p:simpleValue", N).get("value")
                decls.append((section, v.get("name"), typ, length, value))
        (st_el,) = pou.findall("p:body/p:ST/x:p", N)
        out[pou.get("name")] = {"type": pou.get("pouType"), "return": None if ret is None else list(ret)[0].tag,
                                "decls": decls, "body": st_el.text}
    return out


def _st_decls(st_text: str) -> dict:
    """{POU name: [(section, name, type, length, init)]} read from the .st by tree-sitter."""
    tree = ts.Parser(ts.Language(st_grammar.language())).parse(st_text.encode())
    assert not tree.root_node.has_error
    out = {}
    for pou in tree.root_node.named_children:
        if pou.type == "comment":
            continue
        decls = []
        for block in pou.named_children:
            if block.type not in ("var_input", "var_output", "var_block"):
                continue
            section = {"var_input": "VAR_INPUT", "var_output": "VAR_OUTPUT", "var_block": "VAR"}[block.type]
            if block.type == "var_block" and b"CONSTANT" in block.text.split(b"\n")[0]:
                section += " CONSTANT"
            for d in block.named_children:
                if d.type != "variable_declaration":
                    continue
                t = d.child_by_field_name("type")
                if t.type == "array_type":
                    rng = t.child_by_field_name("range")
                    assert rng.child_by_field_name("lower").text == b"0"
                    typ = t.child_by_field_name("element_type").text.decode()
                    length = int(rng.child_by_field_name("upper").text) + 1
                else:
                    typ, length = t.text.decode(), None
                inits = [i.text.decode() for i in d.children_by_field_name("initial_value")
                         if i.is_named and i.type != "comment"]
                value = (tuple(inits) if length is not None else inits[0]) if inits else None
                decls.append((section, d.child_by_field_name("names").text.decode(), typ, length, value))
        out[pou.child_by_field_name("name").text.decode()] = decls
    return out


def _st_bodies(st_text: str) -> dict:
    """{POU name: text between its last END_VAR line and its END keyword}."""
    pattern = re.compile(r"^(FUNCTION_BLOCK|FUNCTION) (\w+).*?\nEND_VAR\n((?:(?!END_VAR\n).)*?)^END_\1\n",
                         re.S | re.M)
    return {m.group(2): m.group(3) for m in pattern.finditer(st_text)}


def test_xml_is_well_formed_tc6_with_the_st_pous_in_order(folder):
    plan, st, xml = folder
    pous = _xml_pous(xml)
    assert list(pous) == [p.name for p in st_pous(plan)]
    for p in st_pous(plan):
        assert pous[p.name]["type"] == {"FUNCTION": "function", "FUNCTION_BLOCK": "functionBlock"}[p.kind]
        assert (pous[p.name]["return"] is None) == (p.kind == "FUNCTION_BLOCK")


def test_xml_bodies_are_exactly_the_st_bodies(folder):
    plan, st, xml = folder
    bodies = _st_bodies(st)
    pous = _xml_pous(xml)
    assert set(bodies) == set(pous)
    for name, pou in pous.items():
        assert pou["body"] == bodies[name]
        assert pou["body"].count("\n") > 3


def test_xml_interfaces_declare_what_the_st_declares(folder):
    plan, st, xml = folder
    from_st = _st_decls(st)
    from_xml = _xml_pous(xml)
    assert set(from_st) == set(from_xml)
    for name, pou in from_xml.items():
        assert pou["decls"] == from_st[name], name


def test_folder_is_deterministic_and_carries_the_digest(folder, st_plans):
    plan, st, xml = folder
    first, again = render_st_files(plan), render_st_files(plan)
    names = st_file_names(plan)
    assert again == first and again[names["st"]] == st and again[names["xml"]] == xml  # every file, byte for byte
    assert plan.digest and plan.digest in st and plan.digest in xml
