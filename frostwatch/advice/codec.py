"""Frozen dataclasses to JSON-ready dicts and back, by their type hints.

Datetimes travel as ISO 8601 UTC with `Z`, dates as ISO dates, enums as their values, tuples as
lists, NaN as null. Decoding follows the dataclass's annotations (optional fields, nested
dataclasses, tuples and dicts of them), so a stored plan reads back as the same typed value.

    doc = to_dict(plan); plan2 = from_dict(AdvicePlan, doc)   # plan2 == plan

Raises `ValueError` naming the field when a document does not fit the type.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import enum
import json
import math
import operator
import types
import typing
from functools import cache, lru_cache
from json.encoder import encode_basestring_ascii as _esc

_float_repr = float.__repr__  # as the json module writes a float
_int_repr = int.__repr__


def iso_utc(t: dt.datetime | None) -> str | None:
    """An aware datetime as ISO 8601 UTC with `Z` (None stays None)."""
    if t is None:
        return None
    return _iso_utc(t)


@lru_cache(maxsize=8192)  # a night's curve instants recur in every decision of the night
def _iso_utc(t: dt.datetime) -> str:
    if t.tzinfo is not dt.UTC:
        t = t.astimezone(dt.UTC)
    return t.isoformat().replace("+00:00", "Z")


def parse_utc(s: str) -> dt.datetime:
    t = dt.datetime.fromisoformat(s.replace("Z", "+00:00"))
    if t.tzinfo is None:
        raise ValueError(f"{s!r} has no UTC offset")
    return t.astimezone(dt.UTC)


_PLAIN = frozenset((str, int, bool, type(None)))  # exact types returned as they are
_FIELDS: dict[type, tuple[str, ...] | None] = {}  # class -> its dataclass field names (None: not one)


def _field_names(cls: type) -> tuple[str, ...] | None:
    names = _FIELDS.get(cls, False)
    if names is False:
        names = tuple(f.name for f in dataclasses.fields(cls)) if dataclasses.is_dataclass(cls) else None
        _FIELDS[cls] = names
    return names


def to_dict(obj, drop_none: bool = False):
    """A dataclass (or a value inside one) as plain JSON-ready values; `drop_none` leaves out
    fields whose value is None (they read back as None)."""
    cls = type(obj)
    if cls in _PLAIN:  # the common case first: a decision holds about a hundred values
        return obj
    encode = _ENCODERS.get(cls)
    if encode is None:  # worked out once per type: every stored decision asks again
        encode = _ENCODERS[cls] = _encoder_for(cls)
    return encode(obj, drop_none)


def _encoder_for(cls: type):
    """How `to_dict` encodes a value of exactly this type (the checks in order, made once)."""
    if cls is float:
        return _finite
    names = _field_names(cls)
    if names is not None:
        return _dataclass_encoder(names)
    if issubclass(cls, enum.Enum):
        return lambda obj, drop_none: obj.value
    if issubclass(cls, dt.datetime):
        return lambda obj, drop_none: iso_utc(obj)
    if issubclass(cls, dt.date):
        return lambda obj, drop_none: obj.isoformat()
    if issubclass(cls, float):
        return _finite
    if issubclass(cls, (list, tuple)):
        return _sequence
    if issubclass(cls, dict):
        return _mapping
    return lambda obj, drop_none: obj


def _finite(obj, drop_none: bool):
    return obj if math.isfinite(obj) else None


def _sequence(obj, drop_none: bool) -> list:
    # a curve's floats and instants inline (as to_dict would encode each: finite or None, ISO text)
    out = []
    append = out.append
    isfinite = math.isfinite
    for x in obj:
        t = type(x)
        if t is float:
            append(x if isfinite(x) else None)
        elif t is dt.datetime:
            append(_iso_utc(x))
        elif t in _PLAIN:
            append(x)
        else:
            append(to_dict(x, drop_none))
    return out


def _mapping(obj, drop_none: bool) -> dict:
    # keys as text; instants (a decision's crossings and inputs) inline, as to_dict encodes them
    out = {}
    for k, v in obj.items():
        t = type(v)
        out[k if type(k) is str else str(k)] = (v if t in _PLAIN else _iso_utc(v) if t is dt.datetime
                                                 else to_dict(v, drop_none))
    return out


def _dataclass_encoder(names: tuple[str, ...]):
    """The encoder of a dataclass with these fields, written out field by field (a stored
    decision encodes about a hundred values: no loop, no lookup of the field's name): each field
    in order, left out when None with `drop_none`, plain values as they are, floats finite or
    None, datetimes as ISO text, anything else through `to_dict`."""
    if not all(n.isidentifier() for n in names):
        return _looped_encoder(names)
    lines = ["def encode(obj, drop_none):", "    out = {}"]
    for n in names:
        lines += [
            f"    v = obj.{n}",
            "    t = type(v)",
            "    if t is str or t is int or t is bool:",
            f"        out[{n!r}] = v",
            "    elif v is None:",
            "        if not drop_none:",
            f"            out[{n!r}] = None",
            "    elif t is float:",
            f"        out[{n!r}] = v if isfinite(v) else None",
            "    elif t is datetime:",
            f"        out[{n!r}] = iso_utc(v)",  # not None here
            "    else:",
            f"        out[{n!r}] = to_dict(v, drop_none)",
        ]
    lines.append("    return out")
    scope = {"isfinite": math.isfinite, "datetime": dt.datetime, "iso_utc": _iso_utc, "to_dict": to_dict}
    exec("\n".join(lines), scope)  # noqa: S102 - source made here from a dataclass's field names
    return scope["encode"]


def _looped_encoder(names: tuple[str, ...]):
    values_of = operator.attrgetter(*names) if len(names) > 1 else (lambda obj: (getattr(obj, names[0]),) if names else ())

    def encode(obj, drop_none: bool) -> dict:
        out = {}
        for name, v in zip(names, values_of(obj), strict=True):
            if v is None and drop_none:
                continue
            t = type(v)  # plain values inline: no call for each of them
            out[name] = (v if t in _PLAIN else (v if math.isfinite(v) else None) if t is float
                         else iso_utc(v) if t is dt.datetime else to_dict(v, drop_none))
        return out

    return encode


_ENCODERS: dict[type, object] = {}  # exact type -> its encoder (see _encoder_for)


# ---- straight to JSON text ---------------------------------------------------------------------
# `to_json(obj, drop_none)` is `json.dumps(to_dict(obj, drop_none), separators=(",", ":"),
# allow_nan=False)` without the dicts in between: each value written as the json module writes
# it (strings by its own escaping function, floats by float.__repr__, instants as their ISO text),
# key order included. Every stored decision goes through it (tests/test_replay_speedups.py holds
# it to the plain way, decision by decision).

_JSON_PLAIN = json.JSONEncoder(separators=(",", ":"), allow_nan=False)  # what to_json must equal


@lru_cache(maxsize=8192)
def _iso_utc_json(t: dt.datetime) -> str:
    return '"' + _iso_utc(t) + '"'  # ISO text needs no escaping


def to_json(obj, drop_none: bool = False) -> str:
    """`to_dict(obj, drop_none)` as compact JSON text (the json module's, byte for byte)."""
    cls = type(obj)
    encode = _TEXT_ENCODERS.get(cls)
    if encode is None:
        encode = _TEXT_ENCODERS[cls] = _text_encoder_for(cls)
    return encode(obj, drop_none)


def _text_encoder_for(cls: type):
    if cls is str:
        return lambda obj, drop_none: _esc(obj)
    if cls is float:
        return lambda obj, drop_none: _float_repr(obj) if math.isfinite(obj) else "null"
    names = _field_names(cls)
    if names is not None and all(n.isidentifier() for n in names):
        return _dataclass_text_encoder(names)
    if issubclass(cls, enum.Enum):
        return lambda obj, drop_none: _value_text(obj.value, drop_none)
    if cls is dt.date:
        return lambda obj, drop_none: _esc(obj.isoformat())
    if cls in (list, tuple):
        return _sequence_text
    if cls is dict:
        return _mapping_text
    return lambda obj, drop_none: _JSON_PLAIN.encode(to_dict(obj, drop_none))  # anything else: the plain way


def _value_text(v, drop_none: bool) -> str:
    t = type(v)
    if t is str:
        return _esc(v)
    if t is float:
        return _float_repr(v) if math.isfinite(v) else "null"
    if t is dt.datetime:
        return _iso_utc_json(v)
    if v is None:
        return "null"
    if t is bool:
        return "true" if v else "false"
    if t is int:
        return _int_repr(v)
    return to_json(v, drop_none)


def _sequence_text(obj, drop_none: bool) -> str:
    kinds = set(map(type, obj))
    if len(kinds) == 1:  # a curve: all floats (all finite) or all instants, written in one pass
        kind = kinds.pop()
        if kind is float and math.isfinite(sum(obj)):  # a sum that overflows takes the long way, as NaN does
            return "[" + ",".join(map(_float_repr, obj)) + "]"
        if kind is dt.datetime:
            return "[" + ",".join(map(_iso_utc_json, obj)) + "]"
        if kind is str:  # notes
            return "[" + ",".join(map(_esc, obj)) + "]"
        if issubclass(kind, enum.Enum):  # cautions, alternatives: each by its value, as to_json has it
            return "[" + ",".join([_value_text(x.value, drop_none) for x in obj]) + "]"
    return "[" + ",".join([_value_text(x, drop_none) for x in obj]) + "]"


def _mapping_text(obj, drop_none: bool) -> str:
    return "{" + ",".join([_esc(k if type(k) is str else str(k)) + ":" + _value_text(v, drop_none)
                           for k, v in obj.items()]) + "}"


def _dataclass_text_encoder(names: tuple[str, ...]):
    """As `_dataclass_encoder`, writing text: each field's "key":value, in order."""
    lines = ["def encode(obj, drop_none):", "    out = []", "    add = out.append"]
    for n in names:
        key = _esc(n) + ":"
        lines += [
            f"    v = obj.{n}",
            "    t = type(v)",
            "    if t is str:",
            f"        add({key!r} + esc(v))",
            "    elif t is float:",
            f"        add({key!r} + (float_repr(v) if isfinite(v) else 'null'))",
            "    elif v is None:",
            "        if not drop_none:",
            f"            add({(key + 'null')!r})",
            "    elif t is datetime:",
            f"        add({key!r} + iso_json(v))",
            "    elif isinstance(v, Enum):",
            f"        add({key!r} + value_text(v.value, drop_none))",
            "    elif t is bool:",
            f"        add({(key + 'true')!r} if v else {(key + 'false')!r})",
            "    elif t is int:",
            f"        add({key!r} + int_repr(v))",
            "    else:",
            f"        add({key!r} + to_json(v, drop_none))",
        ]
    lines.append("    return '{' + ','.join(out) + '}'")
    scope = {"isfinite": math.isfinite, "datetime": dt.datetime, "iso_json": _iso_utc_json, "to_json": to_json,
             "esc": _esc, "float_repr": _float_repr, "int_repr": _int_repr, "Enum": enum.Enum,
             "value_text": _value_text}
    exec("\n".join(lines), scope)  # noqa: S102 - source made here from a dataclass's field names
    return scope["encode"]


_TEXT_ENCODERS: dict[type, object] = {}  # exact type -> its text encoder (see _text_encoder_for)


@cache
def _hints(cls) -> dict:
    return typing.get_type_hints(cls)


def from_dict(cls, doc: dict, where: str = ""):
    """The dataclass `cls` from `to_dict`'s output. Unknown keys are ignored; missing keys take
    None where the field may be None, else the field's default (else ValueError)."""
    if not isinstance(doc, dict):
        raise ValueError(f"{where or cls.__name__}: expected an object, got {type(doc).__name__}")
    hints = _hints(cls)
    kw = {}
    for f in dataclasses.fields(cls):
        if f.name not in doc:
            if _optional(hints[f.name]):
                kw[f.name] = None  # to_dict(drop_none=True) leaves None out
            elif f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
                raise ValueError(f"{where}{f.name}: missing")
            continue
        kw[f.name] = _decode(hints[f.name], doc[f.name], f"{where}{f.name}.")
    return cls(**kw)


def _optional(tp) -> bool:
    return typing.get_origin(tp) in (typing.Union, types.UnionType) and type(None) in typing.get_args(tp)


def _decode(tp, value, where: str):
    origin = typing.get_origin(tp)
    if origin in (typing.Union, types.UnionType):
        args = [a for a in typing.get_args(tp) if a is not type(None)]
        if value is None:
            return None
        if len(args) == 1:
            return _decode(args[0], value, where)
        for a in args:  # e.g. float | str: the first that fits
            try:
                return _decode(a, value, where)
            except (TypeError, ValueError):
                continue
        raise ValueError(f"{where.rstrip('.')}: {value!r} fits none of {tp}")
    if origin is tuple:
        args = typing.get_args(tp)
        inner = args[0] if args else typing.Any
        return tuple(_decode(inner, v, f"{where}{i}.") for i, v in enumerate(value or ()))
    if origin is dict:
        _k, v_tp = typing.get_args(tp) or (str, typing.Any)
        return {k: _decode(v_tp, v, f"{where}{k}.") for k, v in (value or {}).items()}
    if tp is typing.Any:
        return value
    if isinstance(tp, type):
        if dataclasses.is_dataclass(tp):
            return from_dict(tp, value, where)
        if issubclass(tp, enum.Enum):
            return tp(value)
        if tp is dt.datetime:
            return None if value is None else parse_utc(value)
        if tp is dt.date:
            return dt.date.fromisoformat(value)
        if tp is float:
            return math.nan if value is None else float(value)
        if tp is bool:
            if not isinstance(value, bool):
                raise ValueError(f"{where.rstrip('.')}: {value!r} is not true or false")
            return value
        if tp in (int, str):
            return tp(value)
    return value
