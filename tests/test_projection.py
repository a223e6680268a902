"""L2 projection (conservative transfer) between meshes: integrals preserved, the target
space reproduced."""

import numpy as np
import pytest
from conftest import square_mesh

import interp
from interp import Field, InterpError, transfer


def test_conservative_transfer_preserves_integral(rng):
    # the L2 projection preserves the integral because the target basis is a partition of
    # unity (sum_i phi_i = 1), so integral(u) = 1^T M u = 1^T b = integral(f) (Brenner and
    # Scott, section 0.4; common practice in conservative remapping)
    src_pts = rng.random((300, 2)) * 10
    dst_pts = rng.random((250, 2)) * 10
    src = interp.triangulate(src_pts)
    f = Field(src, np.exp(src_pts[:, 0] / 10) + np.sin(src_pts[:, 1]))
    for target in (interp.triangulate(dst_pts), interp.triangulate(dst_pts).elevate()):
        moved = transfer(f, target, conservative=True)
        # the source integrated over the common domain, the overlay of both meshes
        ov = interp.overlay(src, target)
        exact = interp.integrate_pieces(
            f, src, interp.Pieces(ov.parents[:, 0], ov.mesh.points[ov.mesh.cells]), 1
        )
        assert moved.integrate() == pytest.approx(exact, rel=1e-10)


def test_conservative_transfer_onto_own_mesh_is_identity(rng):
    # the L2 projection of a function already in the target space is that function
    m = square_mesh(5).elevate()
    f = Field(m, np.cos(m.points[:, 0] * 2) * m.points[:, 1])
    np.testing.assert_allclose(transfer(f, m, conservative=True).values, f.values, atol=1e-11)


def test_conservative_transfer_needs_2d():
    pts = np.random.default_rng(0).random((20, 3))
    f = Field(interp.triangulate(pts), pts[:, 0])
    with pytest.raises(InterpError, match="2D triangle meshes"):
        transfer(f, interp.triangulate(pts), conservative=True)
