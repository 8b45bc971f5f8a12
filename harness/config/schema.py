"""JSON Schema of the sequence, station and record files, for editors."""

from __future__ import annotations

from typing import Any


def schema(which: str) -> dict[str, Any]:
    from pydantic import BaseModel

    model: type[BaseModel]
    if which == "station":
        from harness.config.station import Station
        model = Station
    elif which == "record":
        from harness.calc.record import Record
        model = Record
    else:
        from harness.config.sequence import Sequence
        model = Sequence
    document = model.model_json_schema(by_alias=True)
    document["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    document.setdefault("title", f"harness {which} file")
    return document
