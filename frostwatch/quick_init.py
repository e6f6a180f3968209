"""A frozen dataclass's `__init__` that fills the instance's attributes at once.

    @quick_init
    @dataclass(frozen=True)
    class Projection: ...

A frozen dataclass's generated `__init__` sets each field through `object.__setattr__` (its own
`__setattr__` refuses): about a microsecond a field, and every evaluation makes a projection of
about forty fields, its stored summary, the advice plan and the decision (a replay of a season
makes hundreds of thousands of each). `quick_init` gives the class an `__init__` with the same
parameters, defaults and default factories that puts the same values in the instance's
`__dict__` in one update, in field order: the same instance (`vars`, equality, hash, repr,
pickling, `dataclasses.replace`), and setting an attribute afterwards still raises
`FrozenInstanceError`. The generated `__init__` stays on the class as `__dataclass_init__`
(tests/test_quick_init.py makes each class both ways and compares them).

Only for what it can make the same: a frozen dataclass without slots, `__post_init__`, init-only
or keyword-only fields, or fields left out of `__init__`; ValueError otherwise (at import).
"""

from __future__ import annotations

import dataclasses


def quick_init(cls: type) -> type:
    """`cls` with the one-update `__init__` (see the module docstring); returns `cls`."""
    params = getattr(cls, "__dataclass_params__", None)
    fields = dataclasses.fields(cls) if params is not None else ()
    if params is None or not params.frozen or not params.init:
        raise ValueError(f"{cls.__name__}: quick_init is for frozen dataclasses with an __init__")
    if "__slots__" in cls.__dict__ or hasattr(cls, "__post_init__"):
        raise ValueError(f"{cls.__name__}: quick_init does not handle __slots__ or __post_init__")
    every = getattr(cls, dataclasses._FIELDS)  # noqa: SLF001 - InitVar and ClassVar pseudo-fields too
    if len(every) != len(fields) or any(not f.init or f.kw_only for f in fields):
        raise ValueError(f"{cls.__name__}: quick_init does not handle init-only, keyword-only or non-init fields")
    scope: dict = {"_FACTORY": _FACTORY}
    params_src, body = [], []
    for f in fields:
        if f.default is not dataclasses.MISSING:
            scope[f"_d_{f.name}"] = f.default
            params_src.append(f"{f.name}=_d_{f.name}")
        elif f.default_factory is not dataclasses.MISSING:
            scope[f"_f_{f.name}"] = f.default_factory
            params_src.append(f"{f.name}=_FACTORY")
            body.append(f"    if {f.name} is _FACTORY: {f.name} = _f_{f.name}()")
        else:
            params_src.append(f.name)
    items = ", ".join(f"{f.name!r}: {f.name}" for f in fields)
    names = {f.name for f in fields}
    self_name = "__dataclass_self__" if "self" in names else "self"
    src = "\n".join([f"def __init__({', '.join([self_name, *params_src])}):", *body,
                     f"    {self_name}.__dict__.update({{{items}}})"])
    exec(src, scope)  # noqa: S102 - made here from the dataclass's own field names
    init = scope["__init__"]
    init.__qualname__ = f"{cls.__qualname__}.__init__"
    init.__module__ = cls.__module__
    init.__doc__ = cls.__init__.__doc__
    cls.__dataclass_init__ = cls.__init__
    cls.__init__ = init
    return cls


class _Factory:
    """The default of a field with a default factory (dataclasses' own marker is private)."""

    def __repr__(self) -> str:
        return "<factory>"


_FACTORY = _Factory()
