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
    kind = next(k for k in type(region).__mro__ if k in _LINE_CUTS)
    return _LINE_CUTS[kind](a, b, region, mesh)


def _intersection_cuts(a, b, region: Intersection, mesh) -> tuple[np.ndarray, ...]:
    parts = [_cuts(a, b, r, mesh) for r in region.regions]
    return tuple(np.concatenate(c) for c in zip(*parts, strict=True))


def _box_cuts(a, b, region: Box, mesh) -> tuple[np.ndarray, ...]:
    return _intersection_cuts(a, b, Intersection(*region.half_spaces()), mesh)


def _half_space_cuts(a, b, region: HalfSpace, mesh) -> tuple[np.ndarray, ...]:
    return _sign_change(a @ region.normal - region.offset, b @ region.normal - region.offset)


def _level_set_cuts(a, b, region: LevelSet, mesh) -> tuple[np.ndarray, ...]:
    if not same_cells(region.field.mesh, mesh):
        raise InterpError(
            "the LevelSet's field is on another mesh than the contoured field; build the "
            "LevelSet from a field on this mesh"
        )
    return _sign_change(region.excess(region.field(a)), region.excess(region.field(b)))


def _polygon_cuts(a, b, region: Polygon, mesh) -> tuple[np.ndarray, ...]:
    return region.edge_grid.crossings(a, b)


#: where lines cross each kind of region's boundary: a new kind of region is one entry here
#: (as in :mod:`interp.clip`).
_LINE_CUTS = {
    Polygon: _polygon_cuts,
    Box: _box_cuts,
    HalfSpace: _half_space_cuts,
    LevelSet: _level_set_cuts,
    Intersection: _intersection_cuts,
}


def _sign_change(da: np.ndarray, db: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Where a function linear along each segment, da at its start and db at its end, is 0."""
    with np.errstate(invalid="ignore"):
        hit = np.flatnonzero(((da < 0) & (db > 0)) | ((da > 0) & (db < 0)))
    return hit, da[hit] / (da[hit] - db[hit])
