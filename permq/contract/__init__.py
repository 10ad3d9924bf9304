"""The JSON contract as data: `results.schema.json` (JSON Schema, draft 2020-12) describes the
array that `permq run FILE --format json` prints; `permq schema` prints it.

The file ships inside the package (the wheel carries it); a pipeline can validate permq's
output with any JSON Schema validator.
"""
from __future__ import annotations

import json
from importlib import resources

SCHEMA_FILE = "results.schema.json"


def schema_text() -> str:
    return resources.files(__name__).joinpath(SCHEMA_FILE).read_text(encoding="utf-8")


def schema() -> dict:
    return json.loads(schema_text())
