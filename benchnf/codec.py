"""Frozen result types to and from JSON data, and their JSON Schema, all from the type annotations.

One description of a result (its dataclass: field names with units, types, ranges in the field metadata)
gives three things, so they cannot drift apart:

* :func:`to_data`: the JSON-ready value (tuples become lists, NaN and infinities null, nested results
  objects), in field order;
* :func:`from_data`: the typed value again from JSON data, exact (``to_data(from_data(d)) == d``),
  refusing what does not fit with one line naming the place, the key, what was found and what was expected;
* :func:`schema_of`: a JSON Schema (draft 2020-12) of the same shape, shipped in ``benchnf/schemas/``.

A field's metadata may carry ``schema`` (extra JSON Schema keywords, e.g. ``{"exclusiveMinimum": 0}``,
checked by :func:`from_data` too) and ``data=False`` (kept in memory only: arrays for plots). A class
with its own layout defines ``to_dict``, ``from_dict(data, where)`` and ``data_schema()``.

No numpy here: the command line's start-up imports this module.
"""

from __future__ import annotations

import contextvars
import dataclasses
import math
import types
import typing
from collections.abc import Mapping
from typing import Any, Literal, Union

from .errors import ParameterError

__all__ = ["FormatError", "ResultFile", "to_data", "from_data", "schema_of", "figure", "memory_only", "describe",
           "check_header", "check_shape"]

# Set while a hand-edited file of ours is checked: its tables may hold no key the shape does not name.
_STRICT: contextvars.ContextVar[bool] = contextvars.ContextVar("benchnf_codec_strict", default=False)


class FormatError(ParameterError):
    """A file of ours does not have the shape or the values its schema states."""


def figure(*, default: Any = dataclasses.MISSING, omit_if_none: bool = False, **schema: Any) -> Any:
    """A dataclass field with JSON Schema keywords for its value (``minimum``, ``exclusiveMinimum``...);
    `omit_if_none` leaves the key out of the JSON where the value is None."""
    return dataclasses.field(default=default, metadata={"schema": schema, "omit_if_none": omit_if_none})


def memory_only(**kwargs: Any) -> Any:
    """A dataclass field kept in memory only (arrays for plots): not written, None when read back."""
    return dataclasses.field(default=None, repr=False, compare=False, metadata={"data": False, **kwargs})


def _hints(cls: type) -> dict[str, Any]:
    cache = cls.__dict__.get("_codec_hints")
    if cache is None:
        cache = typing.get_type_hints(cls)
        setattr(cls, "_codec_hints", cache)
    return cache


def _custom(tp: Any) -> bool:
    return isinstance(tp, type) and hasattr(tp, "data_schema") and hasattr(tp, "from_dict")


def _data_fields(cls: type) -> list[dataclasses.Field]:
    return [f for f in dataclasses.fields(cls) if f.metadata.get("data", True)]


def _rules(cls: type, f: dataclasses.Field) -> dict[str, Any]:
    """A field's JSON Schema keywords: the class's ``RANGES`` for it, and its metadata's ``schema``."""
    return {**getattr(cls, "RANGES", {}).get(f.name, {}), **f.metadata.get("schema", {})}


# -- to JSON data ---------------------------------------------------------------------------------------------
def to_data(value: Any) -> Any:
    """The JSON-ready form of `value` (a result, or anything inside one)."""
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float) or type(value).__name__.startswith("float"):
        x = float(value)
        return x if math.isfinite(x) else None
    if _custom(type(value)):
        return value.to_dict()
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_data(getattr(value, f.name)) for f in _data_fields(type(value))
                if not (f.metadata.get("omit_if_none") and getattr(value, f.name) is None)}
    if isinstance(value, Mapping):
        return {str(k): to_data(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_data(v) for v in value]
    if hasattr(value, "tolist"):  # a numpy scalar or array
        return to_data(value.tolist())
    raise TypeError(f"{type(value).__name__} has no JSON form")


# -- from JSON data -------------------------------------------------------------------------------------------
def describe(value: Any) -> str:
    """What was found, for a message: the value, shortened."""
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


def _expected(tp: Any) -> str:
    origin = typing.get_origin(tp)
    if tp is float:
        return "a number"
    if tp is int:
        return "a whole number"
    if tp is bool:
        return "true or false"
    if tp is str:
        return "text"
    if origin is Literal:
        return "one of " + ", ".join(repr(a) for a in typing.get_args(tp))
    if origin in (Union, types.UnionType):
        return " or ".join(_expected(a) if a is not type(None) else "null" for a in typing.get_args(tp))
    if origin is tuple:
        args = typing.get_args(tp)
        return "a list" + ("" if len(args) == 2 and args[1] is Ellipsis else f" of {len(args)} items")
    if origin in (list,):
        return "a list"
    if origin in (dict, Mapping) or dataclasses.is_dataclass(tp) or _custom(tp):
        return "an object"
    return "a value"


def _fail(where: str, key: str, value: Any, expected: str) -> FormatError:
    at = f" at {key}" if key else ""
    return FormatError(f"{where}{at}: found {describe(value)}, expected {expected}; this is not a file benchnf "
                       f"wrote as it is: write it again with benchnf, or correct that value")


def _check_range(value: Any, schema: Mapping[str, Any], where: str, key: str) -> None:
    if "pattern" in schema and isinstance(value, str):
        import re
        if not re.search(schema["pattern"], value):
            raise _fail(where, key, value, f"text matching {schema['pattern']}")
    rules = (("minimum", lambda v, b: v >= b, ">="), ("exclusiveMinimum", lambda v, b: v > b, ">"),
             ("maximum", lambda v, b: v <= b, "<="), ("exclusiveMaximum", lambda v, b: v < b, "<"))
    for name, ok, sign in rules:
        if name in schema and isinstance(value, (int, float)) and math.isfinite(value) and not ok(value, schema[name]):
            raise _fail(where, key, value, f"a number {sign} {schema[name]:g}")


def from_data(tp: Any, data: Any, where: str, key: str = "") -> Any:
    """The value of type `tp` from JSON `data`; `where` and `key` name the place in messages.

    Raises
    ------
    FormatError
        The data do not fit the type (one line: place, key, found, expected).
    """
    origin = typing.get_origin(tp)
    if tp is Any:
        return data
    if origin in (Union, types.UnionType):
        return _from_union(tp, data, where, key)
    if dataclasses.is_dataclass(tp) and not _custom(tp):
        return _from_object(typing.cast(type, tp), data, where, key)
    if origin is Literal:
        if data not in typing.get_args(tp):
            raise _fail(where, key, data, _expected(tp))
        return data
    if tp is float:
        if data is None:
            return math.nan  # written as null: a figure that came out not finite
        if isinstance(data, bool) or not isinstance(data, (int, float)):
            raise _fail(where, key, data, "a number")
        return float(data)
    if tp in (int, bool, str):
        if type(data) is not tp:
            raise _fail(where, key, data, _expected(tp))
        return data
    if _custom(tp):
        if not isinstance(data, dict):
            raise _fail(where, key, data, "an object")
        return tp.from_dict(data, where=f"{where} at {key}" if key else where)
    if origin in (tuple, list):
        return _from_sequence(tp, data, where, key)
    if origin in (dict, Mapping):
        if not isinstance(data, dict):
            raise _fail(where, key, data, "an object")
        value_type = typing.get_args(tp)[1] if typing.get_args(tp) else Any
        return {k: from_data(value_type, v, where, f"{key}.{k}" if key else k) for k, v in data.items()}
    raise TypeError(f"no JSON form for {tp!r}")


def _from_union(tp: Any, data: Any, where: str, key: str) -> Any:
    options = typing.get_args(tp)
    if data is None:
        if type(None) in options:
            return None
        if float in options:
            return math.nan
        raise _fail(where, key, data, _expected(tp))
    real = [o for o in options if o is not type(None)]
    if len(real) == 1:
        return from_data(real[0], data, where, key)  # its own message says what was expected
    for option in real:
        try:
            return from_data(option, data, where, key)
        except FormatError:
            continue
    raise _fail(where, key, data, _expected(tp))


def _from_sequence(tp: Any, data: Any, where: str, key: str) -> Any:
    if not isinstance(data, list):
        raise _fail(where, key, data, _expected(tp))
    args = typing.get_args(tp)
    origin = typing.get_origin(tp)
    if origin is tuple and not (len(args) == 2 and args[1] is Ellipsis):
        if len(data) != len(args):
            raise _fail(where, key, data, _expected(tp))
        return tuple(from_data(a, v, where, f"{key}[{i}]") for i, (a, v) in enumerate(zip(args, data)))
    item = args[0] if args else Any
    values = [from_data(item, v, where, f"{key}[{i}]") for i, v in enumerate(data)]
    return tuple(values) if origin is tuple else values


def _from_object(cls: type, data: Any, where: str, key: str) -> Any:
    if not isinstance(data, dict):
        raise _fail(where, key, data, "a table" if _STRICT.get() else "an object")
    hints = _hints(cls)
    if _STRICT.get():
        known = {f.name for f in _data_fields(cls)}
        unknown = sorted(str(k) for k in data if k not in known)
        if unknown:
            raise FormatError(f"{where}{' [' + key + ']' if key else ''}: unknown keys {', '.join(unknown)}; the "
                              f"keys are {', '.join(sorted(known))}")
    values = {}
    for f in _data_fields(cls):
        sub = f"{key}.{f.name}" if key else f.name
        if f.name not in data:
            if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
                raise FormatError(f"{where}: {sub} is missing; this is not a file benchnf wrote as it is: write it "
                                  f"again with benchnf")
            continue
        value = from_data(hints[f.name], data[f.name], where, sub)
        _check_range(value, _rules(cls, f), where, sub)
        values[f.name] = value
    try:
        return cls(**values)
    except ParameterError as err:  # the type's own check of its values
        raise FormatError(f"{where}{' at ' + key if key else ''}: {err}") from None


def check_shape(cls: type, data: Any, where: str) -> Any:
    """A hand-edited file of ours (a profile, a plan, an ENR table, a chain, a sidecar...) as its shape `cls`:
    every key known, every value of its kind and in its range; one FormatError line otherwise."""
    token = _STRICT.set(True)
    try:
        return from_data(cls, data, where)
    finally:
        _STRICT.reset(token)


# -- results written as files of their own -------------------------------------------------------------------
def check_header(data: Any, where: str, kinds: tuple[str, ...], version: str = "1") -> str:
    """The kind of a results JSON after checking its ``schema_version`` and ``kind``; one line otherwise."""
    if not isinstance(data, dict):
        raise FormatError(f"{where}: found {describe(data)}, expected a JSON object: it is not a benchnf results file")
    if "schema_version" not in data:
        raise FormatError(f"{where} is not a benchnf results JSON (it has no schema_version)")
    found = data["schema_version"]
    if found != version:
        raise FormatError(f"{where} has schema_version {describe(found)}; this benchnf reads results schema "
                          f"{version!r}: use the benchnf version that wrote it, or analyse the captures again")
    kind = data.get("kind")
    if kind not in kinds:
        raise FormatError(f"{where} holds {describe(kind)} results where {' or '.join(map(repr, kinds))} results "
                          f"are expected: give the results file of that measurement")
    return str(kind)


class ResultFile:
    """Mixin of a result written as a file of its own: ``schema_version`` and ``kind`` first, then its fields."""

    KIND: typing.ClassVar[str] = ""
    SCHEMA_VERSION: typing.ClassVar[str] = "1"

    def to_dict(self) -> dict[str, Any]:
        """The JSON-ready dict (NaN becomes null), with ``schema_version`` and ``kind``."""
        return {"schema_version": self.SCHEMA_VERSION, "kind": self.KIND, **to_data(self)}

    def with_provenance(self, provenance: Any) -> Any:
        """The same result with where it came from (a :class:`~benchnf.measure.provenance.Provenance`)."""
        return dataclasses.replace(self, provenance=provenance)  # type: ignore[type-var]

    @classmethod
    def from_dict(cls, data: Any, *, where: str = "the results") -> Any:
        """The result again from :meth:`to_dict`'s form; FormatError (one line) where it does not fit."""
        check_header(data, where, (cls.KIND,), cls.SCHEMA_VERSION)
        return from_data(cls, {k: v for k, v in data.items() if k not in ("schema_version", "kind")}, where)

    @classmethod
    def file_schema(cls) -> dict[str, Any]:
        """The JSON Schema of the file: the result's fields after ``schema_version`` and ``kind``."""
        body = schema_of(cls)
        return {"$schema": "https://json-schema.org/draft/2020-12/schema",
                "$id": f"benchnf/{cls.KIND}-results-{cls.SCHEMA_VERSION}.json",
                "title": f"benchnf {cls.KIND} results, schema version {cls.SCHEMA_VERSION}",
                **body, "properties": {"schema_version": {"const": cls.SCHEMA_VERSION}, "kind": {"const": cls.KIND},
                                       **body["properties"]},
                "required": ["schema_version", "kind", *body["required"]]}


# -- JSON Schema ----------------------------------------------------------------------------------------------
def schema_of(tp: Any) -> dict[str, Any]:
    """A JSON Schema (draft 2020-12) of the JSON form of `tp`."""
    origin = typing.get_origin(tp)
    if isinstance(tp, str):
        raise TypeError(f"unresolved annotation {tp!r}")
    if tp is Any:
        return {}
    if tp is float:
        return {"type": ["number", "null"]}
    if tp is int:
        return {"type": "integer"}
    if tp is bool:
        return {"type": "boolean"}
    if tp is str:
        return {"type": "string"}
    if origin is Literal:
        return {"enum": list(typing.get_args(tp))}
    if origin in (Union, types.UnionType):
        options = [a for a in typing.get_args(tp) if a is not type(None)]
        nullable = len(options) < len(typing.get_args(tp))
        if len(options) == 1:
            inner = schema_of(options[0])
            return {"anyOf": [inner, {"type": "null"}]} if nullable and inner.get("type") != ["number", "null"] \
                else inner
        return {"anyOf": [schema_of(a) for a in options] + ([{"type": "null"}] if nullable else [])}
    if _custom(tp):
        return tp.data_schema()
    if dataclasses.is_dataclass(tp):
        return _object_schema(typing.cast(type, tp))
    if origin in (tuple, list):
        args = typing.get_args(tp)
        if origin is tuple and not (len(args) == 2 and args[1] is Ellipsis):
            return {"type": "array", "prefixItems": [schema_of(a) for a in args], "minItems": len(args),
                    "maxItems": len(args)}
        return {"type": "array", "items": schema_of(args[0]) if args else {}}
    if origin in (dict, Mapping):
        args = typing.get_args(tp)
        return {"type": "object", "additionalProperties": schema_of(args[1]) if args else {}}
    raise TypeError(f"no JSON Schema for {tp!r}")


def _object_schema(cls: type) -> dict[str, Any]:
    hints = _hints(cls)
    props = {}
    required = []
    for f in _data_fields(cls):
        props[f.name] = {**schema_of(hints[f.name]), **_rules(cls, f)}
        if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
            required.append(f.name)
    out: dict[str, Any] = {"type": "object", "properties": props, "required": required}
    doc = (cls.__doc__ or "").strip().splitlines()
    if doc:
        out = {"description": doc[0], **out}
    return out
