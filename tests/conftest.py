"""Shared test helpers: example paths and a CLI runner that re-raises real exceptions."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"
EXAMPLES = ("levitator-40k", "rangefinder-58k", "unsafe-bench")


def example(name: str) -> Path:
    return CONFIGS / f"{name}.toml"


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
