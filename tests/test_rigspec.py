"""The rig's fast validation (strobeplan/rigspec.py) against pydantic's (strobeplan/rigmodels.py).

The rig format is declared once (strobeplan/rig.py). A valid rig is validated without
pydantic; anything the fast path is not sure of goes to the pydantic models built from the
same declarations. The independent computation here is pydantic itself: for the bundled
examples and for hypothesis-mutated rigs, the fast path either defers or gives exactly what
pydantic gives (the same values of the same types, the same keys given), and
``rig_from_dict`` accepts exactly what pydantic accepts, with the same error line.
"""

from __future__ import annotations

import copy
import subprocess
import sys

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strobeplan import rig, rigmodels, rigspec
from strobeplan.errors import RigError
from tests.conftest import BASES, EXAMPLES, example
from tests.test_fuzz import _paths


def _fields_sets(section, at="") -> dict:
    """Every section's model_fields_set, by its path."""
    out = {at: sorted(section.model_fields_set)}
    for name, value in section.__dict__.items():
        items = value.items() if isinstance(value, dict) else enumerate(value) \
            if isinstance(value, list) else [(None, value)]
        for key, item in items:
            if hasattr(item, "model_fields_set"):
                out.update(_fields_sets(item, f"{at}.{name}" + ("" if key is None
                                                                 else f"[{key}]")))
    return out


def _same(a, b) -> None:
    """Two validated rigs hold the same values of the same types (repr tells 1 from 1.0 and a
    tuple from a list) and the same keys given."""
    assert repr(a.model_dump()) == repr(b.model_dump())
    assert a.model_dump(mode="json") == b.model_dump(mode="json")
    assert _fields_sets(a) == _fields_sets(b)


def _pydantic(raw):
    """pydantic's verdict: the rig (as rig sections) or the RigError line."""
    try:
        return rigmodels.validate(copy.deepcopy(raw))
    except RigError as exc:
        return str(exc)


def _fast(raw):
    try:
        return rigspec.fast_validate(rig.Rig, copy.deepcopy(raw))
    except rigspec.Defer:
        return None


def _loaded(raw):
    """What users get: rig_from_dict (fast path, else pydantic; then the cross-check)."""
    try:
        return rig.rig_from_dict(copy.deepcopy(raw))
    except RigError as exc:
        return str(exc)


def _loaded_by_pydantic(raw):
    got = _pydantic(raw)
    if isinstance(got, str):
        return got
    try:
        rig.cross_check(got, raw)
    except RigError as exc:
        return str(exc)
    return got


def _assert_equivalent(raw) -> bool:
    """The fast path defers or agrees with pydantic; the loader agrees with pydantic + the
    cross-check. True when the fast path accepted."""
    fast, slow = _fast(raw), _pydantic(raw)
    if fast is not None:
        assert not isinstance(slow, str), f"fast path accepted what pydantic refuses: {slow}"
        _same(fast, slow)
    a, b = _loaded(raw), _loaded_by_pydantic(raw)
    if isinstance(a, str) or isinstance(b, str):
        assert a == b
    else:
        _same(a, b)
    return fast is not None


@pytest.mark.parametrize("name", EXAMPLES)
def test_bundled_examples_take_the_fast_path_and_equal_pydantic(name):
    raw = BASES[name]
    assert _fast(raw) is not None, "a bundled example should not need pydantic"
    assert _assert_equivalent(raw)


# --- generated rigs -----------------------------------------------------------------------

# Values a rig file may hold, valid for some keys and not for others (units of every kind,
# bare numbers, counts, flags, choices, vectors, tables).
VALUES = st.one_of(
    st.sampled_from([
        "40 kHz", "1 us", "250 ns", "12 V", "3 A", "2.2 kohm", "470 uF", "20 nH", "30 nC",
        "2 W", "250 mm", "1.5 m", "343 m/s", "23 degC", "300 K", "10 K", "0.5 K/W",
        "101.325 kPa", "12 deg", "-30 deg", "45 %", "50 ppm", "120 dB", "1e-30 s", "0 s",
        "nan Hz", "3 furlongs", "", "rc", "butterworth", "global", "rolling", "input",
        "none", "z-type", "double-pass", "knife", "rod", "E12", "white", "lvcmos18",
        "counter16", "travelling", "standing", True, False, 0, 1, 2, 3, 8, -1, 0.5, 1.0, 2.5,
        ["0 mm", "0 mm", "30 mm"], [0, 0, 1], [0, 0, 0], ["18 degC", "28 degC"], [], {},
        {"width": "1 mm", "height": "2 mm"}, {"current": "1 A", "voltage": "3 V"}]),
    st.floats(-1e6, 1e6, allow_nan=False),
    st.integers(-10, 10_000),
    st.builds(lambda x, u: f"{x:g} {u}", st.floats(1e-3, 1e3),
              st.sampled_from(["Hz", "kHz", "MHz", "s", "us", "ns", "ms", "V", "A", "mA",
                               "ohm", "mm", "m", "uF", "nC", "W", "degC", "K", "%", "deg"])),
)

OPTIONAL_TABLES = {
    "sweep": {"steps": 12, "span": "180 deg"},
    "view": {"point": ["0 mm", "0 mm", "55 mm"], "width": "40 mm", "samples": 16},
    "air": {"temperature_range": ["18 degC", "28 degC"], "co2": "500 ppm"},
    "reflector": [{"position": ["0 mm", "0 mm", "120 mm"], "normal": [0, 0, -1]}],
}


def _rescaled(value, factor: float, step: int):
    """The same kind of value, moved: a quantity string's number times ``factor``, an
    integer plus ``step``, a float times ``factor``."""
    if isinstance(value, bool):
        return not value
    if isinstance(value, int):
        return value + step
    if isinstance(value, float):
        return value * factor
    if isinstance(value, str):
        number, _, unit = value.partition(" ")
        try:
            return f"{float(number) * factor:.6g} {unit}".strip()
        except ValueError:
            return value
    return value


@st.composite
def mutated_rig(draw):
    raw = copy.deepcopy(BASES[draw(st.sampled_from(EXAMPLES))])
    for _ in range(draw(st.integers(0, 3))):
        paths = list(_paths(raw))
        action = draw(st.sampled_from(["set", "set", "rescale", "rescale", "rescale",
                                       "delete", "unknown", "table"]))
        if action == "table":
            key = draw(st.sampled_from(sorted(OPTIONAL_TABLES)))
            raw[key] = copy.deepcopy(OPTIONAL_TABLES[key])
            continue
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = raw
        for p in path[:-1]:
            parent = parent[p]
        if action == "set":
            parent[path[-1]] = draw(VALUES)
        elif action == "rescale":
            parent[path[-1]] = _rescaled(parent[path[-1]], draw(st.floats(0.3, 3.0)),
                                         draw(st.integers(-2, 2)))
        elif action == "delete":
            del parent[path[-1]]
        elif isinstance(parent, dict):
            parent[draw(st.sampled_from(["colour", "pulse_widht", "x"]))] = 1
    return raw


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(raw=mutated_rig())
def test_fast_path_defers_or_equals_pydantic(raw):
    _assert_equivalent(raw)


def test_generated_rigs_exercise_the_fast_path():
    # The property above is only worth something if many generated rigs are accepted by the
    # fast path (not all deferred): count over a fixed sample.
    accepted = []

    @settings(max_examples=150, deadline=None, database=None,
              suppress_health_check=[HealthCheck.too_slow])
    @given(raw=mutated_rig())
    def run(raw):
        accepted.append(_assert_equivalent(raw))

    run()
    assert sum(accepted) >= 0.2 * len(accepted), (sum(accepted), len(accepted))


@pytest.mark.parametrize("patch", [
    {"strobe": {"pulse_width": "1 us", "calibration_offset": "12 deg"}},  # an angle
    {"strobe": {"pulse_width": "1 us", "calibration_offset": "-200 ns"}},
    {"emitter": [{"resonance": "40 kHz", "quality_factor": 20, "distance_to_view": "5 cm"}]},
    {"trigger_link": {"families": {"mine": {"vdd": "3.3 V", "vih": "2 V", "vil": "0.8 V",
                                            "voh": "2.9 V", "vol": "0.4 V",
                                            "output_current": "4 mA"}}}},
    {"controller": {"clock": "100 MHz", "timer": {"profile": "counter16", "bits": 24}}},
    {"view": {"point": ["0 mm", "0 mm", "40 mm"]}, "emitter": {
        "resonance": "40 kHz", "quality_factor": 20}},
])
def test_hand_picked_rigs_are_equivalent(patch):
    raw = copy.deepcopy(BASES["rangefinder-58k"])
    for key, value in patch.items():
        raw[key] = {**raw[key], **value} if isinstance(raw.get(key), dict) \
            and isinstance(value, dict) else value
    _assert_equivalent(raw)


def test_types_toml_does_not_make_defer():
    # A tuple, None or a float count is for pydantic to judge (it may accept a tuple).
    raw = copy.deepcopy(BASES["levitator-40k"])
    for key, value in (("harmonics", 2.0), ("kind", None)):
        bad = copy.deepcopy(raw)
        bad["wave"][key] = value
        assert _fast(bad) is None
        _assert_equivalent(bad)
    point = copy.deepcopy(raw)
    point["emitter"] = {**point["emitter"], "position": ("0 mm", "0 mm", "1 mm")}
    assert _fast(point) is not None  # the parser itself takes a tuple, as before
    _assert_equivalent(point)


# --- the section objects behave as the pydantic models did ---------------------------------


def test_sections_offer_the_model_api_like_pydantic():
    raw = BASES["levitator-40k"]
    fast = _fast(raw)
    model = rigmodels.model_of(rig.Rig).model_validate(copy.deepcopy(raw))
    # model_copy: values replaced, the keys marked as given, the original untouched
    update = {"pulse_width": 2e-6, "every": 3}
    a, b = fast.strobe.model_copy(update=update), model.strobe.model_copy(update=update)
    assert repr(a.model_dump()) == repr(b.model_dump())
    assert a.model_fields_set == b.model_fields_set
    assert fast.strobe.pulse_width == model.strobe.pulse_width != 2e-6
    whole = fast.model_copy(update={"strobe": a, "view": None})
    assert whole.strobe is a and whole.view is None and "view" in whole.model_fields_set
    # frozen, equal by value, repr like pydantic's
    with pytest.raises(AttributeError):
        fast.strobe.pulse_width = 1.0
    assert fast == _fast(raw) and fast != whole
    assert repr(fast.wave) == repr(model.wave)
    assert dict(fast.wave) == dict(model.wave)
    assert rig.Camera.model_fields["max_blur"].default == \
        rigmodels.model_of(rig.Camera).model_fields["max_blur"].default == 2.0
    # copies and pickles keep the values and the keys given
    import copy as copymod
    import pickle

    for clone in (copymod.copy(fast), copymod.deepcopy(fast), pickle.loads(pickle.dumps(fast)),
                  fast.model_copy(deep=True)):
        _same(clone, fast)


def test_pydantic_models_have_the_declared_fields():
    # Every declared field of every section is a field of its model, under the same key
    # (alias), required exactly when declared so, with the same default.
    seen = set()

    def walk(section):
        if section in seen:
            return
        seen.add(section)
        model = rigmodels.model_of(section)
        assert list(model.model_fields) == list(section.model_fields)
        for name, spec in section.model_fields.items():
            f = model.model_fields[name]
            assert (f.alias or name) == spec.key
            assert f.is_required() == spec.is_required()
            if not spec.is_required() and not isinstance(spec.default, rigspec.Section):
                assert f.default == spec.default
            node = spec.node
            if isinstance(node, (rigspec.Nested, rigspec.ListOf, rigspec.DictOf)):
                walk(node.section)

    walk(rig.Rig)
    assert len(seen) >= 25


# --- pydantic stays off the check path ----------------------------------------------------


def test_check_of_the_bundled_examples_does_not_import_pydantic():
    code = (
        "import sys\n"
        "from strobeplan.cli import main\n"
        f"for path in {[str(example(n)) for n in EXAMPLES]!r}:\n"
        "    try:\n"
        "        main(['check', path, '--json'])\n"
        "    except SystemExit:\n"
        "        pass\n"
        "    bad = sorted(m for m in sys.modules if m.split('.')[0] in "
        "('pydantic', 'pydantic_core'))\n"
        "    sys.stderr.write(path + ' ' + repr(bad) + '\\n')\n"
    )
    p = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    lines = [ln for ln in p.stderr.splitlines() if ln.strip()]
    assert len(lines) == len(EXAMPLES), p.stderr
    assert all(ln.endswith(" []") for ln in lines), p.stderr


def test_a_bad_rig_still_gets_pydantics_message():
    raw = copy.deepcopy(BASES["levitator-40k"])
    raw["wave"]["frequncy"] = raw["wave"].pop("frequency")
    with pytest.raises(RigError, match="did you mean 'frequency'"):
        rig.rig_from_dict(raw)


# --- command-line options share the declared limits ----------------------------------------

OPTION_TEXTS = st.one_of(
    st.sampled_from(["1 %", "-1%", "0 %", "49 %", "50 %", "0.2", "10 pF", "0 F", "1k", "470",
                     "2.2 kohm", "-5 ohm", "1 us", "2 s", "0 s", "90 %", "1", "5 K", "-1 K",
                     "300 K", "2", "0", "1001", "12 V", "nan", "inf", "", "abc", "3 furlongs",
                     "1e-30 s", "5 degC"]),
    st.builds(lambda x, u: f"{x:g}{u}", st.floats(-10, 1e4, allow_nan=False),
              st.sampled_from(["", " %", " ohm", "k", " V", " us", " K", " pF", " s"])),
)


def _option_outcome(option, text):
    from strobeplan import limits

    try:
        return repr(limits.option_value(option, text))
    except RigError as exc:
        return f"error: {exc}"


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(option=st.sampled_from(["--tolerance", "--capacitance", "--check TOP", "--edge-limit",
                               "--min-retention", "--min-margin", "--max-blur",
                               "--resistor-range", "--supply-range"]),
       text=OPTION_TEXTS)
def test_option_values_fast_path_equals_pydantic(option, text):
    from strobeplan import limits

    class Unsure:  # the declared value, but its fast path always defers
        def __init__(self, node):
            self.kind = node.kind

        def fast(self, value):
            raise rigspec.Defer

    fast = _option_outcome(option, text)
    real = limits._declared
    limits._declared = lambda option: Unsure(real(option))
    try:
        slow = _option_outcome(option, text)
    finally:
        limits._declared = real
    assert fast == slow
