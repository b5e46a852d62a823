"""`tune` evaluates its kept candidates, the refinement's ticks and the frontier's cells
together, in one design.

Oracle: each candidate evaluated on its own (a one-row design): the candidate's figures,
verdict and violated constraints must be equal, to the last bit, and the refinement must
pick the same tick as the one-design-per-refinement evaluation.
"""

from __future__ import annotations

import numpy as np
import pytest

from strobeplan import tune as tuner
from strobeplan.rig import load_rig
from strobeplan.solve import solve
from tests.conftest import example


def _alone(rig, grid, flat, known):
    """The candidate at a flat grid index, evaluated on its own (a one-row design)."""
    design = tuner._design_of([grid.at(flat)])
    return tuner._candidate(tuner.evaluate(rig, design, known), 0, design)


def test_rows_together_equal_rows_alone():
    rig = load_rig(example("levitator-40k"))
    grid = tuner.default_grid(rig, solve(rig, checks=False), widths=24,
                              resistor_range=(0.5, 10.0), max_every=3,
                              supply_range=(12.0, 36.0), supply_steps=3)
    known = tuner.rig_constants(rig)
    rng = np.random.default_rng(5)
    # Rows sharing a circuit (same resistor and supply, other widths and every) and not.
    nw, nr, ne, nv = grid.shape
    flats = [int(np.ravel_multi_index((iw, ir, ie, iv), grid.shape))
             for iw, ie in zip(rng.integers(0, nw, 4), rng.integers(0, ne, 4), strict=True)
             for ir, iv in ((1, 0), (nr - 2, nv - 1))]
    flats += [int(f) for f in rng.integers(0, grid.size, 3)]
    rows = [grid.at(f) for f in flats]
    done = tuner._evaluate_rows(rig, rows, known)
    assert 1 < len({(r[1], r[3]) for r in rows}) < len(rows)  # circuits shared and not
    for flat, one in zip(flats, done, strict=True):
        alone = _alone(rig, grid, flat, known)
        assert tuner._candidate(*one).to_json() == alone.to_json()


def test_grouped_refinement_is_the_refinement_alone():
    rig = load_rig(example("levitator-40k"))
    grid = tuner.default_grid(rig, solve(rig, checks=False), widths=20)
    known = tuner.rig_constants(rig)
    ev = tuner.evaluate(rig, grid.design(), known)
    assert ev.feasible.any()
    best_flat = int(np.argmax(np.where(ev.feasible, ev.score, -np.inf)))
    best = _alone(rig, grid, best_flat, known)
    row = grid.at(best_flat)
    ticks = tuner._refine_rows(rig, grid, row)
    assert ticks
    together = tuner._evaluate_rows(rig, [row] + ticks, known)
    grouped = tuner._refined(tuner._candidate(*together[0]), together[1:])
    # the refinement evaluated as one design of its ticks (its form before the grouping)
    design = tuner._design_of(ticks)
    ev = tuner.evaluate(rig, design, known)
    ok = np.flatnonzero(ev.feasible & (ev.score > best.score))
    if ok.size == 0:
        assert grouped is None
    else:
        k = int(ok[np.argmax(ev.score[ok])])
        assert grouped.to_json() == tuner._candidate(ev, k, design).to_json()


@pytest.mark.parametrize("options", [None, {"widths": 30, "max_every": 3}])
def test_search_evaluates_once_after_its_grid_and_names_the_same_binding_rule(
        monkeypatch, options):
    # The kept rows, the ticks, the frontier and the grid best's neighbours are one
    # evaluation; the binding constraint named from it equals the one from the neighbours
    # evaluated on their own (the form before the merge). With the default grid the grid's
    # best stands; on the coarse one the refinement replaces it, and its own neighbours
    # are evaluated after.
    rig = load_rig(example("levitator-40k"))
    calls = []
    real = tuner.evaluate

    def spy(rig_, design, known=None, **kw):
        calls.append(len(design.shape))
        return real(rig_, design, known, **kw)

    monkeypatch.setattr(tuner, "evaluate", spy)
    result = tuner.tune(rig, grid_options=options)
    assert (result.refined_from is None) == (options is None)
    assert calls.count(1) == (1 if result.refined_from is None else 2)
    known = tuner.rig_constants(rig)
    alone = tuner._limited_by(rig, result.grid, result.best, known)  # its own evaluation
    assert result.best.limited_by == alone
