"""A JSON Schema of the record files, built from the model's own vocabularies.

Editors (e.g. a YAML language server) use it to autocomplete and check records
as they are typed. `recordkit check` stays the authority: it also checks what a
schema cannot (references between records, dates against each other).
"""
from __future__ import annotations

from . import model as m
from .fields import ID_PATTERN
from .rules import DEFAULT_RULES

SCHEMA_ID = "https://recordkit.invalid/records.schema.json"
DAY = {"type": "string", "pattern": r"^\d{4}-\d{2}-\d{2}$", "description": "YYYY-MM-DD"}
DAY_OR_MONTH = {"type": "string", "pattern": r"^\d{4}-\d{2}(-\d{2})?$",
                "description": "YYYY-MM (read as the 1st) or YYYY-MM-DD"}
ID = {"type": "string", "pattern": ID_PATTERN.pattern, "maxLength": 64,
      "description": "lowercase a-z, 0-9 and hyphens; unique in its parent"}
TEXT = {"type": "string"}
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
                    "outside_sleeping": FLAG, "fuel_burning": FLAG}, ["id", "level", "use"])
    listen = {"oneOf": [
        {"type": "string", "description": "a device id in this unit, or property/unit/device"},
        _object({"device": TEXT, "distance_m": {"type": "number", "minimum": 0},
                 "doors": {"type": "integer", "minimum": 0}, "walls": {"type": "integer", "minimum": 0}},
                ["device"])]}
    device = _object({
        "id": ID, "kind": _enum(m.Kind), "room": TEXT, "sensor": _enum(m.Sensor), "power": _enum(m.Power),
        "manufactured": {"oneOf": [DAY_OR_MONTH, {"const": "unknown"}]}, "installed": DAY_OR_MONTH,
        "life_years": {"type": "integer", "minimum": 1}, "removed": DAY, "location": TEXT, "note": TEXT,
        "interconnected": FLAG, "listens_to": {"type": "array", "items": listen},
        "threshold_dba": {"type": "number", "minimum": 0},
    }, ["id", "kind", "room", "power", "installed"], "an alarm or listening node")
    device["allOf"] = [
        {"if": {"required": ["kind"], "properties": {"kind": {"enum": sorted(k.value for k in m.ALARM_KINDS)}}},
         "then": {"required": ["manufactured"]}},
        {"if": {"required": ["kind"], "properties": {"kind": {"const": m.Kind.LISTENING_NODE.value}}},
         "then": {"required": ["listens_to"]}, "else": {"not": {"required": ["listens_to"]}}},
    ]
    unit = _object({"id": ID, "name": TEXT, "attached_garage": FLAG, "interconnect_required": FLAG,
                    "rooms": {"type": "array", "items": room}, "devices": {"type": "array", "items": device}},
                   ["id", "rooms"])
    prop = _object({"id": ID, "name": TEXT, "address": TEXT, "units": {"type": "array", "items": unit}},
                   ["id", "name", "units"])
    event = _object({"date": DAY, "device": {"type": "string", "description": "property/unit/device"},
                     "action": _enum(m.Action), "result": _enum(m.Result), "by": TEXT, "note": TEXT},
                    ["date", "device", "action"])
    event["allOf"] = [{"if": {"properties": {"action": {"const": "test"}}},
                       "then": {"required": ["result"]}, "else": {"not": {"required": ["result"]}}}]
    override = _object({"value": {"type": "string", "pattern": r"^\s*\d+\s*(day|week|month|year)s?\s*$"},
                        "source": {"type": "string", "minLength": 1}}, ["value", "source"])
    policy = _object({rule.name: override for rule in DEFAULT_RULES if rule.overridable}, [],
                     "local rule overrides (policy.yaml at the records root); each names its source")
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": "recordkit record file",
        "description": "A file under records/: a property, a list of events, or both; or policy.yaml.",
        "type": "object",
        "properties": {"property": prop, "events": {"type": "array", "items": event}, "policy": policy},
        "additionalProperties": False,
        "minProperties": 1,
    }
