"""Intervals and the corner grid."""

import math

import numpy as np

from margincheck.intervals import Interval, Side, corner_grid, missing_sides


def test_corner_grid_is_the_full_factorial_of_known_ends():
    grid = corner_grid({"a": Interval(1.0, 1.5, 2.0), "b": Interval.exact(5.0), "c": Interval(-1.0, math.nan, 1.0)})
    assert len(grid["a"]) == 4
    assert set(zip(grid["a"], grid["b"], grid["c"])) == {(1, 5, -1), (1, 5, 1), (2, 5, -1), (2, 5, 1)}


def test_one_sided_interval_contributes_its_known_end():
    np.testing.assert_array_equal(Interval(math.nan, math.nan, 40.0).endpoints(), [40.0])


def test_missing_sides_names_the_end():
    inputs = {"i": Interval(math.nan, math.nan, 40.0), "v": None, "g": Interval(1.0, 1.0, 1.0)}
    needs = {"i": Side.MIN, "v": Side.MAX, "g": Side.BOTH}
    assert missing_sides(inputs, needs) == ["i (minimum)", "v"]


def test_missing_sides_is_decided_per_input_and_named_by_label_once():
    # Two inputs from one field (the same device on both sides of a leg): one is missing, one is not.
    inputs = {"r": None, "opposite.r": Interval.exact(0.0), "q": None}
    needs = {"r": Side.MAX, "opposite.r": Side.MIN, "q": Side.MAX}
    labels = {"r": "devices.d.r", "opposite.r": "devices.d.r", "q": "devices.d.r"}
    assert missing_sides(inputs, needs, labels) == ["devices.d.r"]
