"""Regions of fdtd.space.geometry: point-in-region tests against plain geometry."""

import numpy as np

from fdtd.space.geometry import Polygon, Rectangle


def test_polygon_area_from_its_contained_points_equals_the_shoelace_formula():
    """A concave pentagon sampled on a fine lattice: the fraction of lattice points inside
    times the box area equals the shoelace area (Gauss's area formula) to the lattice's
    boundary error, O(perimeter * h)."""
    v = np.array([(0.0, 0.0), (2.0, 0.0), (2.0, 1.5), (1.0, 0.7), (0.0, 1.5)])
    h = 1e-3
    x, y = np.meshgrid(np.arange(-0.5, 2.5, h) + h / 2, np.arange(-0.5, 2.0, h) + h / 2, indexing="ij")
    inside = Polygon(tuple(map(tuple, v))).contains(x, y)
    shoelace = 0.5 * abs(np.dot(v[:, 0], np.roll(v[:, 1], -1)) - np.dot(v[:, 1], np.roll(v[:, 0], -1)))
    assert abs(inside.sum() * h * h - shoelace) < 8.0 * h
    # the notch is outside, the corners' neighbourhood inside
    assert not Polygon(tuple(map(tuple, v))).contains(np.array([1.0]), np.array([1.2]))[0]
    assert Polygon(tuple(map(tuple, v))).contains(np.array([0.1]), np.array([1.2]))[0]


def test_a_square_polygon_is_the_rectangle():
    rng = np.random.default_rng(7)
    x, y = rng.uniform(-1, 2, 5000), rng.uniform(-1, 2, 5000)
    sq = Polygon(((0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)))
    assert np.array_equal(sq.contains(x, y), Rectangle(0.0, 1.0, 0.0, 1.0).contains(x, y))
