"""The rig file (a contract, docs/rig-format.md): its sections, declared once, holding SI floats.

A rig file is TOML; every dimensioned value is a string with its unit ("40 kHz", "1.5 us",
"2.2 kohm", "23 degC", "45 %"); plain numbers only for counts and ratios. Unknown keys are
errors with a "did you mean". :func:`load_rig` is the way in: it reads bytes, decodes UTF-8,
parses TOML, validates, cross-checks, and raises :class:`~strobeplan.errors.RigError` (one
line: key path, value, what was expected) for anything it cannot accept.

Defaults (documented in README and docs/rig-format.md): air 20 degC, 50 % RH, 101.325 kPa,
400 ppm CO2; strobe phase 0 deg, every 1, min_retention 90 %; led ambient 25 degC,
efficiency 0 (conservative: all electrical power heats the junction), no phosphor; camera
global shutter, 8 bit; trigger link E24 with the series' own tolerance.

The sections are :class:`strobeplan.rigspec.Section` classes: pydantic is not imported to
check a valid rig. :func:`rig_from_dict` validates with the fast path
(:func:`strobeplan.rigspec.fast_validate`, the same parsers, limits, defaults and
validators); anything it is not sure of goes to the pydantic models that
:mod:`strobeplan.rigmodels` builds from these same declarations, which accept or give the
error message. Either way the result is made of these sections.
"""


import math
import tomllib
from pathlib import Path
from typing import Any, Literal

from . import units
from .errors import MISSING, RigError
from .io import MAX_RIG_BYTES
from .rigspec import Defer, Field, OneOrMany, Section, Value, fast_validate
from .safetext import shorten

__all__ = ["Rig", "load_rig", "loads_rig", "rig_from_dict", "E_SERIES_NAMES"]

E_SERIES_NAMES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")


def _parser(kind: str):
    def parse(value):
        if value is None:
            return None
        try:
            return units.parse(value, kind)
        except units.UnitError as exc:
            raise ValueError(str(exc)) from None

    return parse


def Q(kind: str, **constraints):  # noqa: N802 - a type factory reads like a type
    """A quantity of ``kind`` (a float in SI units) with constraints (``gt``, ``ge``, ``lt``,
    ``le``) and an optional ``description``."""
    return Value(_parser(kind), "float",
                 {"json_schema_extra": {"kind": kind, "example": units.kind_example(kind)},
                  **constraints})


def _strict_int(value):
    if isinstance(value, bool) or not isinstance(value, int):
        raise ValueError(f"expected a whole number, got {value!r}")
    return value


def Count(**constraints):  # noqa: N802
    """A whole number (never a boolean or a float) with constraints."""
    return Value(_strict_int, "int", constraints)


def _plain_number(value):
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError(f"expected a plain number, got {value!r}")
    try:
        return units.parse(value, "ratio")
    except units.UnitError as exc:
        raise ValueError(str(exc)) from None


def Number(**constraints):  # noqa: N802
    """A plain number (a ratio: no unit) with constraints."""
    return Value(_plain_number, "float", constraints)


def _vector(value, kind):
    if not isinstance(value, (list, tuple)) or len(value) != 3:
        what = f"3 {kind}s like ['0 mm', '0 mm', '30 mm']" if kind else "3 numbers like [0, 0, 1]"
        raise ValueError(f"expected a list of {what}")
    if kind:
        try:
            return tuple(units.parse(v, kind) for v in value)
        except units.UnitError as exc:
            raise ValueError(str(exc)) from None
    return tuple(_plain_number(v) for v in value)


def _point(value):
    return _vector(value, "length")


def _direction(value):
    out = _vector(value, None)
    if not math.hypot(*out) > 0:
        raise ValueError("expected a direction, got the zero vector")
    return out


Point = Value(_point, "tuple3", {"json_schema_extra": {"text": "point: 3 lengths (e.g. "
                                                             "[\"0 mm\", \"0 mm\", "
                                                             "\"30 mm\"])"}})
Direction = Value(_direction, "tuple3",
                  {"json_schema_extra": {"text": "direction: 3 numbers (e.g. [0, 0, 1])"}})


def _temperature_range(value):
    if not isinstance(value, (list, tuple)) or len(value) != 2:
        raise ValueError("expected two temperatures like ['15 degC', '30 degC']")
    try:
        lo, hi = (units.parse(v, "temperature") for v in value)
    except units.UnitError as exc:
        raise ValueError(str(exc)) from None
    if not 223.15 < lo < hi < 353.15:
        raise ValueError("expected a rising pair between -50 degC and 80 degC")
    return (lo, hi)


def _time_or_angle(value):
    """("time", seconds) or ("angle", radians) from a quantity string."""
    try:
        return ("time", units.parse(value, "time"))
    except units.UnitError:
        pass
    try:
        return ("angle", units.parse(value, "angle"))
    except units.UnitError:
        raise ValueError(f"expected a time like '{units.kind_example('time')}' or an angle "
                         f"like '12 deg', got {value!r}") from None


def _time_field(value):
    tag, out = _time_or_angle(value)
    if tag == "angle":  # the rig-level validator converts it when wave.frequency is valid
        raise ValueError("an angle here needs a valid wave.frequency")
    return out


class _Model(Section):
    __slots__ = ()


# --- sections -----------------------------------------------------------------------------


class Wave(_Model):
    frequency: Q("frequency", gt=0, description="Wave (emitter drive) frequency.")
    kind: Literal["travelling", "standing"] = "travelling"
    speed: Q("speed", gt=0, description="Speed of sound; default from [air].") | None = None
    harmonics: Count(ge=1, le=20, description="Harmonics to evaluate retention at.") = 1


class Air(_Model):
    temperature: Q("temperature", gt=223.15, lt=353.15) = 293.15
    temperature_range: Value(_temperature_range, "tuple2", {
        "json_schema_extra": {"text": "2 temperatures"},
        "description": "Lowest and highest air temperature expected during a session, e.g. "
        "['18 degC', '28 degC'] (how far it moves the frozen phase)."}) | None = None
    relative_humidity: Q("ratio", ge=0, le=1) = 0.5
    pressure: Q("pressure", gt=50e3, lt=120e3) = 101325.0
    co2: Q("ppm", ge=0, le=0.01) = 4.0e-4


class Filter(_Model):
    kind: Literal["rc", "butterworth"]
    order: Count(ge=1, le=8) = 1
    cutoff: Q("frequency", gt=0)


class Synthesis(_Model):
    carrier: Q("frequency", gt=0, description="PWM carrier frequency.") | None = None
    samples_per_cycle: Count(ge=4, le=4096) | None = None
    filter: Filter | None = None
    amplifier_bandwidth: Q("frequency", gt=0) | None = None


class Emitter(_Model):
    resonance: Q("frequency", gt=0)
    quality_factor: Number(gt=0, le=1e5)
    distance_to_view: Q("length", gt=0, le=100) | None = None
    spl_at_reference: Q("sound_level", gt=0, lt=200) | None = None
    reference_distance: Q("length", gt=0) | None = None
    reference_voltage: Q("voltage", gt=0) | None = None
    drive_voltage: Q("voltage", gt=0) | None = None
    spl_at_view: Q("sound_level", gt=0, lt=200) | None = None
    radius: Q("length", gt=0) | None = None
    static_capacitance: Q("capacitance", gt=0) | None = None
    synthesis: Synthesis | None = None
    position: Point = (0.0, 0.0, 0.0)
    axis: Direction = (0.0, 0.0, 1.0)
    phase: Q("angle", ge=-2 * math.pi, le=2 * math.pi) = 0.0
    amplitude: Number(ge=0, le=1e3) = 1.0


class Reflector(_Model):
    position: Point
    normal: Direction
    reflection: Number(ge=-1, le=1) = 1.0


class View(_Model):
    point: Point | None = None
    centre: Point | None = None
    width: Q("length", gt=0) | None = None
    height: Q("length", gt=0) | None = None
    depth: Q("length", gt=0) | None = None
    light_axis: Direction = (1.0, 0.0, 0.0)
    samples: Count(ge=2, le=4096) = 64


class Timer(_Model):
    """The controller's general-purpose counters (a bundled profile and/or its properties)."""

    profile: str | None = None
    bits: Count(ge=4, le=64) | None = None
    prescaler_max: Count(ge=1, le=1 << 32) | None = None
    prescaler_power_of_two: bool | None = None
    channels: Count(ge=1, le=64) | None = None
    reload_per_period: bool | None = None
    chainable: bool | None = None

    def resolved(self):
        """The resolved :class:`strobeplan.timers.TimerModel` (profile, then the keys given)."""
        from .timers import PROFILES, TimerModel

        base = PROFILES.get(self.profile) if self.profile else None
        given = {k: v for k, v in self.__dict__.items() if k != "profile" and v is not None}
        if base is None:
            return TimerModel(name="custom", bits=given["bits"],
                              prescaler_max=given.get("prescaler_max", 1),
                              prescaler_power_of_two=given.get("prescaler_power_of_two", False),
                              channels=given.get("channels", 2),
                              reload_per_period=given.get("reload_per_period", False),
                              chainable=given.get("chainable", False))
        name = base.name + (" (modified)" if given else "")
        return TimerModel(**{**base.__dict__, **given, "name": name})


class Controller(_Model):
    clock: Q("frequency", gt=0, le=10e9)
    jitter_rms: Q("time", ge=0) = 0.0
    output: str = "lvcmos33"
    output_resistance: Q("resistance", ge=0) | None = None
    shared_clock: bool = True
    clock_tolerance: Q("ppm", gt=0, le=0.01) | None = None
    timer: Timer | None = None


class Strobe(_Model):
    pulse_width: Q("time", gt=0, description="Gate-on time of one flash.")
    phase: Q("angle", ge=-2 * math.pi, le=2 * math.pi) = 0.0
    every: Count(ge=1, le=1_000_000) = 1
    calibration_offset: Value(_time_field, "float", dict(
        ge=-1.0, le=1.0,
        json_schema_extra={"text": "time or angle (e.g. \"200 ns\" or \"12 deg\")"},
        description="Measured offset added to the chain delay: a time ('200 ns') or an "
        "angle of the wave ('12 deg', positive = the wave arrives later); default 0 s.")) = 0.0
    min_retention: Q("ratio", gt=0, lt=1) = 0.9
    continuous: bool = False


class Sweep(_Model):
    steps: Count(ge=1, le=100_000) | None = None
    span: Q("angle", gt=0, le=2 * math.pi) | None = None
    slow_motion: Q("frequency") | None = None


class ForwardPoint(_Model):
    current: Q("current", gt=0)
    voltage: Q("voltage", gt=0)


class PulseRating(_Model):
    width: Q("time", gt=0)
    duty: Q("ratio", gt=0, le=1)
    current: Q("current", gt=0)


class FosterTerm(_Model):
    resistance: Q("thermal_resistance", gt=0)
    time_constant: Q("time", gt=0)


class OpticalPower(_Model):
    current: Q("current", gt=0, description="Current of the datasheet's radiant-flux rating.")
    power: Q("power", gt=0, description="Radiant flux (optical watts) at that current.")


class RelativeOutput(_Model):
    current: Q("current", gt=0)
    ratio: Number(gt=0, description="Relative optical output at that current.")


class Led(_Model):
    forward_voltage: list[ForwardPoint] = Field(min_length=1, max_length=3)
    series_resistance: Q("resistance", ge=0) | None = None
    max_dc_current: Q("current", gt=0)
    max_pulse_current: Q("current", gt=0) | None = None
    pulse_ratings: list[PulseRating] | None = None
    junction_max: Q("temperature", gt=273.15, lt=573.15)
    min_margin: Q("temperature_difference", ge=0, le=200) = 10.0
    thermal: list[FosterTerm] = Field(min_length=1, max_length=8)
    ambient: Q("temperature", gt=223.15, lt=373.15) = 298.15
    efficiency: Q("ratio", ge=0, lt=1) = 0.0
    phosphor_fraction: Q("ratio", ge=0, le=1) = 0.0
    phosphor_decay: Q("time", gt=0) | None = None
    rise_time: Q("time", ge=0) | None = None
    optical_power: OpticalPower | None = None
    relative_output: list[RelativeOutput] | None = Field(default=None, min_length=1)
    wavelength: Q("length", gt=200e-9, lt=2e-6) | None = None
    spectrum: Literal["white"] | None = None
    emitting_size: Q("length", gt=0) | None = None


class Switch(_Model):
    on_resistance: Q("resistance", gt=0)
    rated_gate_voltage: Q("voltage", gt=0)
    threshold_voltage: Q("voltage", gt=0)
    plateau_voltage: Q("voltage", gt=0)
    gate_charge: Q("charge", gt=0)
    gate_source_charge: Q("charge", gt=0)
    gate_drain_charge: Q("charge", gt=0)
    max_drain_voltage: Q("voltage", gt=0)
    max_pulse_current: Q("current", gt=0)
    loop_inductance: Q("inductance", ge=0) | None = None


class GateDriver(_Model):
    supply: Q("voltage", gt=0)
    output_resistance: Q("resistance", ge=0) = 0.0
    gate_resistor: Q("resistance", ge=0) = 0.0
    propagation_delay: Q("time", ge=0, le=1.0) = 0.0
    input: str = "lvcmos33"
    rise_time: Q("time", gt=0) | None = None
    fall_time: Q("time", gt=0) | None = None
    jitter_rms: Q("time", ge=0) = 0.0


class Supply(_Model):
    voltage: Q("voltage", gt=0)
    series_resistor: Q("resistance", ge=0)
    series_resistor_power: Q("power", gt=0)
    storage_capacitance: Q("capacitance", gt=0)
    esr: Q("resistance", ge=0) = 0.0
    max_current: Q("current", gt=0)
    max_power: Q("power", gt=0)


class TriggerInput(_Model):
    family: str
    capacitance: Q("capacitance", gt=0) = 10e-12
    tolerant: bool = False


class Lens(_Model):
    focal_length: Q("length", gt=0)
    f_number: Number(gt=0)


class Camera(_Model):
    exposure: Q("time", gt=0)
    frame_rate: Q("frequency", gt=0)
    shutter: Literal["global", "rolling"] = "global"
    readout: Q("time", ge=0) | None = None
    trigger_latency: Q("time", ge=0, le=1.0) = 0.0
    trigger_jitter: Q("time", ge=0, description="RMS jitter of the exposure start after "
                      "the trigger; the window opens 3 sigma plus a tick before the first "
                      "flash.") = 0.0
    trigger_input: TriggerInput | None = None
    trigger: Literal["input", "none"] = "input"
    object_pixel: Q("length", gt=0) | None = None
    max_blur: Number(gt=0, le=1000) = 2.0
    bit_depth: Count(ge=1, le=24) = 8
    pixel_pitch: Q("length", gt=0, lt=1e-3) | None = None
    width_px: Count(ge=1) | None = None
    height_px: Count(ge=1) | None = None
    quantum_efficiency: Q("ratio", gt=0, le=1) | None = None
    full_well: Number(gt=0) | None = None
    read_noise: Number(ge=0) | None = None
    dark_current: Number(ge=0) = 0.0
    lens: Lens | None = None
    binning: Count(ge=1, le=64) = 1
    average_frames: Count(ge=1) = 1


class LogicFamily(_Model):
    """A custom logic family from a part's datasheet (absolute thresholds)."""

    vdd: Q("voltage", gt=0, description="Nominal supply.")
    vdd_min: Q("voltage", gt=0, description="Lowest supply; default 90 % of vdd.") | None = None
    vdd_max: Q("voltage", gt=0, description="Highest supply; default 110 % of vdd.") | None = None
    vih: Q("voltage", gt=0, description="VIH min.")
    vil: Q("voltage", ge=0, description="VIL max.")
    voh: Q("voltage", gt=0, description="VOH min at output_current.")
    vol: Q("voltage", ge=0, description="VOL max at output_current.")
    output_current: Q("current", gt=0, description="Test (rated) current of voh and vol.")
    input_leakage: Q("current", ge=0, description="Input leakage magnitude.") = 1e-6


class TriggerLink(_Model):
    series: Literal[E_SERIES_NAMES] = "E24"  # type: ignore[valid-type]
    tolerance: Q("ratio", gt=0, lt=0.5) | None = None
    top: Q("resistance", gt=0) | None = None
    bottom: Q("resistance", gt=0) | None = None
    families: dict[str, LogicFamily] | None = Field(
        default=None, description="Custom logic families by name, usable wherever a family "
        "name is asked (controller.output, camera.trigger_input.family, gate_driver.input).")


class Source(_Model):
    width: Q("length", gt=0)
    height: Q("length", gt=0)


class Optics(_Model):
    passes: Literal[1, 2] = 1
    cutoff_distance: Q("length", gt=0) | None = None
    cutoff_opening: Q("length", gt=0) | None = None
    sound_path: Q("length", gt=0)
    light_wavelength: Q("length", gt=100e-9, lt=2e-6) = 630e-9
    min_contrast: Q("ratio", gt=0, lt=1) | None = None
    layout: Literal["z-type", "double-pass"] | None = None
    mirror_diameter: Q("length", gt=0) | None = None
    focal_length: Q("length", gt=0) | None = None
    offset_angle: Q("angle", ge=0, lt=math.pi / 4) = 0.0
    mirror_separation: Q("length", gt=0) | None = None
    source: Source | None = None
    source_separation: Q("length", ge=0) = 0.0
    cutoff: Literal["knife", "rod"] = "knife"
    cut_fraction: Q("ratio", gt=0, lt=1) = 0.5
    cutoff_width: Q("length", gt=0) | None = None
    mirror_reflectance: Q("ratio", gt=0, le=1) = 0.9
    beamsplitter: Q("ratio", gt=0, lt=1) = 0.5
    lens_transmission: Q("ratio", gt=0, le=1) = 0.9
    test_distance: Q("length", ge=0) | None = None
    bench_length: Q("length", gt=0) | None = None
    min_snr: Number(gt=0) = 5.0


class Rig(_Model):
    name: str = "unnamed rig"
    description: str = ""
    wave: Wave
    air: Air = Air()
    emitters: OneOrMany(Emitter) | None = Field(
        default=None, alias="emitter", min_length=1, max_length=64,
        description="One [emitter] table, or several [[emitter]] tables (an array); the "
        "first is the phase reference.")
    reflector: list[Reflector] | None = Field(default=None, max_length=16)
    view: View | None = None
    controller: Controller
    strobe: Strobe
    sweep: Sweep | None = None
    led: Led | None = None
    switch: Switch | None = None
    gate_driver: GateDriver | None = None
    supply: Supply | None = None
    camera: Camera | None = None
    trigger_link: TriggerLink | None = None
    optics: Optics | None = None

    @property
    def emitter(self) -> Emitter | None:
        """The first emitter (the phase reference), or None."""
        return self.emitters[0] if self.emitters else None

    @property
    def reflectors(self) -> list[Reflector]:
        return list(self.reflector or [])


# The rig-level validators, shared by the fast path and the pydantic models (in this order):
# before the fields are validated, then after.


def _calibration_angle(raw):
    """An angle in strobe.calibration_offset becomes a time at the wave frequency."""
    strobe = raw.get("strobe") if isinstance(raw, dict) else None
    wave = raw.get("wave") if isinstance(raw, dict) else None
    if not isinstance(strobe, dict) or "calibration_offset" not in strobe:
        return raw
    try:
        tag, value = _time_or_angle(strobe["calibration_offset"])
    except ValueError:
        return raw
    if tag == "angle":
        try:
            f = units.parse(wave["frequency"], "frequency")
        except (units.UnitError, KeyError, TypeError):
            return raw
        if not (math.isfinite(f) and f > 0):
            return raw
        seconds = value / (2 * math.pi * f)
        raw = {**raw, "strobe": {**strobe, "calibration_offset": f"{seconds!r} s"}}
    return raw


def _view_distance(rig: "Rig") -> None:
    """The first emitter's distance_to_view from [view].point when only that is given."""
    em, view = rig.emitter, rig.view
    if em is not None and em.distance_to_view is None and view is not None \
            and view.point is not None:
        d = math.dist(em.position, view.point)
        if d > 0:
            object.__setattr__(em, "distance_to_view", d)


def _derive_layout(rig: "Rig") -> None:
    from .physics import imaging

    opt, cam = rig.optics, rig.camera
    if opt is None:
        return
    led = rig.led
    if led is not None and led.wavelength is not None \
            and "light_wavelength" not in opt.model_fields_set:
        object.__setattr__(opt, "light_wavelength", led.wavelength)
    if opt.layout is None or opt.focal_length is None:
        return
    double = opt.layout == "double-pass"
    u = float(imaging.lens_object_distance(double, opt.focal_length))
    if double and "passes" not in opt.model_fields_set:
        object.__setattr__(opt, "passes", 2)
    if opt.cutoff_distance is None:
        object.__setattr__(opt, "cutoff_distance", u)
    height = _source_height(rig)
    if opt.cutoff_opening is None and height is not None:
        object.__setattr__(opt, "cutoff_opening",
                           float(imaging.unobstructed_height(height, opt.cut_fraction)))
    if cam is not None and cam.object_pixel is None and cam.pixel_pitch is not None \
            and cam.lens is not None and u > cam.lens.focal_length:
        m = float(imaging.magnification(cam.lens.focal_length, u))
        object.__setattr__(cam, "object_pixel", float(imaging.object_pixel(cam.pixel_pitch, m)))


def _source_height(rig) -> float | None:
    """Lit source height: the slit within the LED die (either alone when one is missing)."""
    opt, led = rig.optics, rig.led
    die = led.emitting_size if led is not None else None
    slit = opt.source.height if opt is not None and opt.source is not None else None
    given = [v for v in (slit, die) if v is not None]
    return min(given) if given else None


Rig.before_validators = (_calibration_angle,)
Rig.after_validators = (_view_distance, _derive_layout)


# --- loading ------------------------------------------------------------------------------


def load_rig(source: str | Path) -> Rig:
    """Read and validate a rig file. ``"-"`` reads standard input.

    Raises
    ------
    RigError
        For anything unreadable, malformed, out of range or contradictory.
    """
    from .io import read_rig_bytes

    data, where = read_rig_bytes(source)
    return loads_rig(data, where)


def loads_rig(data: bytes | str, where: str = "<rig>") -> Rig:
    """Validate rig-file text (bytes or str); see :func:`load_rig`."""
    if len(data) > MAX_RIG_BYTES:
        raise RigError("", where, f"is larger than {MAX_RIG_BYTES // 1_000_000} MB, the limit "
                       "for a rig file")
    if isinstance(data, bytes):
        if b"\x00" in data:
            raise RigError("", where, "is a binary file, expected TOML text")
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise RigError("", where, f"is not UTF-8 text (byte {exc.start})") from None
    else:
        text = data
    text = text.removeprefix("\ufeff")  # a UTF-8 byte order mark is accepted
    if not text.strip():
        raise RigError("", where, "is empty, expected a TOML rig file (try `strobeplan new`)")
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise RigError("", where, f"TOML syntax error: {exc}") from None
    except RecursionError:
        raise RigError("", where, "nests arrays or tables too deeply for a rig file") from None
    except ValueError as exc:  # e.g. an integer beyond Python's digit limit
        raise RigError("", where, f"TOML value out of range: {exc}") from None
    return rig_from_dict(raw)


def rig_from_dict(raw: dict[str, Any]) -> Rig:
    """Validate a parsed rig dictionary (TOML tables as dicts).

    The fast path (no pydantic) accepts what it is sure of; anything else goes to the
    pydantic models (:mod:`strobeplan.rigmodels`), which accept it or raise the RigError.
    """
    try:
        rig = fast_validate(Rig, raw)
    except Defer:
        from .rigmodels import validate

        rig = validate(raw)
    cross_check(rig, raw)
    return rig


def _lookup(raw, loc):
    node = raw
    for part in loc:
        try:
            node = node[part]
        except (KeyError, IndexError, TypeError):
            return MISSING
    return node


def _unit3(v):
    n = math.hypot(*v)
    return tuple(c / n for c in v)


def _fail(raw, path: str, expected: str):
    loc = tuple(int(p) if p.isdigit() else p for p in path.replace("[", ".").replace("]", "")
                .split("."))
    value = _lookup(raw, loc)
    raise RigError(path, None if value is MISSING else value, expected)


def cross_check(rig: Rig, raw: dict | None = None) -> None:
    """Settings that are each valid but contradict one another (raise RigError)."""
    raw = raw or {}
    r = units.render
    f = rig.wave.frequency
    synth = rig.emitter.synthesis if rig.emitter else None
    flash_period = rig.strobe.every / f
    clock = rig.controller.clock
    if round(rig.strobe.pulse_width * clock) < 1:
        _fail(raw, "strobe.pulse_width",
              f"expected at least half a timer tick ({r(0.5 / clock, 'time')} at "
              f"controller.clock {r(clock, 'frequency')}): the timer would realise 0 ticks")
    if rig.strobe.pulse_width >= flash_period:
        _fail(raw, "strobe.pulse_width",
              f"expected shorter than the flash period {r(flash_period, 'time')} "
              f"(every = {rig.strobe.every} at {r(f, 'frequency')})")
    drive_rate = f
    if synth is not None:
        if synth.carrier is None and synth.samples_per_cycle is None:
            _fail(raw, "emitter.synthesis",
                  "expected 'carrier' or 'samples_per_cycle' (the PWM carrier)")
        if synth.carrier is not None and synth.samples_per_cycle is not None:
            implied = synth.samples_per_cycle * f
            if abs(implied - synth.carrier) > 0.02 * synth.carrier:
                _fail(raw, "emitter.synthesis.samples_per_cycle",
                      f"contradicts carrier {r(synth.carrier, 'frequency')} (implies "
                      f"{r(implied, 'frequency')}); give one of the two")
        if synth.carrier is not None and synth.carrier < 4 * f:
            _fail(raw, "emitter.synthesis.carrier",
                  f"expected at least 4x the wave frequency ({r(4 * f, 'frequency')})")
        drive_rate = synth.carrier or synth.samples_per_cycle * f
        if synth.filter is not None and synth.filter.kind == "rc" and synth.filter.order != 1:
            _fail(raw, "emitter.synthesis.filter.order",
                  "expected 1 for kind = 'rc' (use kind = 'butterworth' for higher orders)")
    if rig.controller.clock < 2 * drive_rate:
        _fail(raw, "controller.clock",
              f"expected at least 2x the fastest timer rate ({r(2 * drive_rate, 'frequency')})")
    if not rig.controller.shared_clock and rig.controller.clock_tolerance is None:
        _fail(raw, "controller.clock_tolerance",
              "required when shared_clock = false (the ppm tolerance between the clocks)")
    if rig.controller.shared_clock and rig.controller.clock_tolerance is not None:
        _fail(raw, "controller.clock_tolerance",
              "given, but shared_clock = true: remove it or set shared_clock = false")
    if rig.sweep is not None:
        s = rig.sweep
        if s.slow_motion is not None and (s.steps is not None or s.span is not None):
            _fail(raw, "sweep.slow_motion",
                  "contradicts sweep.steps/span: a sweep is either phase steps or slow motion")
        if s.slow_motion is None and s.steps is None:
            _fail(raw, "sweep", "expected 'steps' (with optional 'span') or 'slow_motion'")
        if s.slow_motion is not None:
            if s.slow_motion == 0:
                _fail(raw, "sweep.slow_motion", "expected a non-zero apparent frequency")
            if abs(s.slow_motion) >= f / (2 * rig.strobe.every):
                _fail(raw, "sweep.slow_motion",
                      f"expected below half the flash rate "
                      f"({r(f / (2 * rig.strobe.every), 'frequency')})")
    cam = rig.camera
    if cam is not None:
        if cam.exposure > 1.0 / cam.frame_rate:
            _fail(raw, "camera.exposure",
                  f"expected no longer than the frame period {r(1 / cam.frame_rate, 'time')}")
        if cam.shutter == "rolling" and cam.readout is None:
            _fail(raw, "camera.readout", "required for shutter = 'rolling' (the row readout time)")
        if cam.trigger_latency >= 1.0 / cam.frame_rate:
            _fail(raw, "camera.trigger_latency",
                  f"expected shorter than the frame period {r(1 / cam.frame_rate, 'time')} "
                  "(the exposure would open in a later frame)")
        if cam.frame_rate > f / rig.strobe.every:
            _fail(raw, "camera.frame_rate", "expected no faster than the flash rate")
    single = isinstance(raw.get("emitter"), dict)
    for i, e in enumerate(rig.emitters or []):
        key = "emitter" if single else f"emitter[{i}]"
        quad = ("spl_at_reference", "reference_distance", "reference_voltage", "drive_voltage")
        given = [k for k in quad if getattr(e, k) is not None]
        if given and len(given) != len(quad):
            missing = [k for k in quad if k not in given][0]
            _fail(raw, f"{key}.{missing}",
                  f"required with {given[0]} (the SPL reference needs all of "
                  f"{', '.join(quad)})")
        if e.radius is None and (i > 0 or rig.reflector):
            _fail(raw, f"{key}.radius",
                  "required for the sound-field model (several emitters or a [[reflector]])")
    em = rig.emitter
    view_point = rig.view.point if rig.view is not None else None
    if em is not None and em.distance_to_view is None:
        _fail(raw, "emitter.distance_to_view" if single else "emitter[0].distance_to_view",
              "required (the view's distance on the first emitter's axis) unless [view] "
              "gives point")
    if em is not None and view_point is None:
        ax = _unit3(em.axis)
        view_point = tuple(p + em.distance_to_view * a for p, a in zip(em.position, ax,
                                                                        strict=True))
    for i, refl in enumerate(rig.reflectors):
        n = _unit3(refl.normal)
        if view_point is not None:
            side = sum((v - q) * c for v, q, c in zip(view_point, refl.position, n,
                                                       strict=True))
            if side <= 0:
                _fail(raw, f"reflector[{i}].normal",
                      "expected to point from the reflector towards the view point "
                      "(the view lies behind this reflector)")
        for j, e in enumerate(rig.emitters or []):
            side = sum((p - q) * c for p, q, c in zip(e.position, refl.position, n,
                                                       strict=True))
            if side <= 0:
                _fail(raw, f"reflector[{i}].position",
                      f"expected the emitters in front of the reflector (emitter {j} is at "
                      f"or behind its plane)")
    led = rig.led
    if led is not None:
        pts = led.forward_voltage
        cur = [p.current for p in pts]
        if len(set(cur)) != len(cur):
            _fail(raw, "led.forward_voltage", "expected points at distinct currents")
        order = sorted(range(len(pts)), key=lambda i: cur[i])
        volts = [pts[i].voltage for i in order]
        if any(b <= a for a, b in zip(volts, volts[1:], strict=False)):
            _fail(raw, "led.forward_voltage", "expected the voltage to rise with the current")
        if led.phosphor_fraction > 0 and led.phosphor_decay is None:
            _fail(raw, "led.phosphor_decay", "required when phosphor_fraction > 0")
        if led.max_pulse_current is not None and led.max_pulse_current < led.max_dc_current:
            _fail(raw, "led.max_pulse_current", "expected at least led.max_dc_current")
        if led.junction_max <= led.ambient:
            _fail(raw, "led.junction_max", "expected above led.ambient")
    sw = rig.switch
    if sw is not None:
        if not sw.threshold_voltage < sw.plateau_voltage:
            _fail(raw, "switch.plateau_voltage", "expected above switch.threshold_voltage")
        if sw.gate_source_charge + sw.gate_drain_charge > sw.gate_charge * 1.0001:
            _fail(raw, "switch.gate_charge",
                  "expected at least gate_source_charge + gate_drain_charge")
    _cross_check_image(rig, raw)
    tm = rig.controller.timer
    if tm is not None:
        from .timers import PROFILES

        if tm.profile is not None and tm.profile not in PROFILES:
            import difflib

            close = difflib.get_close_matches(tm.profile, PROFILES, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            _fail(raw, "controller.timer.profile",
                  f"expected one of {', '.join(PROFILES)}{hint}")
        if tm.profile is None and tm.bits is None:
            _fail(raw, "controller.timer", "expected 'profile' (a bundled name) or 'bits'")
        if tm.resolved().prescaler_power_of_two and tm.prescaler_max is not None and \
                tm.prescaler_max & (tm.prescaler_max - 1):
            _fail(raw, "controller.timer.prescaler_max",
                  "expected a power of two (prescaler_power_of_two = true)")
    tl = rig.trigger_link
    for fname, fam in ((tl.families or {}) if tl is not None else {}).items():
        _check_family(raw, f"trigger_link.families.{shorten(fname, 40)}", fam)
    if tl is not None and (tl.top is None) != (tl.bottom is None):
        _fail(raw, "trigger_link.top" if tl.top is None else "trigger_link.bottom",
              "give both top and bottom (to check a pair) or neither (to propose one)")


def _cross_check_image(rig: Rig, raw) -> None:
    """The image chain: layout, cutoff, LED optics and camera sensor keys that go together."""
    opt, led, cam = rig.optics, rig.led, rig.camera
    if led is not None:
        if led.wavelength is not None and led.spectrum is not None:
            _fail(raw, "led.spectrum", "give led.wavelength (a colour LED) or "
                  "spectrum = 'white', not both")
        if led.optical_power is not None and led.wavelength is None and led.spectrum is None:
            _fail(raw, "led.wavelength", "required with led.optical_power (or spectrum = "
                  "'white'): the photon energy and the eye hazard depend on it")
        if led.relative_output:
            cur = [p.current for p in led.relative_output]
            if any(b <= a for a, b in zip(cur, cur[1:], strict=False)):
                _fail(raw, "led.relative_output", "expected points at increasing currents")
    if opt is None:
        return
    if opt.layout is None:
        for key in ("cutoff_distance", "cutoff_opening"):
            if getattr(opt, key) is None:
                _fail(raw, f"optics.{key}", "required without optics.layout (or give layout, "
                      "focal_length, mirror_diameter and source to derive it)")
        return
    for key in ("focal_length", "mirror_diameter"):
        if getattr(opt, key) is None:
            _fail(raw, f"optics.{key}", f"required with layout = '{opt.layout}'")
    if opt.layout == "z-type" and opt.passes != 1:
        _fail(raw, "optics.passes", "expected 1 for layout = 'z-type'")
    if opt.layout == "double-pass" and opt.passes != 2:
        _fail(raw, "optics.passes", "expected 2 for layout = 'double-pass'")
    if opt.cutoff_opening is None:
        _fail(raw, "optics.source", "required with layout (or led.emitting_size, or "
              "optics.cutoff_opening): the source image sets the cutoff's opening")
    if opt.cutoff == "rod" and opt.cutoff_width is None:
        _fail(raw, "optics.cutoff_width", "required with cutoff = 'rod' (the rod's diameter)")
    if opt.test_distance is not None and opt.layout == "double-pass" \
            and opt.test_distance >= 2 * opt.focal_length:
        _fail(raw, "optics.test_distance", "expected less than the radius of curvature "
              "2 x focal_length")
    if cam is not None and cam.lens is not None:
        u = opt.focal_length * (2.0 if opt.layout == "double-pass" else 1.0)
        if cam.lens.focal_length >= u:
            _fail(raw, "camera.lens.focal_length", "expected shorter than the lens's distance "
                  f"to the mirror ({units.render(u, 'length')}): it could not focus there")


def _check_family(raw, where: str, fam: LogicFamily) -> None:
    """A custom logic family's thresholds in their physical order (RigError otherwise):
    VIL < VIH < VDD, VOL < VOH <= VDD, vdd_min <= vdd <= vdd_max."""
    r = units.render
    vdd_min = fam.vdd_min if fam.vdd_min is not None else 0.9 * fam.vdd
    vdd_max = fam.vdd_max if fam.vdd_max is not None else 1.1 * fam.vdd
    checks = (
        (fam.vil < fam.vih, "vih", f"expected above vil ({r(fam.vil, 'voltage')})"),
        (fam.vih < fam.vdd, "vih", f"expected below vdd ({r(fam.vdd, 'voltage')})"),
        (fam.vol < fam.voh, "voh", f"expected above vol ({r(fam.vol, 'voltage')})"),
        (fam.voh <= fam.vdd, "voh", f"expected at most vdd ({r(fam.vdd, 'voltage')})"),
        (vdd_min <= fam.vdd, "vdd_min", f"expected at most vdd ({r(fam.vdd, 'voltage')})"),
        (fam.vdd <= vdd_max, "vdd_max", f"expected at least vdd ({r(fam.vdd, 'voltage')})"),
    )
    for ok, key, expected in checks:
        if not ok:
            value = getattr(fam, key)
            shown = r(value, "voltage") if value is not None else None
            raise RigError(f"{where}.{key}", shown, expected)
