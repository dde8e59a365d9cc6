"""The sampled builds' shortcuts (``assess_many(lean=True)``, ``builds.check_table``) give the
figures of the ordinary full tier: the same checks, each ratio equal to rounding, for any
number of threads; and the compiled march is the same on one thread or two."""

from __future__ import annotations

from pathlib import Path

import numba
import numpy as np
import pandas as pd
import pytest

from optimiser.assessment.builds import FIGURES, check_table, node_figures, sample_builds
from optimiser.assessment.full import CHARGE_UP_TIME, _corner_batches, assess_many
from optimiser.assessment.steady_state import solve_batch
from optimiser.physics import ladder, transients

SPECS = Path(__file__).resolve().parents[1] / "specs"
DESIGNS = [p for p in sorted(SPECS.glob("demo-design-*.yaml")) if "switchable" not in p.name]


@pytest.fixture(scope="module", params=DESIGNS, ids=lambda p: p.stem)
def builds(request):
    return sample_builds(request.param, 24, seed=5).designs


def test_check_table_agrees_with_the_full_assessment(builds):
    table = assess_many(builds, dynamics=False)
    ratios, figures = check_table(builds, chunk=10, threads=2)
    # Source: the ordinary path; the shortcuts differ only in the order of sums (peaks in the
    # march) and by the modal discharge (eigenvectors against the matrix exponential)
    assert list(ratios.columns) == list(table.ratios.columns)
    np.testing.assert_allclose(ratios.to_numpy(float), table.ratios.to_numpy(float),
                               rtol=1e-7, atol=0)
    expected = node_figures(table.frame)
    assert list(figures.columns) == list(expected.columns)
    assert {c.rsplit(".", 1)[1] for c in figures.columns} == set(FIGURES)
    pd.testing.assert_frame_equal(figures, expected, check_exact=True)


def test_check_table_is_the_same_for_any_thread_count(builds):
    one = check_table(builds, chunk=7, threads=1)
    two = check_table(builds, chunk=7, threads=2)
    whole = check_table(builds, chunk=1000, threads=1)
    for a, b, c in zip(one, two, whole):
        pd.testing.assert_frame_equal(a, b, check_exact=True)
        pd.testing.assert_frame_equal(a, c, check_exact=True)


def test_march_is_the_same_on_one_thread_or_two(builds):
    batch = _corner_batches(builds)["high_none"]
    model = ladder.state_space(batch.structure, batch.values)
    freq = builds[0].mains.frequency
    runs = []
    for threads in (1, 2):
        numba.set_num_threads(threads)
        try:
            _, waves = solve_batch(batch)
            peaks = transients.charge_up_peaks(model, batch.elements, batch.peak, freq,
                                               batch.values.load_current, CHARGE_UP_TIME)
        finally:
            numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
        runs.append((waves.state, waves.current, peaks))
    for a, b in zip(*runs):
        assert np.array_equal(a, b)


def test_charge_up_peaks_are_the_trajectory_maximum(builds):
    batch = _corner_batches(builds)["high_none"]
    model = ladder.state_space(batch.structure, batch.values)
    freq = builds[0].mains.frequency
    args = (model, batch.elements, batch.peak, freq, batch.values.load_current, CHARGE_UP_TIME)
    # Source: the same march, the output summed in another order (a few ulp)
    np.testing.assert_allclose(transients.charge_up_peaks(*args), transients.charge_up_max(*args),
                               rtol=1e-14)


def test_modal_discharge_agrees_with_the_matrix_exponential(builds):
    batch = _corner_batches(builds)["high_none"]
    start = np.outer(batch.peak, np.ones(batch.values.capacitance.shape[1]))
    safe = np.array([d.conditions.safe_voltage for d in builds])
    exact = transients.discharge_times(batch.structure, batch.values, start, safe)
    modal = transients.discharge_times(batch.structure, batch.values, start, safe, modal=True)
    # Source: expm(A t) = V exp(L t) V^-1 for a diagonalisable A (any linear-algebra text)
    np.testing.assert_allclose(modal, exact, rtol=1e-7)
