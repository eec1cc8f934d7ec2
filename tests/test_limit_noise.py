"""'Cannot follow' judged on sustained exceedances: logger noise is not a drive limit.

References: the definition in tractive.powertrain._common (runs of at least 1 s count,
common practice); a hand count of run lengths; numpy for the noise.
"""

from __future__ import annotations

import numpy as np
import pytest

from tractive.powertrain._common import SUSTAINED_LIMIT_S, sustained_seconds


def test_runs_shorter_than_a_second_are_noise_and_longer_ones_count():
    dt = np.full(30, 0.1)
    over = np.zeros(30, bool)
    over[2] = over[5] = over[6] = True         # spikes of 0.1 s and 0.2 s: noise
    over[10:22] = True                          # 1.2 s in a row: a real limit
    assert sustained_seconds(over, dt) == pytest.approx(1.2)
    # at 1 Hz every exceedance lasts a whole second and counts, as a plain sum
    ones = np.array([0, 1, 0, 1, 1, 0], bool)
    assert sustained_seconds(ones, np.ones(6)) == 3.0
    assert SUSTAINED_LIMIT_S == 1.0


def test_vehicle_axis_keeps_rows_apart():
    over = np.array([[0, 0, 0, 1, 1, 1, 1, 1],       # ends a row with 0.5 s
                     [1, 1, 1, 1, 1, 0, 0, 0]], bool)  # starts the next with 0.5 s
    dt = np.full(8, 0.1)
    # joined across the rows these would make one 1.0 s run; apart, both are noise
    assert sustained_seconds(over, dt).tolist() == [0.0, 0.0]
    wide = np.tile(over, (1, 3))
    out = sustained_seconds(wide, np.full(24, 0.1))
    assert out.shape == (2,)


def test_random_logger_noise_at_10_hz_does_not_count():
    rng = np.random.default_rng(3)
    over = rng.random((50, 3000)) < 0.05          # isolated one-sample spikes
    assert np.all(sustained_seconds(over, np.full(3000, 0.1)) < 0.5)
