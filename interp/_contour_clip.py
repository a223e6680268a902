"""Contour lines cut to a region: where segments cross a region's boundary, and
the parts of the lines inside it (see :func:`interp.contours`).

A line is cut at every crossing of the boundary of each part of the region (a
polygon's edges, found through its edge grid's buckets; a half-space's plane;
the zero of a level set's excess, taken as linear along each segment), and the pieces
whose middle lies in the region are kept; consecutive kept pieces are joined.
"""

from __future__ import annotations

import numpy as np

from interp.clip import same_cells
from interp.errors import InterpError
from interp.regions import Box, HalfSpace, Intersection, LevelSet, Polygon, Region


def clip_lines(
    xy: np.ndarray,
    offsets: np.ndarray,
    line_level: np.ndarray,
    closed: np.ndarray,
    region: Region,
    mesh: object,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The parts of lines inside a region: segments cut where they cross its boundary,
    pieces kept when their middle is inside, and consecutive pieces joined."""
    n_lines = len(offsets) - 1
    line = np.repeat(np.arange(n_lines), np.diff(offsets))
    seg = np.flatnonzero(line[:-1] == line[1:]) if len(line) else np.zeros(0, dtype=np.int64)
    a, b = xy[seg], xy[seg + 1]
    cut_seg, cut_t = _cuts(a, b, region, mesh)
    # pieces: every segment from t = 0, and from each cut inside it, to the next break
    piece_seg = np.concatenate([np.arange(len(seg)), cut_seg])
    t0 = np.concatenate([np.zeros(len(seg)), cut_t])
    order = np.lexsort((t0, piece_seg))
    piece_seg, t0 = piece_seg[order], t0[order]
    last_of_seg = np.r_[piece_seg[1:] != piece_seg[:-1], True]
    t1 = np.where(last_of_seg, 1.0, np.r_[t0[1:], 1.0])
    real = t1 > t0
    piece_seg, t0, t1 = piece_seg[real], t0[real], t1[real]
    pa, pb = a[piece_seg], b[piece_seg]
    inside = region.contains(pa + (0.5 * (t0 + t1))[:, None] * (pb - pa))
    p_line = line[seg[piece_seg]]
    if not inside.any():
        return np.zeros((0, 2)), np.zeros(1, dtype=np.int64), line_level[:0], closed[:0]
    # a run of kept pieces starts after a piece not kept or on another line
    starts_run = inside & np.r_[True, ~inside[:-1] | (p_line[1:] != p_line[:-1])]
    run = np.cumsum(starts_run) - 1
    n_pieces = np.bincount(p_line, minlength=n_lines)
    n_kept = np.bincount(p_line[inside], minlength=n_lines)
    whole = closed & (n_kept == n_pieces) & (n_pieces > 0)
    # a cut ring whose first and last pieces are kept: its last run leads into its first
    first_piece = np.concatenate([[0], np.cumsum(n_pieces)])[:-1]
    last_piece = first_piece + n_pieces - 1
    wrap = np.flatnonzero(closed & ~whole & (n_pieces > 0))
    wrap = wrap[inside[first_piece[wrap]] & inside[last_piece[wrap]]]
    rank = np.arange(len(inside), dtype=np.int64)
    n_runs = int(starts_run.sum())
    into = np.arange(n_runs)
    into[run[last_piece[wrap]]] = run[first_piece[wrap]]
    moved = np.zeros(n_runs, dtype=bool)
    moved[run[last_piece[wrap]]] = True
    rank = np.where(inside & moved[np.maximum(run, 0)], rank - len(inside), rank)
    run = np.where(inside, into[np.maximum(run, 0)], run)
    kept = np.flatnonzero(inside)
    kept = kept[np.lexsort((rank[kept], run[kept]))]
    k_run = run[kept]
    head = np.r_[True, k_run[1:] != k_run[:-1]]
    pts0 = _at(pa[kept], pb[kept], t0[kept])
    pts1 = _at(pa[kept], pb[kept], t1[kept])
    # each run: the start of its first piece, then the end of every piece
    out = np.empty((len(kept) + int(head.sum()), 2))
    slot = np.arange(len(kept)) + np.cumsum(head)
    out[slot] = pts1
    out[slot[head] - 1] = pts0[head]
    counts = np.bincount(np.cumsum(head) - 1, minlength=int(head.sum())) + 1
    run_line = p_line[kept][head]
    return (
        out,
        np.concatenate([[0], np.cumsum(counts)]),
        line_level[run_line],
        whole[run_line],
    )


def _at(a: np.ndarray, b: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Points at parameter t on segments a -> b, exactly a at 0 and b at 1."""
    return np.where((t == 1.0)[:, None], b, a + t[:, None] * (b - a))


def _cuts(a: np.ndarray, b: np.ndarray, region: Region, mesh: object) -> tuple[np.ndarray, ...]:
    """Where segments a -> b cross the boundary of a region: segment indices and t in (0, 1)."""
    if isinstance(region, Intersection):
        parts = [_cuts(a, b, r, mesh) for r in region.regions]
        return tuple(np.concatenate(c) for c in zip(*parts, strict=True))
    if isinstance(region, Box):
        return _cuts(a, b, Intersection(*region.half_spaces()), mesh)
    if isinstance(region, HalfSpace):
        return _sign_change(a @ region.normal - region.offset, b @ region.normal - region.offset)
    if isinstance(region, LevelSet):
        if not same_cells(region.field.mesh, mesh):
            raise InterpError(
                "the LevelSet's field is on another mesh than the contoured field; build the "
                "LevelSet from a field on this mesh"
            )
        return _sign_change(region.excess(region.field(a)), region.excess(region.field(b)))
    return _polygon_cuts(a, b, region)


def _sign_change(da: np.ndarray, db: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Where a function linear along each segment, da at its start and db at its end, is 0."""
    with np.errstate(invalid="ignore"):
        hit = np.flatnonzero(((da < 0) & (db > 0)) | ((da > 0) & (db < 0)))
    return hit, da[hit] / (da[hit] - db[hit])


def _polygon_cuts(a: np.ndarray, b: np.ndarray, polygon: Polygon) -> tuple[np.ndarray, ...]:
    """Crossings of segments with a polygon's edges, found through its edge grid's buckets."""
    grid = polygon._grid
    nx, ny = int(grid.shape[0]), int(grid.shape[1])
    lo_xy = (np.minimum(a, b) - grid.lo) / grid.h
    hi_xy = (np.maximum(a, b) - grid.lo) / grid.h
    near = np.flatnonzero((hi_xy >= 0).all(axis=1) & (lo_xy[:, 0] <= nx) & (lo_xy[:, 1] <= ny))
    i0 = np.clip(np.floor(lo_xy[near, 0]), 0, nx - 1).astype(np.int64)
    i1 = np.clip(np.floor(hi_xy[near, 0]), 0, nx - 1).astype(np.int64)
    j0 = np.clip(np.floor(lo_xy[near, 1]), 0, ny - 1).astype(np.int64)
    j1 = np.clip(np.floor(hi_xy[near, 1]), 0, ny - 1).astype(np.int64)
    wide = i1 - i0 + 1
    n_buckets = wide * (j1 - j0 + 1)
    owner = np.repeat(np.arange(len(near)), n_buckets)
    k = np.arange(len(owner)) - np.repeat(np.cumsum(n_buckets) - n_buckets, n_buckets)
    bucket = (j0[owner] + k // wide[owner]) * nx + i0[owner] + k % wide[owner]
    n_members = grid.start[bucket + 1] - grid.start[bucket]
    pair_seg = np.repeat(near[owner], n_members)
    k = np.arange(len(pair_seg)) - np.repeat(np.cumsum(n_members) - n_members, n_members)
    pair_edge = grid.members[np.repeat(grid.start[bucket], n_members) + k]
    n_edges = len(grid.segments)
    key = np.unique(pair_seg * n_edges + pair_edge)
    s, e = np.divmod(key, n_edges)
    p, r = a[s], b[s] - a[s]
    q, d = grid.segments[e, :2], grid.segments[e, 2:] - grid.segments[e, :2]
    w = q - p
    denom = cross_z(r, d)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = cross_z(w, d) / denom
        u = cross_z(w, r) / denom
        hit = (denom != 0) & (t > 0) & (t < 1) & (u >= 0) & (u <= 1)
    return s[hit], t[hit]


def cross_z(u: np.ndarray, w: np.ndarray) -> np.ndarray:
    """z component of the cross product of rows of 2D vectors.

    Examples
    --------
    >>> cross_z(np.array([[1.0, 0.0]]), np.array([[0.0, 2.0]])).tolist()
    [2.0]
    """
    return u[:, 0] * w[:, 1] - u[:, 1] * w[:, 0]
