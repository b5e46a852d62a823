"""``dataclass`` with the standard semantics, built without generating source code.

The standard decorator writes ``__init__``, ``__repr__``, ``__eq__`` (and, frozen,
``__setattr__``, ``__delattr__``, ``__hash__``) as Python source and compiles each one:
about 2-4 ms per class of twenty fields, and ``check`` imports some sixty of them (the plan's
sections, the registry's records, the physics' results). Here the standard decorator runs
with those methods switched off (it still collects the fields, so ``dataclasses.fields``,
``asdict``, ``replace`` and ``is_dataclass`` work as usual) and generic methods that read
the collected fields are attached instead: the same arguments, defaults and default
factories, the same ``repr`` text, equality of the same class over the compared fields,
frozen instances that refuse assignment with ``dataclasses.FrozenInstanceError`` and hash
over their compared fields.

Supported: ``frozen``, ``field(default=..., default_factory=..., repr=..., compare=...,
init=...)``, inheritance. Not supported (refused): ``InitVar``, ``kw_only``, ``slots``,
``order``, ``unsafe_hash`` (use :mod:`dataclasses` for those).
"""

from __future__ import annotations

import dataclasses
import reprlib

__all__ = ["dataclass"]

_MISSING = dataclasses.MISSING


def dataclass(cls=None, /, *, frozen: bool = False):
    """Drop-in for ``dataclasses.dataclass`` (``@dataclass`` or ``@dataclass(frozen=True)``)."""
    def wrap(c):
        return _process(c, frozen)

    return wrap if cls is None else wrap(cls)


def _process(cls, frozen: bool):
    own = {k for k in ("__init__", "__repr__", "__eq__") if k in cls.__dict__}
    if own:
        raise TypeError(f"{cls.__name__} defines {sorted(own)}: use dataclasses.dataclass")
    undocumented = not cls.__dict__.get("__doc__")
    if undocumented:  # the standard's default docstring costs inspect.signature (~1.5 ms)
        cls.__doc__ = cls.__name__
    cls = dataclasses.dataclass(init=False, repr=False, eq=False)(cls)
    flds = dataclasses.fields(cls)
    if undocumented:  # the class and its arguments, as the standard writes it (no types)
        cls.__doc__ = f"{cls.__name__}({', '.join(f.name for f in flds if f.init)})"
    init = [f for f in flds if f.init]
    late = [f for f in flds if not f.init]
    names = tuple(f.name for f in init)
    index = {n: i for i, n in enumerate(names)}
    defaults = [(f.default, f.default_factory) for f in init]
    post_init = getattr(cls, "__post_init__", None)
    setter = object.__setattr__
    qualname = cls.__qualname__

    def __init__(self, *args, **kwargs):  # noqa: N807 - the dunder being defined
        if len(args) > len(names):
            raise TypeError(f"{qualname}.__init__() takes {len(names) + 1} positional "
                            f"arguments but {len(args) + 1} were given")
        for key in kwargs:
            if key not in index:
                raise TypeError(f"{qualname}.__init__() got an unexpected keyword argument "
                                f"'{key}'")
        values = list(args)
        for k, name in enumerate(names):
            if k < len(args):
                if name in kwargs:
                    raise TypeError(f"{qualname}.__init__() got multiple values for "
                                    f"argument '{name}'")
                continue
            if name in kwargs:
                values.append(kwargs[name])
                continue
            default, factory = defaults[k]
            if default is not _MISSING:
                values.append(default)
            elif factory is not _MISSING:
                values.append(factory())
            else:
                raise TypeError(f"{qualname}.__init__() missing 1 required positional "
                                f"argument: '{name}'")
        for name, value in zip(names, values, strict=True):
            setter(self, name, value)
        for f in late:
            if f.default is not _MISSING:
                setter(self, f.name, f.default)
            elif f.default_factory is not _MISSING:
                setter(self, f.name, f.default_factory())
        if post_init is not None:
            self.__post_init__()

    shown = tuple(f.name for f in flds if f.repr)

    @reprlib.recursive_repr()
    def __repr__(self):  # noqa: N807
        return (f"{self.__class__.__qualname__}("
                + ", ".join(f"{n}={getattr(self, n)!r}" for n in shown) + ")")

    compared = tuple(f.name for f in flds if f.compare)

    def __eq__(self, other):  # noqa: N807
        if other.__class__ is self.__class__:
            return (tuple(getattr(self, n) for n in compared)
                    == tuple(getattr(other, n) for n in compared))
        return NotImplemented

    __init__.__qualname__ = f"{qualname}.__init__"
    __repr__.__qualname__ = f"{qualname}.__repr__"
    __eq__.__qualname__ = f"{qualname}.__eq__"
    cls.__init__ = __init__
    cls.__repr__ = __repr__
    cls.__eq__ = __eq__
    if frozen:
        def __setattr__(self, name, value):  # noqa: N807
            raise dataclasses.FrozenInstanceError(f"cannot assign to field {name!r}")

        def __delattr__(self, name):  # noqa: N807
            raise dataclasses.FrozenInstanceError(f"cannot delete field {name!r}")

        def __hash__(self):  # noqa: N807
            return hash(tuple(getattr(self, n) for n in compared))

        cls.__setattr__ = __setattr__
        cls.__delattr__ = __delattr__
        if "__hash__" not in cls.__dict__ or cls.__dict__["__hash__"] is None:
            cls.__hash__ = __hash__
    elif "__hash__" not in cls.__dict__:
        cls.__hash__ = None  # eq without frozen: unhashable, as dataclasses does
    return cls
