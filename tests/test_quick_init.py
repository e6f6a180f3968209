"""The one-update `__init__` of the frozen dataclasses every evaluation makes
(`frostwatch.quick_init`) makes the instance the dataclass's own `__init__` makes: the same
attributes in the same order, equal, the same hash and repr, defaults and fresh default factories,
the same errors for missing or unknown arguments, and still frozen."""

from __future__ import annotations

import dataclasses
import pickle

import pytest

from frostwatch import decision, models
from frostwatch.advice import plan as plan_mod
from frostwatch.quick_init import quick_init

QUICK = [models.Projection, models.StationState, decision.Monitoring, decision.ProjectionSummary, decision.Decision,
         plan_mod.FanFigures, plan_mod.SprinklerFigures, plan_mod.HeaterFigures, plan_mod.Resources,
         plan_mod.MethodVerdict, plan_mod.StopCheck, plan_mod.AdvicePlan]


def _both(cls, *args, **kw):
    quick = cls(*args, **kw)
    plain = object.__new__(cls)
    cls.__dataclass_init__(plain, *args, **kw)
    return quick, plain


def _same(a, b) -> None:
    assert list(vars(a).items()) == list(vars(b).items())
    made = {f.name for f in dataclasses.fields(a) if f.default_factory is not dataclasses.MISSING}
    assert all(vars(a)[n] is vars(b)[n] for n in vars(a) if n not in made)  # the values given, not copies
    assert a == b and repr(a) == repr(b)
    try:
        assert hash(a) == hash(b)
    except TypeError:  # an unhashable field value (a dict): the same for both
        with pytest.raises(TypeError):
            hash(b)


@pytest.mark.parametrize("cls", QUICK, ids=lambda c: c.__name__)
def test_each_class_made_both_ways_is_the_same_instance(cls):
    fields = dataclasses.fields(cls)
    required = [f for f in fields if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING]
    values = {f.name: object() for f in fields}  # a distinct sentinel per field: any mix-up shows
    _same(*_both(cls, **{f.name: values[f.name] for f in required}))  # defaults and factories
    _same(*_both(cls, **values))
    _same(*_both(cls, *[values[f.name] for f in fields]))  # positionally, in field order
    a, b = _both(cls, **{f.name: values[f.name] for f in required})
    for f in fields:
        if f.default_factory is not dataclasses.MISSING:  # a fresh one each time, as the factory gives
            assert getattr(a, f.name) is not getattr(cls(**{g.name: values[g.name] for g in required}), f.name)
    with pytest.raises(dataclasses.FrozenInstanceError):
        setattr(a, fields[0].name, 1)
    assert cls.__init__.__qualname__ == f"{cls.__qualname__}.__init__"


@pytest.mark.parametrize("cls", QUICK, ids=lambda c: c.__name__)
def test_missing_and_unknown_arguments_raise_as_the_dataclass_does(cls):
    fields = dataclasses.fields(cls)
    required = [f.name for f in fields if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING]
    for bad in ({n: 1 for n in required[1:]}, {**{n: 1 for n in required}, "no_such_field": 1}):
        errors = []
        for init in (cls.__init__, cls.__dataclass_init__):
            with pytest.raises(TypeError) as e:
                init(object.__new__(cls), **bad)
            errors.append(str(e.value))
        assert errors[0] == errors[1]


def test_real_decisions_round_trip_and_pickle(demo_decisions):
    for d in demo_decisions[::50]:
        again = dataclasses.replace(d, level=d.level)
        assert again == d and pickle.loads(pickle.dumps(d)) == d
        assert list(vars(again)) == [f.name for f in dataclasses.fields(type(d))]


def test_what_it_cannot_make_the_same_is_refused():
    @dataclasses.dataclass(frozen=True)
    class WithPost:
        a: int = 0

        def __post_init__(self):
            pass

    @dataclasses.dataclass
    class NotFrozen:
        a: int = 0

    @dataclasses.dataclass(frozen=True, kw_only=True)
    class KwOnly:
        a: int = 0

    @dataclasses.dataclass(frozen=True)
    class NotInInit:
        a: int = dataclasses.field(default=0, init=False)

    @dataclasses.dataclass(frozen=True)
    class InitOnly:
        a: dataclasses.InitVar[int] = 0

    @dataclasses.dataclass(frozen=True, slots=True)
    class Slots:
        a: int = 0

    for cls in (WithPost, NotFrozen, KwOnly, NotInInit, InitOnly, Slots):
        with pytest.raises(ValueError):
            quick_init(cls)
