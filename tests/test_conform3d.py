"""Face-to-face Delaunay meshes where points are cospherical (lattices), in 2D and 3D.

The property audited is the definition of a simplicial complex: any two cells meet
in a common face or not at all (Munkres, "Elements of Algebraic Topology", section 2,
from memory).  For a triangulation of a convex hull it means every interior face is
shared by exactly two cells and every face on the hull belongs to one.
"""

import itertools
from fractions import Fraction

import numpy as np
import pytest
from scipy.spatial import ConvexHull, Delaunay

from interp import Field, Mesh, triangulate
from interp._conform3d import conform
from interp._kernels import conform3d as kernels
from interp.mesh import is_flat, simplex_geometry


def lattice(n, d=3, h=1.0, offset=0.0):
    """(n + 1)^d points of a lattice with spacing h, shifted by offset."""
    x = np.arange(n + 1) * h
    return np.stack(np.meshgrid(*[x] * d, indexing="ij"), -1).reshape(-1, d) + offset


def faces(cells):
    """Distinct faces of the cells (sorted vertex tuples), how many cells share each,
    and the cell (row of ``cells``) each face of each cell belongs to."""
    k = cells.shape[1]
    f = np.sort(np.concatenate([np.delete(cells, j, axis=1) for j in range(k)]), axis=1)
    u, which, count = np.unique(f, axis=0, return_inverse=True, return_counts=True)
    return u, count, which.ravel(), np.tile(np.arange(len(cells)), k)


def face_measure(corners):
    """Length of segments (m, 2, 2) or area of triangles (m, 3, 3)."""
    e = corners[:, 1:] - corners[:, :1]
    if corners.shape[1] == 2:
        return np.linalg.norm(e[:, 0], axis=1)
    return 0.5 * np.linalg.norm(np.cross(e[:, 0], e[:, 1]), axis=1)


def audit(mesh, seed=0):
    """Check that a Delaunay mesh of points in 2D or 3D is face-to-face and fills the hull.

    References: scipy.spatial.ConvexHull (a general-purpose library) for the hull, its
    facet planes, its surface measure and its volume; the definition of a simplicial
    complex for the face counts.
    """
    pts = mesh.points
    d = pts.shape[1]
    local = pts - pts[0]  # exact for lattices at survey offsets (Sterbenz)
    hull = ConvexHull(local)
    f, count, which, owner = faces(mesh.cells)
    # a face lies on the hull when all its nodes lie in one of the hull's planes
    dist = local[f] @ hull.equations[:, :d].T + hull.equations[:, d]
    in_plane = (np.abs(dist) <= 1e-9 * np.abs(local).max()).all(axis=1).any(axis=1)
    outer = in_plane & (count == 1)  # (a sliver may lie in a hull plane and have two)
    # height of the thinner cell over each face: d * volume / face measure
    height = np.full(len(f), np.inf)
    np.minimum.at(height, which, d * mesh.measure()[owner] / face_measure(local[f[which]]))
    continuous(Mesh(local, mesh.cells), f[~in_plane], height[~in_plane], seed)
    assert count.max() <= 2, "a face is shared by more than two cells"
    lone = int((count[~outer] == 1).sum())
    assert lone == 0, f"{lone} interior face(s) belong to one cell only"
    # the hull faces cover the hull's surface, the cells its volume
    assert face_measure(local[f[outer]]).sum() == pytest.approx(hull.area, rel=1e-12)
    assert mesh.measure().sum() == pytest.approx(hull.volume, rel=1e-12)


def continuous(mesh, inner, height, seed):
    """Check that a P1 field with random node values does not jump across the faces
    ``inner`` (interior faces, as node tuples; ``height`` of the thinner cell on them).

    Just either side of a face centroid c, at q+ and q-, a continuous field satisfies
    f(q+) - f(q-) = g+ . (q+ - c) + g- . (c - q-), with g+ and g- its gradient in the
    cells there (first-order Taylor expansion, exact for a field linear in each cell);
    a jump across the face adds to it.  Rounding of c itself costs |g| * ulp(c).
    """
    pts = mesh.points
    d = pts.shape[1]
    field = Field(mesh, np.random.default_rng(seed).normal(size=len(pts)))
    centre = pts[inner].mean(axis=1)
    e = pts[inner[:, 1:]] - pts[inner[:, :1]]
    normal = np.cross(e[:, 0], e[:, 1]) if d == 3 else e[:, 0] @ [[0.0, -1.0], [1.0, 0.0]]
    normal /= np.linalg.norm(normal, axis=1, keepdims=True)
    step = 1e-3 * height[:, None]  # well inside the cells either side
    above, below = centre + step * normal, centre - step * normal
    fa, fb = field(above), field(below)
    ga, gb = field.gradient(above), field.gradient(below)
    expected = (ga * (above - centre)).sum(axis=1) + (gb * (centre - below)).sum(axis=1)
    slack = 1e-12 + 2 * np.spacing(np.abs(centre).max()) * (
        np.linalg.norm(ga, axis=1) + np.linalg.norm(gb, axis=1)
    )
    jump = np.abs(fa - fb - expected)
    assert (jump <= slack).all(), f"the P1 field jumps by up to {jump.max():.3g}"


@pytest.mark.parametrize("n", [2, 3, 4, 5, 6])
@pytest.mark.parametrize("d", [2, 3])
def test_lattices_are_face_to_face(n, d):
    audit(triangulate(lattice(n, d)))


@pytest.mark.parametrize(
    ("h", "offset"),
    [
        (0.5, [5e5, 6e6, 120.0]),  # spacing and offsets exact in binary
        (0.1, [5e5, 6e6, 120.0]),  # spacing 0.1 is not: the boxes differ by ulps
        (0.25, [512345.67, 6012345.89, 123.4]),
    ],
)
@pytest.mark.parametrize("d", [2, 3])
def test_lattices_at_survey_offsets(h, offset, d):
    # every box of an axis-aligned lattice has its corners on one sphere in exact
    # arithmetic, whatever the rounding of its coordinates (the centre of
    # [x0, x1] x [y0, y1] x [z0, z1] is equidistant from all eight)
    audit(triangulate(lattice(4, d, h, np.array(offset[:d]))))


def test_rectilinear_grid_of_uneven_spacing(rng):
    # the same holds for boxes of any sides: nodes of a rectilinear grid
    axes = [np.cumsum(rng.uniform(0.5, 2.0, 5)) for _ in range(3)]
    pts = np.stack(np.meshgrid(*axes, indexing="ij"), -1).reshape(-1, 3)
    audit(triangulate(pts))


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("d", [2, 3])
def test_lattices_with_missing_points(seed, d):
    # deletions merge boxes into larger cospherical cells (octahedra, prisms, ...)
    rng = np.random.default_rng(seed)
    pts = lattice(5, d)
    keep = rng.random(len(pts)) > 0.2
    keep[[0, -1]] = True
    audit(triangulate(pts[keep]), seed)


@pytest.mark.parametrize("d", [2, 3])
def test_random_points(rng, d):
    audit(triangulate(rng.random((300, d))))


def test_points_on_a_few_planes(rng):
    # four horizontal layers of scattered points, as from a layered sensor array
    xy = rng.random((4 * 60, 2))
    z = np.repeat([0.0, 0.5, 1.5, 2.0], 60)
    audit(triangulate(np.column_stack([xy, z])))


def test_random_points_are_left_as_qhull_gives_them(rng):
    # no flat cell: nothing to repair, the cells are those of scipy's Delaunay on the
    # centred, scaled coordinates that triangulate hands it
    pts = rng.random((200, 3)) * 10 + 3
    qhull = Delaunay((pts - 8) / 5).simplices
    np.testing.assert_array_equal(triangulate(pts).cells, qhull)


def test_issue_reproduction():
    # the 2 x 2 x 2 block of cubes: on the centred coordinates that triangulate hands
    # it, Qhull gives 60 tetrahedra of which 12 are flat
    pts = np.array(list(itertools.product([0.0, 1, 2], repeat=3)))
    tri = Delaunay(pts - 1)
    vol, size = simplex_geometry(pts[tri.simplices])
    assert (len(vol), int(is_flat(vol, size, 3).sum())) == (60, 12)
    mesh = triangulate(pts)
    assert mesh.n_cells == 48  # six per cube
    values = np.random.default_rng(0).normal(size=27)
    f = Field(mesh, values)
    x, e = np.array([0.4, 0.1, 1.0]), np.array([0, 0, 1e-9])
    below, above = f([x - e, x + e])
    # worked out by hand: the face z = 1 of the cube [0, 1]^3 has corners (0, 0, 1),
    # (1, 0, 1), (1, 1, 1), (0, 1, 1), nodes 1, 10, 13, 4 (index 9x + 3y + z); it is
    # split from its lowest node 1 along the diagonal to 13, and (0.4, 0.1) lies in
    # the triangle (0, 0), (1, 0), (1, 1) with barycentric coordinates 0.6, 0.3, 0.1
    expected = 0.6 * values[1] + 0.3 * values[10] + 0.1 * values[13]
    assert below == pytest.approx(expected, abs=1e-8)
    assert above == pytest.approx(expected, abs=1e-8)
    audit(mesh)


def insphere_exact(cell, p):
    """Sign of the in-sphere determinant in exact rationals (Python's fractions): > 0
    when p is inside the circumsphere of the positively oriented cell."""
    rows = []
    for q in cell:
        r = [Fraction(float(a)) - Fraction(float(b)) for a, b in zip(q, p, strict=True)]
        rows.append([*r, sum(v * v for v in r)])

    def det(m):
        if len(m) == 1:
            return m[0][0]
        return sum(
            (-1) ** j * m[0][j] * det([row[:j] + row[j + 1 :] for row in m[1:]])
            for j in range(len(m))
        )

    orient = det(
        [
            [Fraction(float(a)) - Fraction(float(b)) for a, b in zip(q, cell[3], strict=True)]
            for q in cell[:3]
        ]
    )
    return det(rows) * (1 if orient > 0 else -1)


@pytest.mark.parametrize("drop", [[], [13], [4, 13, 22]])
def test_lattice_cells_are_delaunay(drop):
    # definition of Delaunay (empty circumsphere; Delaunay 1934): no point strictly
    # inside any cell's circumsphere, decided in exact rationals; with points missing
    # (13 is the centre) the cells are larger cospherical polytopes
    pts = np.delete(lattice(2), drop, axis=0)
    mesh = triangulate(pts)
    for cell in mesh.points[mesh.cells]:
        assert all(insphere_exact(cell, p) <= 0 for p in pts)


def test_pulling_cones_each_cube_from_its_lowest_corner():
    # a pulling triangulation of a cube from vertex v0: v0 is coned to the three
    # faces that do not contain it, each split into two triangles: six tetrahedra,
    # each with v0 (De Loera, Rambau, Santos, "Triangulations", 2010, from memory)
    pts = lattice(1)
    tri = Delaunay(pts)
    cells = tri.simplices.astype(np.int64)
    members = np.arange(len(cells), dtype=np.int64)
    hull = np.full(cells.shape, -1, dtype=np.int64)  # every face outside is on the hull
    pulled = np.ones(len(cells), dtype=bool)
    new, done = kernels.pulling(pts, cells, hull, members, np.array([0, len(cells)]), pulled, 1e-11)
    assert done.tolist() == [True]
    assert len(new) == 6 and (new[:, 0] == 0).all()
    vol, _ = simplex_geometry(pts[new])
    np.testing.assert_allclose(vol, 1 / 6, rtol=1e-15)


def test_cluster_that_does_not_tile_a_polytope_is_kept():
    # two tetrahedra meeting only along an edge: their boundary is not a closed
    # surface (the edge joins four boundary triangles), so they are left as they are
    pts = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1], [1, 1, -1], [1, -1, -1]])
    cells = np.array([[0, 1, 2, 3], [0, 1, 4, 5]], dtype=np.int64)
    hull = np.full(cells.shape, -1, dtype=np.int64)
    pulled = np.ones(2, dtype=bool)
    new, done = kernels.pulling(pts, cells, hull, np.array([0, 1]), np.array([0, 2]), pulled, 1e-11)
    assert done.tolist() == [False] and len(new) == 0


def test_conform_leaves_general_position_alone(rng):
    pts = rng.random((50, 3))
    tri = Delaunay(pts)
    cells = tri.simplices.astype(np.int64)
    vol, size = simplex_geometry(pts[cells])
    out = conform(pts, pts, cells, vol, size, tri.neighbors.astype(np.int64), tri.equations)
    assert out[0] is cells and out[1] is vol and out[2] is size


@pytest.mark.parametrize(
    ("apex", "expected"),
    [((0.3, 0.3, -1.0), [[0, 1, 2, 4], [0, 1, 3, 4], [0, 2, 3, 4]]), ((3.0, 3.0, -0.1), None)],
)
def test_pulling_a_bipyramid(apex, expected):
    # two tetrahedra on the triangle 1, 2, 3 with apexes 0 and 4.  Worked out by hand:
    # when the segment 0-4 crosses the triangle the union is convex, and pulling from
    # vertex 0 cones it to the three faces around 4; when it does not, vertex 0 sees
    # a face around 4 from behind, and the two tetrahedra are left as they are
    pts = np.array([[0.2, 0.2, 1.0], [0, 0, 0], [1, 0, 0], [0, 1, 0], apex])
    cells = np.array([[0, 1, 2, 3], [1, 2, 3, 4]], dtype=np.int64)
    hull = np.full(cells.shape, -1, dtype=np.int64)
    pulled = np.ones(2, dtype=bool)
    new, done = kernels.pulling(pts, cells, hull, np.array([0, 1]), np.array([0, 2]), pulled, 1e-11)
    assert done.tolist() == [expected is not None]
    assert np.sort(new, axis=1).tolist() == (expected or [])


def test_rotated_lattice_is_reported():
    # a lattice turned about two axes: rounding leaves each box's corners nearly but
    # not exactly on one sphere, and Qhull splits the boxes into pieces of its own
    # choosing; where the pieces cannot be matched, the mesh says so
    c, s = np.cos(0.3), np.sin(0.3)
    turn = np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]]) @ np.array(
        [[1, 0, 0], [0, c, -s], [0, s, c]]
    )
    with pytest.warns(UserWarning, match=r"face\(s\) inside the mesh may belong to one cell only"):
        triangulate(lattice(4) @ turn.T)
