"""The independent double-pulse simulation, solved once per test session, and its scope captures."""

from __future__ import annotations

import pytest

from tests.captures.double_pulse_circuit import Circuit, simulate


@pytest.fixture(scope="session")
def circuit_solution():
    """The clean waveforms of the default circuit (scipy Radau)."""
    return simulate(Circuit())
