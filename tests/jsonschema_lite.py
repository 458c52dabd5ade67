"""A small JSON Schema (draft 2020-12) checker for the keywords docs/schemas/ uses, for environments
without the jsonschema package: type, properties, required, additionalProperties, items, enum, const,
pattern, anyOf and $ref (within a schema or to a sibling file). It returns every problem as
``path: message``; tests prefer jsonschema itself when it is installed."""

from __future__ import annotations

import json
import re
from pathlib import Path

_TYPES = {
    "object": lambda v: isinstance(v, dict),
    "array": lambda v: isinstance(v, list),
    "string": lambda v: isinstance(v, str),
    "integer": lambda v: isinstance(v, int) and not isinstance(v, bool),
    "number": lambda v: isinstance(v, (int, float)) and not isinstance(v, bool),
    "boolean": lambda v: isinstance(v, bool),
    "null": lambda v: v is None,
}


class Checker:
    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.docs: dict[str, dict] = {}

    def load(self, name: str) -> dict:
        if name not in self.docs:
            self.docs[name] = json.loads((self.folder / name).read_text())
        return self.docs[name]

    def _resolve(self, ref: str, current: str) -> tuple[dict, str]:
        name, _, pointer = ref.partition("#")
        name = name or current
        node = self.load(name)
        for part in [p for p in pointer.split("/") if p]:
            node = node[part]
        return node, name

    def errors(self, value, schema: dict, current: str, path: str = "$") -> list[str]:
        out: list[str] = []
        if "$ref" in schema:
            target, name = self._resolve(schema["$ref"], current)
            out += self.errors(value, target, name, path)
        if "type" in schema:
            types = schema["type"] if isinstance(schema["type"], list) else [schema["type"]]
            if not any(_TYPES[t](value) for t in types):
                return out + [f"{path}: {value!r} is not of type {types}"]
        if "const" in schema and value != schema["const"]:
            out.append(f"{path}: {value!r} is not {schema['const']!r}")
        if "enum" in schema and value not in schema["enum"]:
            out.append(f"{path}: {value!r} is not one of {schema['enum']}")
        if "pattern" in schema and isinstance(value, str) and not re.search(schema["pattern"], value):
            out.append(f"{path}: {value!r} does not match {schema['pattern']}")
        if "anyOf" in schema and all(self.errors(value, s, current, path) for s in schema["anyOf"]):
            out.append(f"{path}: matches none of anyOf")
        if isinstance(value, dict):
            props = schema.get("properties", {})
            out += [f"{path}: missing {k!r}" for k in schema.get("required", []) if k not in value]
            for k, v in value.items():
                if k in props:
                    out += self.errors(v, props[k], current, f"{path}.{k}")
                elif schema.get("additionalProperties") is False:
                    out.append(f"{path}: unexpected key {k!r}")
                elif isinstance(schema.get("additionalProperties"), dict):
                    out += self.errors(v, schema["additionalProperties"], current, f"{path}.{k}")
        if isinstance(value, list) and "items" in schema:
            for i, v in enumerate(value):
                out += self.errors(v, schema["items"], current, f"{path}[{i}]")
        return out
