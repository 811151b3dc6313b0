"""JSON Schemas (draft 2020-12) of the command line's --json outputs, as documented in docs/json.md.
Additional keys are allowed (outputs may grow); the types of documented keys are strict."""
from __future__ import annotations

NUM = {"type": "number"}
STR = {"type": "string"}
ISO = {"type": "string", "pattern": r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z$"}
HASH = {"type": "string", "pattern": "^[0-9a-f]{64}$"}
SI_DATA = {"type": "object", "properties": {**{k: NUM for k in (
    "dv_m_s", "duration_s", "propellant_kg", "delta_kg", "pressure_pa", "temperature_k", "on_time_s")},
    "pulses": {"type": "integer", "minimum": 1}},
    "not": {"anyOf": [{"required": [k]} for k in ("dv", "duration", "propellant", "delta", "on_time")]}}

LOG_ROW = {
    "type": "object",
    "required": ["id", "kind", "at", "recorded", "by", "superseded", "data", "hash", "prev", "host", "program"],
    "properties": {
        "id": {"type": "integer"}, "kind": STR, "at": ISO, "recorded": ISO, "by": STR, "note": STR,
        "superseded": {"type": "boolean"}, "amount": {"type": ["string", "null"]},
        "data": {**SI_DATA, "dependentRequired": {"pulses": ["on_time_s", "duration_s"]},
                 "properties": {**SI_DATA["properties"], "changes": {
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

VERDICT = {"type": "string", "enum": ["feasible", "marginal", "infeasible"]}
PLAN_CHECK_NOW = {"type": "object", "required": ["verdict", "probability", "confidence", "samples"], "properties": {
    "verdict": VERDICT, "probability": NUM, "confidence": NUM, "samples": {"type": "integer"}, "reason": STR,
    "dv_free_after_m_s": NUM}}
LIFE = {"type": "object", "properties": {"runs_out": {"type": ["string", "null"]}, "years_left": {"type": ["number", "null"]}}}

STATUS = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["craft", "entries", "as_of", "mass_kg", "dry_mass_kg", "tanks", "engines", "reserves",
                 "pending_plans", "integrity", "warnings", "caution", "forecast", "confidence", "uncertainty"],
    "properties": {
        "craft": STR, "ledger": STR, "entries": {"type": "integer"}, "as_of": {"type": ["string", "null"]},
        "mass_kg": NUM, "dry_mass_kg": NUM, "integrity": STR, "caution": STR, "confidence": NUM,
        "warnings": {"type": "array", "items": STR},
        "tanks": {"type": "object", "additionalProperties": {"type": "object", "required": [
            "fluid", "load_kg", "remaining_kg", "residual_kg", "usable_kg", "usable_low_kg"], "properties": {
            "fluid": STR, "load_kg": NUM, "remaining_kg": NUM, "residual_kg": NUM, "usable_kg": NUM,
            "usable_low_kg": NUM}}},
        "engines": {"type": "object", "additionalProperties": {"type": "object", "required": [
            "dv_available_m_s", "dv_free_m_s", "limiting_tank", "reserves_met", "dv_free_low_m_s"], "properties": {
            "dv_available_m_s": NUM, "dv_free_m_s": NUM, "dv_free_low_m_s": NUM, "dv_available_low_m_s": NUM,
            "limiting_tank": {"type": ["string", "null"]}, "reserves_met": {"type": "boolean"}}}},
        "reserves": {"type": "array", "items": {"type": "object", "properties": {
            "id": STR, "engine": STR, "dv_m_s": NUM}}},
        "pending_plans": {"type": "array", "items": {"type": "object", "required": [
            "id", "engine", "dv_m_s", "at", "approval"], "properties": {
            "id": {"type": "integer"}, "engine": STR, "dv_m_s": NUM, "at": ISO,
            "approval": {"type": "string", "enum": ["approved", "rejected", "stale", "none"]},
            "verdict_now": PLAN_CHECK_NOW}}},
        "forecast": {"type": "object", "properties": {"engines": {"type": "array", "items": {
            "type": "object", "required": ["engine"], "properties": {
                "engine": STR, "dv_per_year_m_s": NUM, "runs_out": {"type": ["string", "null"]},
                "years_left": {"type": ["number", "null"]}, "low": LIFE}}},
            "notes": {"type": "array", "items": STR}}},
        "uncertainty": {"type": "object", "required": ["samples", "seed", "reserves_probability"], "properties": {
            "samples": {"type": "integer"}, "seed": {"type": "integer"}, "reserves_probability": NUM,
            "mass_low_kg": NUM, "mass_sd_kg": NUM}},
    },
}

CHECK = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["engine", "dv_m_s", "verdict", "probability", "confidence", "propellant_kg",
                 "propellant_by_tank_kg", "dv_free_after_m_s", "dv_free_after_low_m_s", "limiting_tank",
                 "least_margin_tank", "margin_after_reserves_kg", "commitments", "samples", "seed", "caution"],
    "properties": {
        "engine": STR, "dv_m_s": NUM, "verdict": VERDICT, "probability": NUM, "probability_se": NUM,
        "confidence": NUM, "propellant_kg": NUM, "propellant_by_tank_kg": {"type": "object", "additionalProperties": NUM},
        "dv_free_after_m_s": NUM, "dv_free_after_low_m_s": NUM, "limiting_tank": {"type": ["string", "null"]},
        "least_margin_tank": {"type": ["string", "null"]},
        "margin_after_reserves_kg": {"type": "object", "additionalProperties": NUM},
        "commitments": {"type": "array", "items": {"type": "object", "required": ["engine", "dv_m_s"],
                                                   "properties": {"engine": STR, "dv_m_s": NUM}}},
        "samples": {"type": "integer"}, "seed": {"type": "integer"}, "reason": STR, "caution": STR,
        "approved_only": {"type": "boolean"},
    },
}
