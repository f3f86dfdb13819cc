"""Oscilloscope captures of double-pulse tests: reading, edges, measurements and loop inductance."""
