"""The stored decision's JSON text written by the writer of its shape (`advice.codec_shapes`) is
json.dumps of `codec.to_dict`, byte for byte: on every decision of the demo's nights in the order a
replay writes them, and on values made to differ from the one written just before only where a
cache by equality would go wrong (0.0 and -0.0; 1, 1.0 and True; a StrEnum member and its text;
None and a value; NaN and infinities; numpy floats), with the text tables full and emptied, and
past the number of shapes a class keeps."""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import math
from enum import StrEnum

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch.advice import codec, codec_shapes


def _plain(obj, drop_none: bool) -> str:
    return json.dumps(codec.to_dict(obj, drop_none), separators=(",", ":"), allow_nan=False)


class Word(StrEnum):
    A = "é\"quoted\"\n"
    B = "plain"


@dataclasses.dataclass(frozen=True)
class Inner:
    x: object = None
    y: tuple = ()


@dataclasses.dataclass(frozen=True)
class Odd:
    a: object = None
    b: object = None
    c: object = ()
    d: object = dataclasses.field(default_factory=dict)
    e: object = None


T = dt.datetime(2027, 4, 14, 3, 0, 30, 250000, tzinfo=dt.UTC)
T_OTHER_ZONE = dt.datetime(2027, 4, 14, 3, 0, 30, tzinfo=dt.timezone(dt.timedelta(hours=-5)))

# each value written right after one it equals or nearly equals, in the same field
TRAPS = [
    Odd(a=0.0), Odd(a=-0.0), Odd(a=0.0), Odd(a=1.0), Odd(a=1), Odd(a=True), Odd(a=1.0), Odd(a=False), Odd(a=0),
    Odd(a=-0.0), Odd(a=math.nan), Odd(a=math.inf), Odd(a=-math.inf), Odd(a=np.float64(1.0)), Odd(a=1.0),
    Odd(a=np.float64(-0.0)), Odd(a=-0.0), Odd(a="plain"), Odd(a=Word.B), Odd(a="plain"), Odd(a=Word.A), Odd(a=None),
    Odd(a=T), Odd(a=T_OTHER_ZONE), Odd(a=dt.date(2027, 4, 14)), Odd(a=2**70), Odd(a=-(2**70)),
    Odd(c=(0.0, 1.0, 2.5)), Odd(c=(-0.0, 1.0, 2.5)), Odd(c=(0.0, 1, 2.5)), Odd(c=(0.0, True, 2.5)), Odd(c=[0.0, 1.0]),
    Odd(c=(1e308, 1e308)), Odd(c=(math.nan, 1.0)), Odd(c=("plain", "plain")), Odd(c=(Word.B, "plain")),
    Odd(c=(Word.B, Word.B)), Odd(c=(T, T_OTHER_ZONE)), Odd(c=(Inner(1.0), Inner(-0.0))), Odd(c=(Inner(1.0), Odd())),
    Odd(c=(Inner(x=1.0, y=(0.0, -0.0)), Inner(x=1, y=(-0.0, 0.0)))), Odd(c=()),
    Odd(d={"k": T, "z": None, "n": -0.0, 1: 0.0}), Odd(d={"k": T, "z": None, "n": 0.0, 1: -0.0}),
    Odd(d={Word.B: 1.0, "plain": True}), Odd(d={"k": Inner(True)}), Odd(d={"k": Inner(1)}),
    Odd(e=Inner(x=-0.0)), Odd(e=Inner(x=0.0)), Odd(e=Inner(x=Word.A)), Odd(e=Inner(x="é\"quoted\"\n")),
    Odd(e=Inner(x=None)), Odd(e=Odd(a=Inner(y=(1.0,)))), Odd(b=np.float64(math.nan)),
]


@pytest.mark.parametrize("drop_none", [True, False])
def test_values_that_equal_the_one_before_are_written_from_themselves(drop_none):
    for _ in range(2):  # the second time round every shape has its writer already
        for obj in TRAPS:
            assert codec_shapes.to_json(obj, drop_none) == _plain(obj, drop_none), obj
    for obj in reversed(TRAPS):
        assert codec_shapes.to_json(obj, drop_none) == _plain(obj, drop_none), obj


def test_every_demo_decision_in_order_is_json_dumps_of_its_dict(demo_decisions):
    """The demo nights' decisions (the session's walk-forward, tests/conftest.py) written one
    after the other as a replay writes them, with and without the None fields, and each again
    after the one that follows it (its shape's writer no longer the last used)."""
    from frostwatch.decision import decision_to_json

    assert len(demo_decisions) > 1000
    for d in demo_decisions:
        assert decision_to_json(d) == _plain(d, True)
    for d in demo_decisions[::5]:
        assert codec_shapes.to_json(d, False) == _plain(d, False)
    for a, b in zip(demo_decisions[::11], demo_decisions[1::11], strict=False):
        assert (decision_to_json(b), decision_to_json(a)) == (_plain(b, True), _plain(a, True))


def test_a_decision_with_its_numbers_turned_into_look_alikes_is_written_as_json_dumps_writes_it(demo_decisions):
    """A real decision, then the same with a float field made -0.0, an int, True, a numpy float,
    None; a curve with a -0.0 in it; a note text turned into a StrEnum member of the same text."""
    d = next(x for x in demo_decisions if x.projection.curve_air_temp_c and x.projection.predicted_min_c)
    p = d.projection
    looks = [-0.0, 0.0, 1, True, np.float64(p.predicted_min_c), None, math.nan, p.predicted_min_c]
    variants = [dataclasses.replace(d, projection=dataclasses.replace(p, predicted_min_c=v)) for v in looks]
    variants += [dataclasses.replace(d, projection=dataclasses.replace(p, curve_air_temp_c=(-0.0,) + p.curve_air_temp_c[1:])),
                 dataclasses.replace(d, projection=dataclasses.replace(p, regime=Word.B)),
                 dataclasses.replace(d, projection=dataclasses.replace(p, regime="plain")),
                 dataclasses.replace(d, plan=dataclasses.replace(d.plan, margin_c=int(d.plan.margin_c))),
                 dataclasses.replace(d, rank=float(d.rank)), dataclasses.replace(d, rank=bool(d.rank)), d]
    for v in variants + variants[::-1]:
        assert codec_shapes.to_json(v, True) == _plain(v, True)


LEAVES = st.one_of(
    st.none(), st.booleans(), st.integers(-3, 3), st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1.0, 1, True, 2.5, "plain", Word.B, Word.A, T, np.float64(-0.0)]),
    st.text(max_size=4),
)
VALUES = st.recursive(LEAVES, lambda inner: st.one_of(
    st.tuples(inner, inner), st.lists(inner, max_size=3), st.lists(st.floats(), max_size=4).map(tuple),
    st.dictionaries(st.sampled_from(["k", "z", "plain"]), inner, max_size=2),
    st.builds(Inner, inner, st.lists(inner, max_size=2).map(tuple)),
), max_leaves=6)


@settings(max_examples=300, deadline=None)
@given(objs=st.lists(st.builds(Odd, VALUES, VALUES, VALUES, VALUES, VALUES), min_size=1, max_size=6),
       drop_none=st.booleans())
def test_any_values_in_any_order_are_written_as_json_dumps_writes_them(objs, drop_none):
    for obj in objs + objs:
        assert codec_shapes.to_json(obj, drop_none) == _plain(obj, drop_none), obj


def test_the_text_tables_never_keep_zeros_and_are_emptied_when_full(monkeypatch):
    monkeypatch.setattr(codec_shapes, "TEXT_CACHE_SIZE", 5)
    codec_shapes._FLOAT_TEXT.clear()
    codec_shapes._STR_TEXT.clear()
    for i in range(12):
        obj = Odd(a=i / 7.0, b=f"t{i}", c=(0.0, -0.0, i / 3.0), d={f"k{i}": -0.0})
        assert codec_shapes.to_json(obj, True) == _plain(obj, True)
        assert len(codec_shapes._FLOAT_TEXT) <= 5 and len(codec_shapes._STR_TEXT) <= 5
        assert not any(x == 0.0 for x in codec_shapes._FLOAT_TEXT)
    assert codec_shapes.to_json(Odd(a=-0.0, c=(-0.0, 0.0)), True) == '{"a":-0.0,"c":[-0.0,0.0],"d":{}}'


def test_past_the_shapes_a_class_keeps_values_are_written_by_the_plain_encoder(monkeypatch):
    monkeypatch.setattr(codec_shapes, "MAX_SHAPES", 3)

    @dataclasses.dataclass(frozen=True)
    class Many:
        a: object = None

    kinds = [1.0, 1, True, "1", None, Word.B, T, (1.0,), {"a": 1}]
    for v in kinds + kinds:
        assert codec_shapes.to_json(Many(v), True) == _plain(Many(v), True)
    assert len(codec_shapes._WRITERS[(Many, True)]) == 3
