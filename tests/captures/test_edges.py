"""Edges of a double-pulse capture: comparator with hysteresis, missing pulses, bad arrays."""

from __future__ import annotations

import numpy as np
import pytest

from margincheck.captures.edges import NotMeasurable, WaveformError, comparator_edges, find_edges


def _gate(time, instants, ring=0.0, noise=0.0, seed=3):
    """A gate waveform: on at the start, toggling at ``instants`` with 5 ns ramps between -3 V and 15 V, each
    ramp followed by a ring of ``ring`` volts at 150 MHz, plus Gaussian noise."""
    level = np.full_like(time, 15.0)
    for k, instant in enumerate(instants):
        step = (-18.0 if k % 2 == 0 else 18.0) * np.clip((time - instant) / 5e-9 + 0.5, 0.0, 1.0)
        after = np.clip(time - instant - 2.5e-9, 0.0, None)
        level += step + ring * np.exp(-after / 20e-9) * np.sin(2 * np.pi * 150e6 * after)
    return level + np.random.default_rng(seed).normal(0.0, noise, time.size)


def test_three_edges_found_through_noise_and_ringing():
    time = np.sort(np.random.default_rng(1).uniform(0.0, 3e-6, 6000))   # non-uniform sampling
    instants = (0.5e-6, 1.5e-6, 2.2e-6)
    edges = find_edges(time, _gate(time, instants, ring=12.0, noise=0.6))
    found = (edges.first_turn_off, edges.second_turn_on, edges.second_turn_off)
    np.testing.assert_allclose(found, instants, atol=1.5e-9)


def test_no_second_pulse_is_not_measurable():
    time = np.linspace(0.0, 1.2e-6, 3000)
    edges = find_edges(time, _gate(time, (0.5e-6,), noise=0.3))
    assert edges.first_turn_off == pytest.approx(0.5e-6, abs=1e-9)
    assert isinstance(edges.second_turn_on, NotMeasurable)
    assert "no second pulse" in edges.second_turn_on.reason
    assert edges.second_turn_off == edges.second_turn_on


def test_edges_from_v_ds_have_the_sense_inverted():
    time = np.linspace(0.0, 3e-6, 6000)
    v_ds = 400.0 * (15.0 - _gate(time, (0.5e-6, 1.5e-6, 2.2e-6))) / 18.0
    edges = find_edges(time, v_ds, source="v_ds")
    assert edges.second_turn_on == pytest.approx(1.5e-6, abs=1e-9)


def test_a_flat_trace_has_no_edges():
    edges = find_edges(np.linspace(0.0, 1e-6, 100), np.full(100, 15.0))
    assert isinstance(edges.first_turn_off, NotMeasurable) and "flat" in edges.first_turn_off.reason


def test_comparator_ignores_noise_inside_the_band():
    time = np.arange(10.0)
    signal = np.array([0.0, 0.6, 0.4, 0.6, 1.0, 0.6, 0.4, 0.6, 0.0, 0.0])
    edges = comparator_edges(time, signal, 0.2, 0.8)
    np.testing.assert_allclose(edges.rising, [2.5])     # the last crossing of 0.5 before 0.8 was reached
    np.testing.assert_allclose(edges.falling, [7.0 + 1.0 / 6.0])


@pytest.mark.parametrize(("time", "signal", "message"), [
    (np.array([0.0, 2.0, 1.0, 3.0]), np.zeros(4), "strictly increasing"),
    (np.arange(4.0), np.zeros(3), "3 samples, time has 4"),
    (np.arange(4.0), np.array([0.0, np.nan, 0.0, 0.0]), "non-finite"),
])
def test_bad_arrays_are_refused(time, signal, message):
    with pytest.raises(WaveformError, match=message):
        find_edges(time, signal)
