"""JSON Schema of the sequence, station and record files, for editors."""

from __future__ import annotations

from typing import Any


def schema(which: str) -> dict[str, Any]:
    if which == "station":
        from harness.config.station import Station as model
    elif which == "record":
        from harness.calc.record import Record as model
    else:
        from harness.config.sequence import Sequence as model
    document = model.model_json_schema(by_alias=True)
    document["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    document.setdefault("title", f"harness {which} file")
    return document
