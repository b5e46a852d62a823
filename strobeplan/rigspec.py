"""The rig format's building blocks, without pydantic: field declarations, sections, and the
fast validation of a parsed rig.

:mod:`strobeplan.rig` declares the rig format once, as :class:`Section` classes whose
annotations read like type hints (``frequency: Q("frequency", gt=0)``, ``speed: Q("speed",
gt=0) | None = None``, ``filter: Filter | None = None``, ``forward_voltage:
list[ForwardPoint] = Field(min_length=1, max_length=3)``). From those declarations

* :func:`fast_validate` turns a parsed TOML dictionary into section objects, running the
  same before-validators (unit parsing), constraints and defaults; it accepts only what it is
  sure of and raises :class:`Defer` for anything else (an unknown or missing key, a value out
  of its limits, a type TOML does not produce, any exception at all);
* :mod:`strobeplan.rigmodels` builds the pydantic models (lazily, only for a rig the fast
  path deferred, for ``rig-format`` and for the command-line limits): the full validation
  whose error messages the user sees.

Section objects are frozen and offer the part of pydantic's model API that strobeplan uses:
``model_fields`` (name -> :class:`FieldSpec`, with ``default``), ``model_fields_set``,
``model_copy(update=...)`` (no validation, as pydantic), ``model_dump(mode=...)``, equality
over the fields, ``repr`` and iteration over ``(name, value)`` pairs.
"""

from __future__ import annotations

import types
import typing

__all__ = ["Defer", "Section", "FieldSpec", "Field", "Value", "OneOrMany", "REQUIRED",
           "fast_validate", "from_model"]


class Defer(Exception):  # noqa: N818 - a signal to the caller, not an error
    """The fast path is not sure: the full validation (pydantic) decides."""


class _Required:
    def __repr__(self):
        return "REQUIRED"


REQUIRED = _Required()
"""The default of a required field."""

_LIMITS = {"gt": lambda v, c: v > c, "ge": lambda v, c: v >= c,
           "lt": lambda v, c: v < c, "le": lambda v, c: v <= c}
_BIG = 1 << 63


# --- value kinds --------------------------------------------------------------------------


class Node:
    """What a field holds (the part of its declaration before ``| None``)."""

    def __or__(self, other):
        if other is None:
            return _Optional(self)
        return NotImplemented

    def fast(self, value):  # pragma: no cover - every node defines it
        raise NotImplementedError


class _Optional:
    def __init__(self, node):
        self.node = node


class Value(Node):
    """A scalar or small tuple: ``before(value)`` (the parser) gives ``base``, which must then
    meet the constraints of ``field`` (``gt``, ``ge``, ``lt``, ``le``).

    ``field`` holds the keyword arguments of pydantic's ``Field`` for this value, in the
    order declared (constraints, ``description``, ``json_schema_extra``).
    """

    def __init__(self, before, base: str, field: dict | None = None):
        self.before = before
        self.base = base  # "float", "int", "tuple3" or "tuple2"
        self.field = dict(field or {})
        self.limits = [(_LIMITS[k], v) for k, v in self.field.items() if k in _LIMITS]
        extra = self.field.get("json_schema_extra")
        self.kind = extra.get("kind") if isinstance(extra, dict) else None

    def fast(self, value):
        out = self.before(value)
        base = self.base
        if base == "float":
            if type(out) is not float:
                raise Defer
        elif base == "int":
            if type(out) is not int or not -_BIG < out < _BIG:
                raise Defer
        elif type(out) is not tuple or len(out) != (3 if base == "tuple3" else 2) \
                or any(type(v) is not float for v in out):
            raise Defer
        for ok, limit in self.limits:
            if not ok(out, limit):
                raise Defer
        return out


class Choice(Node):
    """One of the values of a ``Literal[...]`` (strings or integers)."""

    def __init__(self, literal):
        self.literal = literal
        self.values = typing.get_args(literal)

    def fast(self, value):
        if type(value) not in (str, int) or value not in self.values:
            raise Defer
        for v in self.values:
            if type(v) is type(value) and v == value:
                return v
        raise Defer


def _text(value):
    if type(value) is not str:
        raise Defer
    if not value.isascii():
        value.encode("utf-8")  # a lone surrogate raises: pydantic refuses it too
    return value


class Plain(Node):
    """``str`` or ``bool``: exactly that type."""

    def __init__(self, tp):
        self.type = tp

    def fast(self, value):
        if self.type is str:
            return _text(value)
        if type(value) is not bool:
            raise Defer
        return value


class Nested(Node):
    """A table: a :class:`Section`."""

    def __init__(self, section):
        self.section = section

    def fast(self, value):
        return _section(self.section, value)


class ListOf(Node):
    """An array of tables."""

    def __init__(self, section):
        self.section = section

    def fast(self, value):
        if type(value) is not list:
            raise Defer
        return [_section(self.section, v) for v in value]


class OneOrMany(ListOf):
    """One table or an array of tables (a single ``[x]`` becomes a list of one)."""

    def fast(self, value):
        return super().fast([value] if type(value) is dict else value)


class DictOf(Node):
    """Tables by name (``[x.NAME]``)."""

    def __init__(self, section):
        self.section = section

    def fast(self, value):
        if type(value) is not dict:
            raise Defer
        return {_text(k): _section(self.section, v) for k, v in value.items()}


def _node_of(ann) -> tuple[Node, bool]:
    """(node, optional) of an annotation in a section's declaration."""
    if isinstance(ann, _Optional):
        return ann.node, True
    if isinstance(ann, Node):
        return ann, False
    origin = typing.get_origin(ann)
    if origin in (types.UnionType, typing.Union):
        args = typing.get_args(ann)
        rest = [a for a in args if a is not type(None)]
        if len(args) == 2 and len(rest) == 1:
            return _node_of(rest[0])[0], True
    elif origin is typing.Literal:
        return Choice(ann), False
    elif origin is list and isinstance(typing.get_args(ann)[0], type):
        return ListOf(typing.get_args(ann)[0]), False
    elif origin is dict and typing.get_args(ann)[0] is str:
        return DictOf(typing.get_args(ann)[1]), False
    elif ann in (str, bool):
        return Plain(ann), False
    elif isinstance(ann, type) and issubclass(ann, Section):
        return Nested(ann), False
    raise TypeError(f"unsupported rig field declaration: {ann!r}")


# --- fields and sections ------------------------------------------------------------------


class Field:
    """A field's options beyond its type (the arguments of pydantic's ``Field``)."""

    def __init__(self, **kwargs):
        self.kwargs = kwargs


class FieldSpec:
    """One declared field: ``name``, the key in the rig file (``key``: its alias, if any),
    what it holds (``node``), whether it may be absent (``optional``), ``default`` (or
    :data:`REQUIRED`), list bounds and its description."""

    def __init__(self, name: str, annotation, default):
        self.name = name
        self.annotation = annotation
        self.node, self.optional = _node_of(annotation)
        self.field = default.kwargs if isinstance(default, Field) else None
        opts = self.field or {}
        if self.field is not None:
            default = opts.get("default", REQUIRED)
        self.default = default
        self.alias = opts.get("alias")
        self.key = self.alias or name
        self.min_length = opts.get("min_length")
        self.max_length = opts.get("max_length")
        self.description = opts.get("description")

    def is_required(self) -> bool:
        return self.default is REQUIRED

    def fresh_default(self):
        d = self.default
        if isinstance(d, Section):
            return d.model_copy()
        if type(d) in (list, dict, set):
            raise Defer
        return d

    def fast(self, value):
        if value is None:
            raise Defer
        out = self.node.fast(value)
        if self.min_length is not None or self.max_length is not None:
            n = len(out)
            if self.min_length is not None and n < self.min_length:
                raise Defer
            if self.max_length is not None and n > self.max_length:
                raise Defer
        return out


class FrozenSectionError(AttributeError):
    """A validated rig section is read-only (use ``model_copy(update=...)``)."""


class Section:
    """A table of the rig file: declared by annotations, holding validated SI values.

    Class attributes after the declaration: ``model_fields`` (name -> :class:`FieldSpec`,
    in order), ``rig_keys`` (file key -> FieldSpec), ``before_validators`` and
    ``after_validators`` (functions ``raw -> raw`` and ``section -> None``, run in order
    around the field validation).
    """

    __slots__ = ("__dict__", "_fields_set")
    model_fields: dict = {}
    rig_keys: dict = {}
    before_validators: tuple = ()
    after_validators: tuple = ()

    def __init_subclass__(cls, **kwargs):
        super().__init_subclass__(**kwargs)
        specs = {}
        for name, ann in cls.__dict__.get("__annotations__", {}).items():
            default = cls.__dict__.get(name, REQUIRED)
            specs[name] = FieldSpec(name, ann, default)
            if name in cls.__dict__:
                delattr(cls, name)
        cls.model_fields = specs
        cls.rig_keys = {f.key: f for f in specs.values()}

    def __init__(self, **values):
        """A section from rig-file values (validated by the fast path only)."""
        try:
            checked = _section(type(self), values)
        except Defer:
            raise ValueError(f"{type(self).__name__}: not a simple valid table: "
                             f"{values!r}") from None
        object.__setattr__(self, "_fields_set", checked._fields_set)
        object.__setattr__(self, "__dict__", checked.__dict__)

    # pydantic's model API, the part strobeplan uses
    @property
    def model_fields_set(self) -> set:
        return self._fields_set

    def model_copy(self, *, update: dict | None = None, deep: bool = False):
        if deep:
            import copy

            new = copy.deepcopy(self)
        else:
            new = _make(type(self), dict(self.__dict__), set(self._fields_set))
        if update:
            new.__dict__.update(update)
            new._fields_set.update(update.keys())
        return new

    def model_dump(self, *, mode: str = "python") -> dict:
        if mode not in ("python", "json"):
            raise ValueError(f"mode must be 'python' or 'json', got {mode!r}")
        return {k: _dump(v, mode) for k, v in self.__dict__.items()}

    def __setattr__(self, name, value):
        raise FrozenSectionError(f"{type(self).__name__} is frozen: cannot set {name!r}")

    def __delattr__(self, name):
        raise FrozenSectionError(f"{type(self).__name__} is frozen: cannot delete {name!r}")

    def __eq__(self, other):
        if type(other) is not type(self):
            return NotImplemented
        return self.__dict__ == other.__dict__

    def __hash__(self):
        return hash(type(self)) + hash(tuple(self.__dict__.values()))

    def __iter__(self):
        yield from self.__dict__.items()

    def __repr__(self):
        args = ", ".join(f"{k}={v!r}" for k, v in self.__dict__.items())
        return f"{type(self).__name__}({args})"

    def __copy__(self):
        return _make(type(self), dict(self.__dict__), set(self._fields_set))

    def __deepcopy__(self, memo):
        import copy

        return _make(type(self), copy.deepcopy(self.__dict__, memo),
                     set(self._fields_set))

    def __reduce__(self):
        return (_make, (type(self), dict(self.__dict__), set(self._fields_set)))


def _make(cls, values: dict, fields_set: set):
    obj = object.__new__(cls)
    object.__setattr__(obj, "__dict__", values)
    object.__setattr__(obj, "_fields_set", fields_set)
    return obj


def _dump(v, mode):
    if isinstance(v, Section):
        return v.model_dump(mode=mode)
    if isinstance(v, list):
        return [_dump(x, mode) for x in v]
    if isinstance(v, tuple):
        out = [_dump(x, mode) for x in v]
        return out if mode == "json" else tuple(out)
    if isinstance(v, dict):
        return {k: _dump(x, mode) for k, x in v.items()}
    return v


def _section(cls, raw):
    if type(raw) is not dict:
        raise Defer
    for fn in cls.before_validators:
        raw = fn(raw)
        if type(raw) is not dict:
            raise Defer
    keys = cls.rig_keys
    for key in raw:
        if key not in keys:
            raise Defer
    values = {}
    given = set()
    for name, f in cls.model_fields.items():
        if f.key in raw:
            values[name] = f.fast(raw[f.key])
            given.add(name)
        elif f.default is REQUIRED:
            raise Defer
        else:
            values[name] = f.fresh_default()
    out = _make(cls, values, given)
    for fn in cls.after_validators:
        fn(out)
    return out


def fast_validate(cls: type[Section], raw):
    """``raw`` (a parsed rig file, or a part of one) as a ``cls`` instance, or :class:`Defer`.

    Never raises anything else: whatever goes wrong, the full validation decides (and gives
    the error message).
    """
    try:
        return _section(cls, raw)
    except Defer:
        raise
    except Exception:  # noqa: BLE001 - any doubt goes to the full validation
        raise Defer from None


def from_model(cls: type[Section], model):
    """A validated pydantic model (:mod:`strobeplan.rigmodels`) as ``cls`` instances: the
    same values, nested sections converted, the same ``model_fields_set``."""
    values = {}
    for name, f in cls.model_fields.items():
        values[name] = _convert(f.node, getattr(model, name))
    return _make(cls, values, set(model.model_fields_set))


def _convert(node, v):
    if v is None:
        return None
    if isinstance(node, ListOf):
        return [from_model(node.section, x) for x in v]
    if isinstance(node, DictOf):
        return {k: from_model(node.section, x) for k, x in v.items()}
    if isinstance(node, Nested):
        return from_model(node.section, v)
    return v
