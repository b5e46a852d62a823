"""Fuzzed rig files through the commands: a plan or exit 2 with one line, nothing else.

Every generated rig either produces a plan (exit 0 or 1, JSON with no NaN/Infinity) or is
rejected with exit 2 and a single line naming the key path; never another exception and
never a traceback. Bounded: a few hundred examples in all.
"""

from __future__ import annotations

import copy
import json
import math
import re

import jsonschema
import pytest
import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from strobeplan.schema import plan_schema
from tests.conftest import BASES, EXAMPLES, example, run_cli

VALIDATOR = jsonschema.Draft202012Validator(plan_schema())


BAD_VALUES = st.sampled_from([
    "nan Hz", "inf s", "-inf V", "NaN", "1e400 s", "-1 us", "0 s", "0 Hz", "5", 5, -3, 0,
    1.5, True, False, "", "   ", "40 kHz", "1 ms", "12 V", "2 ohm", "23 degC", "45 %",
    "50 ppm", "1e-30 s", "1e30 Hz", "3 furlongs", [], {}, ["x"], {"a": 1}, "\u00e9\u00e8",
    "0x10 Hz", "1,5 V", "1.5.2 V",
])


def _paths(node, prefix=()):
    if isinstance(node, dict):
        for k, v in node.items():
            yield prefix + (k,)
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield prefix + (i,)
            yield from _paths(v, prefix + (i,))


def _set(node, path, value):
    for p in path[:-1]:
        node = node[p]
    node[path[-1]] = value


def _delete(node, path):
    for p in path[:-1]:
        node = node[p]
    if isinstance(node, dict):
        del node[path[-1]]
    else:
        node.pop(path[-1])


@st.composite
def mutated_rig(draw):
    name = draw(st.sampled_from(EXAMPLES))
    raw = copy.deepcopy(BASES[name])
    for _ in range(draw(st.integers(1, 3))):
        paths = list(_paths(raw))
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        action = draw(st.sampled_from(["set", "set", "delete", "unknown"]))
        try:
            if action == "set":
                _set(raw, path, draw(BAD_VALUES))
            elif action == "delete":
                _delete(raw, path)
            else:
                parent = raw
                for p in path[:-1]:
                    parent = parent[p]
                if isinstance(parent, dict):
                    parent[draw(st.sampled_from(["colour", "pulse_widht", "frequncy", "x"]))] = 1
        except (KeyError, IndexError, TypeError):
            pass
    return raw


def _rig_file(raw, tmp_path_factory):
    """Write ``raw`` as a TOML rig in a fresh folder: (folder, path, text), or None when the
    mutation is not representable as TOML (e.g. an empty key): nothing to feed then."""
    try:
        text = tomli_w.dumps(raw)
    except (TypeError, ValueError):
        return None
    d = tmp_path_factory.mktemp("fuzz")
    rig = d / "rig.toml"
    rig.write_text(text, encoding="utf-8")
    return d, rig, text


def _reject_constants(token):
    raise AssertionError(f"non-finite number {token} in JSON output")


def _assert_contract(result):
    assert result.exit_code in (0, 1, 2), (result.exit_code, result.output)
    text = result.output
    assert "Traceback" not in text
    if result.exit_code == 2:
        lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
        assert len(lines) == 1, result.stderr
        assert lines[0].startswith("error: ")
    else:
        data = json.loads(result.stdout, parse_constant=_reject_constants)
        VALIDATOR.validate(data)  # the published schema holds for every plan
        assert data["verdict"] in ("pass", "warn", "fail")
        assert (result.exit_code == 1) == (data["verdict"] == "fail")


FUZZ = settings(max_examples=120, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


@FUZZ
@given(raw=mutated_rig())
def test_mutated_rigs_check(raw, tmp_path_factory):
    made = _rig_file(raw, tmp_path_factory)
    if made is None:
        return
    _d, rig, text = made
    _assert_contract(run_cli("check", rig, "--json"))


@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(raw=mutated_rig(), steps=st.integers(1, 50))
def test_mutated_rigs_schedule(raw, steps, tmp_path_factory):
    made = _rig_file(raw, tmp_path_factory)
    if made is None:
        return
    d, rig, text = made
    r = run_cli("schedule", rig, "--steps", steps, "--format", "json", "-o", d / "s.json")
    assert r.exit_code in (0, 2), r.output
    assert "Traceback" not in r.output
    if r.exit_code == 0:
        data = json.loads((d / "s.json").read_text(), parse_constant=_reject_constants)
        assert len(data["rows"]) == steps


LOG = st.floats(0.0, 1.0)


@st.composite
def wild_magnitudes(draw):
    """Valid-looking rigs with magnitudes from 1 Hz to 100 MHz and 1 ns to 1 s."""
    raw = copy.deepcopy(BASES[draw(st.sampled_from(EXAMPLES))])

    def log_between(lo, hi):
        return lo * (hi / lo) ** draw(LOG)

    raw["wave"]["frequency"] = f"{log_between(1.0, 1e8):.6g} Hz"
    raw["controller"]["clock"] = f"{log_between(1e3, 1e10):.6g} Hz"
    raw["strobe"]["pulse_width"] = f"{log_between(1e-9, 1.0):.6g} s"
    raw["strobe"]["every"] = draw(st.integers(1, 1000))
    if "camera" in raw:
        raw["camera"]["exposure"] = f"{log_between(1e-9, 1.0):.6g} s"
        raw["camera"]["frame_rate"] = f"{log_between(1.0, 1e5):.6g} Hz"
    if "emitter" in raw:
        ems = raw["emitter"] if isinstance(raw["emitter"], list) else [raw["emitter"]]
        ems[0]["resonance"] = f"{log_between(1.0, 1e8):.6g} Hz"
        ems[0].pop("synthesis", None) if draw(st.booleans()) else None
    raw.pop("sweep", None) if draw(st.booleans()) else None
    return raw


@settings(max_examples=120, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(raw=wild_magnitudes())
def test_absurd_magnitudes(raw, tmp_path_factory):
    rig = tmp_path_factory.mktemp("fuzz") / "rig.toml"
    rig.write_text(tomli_w.dumps(raw), encoding="utf-8")
    _assert_contract(run_cli("check", rig, "--json"))


@pytest.mark.slow
@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(data=st.one_of(st.binary(max_size=200), st.text(max_size=200).map(str.encode)))
def test_arbitrary_bytes(data, tmp_path_factory):
    rig = tmp_path_factory.mktemp("fuzz") / "rig.toml"
    rig.write_bytes(data)
    r = run_cli("check", rig, "--json")
    assert r.exit_code == 2, r.output  # no random bytes make a valid rig
    assert len([ln for ln in r.stderr.splitlines() if ln.strip()]) == 1


def test_json_never_has_nan_for_examples():
    for name in EXAMPLES:
        r = run_cli("check", example(name), "--json")
        data = json.loads(r.stdout, parse_constant=_reject_constants)

        def walk(v):
            if isinstance(v, float):
                assert math.isfinite(v)
            elif isinstance(v, dict):
                for x in v.values():
                    walk(x)
            elif isinstance(v, list):
                for x in v:
                    walk(x)

        walk(data)


def _one_line_or_success(r, ok_codes):
    assert r.exit_code in ok_codes + (2,), (r.exit_code, r.output)
    assert "Traceback" not in r.output
    if r.exit_code == 2:
        assert len([ln for ln in r.stderr.splitlines() if ln.strip()]) == 1, r.stderr


SLOW = settings(max_examples=12, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


@pytest.mark.slow
@SLOW
@given(raw=mutated_rig(), kind=st.sampled_from(
    ["timing", "pulse", "thermal", "divider", "sweep", "tradeoff"]),
    suffix=st.sampled_from([".png", ".svg"]))
def test_mutated_rigs_plot(raw, kind, suffix, tmp_path_factory):
    made = _rig_file(raw, tmp_path_factory)
    if made is None:
        return
    d, rig, text = made
    r = run_cli("plot", rig, "--kind", kind, "-o", d / f"p{suffix}", "--dpi", "30")
    _one_line_or_success(r, (0,))
    assert (d / f"p{suffix}").exists() == (r.exit_code == 0)


@pytest.mark.slow
@settings(max_examples=5, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(raw=mutated_rig())
def test_mutated_rigs_report(raw, tmp_path_factory):
    made = _rig_file(raw, tmp_path_factory)
    if made is None:
        return
    d, rig, text = made
    r = run_cli("report", rig, "-o", d / "r.html")
    _one_line_or_success(r, (0, 1))
    assert (d / "r.html").exists() == (r.exit_code != 2)
    if r.exit_code != 2 and not re.search(r"\b(nan|inf)", text, flags=re.I):
        html_text = (d / "r.html").read_text()  # the report echoes the rig as given
        assert not re.search(r"\b(nan|inf|infinity)\b", html_text, flags=re.I)


@SLOW
@given(raw=mutated_rig())
def test_mutated_rigs_tune(raw, tmp_path_factory):
    made = _rig_file(raw, tmp_path_factory)
    if made is None:
        return
    _d, rig, text = made
    r = run_cli("tune", rig, "--widths", "6", "--max-every", "2", "--json")
    _one_line_or_success(r, (0, 1))
    if r.exit_code != 2:
        json.loads(r.stdout, parse_constant=_reject_constants)
