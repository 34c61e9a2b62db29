"""The JSON document of one check (docs/diagnosis.schema.json): the diagnosis with its source,
design, cautions and checks. Assembles finished results only; used by the CLI and the API.
"""

from __future__ import annotations

import math
from typing import Any


def json_ready(obj: Any) -> Any:
    """Plain JSON types; a non-finite float becomes null (the contract's 'infinite or
    undefined'), numpy scalars become Python numbers."""
    if isinstance(obj, dict):
        return {str(k): json_ready(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [json_ready(v) for v in obj]
    if isinstance(obj, bool) or obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, int):
        return obj
    if hasattr(obj, "item"):  # numpy scalar
        return json_ready(obj.item())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def check_document(diagnosis: dict, design: Any, source: str, table_notes: list[str],
                   checks: list[dict]) -> dict:
    """The contract's document: Diagnosis.to_dict() plus source, design (rows, response,
    intercept, groups, notes), cautions and the --fail-if checks, as plain JSON types."""
    from app.report.cautions import choose_cautions

    doc = dict(diagnosis)
    doc["source"] = source
    doc["design"] = {
        "rows_total": design.rows_total,
        "rows_used": design.rows_used,
        "rows_dropped": design.rows_total - design.rows_used,
        "dropped_by": dict(design.dropped_by),
        "response": design.response,
        "intercept": design.intercept,
        "groups": {g: list(c) for g, c in design.groups.items()},
        "notes": list(design.notes) + list(table_notes),
    }
    doc["cautions"] = [c.to_dict() for c in choose_cautions(diagnosis)]
    doc["checks"] = checks
    return json_ready(doc)
