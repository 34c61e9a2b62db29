"""The check's JSON writer: the same document json.dumps(json_ready(doc)) gives, laid out
with a line per field and one line per matrix row.

Reference: Python's json module (json.loads of the text, and its own encoding of the
json_ready document); RFC 8259 (no NaN or Infinity, ASCII-only text is valid JSON).
"""

from __future__ import annotations

import json
import math

import numpy as np

from rankscope.report.checks import json_ready, json_text


def _strict(text: str) -> object:
    def refuse(token: str) -> None:
        raise ValueError(f"non-JSON constant {token}")

    return json.loads(text, parse_constant=refuse)


def test_same_document_as_json_ready() -> None:
    rng = np.random.default_rng(3)
    doc = {
        "n": np.int64(7), "flag": np.bool_(True), "none": None, "name": "Δ\u202e<b>",
        "inf": math.inf, "vals": [1.5, -math.inf, math.nan, np.float64(2.0)],
        "matrix": rng.standard_normal((3, 4)).tolist(), "empty": {}, "nothing": [],
        "rows": [{"a": 1.0, "b": math.inf}, {"a": np.float32(0.5), "b": 2}],
        "deep": {"x": [{"y": [[1, 2], []]}], 3: "int key"},
    }
    text = json_text(doc)
    assert text.isascii() and text.endswith("\n")
    assert _strict(text) == json.loads(json.dumps(json_ready(doc), allow_nan=False))


def test_a_line_per_field_and_per_matrix_row() -> None:
    doc = {"a": 1, "m": [[1.0, 2.0], [3.0, 4.0]], "d": {"k": [1, 2]}}
    assert json_text(doc).splitlines() == [
        "{", '  "a": 1,', '  "m": [', "    [1.0,2.0],", "    [3.0,4.0]", "  ],",
        '  "d": {', '    "k": [1,2]', "  }", "}"]
