"""The rig format as pydantic models, built from the declarations in :mod:`strobeplan.rig`,
and pydantic's errors as one :class:`~strobeplan.errors.RigError` line.

The slow path: :func:`strobeplan.rig.rig_from_dict` comes here only for a rig its fast path
(:func:`strobeplan.rigspec.fast_validate`) is not sure of, and ``strobeplan rig-format``
(:mod:`strobeplan.rigdoc`) and the command-line limits (:mod:`strobeplan.limits`) read the
models. :func:`model_of` builds each section's model once, on first use, with the same
annotations the declarations state: ``Q(kind, ...)`` becomes ``Annotated[float,
BeforeValidator(parser), Field(json_schema_extra={"kind": ..., "example": ...}, ...)]``,
``X | None`` stays a union with None, ``Field(...)`` becomes pydantic's ``Field(...)``,
``OneOrMany(X)`` a list that a single table also fills, and the section's before- and
after-validators become model validators. :func:`validate` returns the rig as the
sections of :mod:`strobeplan.rig` (:func:`strobeplan.rigspec.from_model`).
"""

from __future__ import annotations

from typing import Annotated, Any

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationError, model_validator

from . import rig as _rig
from . import units
from .errors import MISSING, RigError
from .rig import _lookup
from .rigspec import (
    REQUIRED,
    Choice,
    DictOf,
    ListOf,
    Nested,
    OneOrMany,
    Plain,
    Section,
    Value,
    from_model,
)
from .safetext import shorten

__all__ = ["model_of", "annotation", "validate"]


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, defer_build=True)


_BASES: dict[str, Any] = {"float": float, "int": int, "tuple3": tuple[float, float, float],
                          "tuple2": tuple[float, float]}
_MODELS: dict[type, type[BaseModel]] = {}
_ANNOTATIONS: dict[int, Any] = {}


def _as_list(value):
    return [value] if isinstance(value, dict) else value


def annotation(node) -> Any:
    """The pydantic annotation of a declared value (:mod:`strobeplan.rigspec` node)."""
    if isinstance(node, Value):
        key = id(node)
        if key not in _ANNOTATIONS:  # one per declaration (Point and Direction are shared)
            _ANNOTATIONS[key] = (node, Annotated[_BASES[node.base], BeforeValidator(node.before),
                                                Field(**node.field)])
        return _ANNOTATIONS[key][1]
    if isinstance(node, Choice):
        return node.literal
    if isinstance(node, Plain):
        return node.type
    if isinstance(node, OneOrMany):
        return Annotated[list[model_of(node.section)], BeforeValidator(_as_list)]
    if isinstance(node, ListOf):
        return list[model_of(node.section)]
    if isinstance(node, DictOf):
        return dict[str, model_of(node.section)]
    if isinstance(node, Nested):
        return model_of(node.section)
    raise TypeError(f"no pydantic annotation for {node!r}")


def _default(value):
    if isinstance(value, Section):
        model = model_of(type(value))
        return model.model_construct(_fields_set=set(value.model_fields_set),
                                     **dict(value.__dict__))
    return value


def _before(fn):
    def validator(cls, raw):
        return fn(raw)

    validator.__name__ = validator.__qualname__ = fn.__name__
    return model_validator(mode="before")(classmethod(validator))


def _after(fn):
    def validator(self):
        fn(self)
        return self

    validator.__name__ = validator.__qualname__ = fn.__name__
    return model_validator(mode="after")(validator)


def model_of(section: type[Section]) -> type[BaseModel]:
    """The pydantic model of a rig section (built once)."""
    if section in _MODELS:
        return _MODELS[section]
    anns: dict[str, Any] = {}
    ns: dict[str, Any] = {"__module__": __name__, "__qualname__": section.__name__,
                          "__doc__": section.__doc__, "__annotations__": anns}
    for name, spec in section.model_fields.items():
        ann = annotation(spec.node)
        anns[name] = ann | None if spec.optional else ann
        if spec.field is not None:
            kwargs = dict(spec.field)
            if "default" in kwargs:
                kwargs["default"] = _default(kwargs["default"])
            ns[name] = Field(**kwargs)
        elif spec.default is not REQUIRED:
            ns[name] = _default(spec.default)
    for name, attr in vars(section).items():  # properties and methods (Timer.resolved)
        if not name.startswith("__") and (isinstance(attr, property) or callable(attr)) \
                and not isinstance(attr, type):
            ns[name] = attr
    for fn in section.before_validators:
        ns[f"_before_{fn.__name__}"] = _before(fn)
    for fn in section.after_validators:
        ns[f"_after_{fn.__name__}"] = _after(fn)
    _MODELS[section] = type(section.__name__, (_Model,), ns)
    return _MODELS[section]


def validate(raw) -> _rig.Rig:
    """Validate a parsed rig with pydantic: the rig (as :class:`strobeplan.rig.Rig`
    sections) or the RigError of all its problems. The cross-check is the caller's."""
    try:
        model = model_of(_rig.Rig).model_validate(raw)
    except ValidationError as exc:
        raise _validation_error(exc, raw) from None
    except RecursionError:
        raise RigError("", None, "the rig nests arrays or tables too deeply") from None
    return from_model(_rig.Rig, model)


# --- pydantic's errors as one line --------------------------------------------------------


def _field_named(model, key):
    """A model's field by its key in the rig file (its alias, if it has one)."""
    fields = getattr(model, "model_fields", {})
    if key in fields and fields[key].alias in (None, key):
        return fields[key]
    return next((f for f in fields.values() if f.alias == key), None)


def _keys(model) -> list[str]:
    return [f.alias or name for name, f in model.model_fields.items()]


def _model_at(loc) -> type[BaseModel] | None:
    """The pydantic model of the table at ``loc`` (a key path), or None."""
    model: Any = model_of(_rig.Rig)
    for part in loc:
        if isinstance(part, int):
            continue
        field = _field_named(model, part)
        if field is None:
            return None
        model = _inner_model(field.annotation)
        if model is None:
            return None
    return model


def _inner_model(annotation):
    import typing

    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _inner_model(arg)
        if found is not None:
            return found
    return None


def _field_kind(loc) -> str | None:
    model = _model_at(loc[:-1])
    if model is None:
        return None
    field = _field_named(model, loc[-1]) if isinstance(loc[-1], str) else None
    if field is None:
        return None
    extra = field.json_schema_extra
    if isinstance(extra, dict) and "kind" in extra:
        return extra["kind"]
    return _kind_in(field.annotation)


def _kind_in(annotation):
    import typing

    for meta in getattr(annotation, "__metadata__", ()):
        extra = getattr(meta, "json_schema_extra", None)
        if isinstance(extra, dict) and "kind" in extra:
            return extra["kind"]
    for arg in typing.get_args(annotation):
        found = _kind_in(arg)
        if found:
            return found
    return None


def _path(loc) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + shorten(str(part), 60)
    return out


def _validation_error(exc: ValidationError, raw, prefix: tuple = (),
                      kind: str | None = None) -> RigError:
    """All of pydantic's problems as one RigError line: the first in full, then every other.

    The first problem gives the error its key path and value; the others follow on the same
    line, each as ``; also PATH = VALUE: EXPECTED``, so nothing is hidden behind a count.
    """
    errors = exc.errors(include_url=False)
    # Prefer the most informative error: drop union-branch noise about None.
    errors = [e for e in errors if e["type"] != "none_required"] or errors
    # An unknown key usually explains a "missing" one (a typo): report it first.
    errors.sort(key=lambda e: e["type"] != "extra_forbidden")
    problems: list[RigError] = []
    seen: set[str] = set()
    guessed: set[str] = set()
    for err in errors:
        problem, guess = _one_error(err, raw, prefix, kind)
        if problem.path in seen or (err["type"] == "missing" and problem.path in guessed):
            continue  # one problem per key; a missing key a typo's "did you mean" names
        seen.add(problem.path)
        if guess is not None:
            guessed.add(guess)
        problems.append(problem)
    first = problems[0]
    also = "".join(f"; also {p}" for p in problems[1:])
    return RigError(first.path, first.value, first.expected + also)


def _one_error(err, raw, prefix: tuple = (), kind: str | None = None
               ) -> tuple[RigError, str | None]:
    """One pydantic error as a RigError, and the key path a "did you mean" proposes."""
    loc = tuple(p for p in err["loc"] if not (isinstance(p, str) and p.startswith("function-")))
    loc = prefix + tuple(p for p in loc if p not in ("float", "int", "str", "bool", "list"))
    if len(loc) > 1 and loc[0] == "emitter" and loc[1] == 0 and isinstance(
            raw.get("emitter"), dict):
        loc = ("emitter",) + loc[2:]  # a single [emitter] table has no index
    path = _path(loc)
    value = _lookup(raw, loc)
    kind = kind or (_field_kind(loc) if loc else None)
    etype = err["type"]
    if etype == "extra_forbidden":
        model = _model_at(loc[:-1])
        names = _keys(model) if model else []
        import difflib  # only for a message (6 ms of every check otherwise)

        guess = difflib.get_close_matches(str(loc[-1]), names, n=1, cutoff=0.5) \
            if len(str(loc[-1])) <= 100 else []
        hint = f"; did you mean '{guess[0]}'?" if guess else ""
        where = _path(loc[:-1]) or "the top level"
        known = ", ".join(names)
        proposed = _path((*loc[:-1], guess[0])) if guess else None
        return RigError(path, value, f"unknown key in {where}{hint} (known: {known})"), proposed
    if etype == "missing":
        what = f"a {kind.replace('_', ' ')} like '{units.kind_example(kind)}'" if kind \
            else "a value"
        return RigError(path, MISSING, f"required key is missing: expected {what}"), None
    msg = err["msg"]
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, "):]
    ctx = err.get("ctx") or {}
    unit = units.KINDS[kind].display if kind else ""
    for key, word in (("gt", "greater than"), ("ge", "at least"), ("lt", "less than"),
                      ("le", "at most")):
        if etype in ("greater_than", "greater_than_equal", "less_than", "less_than_equal") \
                and key in ctx:
            limit = ctx[key]
            shown = units.render(float(limit), kind) if kind else str(limit)
            if kind and float(limit) == 0:
                shown = f"0 {unit}".strip()
            msg = f"expected a value {word} {shown}"
            break
    if etype in ("too_short", "too_long"):
        msg = msg.replace("List should", "expected a list that has").replace(
            "Value should", "expected a list that should")
    if etype == "literal_error":
        msg = msg.replace("Input should be", "expected")
    if etype in ("dict_type", "model_type"):
        msg = "expected a table (a [section] or { ... })"
    if etype == "list_type":
        msg = "expected a list [ ... ]"
    if etype in ("string_type", "bool_type", "bool_parsing"):
        msg = msg.replace("Input should be", "expected")
    return RigError(path, value, msg), None
