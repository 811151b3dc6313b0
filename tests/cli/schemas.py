"""JSON Schemas (draft 2020-12) of the command line's --json outputs, as documented in docs/json.md.
Additional keys are allowed (outputs may grow); the types of documented keys are strict."""
from __future__ import annotations

NUM = {"type": "number"}
STR = {"type": "string"}
ISO = {"type": "string", "pattern": r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z$"}
HASH = {"type": "string", "pattern": "^[0-9a-f]{64}$"}
SI_DATA = {"type": "object", "properties": {k: NUM for k in (
    "dv_m_s", "duration_s", "propellant_kg", "delta_kg", "pressure_pa", "temperature_k")},
    "not": {"anyOf": [{"required": [k]} for k in ("dv", "duration", "propellant", "delta")]}}

LOG_ROW = {
    "type": "object",
    "required": ["id", "kind", "at", "recorded", "by", "superseded", "data", "hash", "prev", "host", "program"],
    "properties": {
        "id": {"type": "integer"}, "kind": STR, "at": ISO, "recorded": ISO, "by": STR, "note": STR,
        "superseded": {"type": "boolean"}, "amount": {"type": ["string", "null"]},
        "data": {**SI_DATA, "properties": {**SI_DATA["properties"], "changes": {
            **SI_DATA, "properties": {**SI_DATA["properties"], "at": ISO}}}},
        "changes": {"type": "object", "properties": {"at": ISO}},
        "hash": HASH, "prev": HASH, "host": STR, "program": STR,
        "mass_after_kg": NUM, "propellant_kg": NUM, "dv_m_s": NUM,
        "drawn_kg": {"type": "object", "additionalProperties": NUM},
    },
}
LOG = {"$schema": "https://json-schema.org/draft/2020-12/schema", "type": "array", "items": LOG_ROW}

VERIFY = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["intact", "entries", "head", "break", "recorded_heads"],
    "properties": {
        "intact": {"type": "boolean"}, "entries": {"type": "integer"}, "head": HASH,
        "break": {"oneOf": [{"type": "null"}, {"type": "object", "required": ["seq", "problem"],
                                                "properties": {"seq": {"type": "integer"}, "problem": STR}}]},
        "recorded_heads": {"type": "array", "items": {"type": "object", "properties": {
            "file": STR, "seq": {"type": "integer"}, "recorded": STR}}},
    },
}
