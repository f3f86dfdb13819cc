"""Measured double-pulse captures: reading oscilloscope exports into SI arrays, and analysing them."""
