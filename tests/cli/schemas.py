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
        "hash": HASH, "prev": HASH, "host": STR, "program": STR, "on_behalf_of": STR,
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
                 "thrusters", "pending_plans", "integrity", "warnings", "caution", "forecast", "confidence", "uncertainty"],
    "properties": {
        "craft": STR, "ledger": STR, "entries": {"type": "integer"}, "as_of": {"type": ["string", "null"]},
        "mass_kg": NUM, "dry_mass_kg": NUM, "integrity": STR, "caution": STR, "confidence": NUM,
        "warnings": {"type": "array", "items": STR},
        "tanks": {"type": "object", "additionalProperties": {"type": "object", "required": [
            "fluid", "load_kg", "remaining_kg", "residual_kg", "usable_kg", "usable_low_kg"], "properties": {
            "fluid": STR, "load_kg": NUM, "remaining_kg": NUM, "residual_kg": NUM, "usable_kg": NUM,
            "usable_low_kg": NUM, "pressure_pa": NUM, "pressure_temperature_k": NUM, "expansion": NUM,
            "gauge": {"oneOf": [{"type": "null"}, {"type": "object", "properties": {
                "predicted_pressure_pa": NUM, "measured_pressure_pa": NUM, "pressure_difference_pa": NUM,
                "pressure_sigma_pa": NUM, "pressure_difference_sigma": {"type": ["number", "null"]}}}]}}}},
        "engines": {"type": "object", "additionalProperties": {"type": "object", "required": [
            "dv_available_m_s", "dv_free_m_s", "limiting_tank", "reserves_met", "dv_free_low_m_s"], "properties": {
            "dv_available_m_s": NUM, "dv_free_m_s": NUM, "dv_free_low_m_s": NUM, "dv_available_low_m_s": NUM,
            "limiting_tank": {"type": ["string", "null"]}, "reserves_met": {"type": "boolean"}}}},
        "reserves": {"type": "array", "items": {"type": "object", "properties": {
            "id": STR, "engine": STR, "dv_m_s": NUM}}},
        "mixture_outage": {"type": "array", "items": {"type": "object", "required": [
            "tanks", "engine", "mixture_ratio", "stranded_kg", "stranded_tank", "runs_out_first",
            "stranded_high_kg", "stranded_mean_kg", "stranded_tank_share"], "properties": {
            "tanks": {"type": "array", "items": STR, "minItems": 2, "maxItems": 2}, "engine": STR,
            "mixture_ratio": NUM, "mixture_ratio_sigma": {"type": ["number", "null"]}, "stranded_kg": NUM,
            "stranded_tank": {"type": ["string", "null"]}, "runs_out_first": {"type": ["string", "null"]},
            "stranded_high_kg": NUM, "stranded_mean_kg": NUM,
            "stranded_tank_share": {"type": "object", "additionalProperties": NUM}}}},
        "thrusters": {"type": "array", "items": {"type": "object", "required": [
            "engine", "on_time_s", "pulses", "throughput_kg", "life", "life_used"], "additionalProperties": False,
            "properties": {
                "engine": STR, "on_time_s": {"type": "number", "minimum": 0}, "pulses": {"type": "integer", "minimum": 0},
                "throughput_kg": NUM,
                "life": {"type": "object", "additionalProperties": False, "properties": {
                    "pulses": NUM, "throughput_kg": NUM, "on_time_s": NUM}},
                "life_used": {"type": "object", "additionalProperties": False, "properties": {
                    "pulses": NUM, "throughput_kg": NUM, "on_time_s": NUM}}}}},
        "pending_plans": {"type": "array", "items": {"type": "object", "required": [
            "id", "engine", "dv_m_s", "at", "approval", "approvals_needed", "approvals_counted"], "properties": {
            "id": {"type": "integer"}, "engine": STR, "dv_m_s": NUM, "at": ISO,
            "approval": {"type": "string", "enum": ["approved", "rejected", "stale", "none", "partial"]},
            "approvals_needed": {"type": "integer", "minimum": 1}, "approvals_counted": {"type": "integer", "minimum": 0},
            "approval_detail": {"type": "object", "properties": {
                "approvers": {"type": "array", "items": STR},
                "stale_approvers": {"type": "object", "additionalProperties": STR}}},
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

GAUGE = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["tank", "fluid", "method", "pressure_pa", "temperature_k", "pressure_sigma_pa", "temperature_sigma_k",
                 "bookkeeping_kg", "bookkeeping_sigma_kg", "flagged", "sigmas", "details", "at", "id", "dry_run",
                 "warnings", "caution"],
    "properties": {
        "tank": STR, "fluid": STR, "method": {"type": "string", "enum": ["blowdown PVT", "gas density"]},
        "pressure_pa": NUM, "temperature_k": NUM, "pressure_sigma_pa": NUM, "temperature_sigma_k": NUM,
        "propellant_kg": NUM, "sigma_kg": NUM, "bookkeeping_kg": NUM, "bookkeeping_sigma_kg": NUM,
        "difference_kg": NUM, "combined_sigma_kg": NUM, "difference_sigma": NUM, "rebaseline_kg": NUM,
        "rebaseline_sigma_kg": NUM, "flagged": {"type": "boolean"}, "limit_sigma": NUM,
        "phase": {"type": "string", "enum": ["two-phase"]}, "min_kg": NUM, "max_kg": NUM,
        "bookkeeping_in_range": {"type": "boolean"}, "rebaseline_refused": STR,
        "sigmas": {"type": "object", "additionalProperties": NUM, "required": ["gas_temperature_offset_k"]},
        "details": {"type": "object"}, "at": STR, "id": {"type": ["integer", "null"]}, "dry_run": {"type": "boolean"},
        "warnings": {"type": "array", "items": STR}, "caution": STR,
    },
    "if": {"required": ["phase"]},
    "then": {"required": ["min_kg", "max_kg", "bookkeeping_in_range", "rebaseline_refused"],
             "not": {"anyOf": [{"required": ["propellant_kg"]}, {"required": ["sigma_kg"]}]}},
    "else": {"required": ["propellant_kg", "sigma_kg", "difference_kg", "difference_sigma", "rebaseline_kg"]},
}

NUM_OR_NULL = {"type": ["number", "null"]}
STR_OR_NULL = {"type": ["string", "null"]}
FLEET_ROW = {
    "type": "object",
    "required": ["state", "craft", "ledger", "error", "entries", "head", "as_of", "last_entry_at", "mass_kg",
                 "confidence", "usable_kg", "usable_low_kg", "tanks", "engines", "margin_engine", "margin_m_s",
                 "runout", "pending_plans", "warnings", "warnings_count", "integrity", "last_gauge_at",
                 "days_since_gauge", "attention"],
    "properties": {
        "state": {"type": "string", "enum": ["ok", "broken", "unreadable"]},
        "craft": STR_OR_NULL, "ledger": STR, "error": STR_OR_NULL, "entries": {"type": ["integer", "null"]},
        "head": {"type": ["object", "null"], "required": ["seq", "hash"],
                 "properties": {"seq": {"type": "integer"}, "hash": STR}},
        "as_of": {"anyOf": [ISO, {"type": "null"}]}, "last_entry_at": STR_OR_NULL, "mass_kg": NUM_OR_NULL,
        "confidence": NUM_OR_NULL, "usable_kg": NUM_OR_NULL, "usable_low_kg": NUM_OR_NULL,
        "tanks": {"type": "object", "additionalProperties": {"type": "object", "required": ["usable_kg", "usable_low_kg"],
                                                             "properties": {"usable_kg": NUM, "usable_low_kg": NUM}}},
        "engines": {"type": "object", "additionalProperties": {
            "type": "object", "required": ["dv_available_m_s", "dv_free_m_s", "dv_free_low_m_s", "limiting_tank",
                                           "reserves_met"],
            "properties": {"dv_available_m_s": NUM, "dv_free_m_s": NUM, "dv_free_low_m_s": NUM,
                           "limiting_tank": STR_OR_NULL, "reserves_met": {"type": "boolean"}}}},
        "margin_engine": STR_OR_NULL, "margin_m_s": NUM_OR_NULL,
        "runout": {"type": "array", "items": {"type": "object", "required": ["engine", "runs_out", "runs_out_low"],
                                              "properties": {"engine": STR, "dv_per_year_m_s": NUM,
                                                             "runs_out": STR_OR_NULL, "runs_out_low": STR_OR_NULL,
                                                             "years_left": NUM_OR_NULL, "years_left_low": NUM_OR_NULL}}},
        "pending_plans": {"type": "array", "items": {
            "type": "object", "required": ["id", "engine", "dv_m_s", "at", "approval", "verdict_now"],
            "properties": {"id": {"type": "integer"}, "engine": STR, "dv_m_s": NUM, "at": ISO,
                           "approval": {"type": "string", "enum": ["approved", "rejected", "stale", "none", "partial"]},
                           "verdict_now": {"anyOf": [VERDICT, {"type": "null"}]}}}},
        "warnings": {"type": "array", "items": STR}, "warnings_count": {"type": "integer"},
        "integrity": STR, "last_gauge_at": {"anyOf": [ISO, {"type": "null"}]},
        "days_since_gauge": NUM_OR_NULL, "attention": {"type": "array", "items": STR},
    },
}
FLEET = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["fleet", "source", "at", "margin_m_s", "sort", "attention_only", "summary", "craft", "caution"],
    "properties": {
        "fleet": STR, "source": {"type": "string", "enum": ["folder", "database"]}, "at": ISO,
        "margin_m_s": NUM,
        "sort": STR, "attention_only": {"type": "boolean"},
        "summary": {"type": "object", "required": ["craft", "attention", "broken", "unreadable"],
                    "additionalProperties": {"type": "integer"}},
        "craft": {"type": "array", "items": FLEET_ROW}, "caution": STR,
    },
}

SOURCE = {"type": "object", "required": ["file", "sha256", "format", "key"], "properties": {
    "file": STR, "sha256": HASH, "format": {"type": "string", "enum": ["opm", "ocm", "firings"]},
    "message_id": STR, "creation_date": STR, "man_id": STR, "basis": STR, "device": STR, "rows": STR,
    "row_count": {"type": "integer"}, "pulses": {"type": "integer"}, "delta_mass_kg": NUM, "dv_sigma_m_s": NUM,
    "time_system": STR, "key": {"type": "array", "items": STR}}}

IMPORT = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["file", "sha256", "format", "dry_run", "already_imported", "entries", "recorded", "corrected",
                 "unchanged", "warnings", "caution"],
    "properties": {
        "file": STR, "sha256": HASH, "format": STR, "dry_run": {"type": "boolean"},
        "already_imported": {"type": "array", "items": {"type": "integer"}},
        "entries": {"type": "array", "items": {
            "type": "object", "required": ["action", "kind", "at", "engine", "id", "what", "source"],
            "properties": {"action": {"type": "string", "enum": ["record", "correct", "same"]},
                           "kind": {"type": "string", "enum": ["plan", "burn", "use"]}, "at": ISO, "engine": STR,
                           "id": {"type": "integer"}, "what": STR, "source": SOURCE, "corrects": {"type": "integer"},
                           "dv_m_s": NUM, "duration_s": NUM, "propellant_kg": NUM, "sigma": NUM,
                           "delta_mass_kg": NUM}}},
        "recorded": {"type": "integer"}, "corrected": {"type": "integer"}, "unchanged": {"type": "integer"},
        "warnings": {"type": "array", "items": STR}, "caution": STR,
    },
}

EXPORT = {
    "$schema": "https://json-schema.org/draft/2020-12/schema", "type": "object",
    "required": ["out", "format", "encoding", "executed", "planned", "wet_mass_kg", "dry_mass_kg", "caution"],
    "properties": {"out": STR, "format": {"const": "ocm"}, "encoding": {"type": "string", "enum": ["kvn", "xml"]},
                   "executed": {"type": "integer"}, "planned": {"type": "integer"}, "wet_mass_kg": NUM,
                   "dry_mass_kg": NUM, "caution": STR},
}
