"""strobeplan.background: a call run in a forked child gives the caller's answer.

The checks run in fresh interpreters (subprocess): a test runner's worker has threads of
its own, where :func:`strobeplan.background.parallel` refuses to fork.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from tests.conftest import example

ROOT = Path(__file__).resolve().parents[1]

SCRIPT = """
import os, sys
from strobeplan import background

def boom():
    if os.getpid() != PARENT:
        raise ValueError("in the child")
    raise KeyError("in the parent")

PARENT = os.getpid()
# start() forks exactly when there are two usable CPUs or more (and no other thread)
print("parallel", background.parallel(), len(os.sched_getaffinity(0)) > 1)
begin = background.start if os.environ.get("STROBEPLAN_SERIAL") else background.forked
pid = begin(os.getpid)
print("child", pid() != PARENT, pid() == pid())
try:
    begin(boom)()
except KeyError as exc:
    print("raised", exc.args[0])
slow = begin(__import__("time").sleep, 30)
slow.cancel()
print("cancelled")
os.sched_setaffinity(0, {min(os.sched_getaffinity(0))})
print("one cpu", background.parallel())
"""


def _run(env_extra: dict) -> list[str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.pop("STROBEPLAN_SERIAL", None)
    env.update(env_extra)
    out = subprocess.run([sys.executable, "-c", SCRIPT], env=env, capture_output=True,
                         text=True, timeout=60, check=True).stdout
    return out.splitlines()


def test_the_child_computes_and_failures_rerun_in_the_caller():
    lines = _run({})
    _, forks, cpus = lines[0].split()
    assert forks == cpus  # forks with two CPUs or more, on this machine or any other
    # the result came from another process (forked whatever the CPU count), and is kept
    # for a second call
    assert lines[1] == "child True True"
    # the child's failure is not trusted: the caller runs the call and raises its own error
    assert lines[2] == "raised in the parent"
    assert lines[3] == "cancelled"  # a cancelled child does not hold the caller for 30 s
    assert lines[4] == "one cpu False"  # pinned to one CPU: never forks


def test_serial_when_asked():
    lines = _run({"STROBEPLAN_SERIAL": "1"})
    assert lines[0].startswith("parallel False ")
    assert lines[1] == "child False True"
    assert lines[2] == "raised in the parent"


@pytest.mark.slow
def test_tradeoff_plot_is_the_same_with_and_without_the_child(tmp_path):
    """The trade-off plot's search runs in a child while matplotlib loads: same bytes."""
    outs = []
    for serial in ("", "1"):
        out = tmp_path / f"t{serial}.png"
        env = {**os.environ, "PYTHONPATH": str(ROOT), "STROBEPLAN_SERIAL": serial}
        subprocess.run([sys.executable, "-m", "strobeplan.cli", "plot",
                        str(example("levitator-40k")), "--kind", "tradeoff", "-o", str(out)],
                       env=env, check=True, timeout=300, capture_output=True)
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]


@pytest.mark.slow
def test_report_is_the_same_with_and_without_the_child(tmp_path):
    """The report's search and preview run in a child while the figures are drawn: the
    page is the same bytes."""
    outs = []
    for serial in ("", "1"):
        out = tmp_path / f"r{serial}.html"
        env = {**os.environ, "PYTHONPATH": str(ROOT), "STROBEPLAN_SERIAL": serial}
        subprocess.run([sys.executable, "-m", "strobeplan.cli", "report",
                        str(example("levitator-40k")), "-o", str(out)],
                       env=env, check=True, timeout=300, capture_output=True)
        outs.append(out.read_bytes())
    assert b"preview-sheet" in outs[0] and b"tradeoff" in outs[0]
    assert outs[0] == outs[1]
