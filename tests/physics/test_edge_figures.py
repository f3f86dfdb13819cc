"""Crossing with hysteresis and the running-maximum energy of edge_figures (arithmetic on small arrays)."""

from __future__ import annotations

import numpy as np
import pytest

from margincheck.physics import edge_figures as ef


def _waves(*signals):
    time = np.arange(float(len(signals[0])))[:, None]
    return ef.Waveforms(time, {f"s{k}": np.asarray(s, float)[:, None] for k, s in enumerate(signals)})


def test_hysteresis_skips_a_blip_ahead_of_the_edge():
    waves = _waves([0.0, 0.6, 0.4, 0.45, 0.7, 1.0])
    plain = ef.crossing(waves, waves["s0"], 0.5, rising=True)
    banded = ef.crossing(waves, waves["s0"], 0.5, rising=True, hysteresis=0.2)
    assert plain.at(waves.time)[0] == pytest.approx(0.5 / 0.6)
    assert banded.at(waves.time)[0] == pytest.approx(3.0 + 0.05 / 0.25)   # last crossing before 0.7


def test_hysteresis_falling_and_never_confirmed():
    waves = _waves([1.0, 0.45, 0.55, 0.4, 0.2, 0.1])
    assert ef.crossing(waves, waves["s0"], 0.5, False, hysteresis=0.2).at(waves.time)[0] == pytest.approx(
        2.0 + 0.05 / 0.15)
    assert not ef.crossing(waves, waves["s0"], 0.5, False, hysteresis=0.45).found[0]


def test_energy_is_the_running_maximum_when_power_turns_negative():
    waves = _waves([1.0, 1.0, 1.0, 1.0, 1.0, 0.0], [0.0, 2.0, 2.0, -2.0, 0.0, 0.0])
    start = ef.Crossing(np.array([0]), np.array([0.0]), np.array([True]))       # from t = 0
    power = waves["s1"]                             # running integral 0, 1, 3, 3, 2, 2 (trapezoids)
    end_value = ef.switching_energy(waves, power, start, waves["s0"], 0.5)            # s0 falls to 0.5 at t = 4.5
    largest = ef.switching_energy(waves, power, start, waves["s0"], 0.5, running_maximum=True)
    assert end_value[0] == pytest.approx(2.0)
    assert largest[0] == pytest.approx(3.0)         # the integral's peak, reached at t = 2
