"""Mesh files through meshio: any format it reads becomes a :class:`interp.Mesh`
and its point data; any format it writes takes a mesh and node fields.
"""

from __future__ import annotations

import os
import warnings
from collections.abc import Mapping
from pathlib import Path

import meshio
import numpy as np

# meshio.read prints and exits the process when no reader fits; call the readers directly
from meshio._helpers import reader_map

from interp.errors import InterpError
from interp.io._atomic import atomic_path
from interp.mesh import CELL_TYPES, Mesh


def read(path: str | os.PathLike) -> tuple[Mesh, dict[str, np.ndarray]]:
    """Read a mesh file (any format meshio reads) and its point data.

    The cells of the highest topological dimension in the file are taken
    (several blocks of the same kind are merged); lower-dimensional blocks,
    such as boundary lines or the triangles of a mixed tetrahedron and
    triangle file, are dropped with a warning naming them.  Those cells must be
    simplices: lines, triangles or tetrahedra, linear or quadratic.  All
    points of the file are kept, so the point data line up with the nodes.

    Many formats store 3D points even for planar meshes: a triangle mesh
    whose z coordinates are all exactly 0 becomes a 2D mesh (gdim 2); any
    other mesh keeps the coordinates as stored.

    Returns
    -------
    mesh : Mesh
    fields : dict of str to ndarray
        The point data, (n_nodes,) for scalars and (n_nodes, c) for vectors
        (higher-rank arrays are flattened to c columns), as float64.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "plate.vtu"
    >>> mesh = Mesh([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]], [[0, 1, 2]])
    >>> _ = write(path, mesh, {"t": [1.0, 2.0, 3.0]})
    >>> back, fields = read(path)
    >>> back.gdim, back.cell_type, fields["t"].tolist()
    (2, 'triangle', [1.0, 2.0, 3.0])
    """
    path = Path(path)
    if not path.is_file():
        raise InterpError(f"{path}: no such file; check the name and folder")
    reasons = []
    for file_format in _formats(path):
        try:
            raw = reader_map[file_format](str(path))
            break
        except Exception as exc:  # meshio's readers raise many kinds of errors on bad input
            reasons.append(f"as {file_format}: {type(exc).__name__} {exc}".rstrip())
    else:
        raise InterpError(
            f"{path}: cannot read it as a mesh file ({'; '.join(reasons)}); check that the "
            "file is complete and in a format meshio reads (.vtu, .vtk, .msh, .xdmf, ...)"
        )
    cell_type, cells = _top_cells(path, raw.cells)
    points = np.asarray(raw.points, dtype=np.float64)
    if points.shape[1] == 3 and cell_type in ("triangle", "triangle6") and not points[:, 2].any():
        points = points[:, :2]
    try:
        mesh = Mesh(points, cells, cell_type=cell_type)
    except InterpError as exc:
        raise InterpError(f"{path}: {exc}") from None
    fields = {}
    for name, data in raw.point_data.items():
        arr = np.asarray(data)
        # "gmsh:..." arrays are meshio's bookkeeping of gmsh entity tags, not data
        if name.startswith("gmsh:") or not np.issubdtype(arr.dtype, np.number):
            continue
        arr = arr.astype(np.float64).reshape(len(arr), -1)
        fields[name] = arr[:, 0] if arr.shape[1] == 1 else arr
    return mesh, fields


def _formats(path: Path) -> list[str]:
    """meshio format names for the suffixes of ``path``, gmsh first for ``.msh``."""
    ext, found = "", []
    for suffix in reversed(path.suffixes):
        ext = (suffix + ext).lower()
        found += meshio.extension_to_filetypes.get(ext, [])
    if not found:
        raise InterpError(
            f"{path}: meshio has no mesh format for the suffix {path.suffix!r}; "
            "use .vtu, .vtk, .msh or .xdmf, for example"
        )
    # ".msh" is shared by gmsh and ANSYS; gmsh files are by far the more common
    return sorted(found, key=lambda name: name != "gmsh")


def _top_cells(path: Path, blocks: list[meshio.CellBlock]) -> tuple[str, np.ndarray]:
    """The kind and merged connectivity of the highest-dimensional cell blocks."""
    top = max((b.dim for b in blocks), default=-1)
    counts: dict[str, int] = {}
    for b in blocks:
        if b.dim == top:
            counts[b.type] = counts.get(b.type, 0) + len(b.data)
    found = ", ".join(f"{kind} ({n} cell{'s' * (n != 1)})" for kind, n in counts.items())
    if top < 1:
        raise InterpError(
            f"{path}: no line, triangle or tetrahedron cells in the file"
            + (f" (found {found})" if found else "")
        )
    if not set(counts) <= set(CELL_TYPES.values()):
        raise InterpError(
            f"{path}: only simplices (lines, triangles, tetrahedra, linear or quadratic) are "
            f"supported; found {found}; export the mesh as simplices or split its cells"
        )
    if len(counts) > 1:
        raise InterpError(
            f"{path}: the {top}D cells mix {found}; a mesh needs one cell kind: "
            "export it with a single element order"
        )
    dropped: dict[str, int] = {}
    for b in blocks:
        if b.dim < top and len(b.data):
            dropped[b.type] = dropped.get(b.type, 0) + len(b.data)
    if dropped:
        listed = ", ".join(f"{n:,} {kind} cell{'s' * (n != 1)}" for kind, n in dropped.items())
        kept = sum(counts.values())
        warnings.warn(
            f"{path}: dropped {listed}: the mesh is made of the {kept:,} {'/'.join(counts)} "
            f"cells, those of the highest dimension ({top}D) in the file",
            stacklevel=3,
        )
    (kind,) = counts
    return kind, np.concatenate([b.data for b in blocks if b.dim == top]).astype(np.int64)


def write(
    path: str | os.PathLike,
    mesh: Mesh,
    fields: Mapping[str, object] | None = None,
) -> Path:
    """Write a mesh and node fields to any format meshio writes, atomically.

    Points are stored with three coordinates (2D and 1D meshes get zero
    columns), as most formats expect; :func:`read` turns a planar triangle
    mesh back into 2D.

    Parameters
    ----------
    path : path-like
        Output file; its suffix chooses the format (``.vtu``, ``.vtk``,
        ``.msh``, ``.xdmf``, ...).
    mesh : Mesh
    fields : dict of str to array_like, optional
        Node values, (n_nodes,) or (n_nodes, c) each, stored as point data.

    Returns
    -------
    Path
        ``path``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "bar.vtk"
    >>> mesh = Mesh([[0.0, 0.0], [2.0, 0.0], [0.0, 1.0]], [[0, 1, 2]])
    >>> write(path, mesh, {"u": [[0.0, 1.0], [1.0, 1.0], [0.0, 0.0]]}).name
    'bar.vtk'
    """
    path = Path(path)
    file_format = _formats(path)[0]
    point_data = {}
    for name, values in (fields or {}).items():
        arr = np.asarray(values, dtype=np.float64)
        if arr.ndim not in (1, 2) or arr.shape[0] != mesh.n_nodes:
            raise InterpError(
                f"field {name!r} has shape {arr.shape}; pass ({mesh.n_nodes},) or "
                f"({mesh.n_nodes}, c) values, one per mesh node"
            )
        point_data[str(name)] = arr
    points = np.zeros((mesh.n_nodes, 3))
    points[:, : mesh.gdim] = mesh.points
    out = meshio.Mesh(points, [(mesh.cell_type, np.asarray(mesh.cells))], point_data=point_data)
    with atomic_path(path) as tmp:
        try:
            meshio.write(tmp, out, file_format=file_format)
        except Exception as exc:  # meshio's writers raise many kinds of errors
            raise InterpError(
                f"cannot write {path} as {file_format}: {type(exc).__name__}: {exc}"
            ) from exc
    return path
