"""Ring frequency and damping against a closed form: an ideal damped sinusoid, sampled unevenly with noise and
8-bit steps, gives back its frequency and logarithmic decrement."""

from __future__ import annotations

import numpy as np
import pytest

from margincheck.captures.edges import NotMeasurable
from margincheck.captures.ringing import measure_ring

pytestmark = pytest.mark.reference


def _damped(zeta, frequency, amplitude=80.0, noise=1.5, duration=400e-9, seed=1):
    """x = 5 + A·exp(−ζω_n t)·cos(ω_d t) + noise, quantised to 1 V steps, at jittered instants ~0.4 ns apart.
    Its decrement is δ = 2πζ/√(1 − ζ²) (exact for this x)."""
    rng = np.random.default_rng(seed)
    time = np.arange(0.0, duration, 0.4e-9) + rng.uniform(0.0, 0.1e-9, int(np.ceil(duration / 0.4e-9)))
    omega_n = 2 * np.pi * frequency / np.sqrt(1 - zeta ** 2)
    clean = 5.0 + amplitude * np.exp(-zeta * omega_n * time) * np.cos(2 * np.pi * frequency * time)
    return time, np.round(clean + rng.normal(0.0, noise, time.size))


@pytest.mark.parametrize("zeta", [0.01, 0.03, 0.1])
def test_damped_sinusoid_gives_back_its_frequency_and_decrement(zeta):
    time, signal = _damped(zeta, 37e6)
    ring = measure_ring(time, signal)
    assert ring.frequency == pytest.approx(37e6, rel=0.01)
    assert ring.decrement == pytest.approx(2 * np.pi * zeta / np.sqrt(1 - zeta ** 2), rel=0.1)
    assert ring.damping_ratio == pytest.approx(zeta, rel=0.1)
    assert ring.natural_frequency == pytest.approx(37e6 / np.sqrt(1 - zeta ** 2), rel=0.01)


def test_a_ring_buried_in_noise_is_not_measurable():
    time, signal = _damped(0.3, 37e6, amplitude=10.0, noise=3.0)
    ring = measure_ring(time, signal)
    assert isinstance(ring, NotMeasurable) and "ring too short" in ring.reason
