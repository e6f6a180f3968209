"""A dataclass's JSON text from a writer made for its shape: `codec.to_json`, byte for byte, with
the keys, commas and left-out fields worked out once per shape instead of at every value.

    text = to_json(decision, drop_none=True)   # == codec.to_json(decision, True)

Every stored decision is written through it (`frostwatch.decision.decision_to_json`: the daemon's
and a replay's alike); a replay writes one per block every two minutes of a season, and two
decisions in a row almost always differ only in their numbers, instants and texts.

The shape of a dataclass value is, field by field, the exact type of the value (None counting as
its own). A writer (Python source made here from one value and compiled once) checks each field's
type with one `is` test and returns None at the first that differs; where all fit it writes the
keys and commas of that shape, which fields `drop_none` leaves out, and each value written afresh
by the same function `codec.to_json` writes it with. What is kept is the structure, never a value:
0.0 and -0.0, 1, 1.0 and True, a StrEnum member and its text are each written from the value
itself, and values of different types are different shapes. Nested dataclasses (and a list or
tuple of one dataclass type) go through their own writers; lists, tuples and dicts otherwise
through `codec`'s own writers, whatever they hold.

A class keeps up to MAX_SHAPES writers, the last one used tried first; a value of a shape beyond
them is written by `codec.to_json` itself. tests/test_codec_shapes.py holds this to json.dumps
of `codec.to_dict` on every decision of the demo's nights and on values built to differ from
their neighbours only where caching by equality would go wrong.
"""

from __future__ import annotations

import datetime as dt
import enum
import inspect
import math

from frostwatch.advice import codec

MAX_SHAPES = 64  # writers kept per dataclass and drop_none; beyond, codec.to_json (never wrong, slower)

_ENUM_VALUE = inspect.getattr_static(enum.Enum, "value")
# (class, drop_none) -> its writers, the last used first (None: a class codec.to_json writes otherwise)
_WRITERS: dict[tuple[type, bool], list | None] = {}


def to_json(obj, drop_none: bool = False) -> str:
    """`codec.to_json(obj, drop_none)`, from the writer of `obj`'s shape (made on first sight)."""
    key = (type(obj), drop_none)
    writers = _WRITERS.get(key, False)
    if writers is False:
        writers = _WRITERS[key] = [] if _shaped(key[0]) else None
    if writers is None:
        return codec.to_json(obj, drop_none)
    for i, write in enumerate(writers):
        text = write(obj)
        if text is not None:
            if i:
                writers.insert(0, writers.pop(i))
            return text
    if len(writers) >= MAX_SHAPES:
        return codec.to_json(obj, drop_none)
    write = _writer_for(obj, drop_none)
    writers.insert(0, write)
    return write(obj)


def _shaped(cls: type) -> bool:
    """Whether `codec.to_json` writes `cls` field by field (`codec._dataclass_text_encoder`)."""
    if cls is str or cls is float:
        return False
    names = codec._field_names(cls)
    return names is not None and all(n.isidentifier() for n in names)


# ---- the text of values that recur ----------------------------------------------------------------
# A finite float's text (float.__repr__, the shortest digits that read back as it: the costliest
# part of writing a number) and a text's escaped form, kept by value. Two floats that compare
# equal are the same float except 0.0 and -0.0 (NaN is never equal, and is written null before
# any lookup): zeros are never kept, so a lookup of either always misses and writes it afresh.
# Only exact floats and exact str look here (the writer has checked the type). Each table is
# emptied when it reaches TEXT_CACHE_SIZE entries (a season's curves hold a few thousand values).
TEXT_CACHE_SIZE = 20_000
_FLOAT_TEXT: dict[float, str] = {}
_STR_TEXT: dict[str, str] = {}


def _float_text(v: float) -> str:
    """float.__repr__(v) of a finite float, kept for the next time unless v is zero."""
    text = codec._float_repr(v)
    if v:
        if len(_FLOAT_TEXT) >= TEXT_CACHE_SIZE:
            _FLOAT_TEXT.clear()
        _FLOAT_TEXT[v] = text
    return text


def _str_text(v: str) -> str:
    """The json module's escaped text of `v` (exact str), kept for the next time."""
    text = codec._esc(v)
    if len(_STR_TEXT) >= TEXT_CACHE_SIZE:
        _STR_TEXT.clear()
    _STR_TEXT[v] = text
    return text


def _sequence(obj, drop_none: bool) -> str:
    """`codec._sequence_text`: lists and tuples of one type, finite floats and texts from the
    tables above, instants from their cache, enums' texts by value, dataclasses through their
    writers; anything else by `codec._sequence_text` itself."""
    kinds = set(map(type, obj))
    if len(kinds) == 1:
        kind = kinds.pop()
        if kind is float or kind is str:
            if kind is str or math.isfinite(sum(obj)):  # a sum that overflows: codec's long way, as NaN
                table = _FLOAT_TEXT if kind is float else _STR_TEXT
                texts = list(map(table.get, obj))
                if None in texts:
                    new = _float_text if kind is float else _str_text
                    texts = [t if t is not None else new(x) for t, x in zip(texts, obj, strict=True)]
                return "[" + ",".join(texts) + "]"
        elif kind is dt.datetime:  # a curve's instants
            return "[" + ",".join(map(codec._iso_utc_json, obj)) + "]"
        elif issubclass(kind, enum.Enum):  # cautions, alternatives: by their values
            if _plain_value(kind):
                values = [x._value_ for x in obj]
                if set(map(type, values)) == {str}:
                    return "[" + ",".join([_STR_TEXT.get(v) or _str_text(v) for v in values]) + "]"
        elif _WRITERS.get((kind, drop_none)) is not None or _shaped(kind):  # codec: to_json of each
            return "[" + ",".join([to_json(x, drop_none) for x in obj]) + "]"
    return codec._sequence_text(obj, drop_none)


_PLAIN_VALUE: dict[type, bool] = {}


def _plain_value(kind: type) -> bool:
    """Whether an enum's `value` is Enum's own (the member's `_value_`), not redefined."""
    got = _PLAIN_VALUE.get(kind)
    if got is None:
        got = _PLAIN_VALUE[kind] = inspect.getattr_static(kind, "value") is _ENUM_VALUE
    return got


def _mapping(obj: dict, drop_none: bool) -> str:
    """`codec._mapping_text`: text keys and instants (a decision's inputs and crossings) written
    from the tables and the instants' own cache, anything else by `codec._value_text`."""
    out = []
    for k, v in obj.items():
        key = (_STR_TEXT.get(k) or _str_text(k)) if type(k) is str else codec._esc(str(k))
        t = type(v)
        out.append(key + ":" + (codec._iso_utc_json(v) if t is dt.datetime else "null" if v is None
                                else codec._value_text(v, drop_none)))
    return "{" + ",".join(out) + "}"


_SCOPE = {
    "FT": _FLOAT_TEXT, "ST": _STR_TEXT, "float_text": _float_text, "str_text": _str_text, "isfinite": math.isfinite, "esc": codec._esc, "float_repr": codec._float_repr, "int_repr": codec._int_repr,
    "iso_json": codec._iso_utc_json, "value_text": codec._value_text, "mapping_text": _mapping,
    "plain_to_json": codec.to_json, "shaped_to_json": to_json, "sequence": _sequence,
    "NULL": "null", "TRUE": "true", "FALSE": "false",
}


def _value_expr(v, var: str, drop_none: bool) -> str:
    """The expression that writes field value `v` (held in `var`) as `codec._dataclass_text_encoder`
    writes it; it depends on `type(v)` alone (the writer checks that type first). The checks in
    the encoder's order: str, float, None (not here), datetime, Enum, bool, int, anything else."""
    t = type(v)
    dn = repr(drop_none)
    if t is str:
        return f"(ST.get({var}) or str_text({var}))"  # an escaped text is never empty
    if t is float:
        return f"((FT.get({var}) or float_text({var})) if isfinite({var}) else NULL)"
    if t is dt.datetime:
        return f"iso_json({var})"
    if isinstance(v, enum.Enum):
        if _plain_value(t):
            return f"value_text({var}._value_, {dn})"  # what Enum.value returns, without the descriptor
        return f"value_text({var}.value, {dn})"
    if t is bool:
        return f"(TRUE if {var} else FALSE)"
    if t is int:
        return f"int_repr({var})"
    # anything else codec.to_json writes by its type's encoder: nested dataclasses by their
    # writers (the same text), lists and tuples (a dataclass's through its writers), dicts
    if _shaped(t):
        return f"shaped_to_json({var}, {dn})"
    if t is list or t is tuple:
        return f"sequence({var}, {dn})"
    if t is dict:
        return f"mapping_text({var}, {dn})"
    return f"plain_to_json({var}, {dn})"


def _writer_for(obj, drop_none: bool):
    """The writer of `obj`'s shape: a function of one value of `type(obj)` that returns its text,
    or None when one of its fields is of another type than `obj`'s."""
    names = codec._field_names(type(obj))
    scope = dict(_SCOPE)
    lines = ["def write(o):"]
    pieces = []  # the f-string's parts: constant text and {expressions}
    for k, n in enumerate(names):
        v = getattr(obj, n)
        var = f"v{k}"
        lines.append(f"    {var} = o.{n}")
        key = codec._esc(n) + ":"
        if v is None:
            lines.append(f"    if {var} is not None: return None")
            if not drop_none:
                pieces.append(key + "null")
            continue
        scope[f"T{k}"] = type(v)
        lines.append(f"    if type({var}) is not T{k}: return None")
        pieces.append((key, _value_expr(v, var, drop_none)))
    body = []
    for i, p in enumerate(pieces):
        sep = "," if i else ""
        if isinstance(p, str):
            body.append(_literal(sep + p))
        else:
            body.append(_literal(sep + p[0]) + "{" + p[1] + "}")
    lines.append("    return f'" + _literal("{") + "".join(body) + _literal("}") + "'")
    exec("\n".join(lines), scope)  # noqa: S102 - source made here from a dataclass's field names and types
    return scope["write"]


def _literal(text: str) -> str:
    """Constant text inside the writer's f'...' (keys are identifiers: no quote or backslash to escape)."""
    if "'" in text or "\\" in text:
        raise ValueError(f"not a constant a writer can hold: {text!r}")
    return text.replace("{", "{{").replace("}", "}}")
