"""A JSON Schema of the record files, built from the model's own vocabularies.

Editors (e.g. a YAML language server) use it to autocomplete and check records
as they are typed. `recordkit check` stays the authority: it also checks what a
schema cannot (references between records, dates against each other).
"""
from __future__ import annotations

from . import model as m
from .fields import ID_PATTERN
from .loader import CIRCUIT_KEYS
from .rules import COST_KINDS, DEFAULT_RULES, Interval, coverage_set_names

SCHEMA_ID = "https://recordkit.invalid/records.schema.json"
DAY = {"type": "string", "pattern": r"^\d{4}-\d{2}-\d{2}$", "description": "YYYY-MM-DD"}
DAY_OR_MONTH = {"type": "string", "pattern": r"^\d{4}-\d{2}(-\d{2})?$",
                "description": "YYYY-MM (read as the 1st) or YYYY-MM-DD"}
ID = {"type": "string", "pattern": ID_PATTERN.pattern, "maxLength": 64,
      "description": "lowercase a-z, 0-9 and hyphens; unique in its parent"}
DAY_TIME = {"type": "string", "pattern": r"^\d{4}-\d{2}-\d{2}([ T]\d{2}:\d{2}(:\d{2})?)?$",
            "description": "YYYY-MM-DD, optionally with a time of day: YYYY-MM-DD HH:MM"}
TEXT = {"type": "string"}
NON_NEGATIVE = {"type": "number", "minimum": 0}
# 22e-9 has no dot, so a YAML 1.1 reader sees text: accept that spelling too
CIRCUIT_VALUE = {"anyOf": [NON_NEGATIVE, {"type": "string", "pattern": r"^\+?\d+(\.\d*)?[eE][-+]?\d+$"}]}
FLAG = {"type": "boolean"}


def _enum(enum) -> dict:
    return {"enum": [e.value for e in enum]}


def _object(properties: dict, required: list[str], description: str = "") -> dict:
    schema = {"type": "object", "properties": properties, "required": required, "additionalProperties": False}
    if description:
        schema["description"] = description
    return schema


def record_schema() -> dict:
    room = _object({"id": ID, "name": TEXT, "level": {"type": "integer"}, "use": _enum(m.RoomUse),
                    "outside_sleeping": FLAG, "fuel_burning": FLAG,
                    "appliances": {"type": "array", "items": _enum(m.Appliance)}, "flue": FLAG,
                    "serves": {"type": "array", "items": ID}, "habitable": FLAG}, ["id", "level", "use"])
    listen = {"oneOf": [
        {"type": "string", "description": "a device id in this unit, or property/unit/device"},
        _object({"device": TEXT, "distance_m": {"type": "number", "minimum": 0.1},
                 "doors": {"type": "integer", "minimum": 0}, "walls": {"type": "integer", "minimum": 0}},
                ["device"])]}
    device = _object({
        "id": ID, "kind": _enum(m.Kind), "room": TEXT, "sensor": _enum(m.Sensor), "power": _enum(m.Power),
        "manufactured": {"oneOf": [DAY_OR_MONTH, {"const": "unknown"}]}, "installed": DAY_OR_MONTH,
        "life_years": {"type": "integer", "minimum": 1}, "removed": DAY, "location": TEXT, "note": TEXT,
        "interconnected": FLAG, "replaces": ID, "listens_to": {"type": "array", "items": listen},
        "threshold_dba": NON_NEGATIVE, **{key: CIRCUIT_VALUE for key in CIRCUIT_KEYS},
        "hold_threshold": {"type": "number", "minimum": 0.01, "exclusiveMaximum": 1},
    }, ["id", "kind", "room", "power", "installed"], "an alarm or listening node")
    device["allOf"] = [
        {"if": {"required": ["kind"], "properties": {"kind": {"enum": sorted(k.value for k in m.ALARM_KINDS)}}},
         "then": {"required": ["manufactured"]}},
        {"if": {"required": ["kind"], "properties": {"kind": {"const": m.Kind.LISTENING_NODE.value}}},
         "then": {"required": ["listens_to"]},
         "else": {"not": {"anyOf": [{"required": [key]} for key in
                                    ("listens_to", "threshold_dba", "hold_threshold", *CIRCUIT_KEYS)]}}},
    ]
    unit = _object({"id": ID, "name": TEXT, "attached_garage": FLAG, "interconnect_required": FLAG,
                    "rooms": {"type": "array", "items": room}, "devices": {"type": "array", "items": device}},
                   ["id"])
    prop = _object({"id": ID, "name": TEXT, "address": TEXT, "units": {"type": "array", "items": unit}},
                   ["id", "name", "units"])
    event = _object({"date": DAY_TIME, "device": {"type": "string", "description": "property/unit/device"},
                     "action": _enum(m.Action), "result": _enum(m.Result), "by": TEXT, "note": TEXT,
                     "evidence": {"type": "string", "pattern": "^sha256:[0-9a-f]{64}$"}},
                    ["date", "device", "action"])
    event["allOf"] = [{"if": {"properties": {"action": {"const": "test"}}},
                       "then": {"required": ["result"]}, "else": {"not": {"required": ["result"]}}}]
    interval = {"type": "string", "pattern": r"^\s*\d+\s*(day|week|month|year)s?\s*$"}
    policy = _object({rule.name: _object({"value": interval if isinstance(rule.value, Interval)
                                          else {"type": ["number", "string"]},
                                          "source": {"type": "string", "minLength": 1}}, ["value", "source"])
                      for rule in DEFAULT_RULES if rule.overridable}, [],
                     "local rule overrides (policy.yaml at the records root); each names its source")
    costs = _object({"currency": TEXT, **{kind: NON_NEGATIVE for kind in COST_KINDS}}, [],
                    "cost of one replacement by device kind, for the budget forecast")
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": "recordkit record file",
        "description": "A file under records/: a property, a list of events, or both; or policy.yaml.",
        "type": "object",
        "properties": {"property": prop, "events": {"type": "array", "items": event}, "policy": policy,
                       "coverage": {"enum": coverage_set_names()}, "replacement_costs": costs},
        "additionalProperties": False,
        "minProperties": 1,
    }
