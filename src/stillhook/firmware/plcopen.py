"""PLCopen XML (TC6 2.01, IEC 61131-10) of a list of POUs, for import into PLC programming tools.

Rendered from the same :class:`stillhook.firmware.st_pou.StPou` objects as the ``.st`` file: the
interface as TC6 variable lists, the body as the ST text exactly (inside CDATA), the POU comment as
documentation. Deterministic: no creation time is taken from the clock (the schema requires one,
so a fixed date is written).

Notes
-----
Element names and order: PLCopen TC6, "XML Formats for IEC 61131-3", version 2.01, 2009
(namespace http://www.plcopen.org/xml/tc6_0201); standardised as IEC 61131-10:2019 (from memory).
"""

from __future__ import annotations

from xml.sax.saxutils import escape, quoteattr

from stillhook.errors import EmitError
from stillhook.firmware.st_pou import StPou, StVar
from stillhook.version import __version__

__all__ = ["PLCOPEN_NS", "XHTML_NS", "FIXED_CREATION_TIME", "plcopen_xml"]

PLCOPEN_NS = "http://www.plcopen.org/xml/tc6_0201"
XHTML_NS = "http://www.w3.org/1999/xhtml"
#: Written as fileHeader/@creationDateTime so that the same project gives the same bytes.
FIXED_CREATION_TIME = "2000-01-01T00:00:00"
_POU_TYPE = {"FUNCTION": "function", "FUNCTION_BLOCK": "functionBlock"}
_LIST = {"VAR_INPUT": "inputVars", "VAR_OUTPUT": "outputVars", "VAR": "localVars", "VAR CONSTANT": "localVars"}


def _cdata(text: str) -> str:
    if "]]>" in text:
        raise EmitError("ST text contains ']]>' and cannot go into a CDATA section")
    return f"<![CDATA[{text}]]>"


def _doc(text: str, indent: str) -> list[str]:
    return [f"{indent}<documentation>", f"{indent}  <xhtml:p>{escape(text)}</xhtml:p>", f"{indent}</documentation>"]


def _type(var: StVar, indent: str) -> list[str]:
    if var.length is None:
        return [f"{indent}<type><{var.type}/></type>"]
    return [f"{indent}<type>", f'{indent}  <array>', f'{indent}    <dimension lower="0" upper="{var.length - 1}"/>',
            f"{indent}    <baseType><{var.type}/></baseType>", f"{indent}  </array>", f"{indent}</type>"]


def _value(v) -> str:
    if isinstance(v, bool):
        return "TRUE" if v else "FALSE"
    return str(int(v))


def _variable(var: StVar, indent: str) -> list[str]:
    out = [f"{indent}<variable name={quoteattr(var.name)}>", *_type(var, indent + "  ")]
    if isinstance(var.init, tuple):
        out.append(f"{indent}  <initialValue>")
        out.append(f"{indent}    <arrayValue>")
        out += [f'{indent}      <value><simpleValue value="{_value(v)}"/></value>' for v in var.init]
        out += [f"{indent}    </arrayValue>", f"{indent}  </initialValue>"]
    elif var.init is not None:
        out.append(f'{indent}  <initialValue><simpleValue value="{_value(var.init)}"/></initialValue>')
    if var.comment:
        out += _doc(var.comment, indent + "  ")
    return out + [f"{indent}</variable>"]


def _pou(pou: StPou) -> list[str]:
    ind = "      "
    out = [f'{ind}<pou name={quoteattr(pou.name)} pouType="{_POU_TYPE[pou.kind]}">', f"{ind}  <interface>"]
    if pou.return_type:
        out.append(f"{ind}    <returnType><{pou.return_type}/></returnType>")
    for section, variables in pou.sections:
        constant = ' constant="true"' if section == "VAR CONSTANT" else ""
        out.append(f"{ind}    <{_LIST[section]}{constant}>")
        for v in variables:
            out += _variable(v, ind + "      ")
        out.append(f"{ind}    </{_LIST[section]}>")
    out += [f"{ind}  </interface>", f"{ind}  <body>", f"{ind}    <ST>",
            f"{ind}      <xhtml:p>{_cdata(pou.body)}</xhtml:p>", f"{ind}    </ST>", f"{ind}  </body>"]
    out += _doc("\n".join(pou.comment), ind + "  ")
    return out + [f"{ind}</pou>"]


def plcopen_xml(pous: list[StPou], project_name: str, comment: str) -> str:
    """The whole TC6 project file: header, the POUs, an empty configuration list."""
    out = ['<?xml version="1.0" encoding="utf-8"?>',
           f"<!-- {escape(comment).replace('--', '- -')} -->",
           f'<project xmlns="{PLCOPEN_NS}" xmlns:xhtml="{XHTML_NS}">',
           f'  <fileHeader companyName="" productName="stillhook" productVersion="{escape(__version__)}" '
           f'creationDateTime="{FIXED_CREATION_TIME}"/>',
           f"  <contentHeader name={quoteattr(project_name)}>",
           "    <coordinateInfo>",
           '      <fbd><scaling x="1" y="1"/></fbd>',
           '      <ld><scaling x="1" y="1"/></ld>',
           '      <sfc><scaling x="1" y="1"/></sfc>',
           "    </coordinateInfo>",
           "  </contentHeader>",
           "  <types>",
           "    <dataTypes/>",
           "    <pous>"]
    for pou in pous:
        out += _pou(pou)
    out += ["    </pous>", "  </types>", "  <instances>", "    <configurations/>", "  </instances>", "</project>", ""]
    return "\n".join(out)
