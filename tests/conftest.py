"""Shared test helpers: example paths and a CLI runner that re-raises real exceptions."""

from __future__ import annotations

import copy
import os
import shutil
import tomllib
from pathlib import Path
from typing import NoReturn

import pytest
from click.testing import CliRunner
from hypothesis import settings

# Property tests draw the same examples on every run (a suite that passes keeps passing on
# the same code: CI must not fail on a new random draw, nor spend minutes shrinking one).
# STROBEPLAN_EXPLORE=1 draws new examples each run, to look for cases worth adding as
# explicit @example()s.
settings.register_profile("repeatable", derandomize=True)
settings.register_profile("explore", derandomize=False)
settings.load_profile("explore" if os.environ.get("STROBEPLAN_EXPLORE") else "repeatable")

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"
EXAMPLES = ("levitator-40k", "rangefinder-58k", "unsafe-bench", "opposed-pair-40k")


def example(name: str) -> Path:
    return CONFIGS / f"{name}.toml"


BASES = {name: tomllib.loads(example(name).read_text()) for name in EXAMPLES}


def patched(base: str, patch: dict) -> dict:
    """A bundled example's dict with dotted keys replaced (None deletes the key)."""
    raw = copy.deepcopy(BASES[base])
    for dotted, value in patch.items():
        node = raw
        parts = dotted.split(".")
        for p in parts[:-1]:
            node = node.setdefault(p, {})
        if value is None:
            node.pop(parts[-1], None)
        else:
            node[parts[-1]] = value
    return raw


def plan_of(base: str, patch: dict | None = None):
    """Solve a patched bundled example."""
    from strobeplan.rig import rig_from_dict
    from strobeplan.solve import solve

    return solve(rig_from_dict(patched(base, patch or {})))


def run_cli(*args, input=None):
    """Invoke the CLI in process; any exception other than SystemExit is re-raised."""
    from strobeplan.cli import cli

    result = CliRunner().invoke(cli, [str(a) for a in args], input=input)
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result


@pytest.fixture
def cli_run():
    return run_cli


# --- oracles outside Python: a missing one fails its tests, naming what to install ----------
# The README's test command and .ci/run install ngspice, Chromium and CoolProp; a test whose
# oracle is absent fails with one line saying how to install it (never a silent skip).


def _oracle_missing(reason: str) -> NoReturn:
    pytest.fail(f"{reason}: the test needs it as its independent reference", pytrace=False)


def need_program(name: str, package: str) -> str:
    """The path of an external program, or fail naming its Debian package."""
    exe = shutil.which(name)
    if exe is None:
        _oracle_missing(f"{name} is not installed (Debian package {package}; .ci/run "
                        f"installs it)")
    return exe


@pytest.fixture(scope="session")
def coolprop():
    """CoolProp's ``CoolProp.CoolProp`` module, or fail when it is not installed."""
    try:
        import CoolProp.CoolProp as cp
    except ImportError:
        _oracle_missing("CoolProp is not installed (pip install -e '.[test]' installs it)")
    return cp
