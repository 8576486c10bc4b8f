"""outputs.write_json: the same bytes as to_json, with long lists streamed item by item."""

import io

import pytest

from stillhook.outputs import to_json, write_json

DOC = {"a": 1, "empty_list": [], "empty_dict": {}, "nested": {"x": [1.5, {"y": None, "z": "t\u00e9xt"}], "w": []},
       "points": [], "last": [True, False]}


@pytest.mark.parametrize("items", [[], [{"p": 1.0, "r": {"u": 0.25}}], [{"p": 1.0}, 2, [3, {"q": []}], "s"]])
def test_streamed_text_is_to_json_byte_for_byte(items):
    buf = io.StringIO()
    write_json(DOC, buf, streamed={"points": iter(items)})
    assert buf.getvalue() == to_json({**DOC, "points": items})


def test_plain_and_empty_documents():
    for doc in ({}, {"k": 1}, DOC):
        buf = io.StringIO()
        write_json(doc, buf)
        assert buf.getvalue() == to_json(doc)


def test_not_finite_is_refused():
    with pytest.raises(ValueError, match="not finite"):
        write_json({"points": []}, io.StringIO(), streamed={"points": iter([float("nan")])})
