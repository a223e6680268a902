"""Rings of vertices (interp.polygon): self-intersection, areas and point tests against
shapely (a general-purpose reference library for planar geometry)."""

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from interp.polygon import as_ring, contains, first_crossing, ring_area


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 4), st.integers(0, 4)), min_size=3, max_size=8))
def test_self_intersection_check_agrees_with_shapely(vertices):
    ring = np.array(vertices, dtype=float)
    ring = ring[np.any(ring != np.roll(ring, 1, axis=0), axis=1)]
    if len(ring) < 3:
        return
    # reference: shapely's LinearRing.is_simple (integer vertices give many touching cases)
    assert (first_crossing([ring]) is None) == shapely.LinearRing(ring).is_simple


def test_ring_area_is_signed_like_shapely():
    ring = np.array([[0.0, 0], [4, 0], [4, 1], [1, 1], [1, 3], [0, 3]])  # an L of area 4 + 2
    assert ring_area(ring) == pytest.approx(6.0, rel=1e-15)
    assert ring_area(ring[::-1]) == pytest.approx(-6.0, rel=1e-15)
    # reference: shapely polygon area (unsigned) for the counter-clockwise ring
    assert ring_area(ring) == pytest.approx(shapely.Polygon(ring).area, rel=1e-15)


def test_as_ring_merges_repeats_and_the_closing_vertex():
    # vertices equal to the one before them, cyclically, are merged: the repeated (1, 0)
    # and the first vertex, which the closing one repeats
    ring = as_ring([[0, 0], [1, 0], [1, 0], [1, 1], [0, 0]])
    assert ring.tolist() == [[1.0, 0.0], [1.0, 1.0], [0.0, 0.0]]


def test_even_odd_contains_matches_shapely_with_holes():
    rng = np.random.default_rng(7)
    ext = np.array([[0.0, 0], [6, 0], [6, 4], [3, 6], [0, 4]])
    holes = [np.array([[1.0, 1], [2, 1], [2, 2], [1, 2]]), np.array([[3.5, 1], [5, 1], [4, 3]])]
    pts = rng.uniform(-1, 7, (5000, 2))
    ref = shapely.Polygon(ext, holes)
    far = shapely.distance(ref.boundary, shapely.points(pts)) > 1e-9
    expect = shapely.contains_xy(ref, pts[:, 0], pts[:, 1])  # reference: shapely
    assert np.array_equal(contains([ext, *holes], pts)[far], expect[far])
