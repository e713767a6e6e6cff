"""The JSON Schemas shipped with growthcore and a small validator for the part of JSON Schema they use.

The validator knows the keywords the shipped schemas use (``type``, ``properties``, ``required``,
``additionalProperties``, ``items``, ``enum``, ``const``, ``minimum``, ``maximum``,
``exclusiveMinimum``, ``minItems``, ``maxItems``, ``minLength``, ``pattern`` and local ``$ref``)
with the meaning of JSON Schema draft 2020-12, so that reading a record needs no extra package.
A schema using any other keyword is refused rather than half-checked. The tests hold it to the
reference implementation (the ``jsonschema`` package) on valid and broken records.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping
from functools import cache
from importlib import resources
from typing import Any

#: Keywords with no bearing on validity.
_ANNOTATIONS = frozenset({"$schema", "$id", "title", "description", "$comment", "$defs", "default", "examples"})
_CHECKED = frozenset({
    "type", "properties", "required", "additionalProperties", "items", "enum", "const", "minimum", "maximum",
    "exclusiveMinimum", "minItems", "maxItems", "minLength", "pattern", "$ref",
})
#: Errors listed before the validator stops looking (a broken record can have thousands).
MAX_ERRORS = 20


def schema_name(version: int) -> str:
    return f"fit-record-{version}.json"


def available_versions() -> tuple[int, ...]:
    """Format versions for which a schema ships with this package."""
    found = []
    for entry in resources.files(__package__).iterdir():
        m = re.fullmatch(r"fit-record-(\d+)\.json", entry.name)
        if m:
            found.append(int(m.group(1)))
    return tuple(sorted(found))


@cache
def _schema_text(version: int) -> str:
    return resources.files(__package__).joinpath(schema_name(version)).read_text(encoding="utf-8")


def record_schema(version: int) -> dict[str, Any]:
    """The JSON Schema of fit records of format ``version`` (a fresh copy)."""
    return json.loads(_schema_text(version))


def _is_type(value: Any, name: str) -> bool:
    if name == "null":
        return value is None
    if name == "boolean":
        return isinstance(value, bool)
    if name == "string":
        return isinstance(value, str)
    if name == "object":
        return isinstance(value, Mapping)
    if name == "array":
        return isinstance(value, (list, tuple))
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    if name == "number":
        return True
    if name == "integer":  # draft 2020-12: a number with no fractional part is an integer
        return isinstance(value, int) or (math.isfinite(value) and float(value).is_integer())
    raise ValueError(f"unknown JSON type {name!r} in schema")


def _equal(a: Any, b: Any) -> bool:
    """JSON equality: booleans are not numbers, 1 equals 1.0."""
    if isinstance(a, bool) or isinstance(b, bool):
        return isinstance(a, bool) and isinstance(b, bool) and a == b
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return a == b
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        return a.keys() == b.keys() and all(_equal(a[k], b[k]) for k in a)
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return len(a) == len(b) and all(_equal(x, y) for x, y in zip(a, b, strict=True))
    return type(a) is type(b) and a == b


def _path(parts: tuple[str | int, ...]) -> str:
    out = "record"
    for p in parts:
        out += f"[{p}]" if isinstance(p, int) else f".{p}"
    return out


def _short(value: Any) -> str:
    text = json.dumps(value, ensure_ascii=False, default=str) if not isinstance(value, str) else repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


class _Validator:
    def __init__(self, root: Mapping[str, Any]) -> None:
        self.root = root
        self.errors: list[str] = []

    def resolve(self, ref: str) -> Mapping[str, Any]:
        if not ref.startswith("#/"):
            raise ValueError(f"only local references are supported; got {ref!r}")
        node: Any = self.root
        for part in ref[2:].split("/"):
            node = node[part.replace("~1", "/").replace("~0", "~")]
        return node

    def fail(self, where: tuple[str | int, ...], message: str) -> None:
        if len(self.errors) < MAX_ERRORS:
            self.errors.append(f"{_path(where)}: {message}")

    def check(self, value: Any, schema: Mapping[str, Any] | bool, where: tuple[str | int, ...]) -> None:
        if schema is True:
            return
        if schema is False:
            self.fail(where, "no value is allowed here")
            return
        unknown = set(schema) - _ANNOTATIONS - _CHECKED
        if unknown:
            raise ValueError(f"schema keyword(s) {', '.join(sorted(unknown))} are not supported by this validator")
        if "$ref" in schema:
            self.check(value, self.resolve(schema["$ref"]), where)
        if "type" in schema:
            types = schema["type"] if isinstance(schema["type"], list) else [schema["type"]]
            if not any(_is_type(value, t) for t in types):
                self.fail(where, f"expected {' or '.join(types)}, got {_short(value)}")
                return
        if "const" in schema and not _equal(value, schema["const"]):
            self.fail(where, f"must be {_short(schema['const'])}, got {_short(value)}")
        if "enum" in schema and not any(_equal(value, e) for e in schema["enum"]):
            self.fail(where, f"must be one of {', '.join(_short(e) for e in schema['enum'])}; got {_short(value)}")
        if _is_type(value, "number"):
            self.numeric(value, schema, where)
        if isinstance(value, str):
            if "minLength" in schema and len(value) < schema["minLength"]:
                self.fail(where, f"must have at least {schema['minLength']} character(s)")
            if "pattern" in schema and not re.search(schema["pattern"], value):
                self.fail(where, f"{_short(value)} does not have the expected form")
        if isinstance(value, (list, tuple)):
            if "minItems" in schema and len(value) < schema["minItems"]:
                self.fail(where, f"must have at least {schema['minItems']} item(s); has {len(value)}")
            if "maxItems" in schema and len(value) > schema["maxItems"]:
                self.fail(where, f"must have at most {schema['maxItems']} item(s); has {len(value)}")
            if "items" in schema:
                for i, item in enumerate(value):
                    self.check(item, schema["items"], (*where, i))
        if isinstance(value, Mapping):
            self.obj(value, schema, where)

    def numeric(self, value: float, schema: Mapping[str, Any], where: tuple[str | int, ...]) -> None:
        if "minimum" in schema and value < schema["minimum"]:
            self.fail(where, f"must be at least {schema['minimum']}; got {value!r}")
        if "maximum" in schema and value > schema["maximum"]:
            self.fail(where, f"must be at most {schema['maximum']}; got {value!r}")
        if "exclusiveMinimum" in schema and value <= schema["exclusiveMinimum"]:
            self.fail(where, f"must be greater than {schema['exclusiveMinimum']}; got {value!r}")

    def obj(self, value: Mapping[str, Any], schema: Mapping[str, Any], where: tuple[str | int, ...]) -> None:
        for name in schema.get("required", ()):
            if name not in value:
                self.fail(where, f"member {name!r} is missing")
        props = schema.get("properties", {})
        extra = schema.get("additionalProperties", True)
        for key, item in value.items():
            if key in props:
                self.check(item, props[key], (*where, key))
            elif extra is False:
                self.fail(where, f"unexpected member {key!r}")
            elif extra is not True:
                self.check(item, extra, (*where, key))


def validation_errors(instance: Any, schema: Mapping[str, Any]) -> list[str]:
    """Messages naming each place where ``instance`` breaks ``schema`` (at most ``MAX_ERRORS``)."""
    v = _Validator(schema)
    v.check(instance, schema, ())
    return v.errors


def record_errors(record: Any, version: int) -> list[str]:
    """Where ``record`` breaks the schema of format ``version``."""
    return validation_errors(record, record_schema(version))
