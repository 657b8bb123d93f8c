"""Validating a file of ours against its JSON Schema shipped in ``benchnf/schemas/`` (the jsonschema library,
draft 2020-12), with one line naming the file, the key, what was found and what was expected."""

from __future__ import annotations

import json
from functools import lru_cache
from pathlib import Path
from typing import Any

from ..codec import FormatError, describe

__all__ = ["SCHEMAS", "schema", "shipped", "validate"]

SCHEMAS = Path(__file__).resolve().parent.parent / "schemas"


@lru_cache(maxsize=None)
def schema(name: str) -> dict[str, Any]:
    """A shipped schema by its file name."""
    return json.loads((SCHEMAS / name).read_text(encoding="utf-8"))


def shipped(name: str) -> bool:
    return (SCHEMAS / name).is_file()


@lru_cache(maxsize=None)
def _validator(name: str) -> Any:
    import jsonschema
    from referencing import Registry, Resource
    registry = Registry().with_resources(
        (f"benchnf/{p.name}", Resource.from_contents(json.loads(p.read_text(encoding="utf-8"))))
        for p in SCHEMAS.glob("*.json"))
    return jsonschema.Draft202012Validator(schema(name), registry=registry)


def _validator_for(schema_or_name: str | dict[str, Any]) -> Any:
    if isinstance(schema_or_name, str):
        return _validator(schema_or_name)
    import jsonschema
    return jsonschema.Draft202012Validator(schema_or_name)


def _place(error: Any) -> str:
    out = ""
    for part in error.absolute_path:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


def _expected(error: Any) -> str:
    v, rule = error.validator_value, error.validator
    if rule == "type":
        names = {"number": "a number", "integer": "a whole number", "string": "text", "boolean": "true or false",
                 "array": "a list", "object": "an object", "null": "null"}
        kinds = v if isinstance(v, list) else [v]
        return " or ".join(names.get(str(k), str(k)) for k in kinds)
    signs = {"minimum": ">=", "exclusiveMinimum": ">", "maximum": "<=", "exclusiveMaximum": "<"}
    if rule in signs:
        return f"a number {signs[rule]} {v:g}"
    if rule == "enum":
        return "one of " + ", ".join(repr(x) for x in v)
    if rule == "const":
        return repr(v)
    if rule == "pattern":
        return f"text matching {v}"
    if rule in ("minItems", "maxItems"):
        return f"a list of {'at least' if rule == 'minItems' else 'at most'} {v} items"
    return f"what the schema's {rule!r} rule allows"


def validate(data: Any, name: str | dict[str, Any], *, where: str) -> None:
    """Refuse `data` that does not fit the shipped schema `name` (or a schema given as a dict: a measurement
    registered without a shipped schema file) with one FormatError line."""
    from jsonschema.exceptions import best_match
    error = best_match(_validator_for(name).iter_errors(data))
    if error is None:
        return
    if error.validator == "required":
        missing = next((k for k in error.validator_value if isinstance(error.instance, dict) and k not in error.instance),
                       error.validator_value[0])
        place = _place(error)
        raise FormatError(f"{where}: {place + '.' if place else ''}{missing} is missing; this is not a file benchnf "
                          f"wrote as it is: write it again with benchnf")
    place = _place(error)
    raise FormatError(f"{where}{' at ' + place if place else ''}: found {describe(error.instance)}, expected "
                      f"{_expected(error)}; this is not a file benchnf wrote as it is: write it again with "
                      f"benchnf, or correct that value")
