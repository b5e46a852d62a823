"""One limits table: command-line options are validated exactly like the rig keys they
stand for.

Each option names the rig key whose limits it shares (``--tolerance`` is
``trigger_link.tolerance``: more than 0 and less than 50 %), or, when no rig key exists,
its own quantity type built the same way (:func:`strobeplan.rig.Q`, as a pydantic annotation
by :func:`strobeplan.rigmodels.annotation`). :func:`option_value`
parses and checks an option's text through that one definition and raises
:class:`~strobeplan.errors.RigError` naming the option, the value and what was expected.
"""

from __future__ import annotations

from typing import Annotated, Any

from .errors import RigError

# option -> the rig key with the same meaning, or (kind, constraints) when there is none.
OPTIONS: dict[str, str | tuple[str, dict[str, float]]] = {
    "--tolerance": "trigger_link.tolerance",
    "--capacitance": "camera.trigger_input.capacitance",
    "--check TOP": "trigger_link.top",
    "--check BOTTOM": "trigger_link.bottom",
    "--edge-limit": ("time", {"gt": 0.0, "le": 1.0}),
    "--min-retention": "strobe.min_retention",
    "--min-margin": ("temperature_difference", {"ge": 0.0, "lt": 300.0}),
    "--max-blur": "camera.max_blur",
    "--pixel-size": "camera.object_pixel",
    "--resistor-range": "supply.series_resistor",
    "--supply-range": "supply.voltage",
}

_ADAPTERS: dict[str, Any] = {}


def _adapter(option: str):
    from pydantic import TypeAdapter

    from . import rig, rigmodels

    if option in _ADAPTERS:
        return _ADAPTERS[option]
    spec = OPTIONS[option]
    if isinstance(spec, tuple):
        kind, constraints = spec
        annotation = rigmodels.annotation(rig.Q(kind, **constraints))
    else:
        parts = spec.split(".")
        model = rigmodels._model_at(tuple(parts[:-1]))
        field = model.model_fields[parts[-1]]
        annotation = Annotated[(field.annotation, *field.metadata)] if field.metadata \
            else field.annotation
    _ADAPTERS[option] = TypeAdapter(annotation)
    return _ADAPTERS[option]


def _declared(option: str):
    """The declared value (:mod:`strobeplan.rigspec` node) an option is validated as."""
    from . import rig

    spec = OPTIONS[option]
    if isinstance(spec, tuple):
        kind, constraints = spec
        return rig.Q(kind, **constraints)
    section = rig.Rig
    *tables, key = spec.split(".")
    for table in tables:
        section = section.rig_keys[table].node.section
    return section.rig_keys[key].node


def option_kind(option: str) -> str | None:
    """The quantity kind of an option (e.g. ``'ratio'`` for ``--tolerance``)."""
    spec = OPTIONS[option]
    if isinstance(spec, tuple):
        return spec[0]
    return _declared(option).kind


def option_value(option: str, text: str) -> float:
    """``text`` of ``option`` as an SI float, checked against the one limits table.

    A bare number for a resistance ("1k", "470") is read in ohm.

    Raises
    ------
    RigError
        ``--tolerance = '-1%': expected a value greater than 0 % (as trigger_link.tolerance)``
    """
    from . import units
    from .rigspec import Defer

    kind = option_kind(option)
    value: Any = text
    if kind is None and isinstance(text, str):  # a plain number as typed on the command line
        try:
            value = float(text)
        except ValueError:
            pass
    if kind == "resistance" and isinstance(text, str):
        try:
            units.parse(text, kind)
        except units.UnitError:
            try:
                units.parse(text.strip() + "ohm", kind)
                value = text.strip() + "ohm"
            except units.UnitError:
                pass
    try:  # the fast path: the declared parser and limits, without pydantic
        return float(_declared(option).fast(value))
    except Defer:
        pass
    except Exception:  # noqa: BLE001 - pydantic below decides and words the error
        pass
    from pydantic import ValidationError

    from . import rigmodels

    try:
        result = _adapter(option).validate_python(value)
    except ValidationError as exc:
        spec = OPTIONS[option]
        path = spec if isinstance(spec, str) else ""
        err = rigmodels._validation_error(exc, {}, prefix=tuple(path.split(".")) if path else (),
                                     kind=kind)
        same = f" (as the rig key {path})" if path else ""
        raise RigError(option, text, f"{err.expected}{same}") from None
    if result is None:
        raise RigError(option, text, "expected a value")
    return float(result)


def option_range(option: str, pair) -> tuple[float, float]:
    """A MIN MAX pair of ``option``, each within the limits, and MIN <= MAX."""
    lo, hi = option_value(option, pair[0]), option_value(option, pair[1])
    if lo > hi:
        raise RigError(option, f"{pair[0]} {pair[1]}", "expected MIN no larger than MAX")
    return lo, hi
