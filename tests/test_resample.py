"""Profiles along polylines and nodal transfer between meshes."""

import numpy as np
import pytest
from conftest import square_mesh

import interp
from interp import Field, InterpError, profile, transfer


def test_profile_samples_every_step_and_vertex():
    m = square_mesh(4).elevate()
    f = Field(m, m.points[:, 0] ** 2 + m.points[:, 1], name="z")
    line = [[0.0, 0.5], [1.0, 0.5], [1.0, 2.0]]
    p = profile(f, line, step=0.3)
    # chainage: 0, .3, .6, .9 on the first segment, then 1.0 (vertex), 1.3, ..., 2.5 (end)
    np.testing.assert_allclose(p.distance, [0, 0.3, 0.6, 0.9, 1.0, 1.3, 1.6, 1.9, 2.2, 2.5])
    np.testing.assert_allclose(p.points[4], [1.0, 0.5])
    inside = p.points[:, 1] <= 1.0
    np.testing.assert_allclose(
        p.values[inside], p.points[inside, 0] ** 2 + p.points[inside, 1], atol=1e-12
    )
    assert np.isnan(p.values[~inside]).all()
    assert p.name == "z"


def test_profile_save(tmp_path):
    m = square_mesh(2)
    p = profile(Field(m, m.points[:, 0], name="z"), [[0.0, 0.0], [1.0, 0.0]], step=0.5)
    lines = p.save(tmp_path / "p.csv").read_text().splitlines()
    assert lines == ["distance,x,y,z", "0,0,0,0", "0.5,0.5,0,0.5", "1,1,0,1"]


def test_profile_bad_input():
    f = Field(square_mesh(1), np.zeros(4))
    with pytest.raises(InterpError, match="at least two"):
        profile(f, [[0.0, 0.0]], step=0.1)
    with pytest.raises(InterpError, match="step must be a positive"):
        profile(f, [[0.0, 0.0], [1, 1]], step=0)
    with pytest.raises(InterpError, match="zero length"):
        profile(f, [[0.0, 0.0], [0.0, 0.0], [1, 1]], step=0.1)


def test_nodal_transfer_onto_refinement_is_exact(rng):
    # a P1 field transferred onto a refinement of its own mesh reproduces it exactly:
    # the refinement's nodes lie in the source cells and P1 on the sub-cells spans the same
    # piecewise-linear function (common practice; the nested-space property of FE meshes)
    coarse = square_mesh(3)
    f = Field(coarse, np.sin(coarse.points[:, 0] * 3) + coarse.points[:, 1] ** 2)
    fine = transfer(f, square_mesh(9))
    q = rng.random((3000, 2))
    np.testing.assert_allclose(fine(q), f(q), atol=1e-13)


def test_nodal_transfer_outside_is_nan():
    src = Field(interp.triangulate(np.array([[0.0, 0], [1, 0], [0, 1]])), [1.0, 2.0, 3.0])
    out = transfer(src, square_mesh(1))
    assert np.isnan(out.values[-1]) and out.values[0] == 1.0


def test_transfer_dimension_mismatch():
    f = Field(square_mesh(1), np.zeros(4))
    with pytest.raises(InterpError, match="3D"):
        transfer(f, interp.triangulate(np.random.default_rng(0).random((10, 3))))
