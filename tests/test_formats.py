"""LAS/LAZ in, GeoTIFF and xarray/NetCDF out, GeoJSON polygons in.

Each format is checked against the library that owns it: clouds are written
with laspy and read with ours; grids are written with ours and read back
with rasterio and xarray; GeoJSON polygons are compared with shapely's
``shape()``.  All data are invented in the tests.
"""

import json
import sys
from fractions import Fraction

import laspy
import numpy as np
import pyproj
import pytest
import rasterio
import shapely.geometry
import xarray

import interp
from interp import Grid, InterpError
from interp.cli import main
from interp.io._geojson import read_geojson_polygon
from interp.io._geotiff import write_geotiff
from interp.io._las import exact_coordinates, iter_las_chunks, las_crs, read_las
from interp.io._xarray import grid_to_xarray, write_netcdf

SCALES = [0.001, 0.001, 0.01]
OFFSETS = [500000.0, 4100000.0, 0.0]


def write_cloud(path, raw, classes, *, crs=None, version="1.4", point_format=6, extra=True):
    """Write integer coordinates ``raw`` (n, 3) with laspy, with two extra dimensions."""
    header = laspy.LasHeader(point_format=point_format, version=version)
    header.scales, header.offsets = np.array(SCALES), np.array(OFFSETS)
    if extra:
        header.add_extra_dim(laspy.ExtraBytesParams(name="moisture", type=np.float64))
        header.add_extra_dim(
            laspy.ExtraBytesParams(
                name="wear", type=np.int16, scales=np.array([0.01]), offsets=np.array([1.0])
            )
        )
    if crs is not None:
        header.add_crs(pyproj.CRS(crs))
    las = laspy.LasData(header)
    las.X, las.Y, las.Z = raw.T
    las.classification = classes
    if extra:
        las.moisture = np.arange(len(raw)) / 7.0
        las.wear = 1.0 + (np.arange(len(raw)) % 50) * 0.01
    las.write(path)
    return laspy.read(path)


def decimals(las):
    """x, y, z of a laspy cloud as the float64 nearest to record * scale + offset.

    LAS 1.4 (R15), point data records: coordinate = record * scale + offset.  The
    decimal value comes from Python's fractions (scales 10**-k), and float(Fraction)
    is the nearest float64.
    """
    columns = []
    for axis, (scale, offset) in enumerate(zip(SCALES, OFFSETS, strict=True)):
        step = Fraction(1, round(1 / scale))
        stored = np.asarray(getattr(las, "XYZ"[axis]))
        columns.append([float(int(v) * step + Fraction(offset)) for v in stored])
    return np.array(columns).T


@pytest.fixture(scope="module")
def cloud(tmp_path_factory):
    """A small cloud: ground (2), key points (8), noise (7) and unclassified (1)."""
    rng = np.random.default_rng(13)
    n = 3000
    raw = np.column_stack(
        [rng.integers(0, 40_000, n), rng.integers(0, 30_000, n), rng.integers(0, 2_000, n)]
    )
    classes = rng.choice([1, 2, 7, 8], n)
    d = tmp_path_factory.mktemp("las")
    las = write_cloud(d / "site.las", raw, classes, crs="EPSG:32633")
    write_cloud(d / "site.laz", raw, classes, crs="EPSG:32633")
    return d, las


def test_coordinates_are_exact_decimals(tmp_path):
    rng = np.random.default_rng(5)
    raw = rng.integers(-(2**31), 2**31 - 1, (4000, 3))
    las = write_cloud(tmp_path / "wide.las", raw, np.full(4000, 2), extra=False)
    points, fields, _ = read_las(tmp_path / "wide.las", coords=("x", "y", "z"))
    exact = decimals(las)
    assert np.array_equal(points, exact) and fields == {}
    # the plain formula in floating point rounds twice and misses some of them
    assert (raw * SCALES + np.array(OFFSETS) != exact).any(axis=0).all()


def test_exact_coordinates_falls_back_on_a_non_decimal_scale():
    raw = np.array([3, -7, 1 << 20])
    scale = 1 / 3  # not m / 10**k: the formula as written in the LAS specification
    assert np.array_equal(exact_coordinates(raw, scale, 2.5), raw * scale + 2.5)


@pytest.mark.parametrize("name", ["site.las", "site.laz"])
def test_cloud_reads_like_laspy(cloud, name):
    d, las = cloud
    points, fields, crs = read_las(d / name)
    exact = decimals(las)
    assert np.array_equal(points, exact[:, :2]) and np.array_equal(fields["z"], exact[:, 2])
    # laspy's own x, y, z: the same to the last unit or so
    assert np.allclose(points, np.column_stack([las.x, las.y]), rtol=4e-16, atol=0)
    assert list(fields) == ["z", "moisture", "wear"]
    assert np.array_equal(fields["moisture"], np.asarray(las.moisture))
    # a scaled extra dimension comes back scaled, as laspy gives it
    assert np.allclose(fields["wear"], np.asarray(las.wear), rtol=0, atol=1e-12)
    assert crs == "EPSG:32633" == f"EPSG:{las.header.parse_crs().to_epsg()}"


def test_classes_filter(cloud):
    d, las = cloud
    keep = np.isin(np.asarray(las.classification), [2, 8])
    points, fields, _ = read_las(d / "site.laz", classes=[2, 8], chunk_points=700)
    assert np.array_equal(points, decimals(las)[:, :2][keep])
    assert np.array_equal(fields["moisture"], np.asarray(las.moisture)[keep])


def test_every_nth_point_counts_across_chunks(cloud):
    d, las = cloud
    ground = np.flatnonzero(np.asarray(las.classification) == 2)
    for chunk_points in (1, 333, 10_000):
        points, fields, _ = read_las(
            d / "site.las", classes=[2], every=4, chunk_points=chunk_points
        )
        assert np.array_equal(fields["z"], decimals(las)[:, 2][ground[::4]])
    chunks = list(iter_las_chunks(d / "site.las", every=5, chunk_points=256))
    assert np.array_equal(np.concatenate([c.points for c in chunks]), decimals(las)[:, :2][::5])


def brute_lowest(x, y, z, size):
    """The lowest point of each cell, first in file order on a tie: a plain Python loop."""
    best = {}
    for i, key in enumerate(zip(np.floor(x / size), np.floor(y / size), strict=True)):
        if key not in best or z[i] < z[best[key]]:
            best[key] = i
    return np.sort(np.array(list(best.values())))


@pytest.mark.parametrize("chunk_points", [97, 100_000])
def test_lowest_per_cell_against_brute_force(cloud, chunk_points):
    d, las = cloud
    x, y, z = decimals(las).T
    want = brute_lowest(x, y, z, 2.5)
    points, fields, _ = read_las(d / "site.laz", lowest_per_cell=2.5, chunk_points=chunk_points)
    got = np.lexsort((points[:, 1], points[:, 0]))
    ref = np.lexsort((y[want], x[want]))
    assert len(points) == len(want) < len(x)
    assert np.array_equal(points[got], np.column_stack([x, y])[want][ref])
    assert np.array_equal(fields["moisture"][got], np.asarray(las.moisture)[want][ref])


def test_lowest_per_cell_keeps_the_first_of_equal_lows(tmp_path):
    raw = np.array([[100, 100, 5], [200, 200, 3], [300, 300, 3], [2500, 100, 9]])
    write_cloud(tmp_path / "tie.las", raw, [2, 2, 2, 2])
    points, fields, _ = read_las(tmp_path / "tie.las", lowest_per_cell=1.0)
    order = np.argsort(points[:, 0])
    assert fields["moisture"][order].tolist() == [1 / 7, 3 / 7]


def test_extra_dimension_no_data_is_nan(tmp_path):
    # LAS 1.4 Extra Bytes: no_data is compared with the stored value, before scaling
    header = laspy.LasHeader(point_format=6, version="1.4")
    header.add_extra_dim(laspy.ExtraBytesParams(name="m", type="f8", no_data=[-9999.0]))
    header.add_extra_dim(
        laspy.ExtraBytesParams(name="w", type="i2", scales=[0.1], offsets=[0.0], no_data=[-1])
    )
    header.add_extra_dim(laspy.ExtraBytesParams(name="g", type="u1"))
    las = laspy.LasData(header)
    las.x, las.y, las.z = [0.0, 1, 2], [0.0, 1, 2], [1.0, 2, 3]
    las.m, las.w, las.g = [1.5, -9999, 2], [0.3, -0.1, 0.5], [0, 255, 7]
    las.write(tmp_path / "nd.las")
    _, fields, _ = read_las(tmp_path / "nd.las")
    assert np.array_equal(fields["m"], [1.5, np.nan, 2.0], equal_nan=True)
    assert np.allclose(fields["w"], [0.3, np.nan, 0.5], rtol=0, atol=1e-12, equal_nan=True)
    assert fields["g"].tolist() == [0.0, 255.0, 7.0]


def test_crs_as_geokeys_in_las_1_2(tmp_path):
    raw = np.array([[0, 0, 0], [1000, 0, 0], [0, 1000, 0]])
    write_cloud(
        tmp_path / "old.las", raw, [2, 2, 2], crs="EPSG:2056", version="1.2", point_format=3
    )
    write_cloud(tmp_path / "none.las", raw, [2, 2, 2])
    assert las_crs(tmp_path / "old.las") == "EPSG:2056"
    assert las_crs(tmp_path / "none.las") is None


def test_las_errors(cloud, tmp_path, monkeypatch):
    d, _ = cloud
    with pytest.raises(InterpError, match=r"no points of class 5; the file's classes .* 1 \("):
        read_las(d / "site.las", classes=[5])
    for classes in ([2.5], ["ground"], [-1], []):
        with pytest.raises(InterpError, match="classification codes"):
            read_las(d / "site.las", classes=classes)
    with pytest.raises(InterpError, match="every must be a positive"):
        read_las(d / "site.las", every=0)
    with pytest.raises(InterpError, match="lowest_per_cell must be a positive"):
        read_las(d / "site.las", lowest_per_cell=-1.0)
    with pytest.raises(InterpError, match="coordinates x, y"):
        read_las(d / "site.las", coords=("x", "z"))
    (tmp_path / "bad.las").write_bytes(b"not a point cloud at all")
    with pytest.raises(InterpError, match="cannot read it as a LAS/LAZ"):
        read_las(tmp_path / "bad.las")
    with pytest.raises(InterpError, match="no such file"):
        read_las(tmp_path / "missing.laz")
    with pytest.raises(InterpError, match="apply to LAS/LAZ point clouds only"):
        interp.load(tmp_path / "survey.csv", every=2)
    monkeypatch.setitem(sys.modules, "laspy", None)
    with pytest.raises(InterpError, match=r"pip install 'interp\[las\]'"):
        read_las(d / "site.las")


def test_read_points_and_load_take_las(cloud):
    d, las = cloud
    points, values = interp.read_points(d / "site.laz")
    assert np.array_equal(points, decimals(las)[:, :2])
    assert list(values) == ["z", "moisture", "wear"]
    ground = interp.load(d / "site.las", classes=[2], every=2, name="z")["z"]
    keep = np.flatnonzero(np.asarray(las.classification) == 2)[::2]
    # a P1 fit interpolates its data points (common practice)
    node = decimals(las)[:, :2][keep[:5]]
    assert np.allclose(ground(node), decimals(las)[:, 2][keep[:5]], rtol=0, atol=1e-9)


def test_sample_streams_a_las_query_cloud(cloud, tmp_path):
    d, las = cloud
    x, y, z = decimals(las).T
    mesh = interp.Mesh(
        [[x.min(), y.min()], [x.max(), y.min()], [x.min(), y.max()], [x.max(), y.max()]],
        [[0, 1, 3], [0, 3, 2]],
    )
    nodes = mesh.points
    # a P1 field reproduces the plane through its nodes (common practice)
    plane = interp.Field(mesh, 3 * (nodes[:, 0] - OFFSETS[0]) + nodes[:, 1] - OFFSETS[1])
    report = interp.source.sample_file(
        {"design": plane}, d / "site.laz", tmp_path / "out.csv", chunk_rows=400
    )
    table = np.loadtxt(tmp_path / "out.csv", delimiter=",", skiprows=1)
    header = (tmp_path / "out.csv").read_text().splitlines()[0]
    assert header == "x,y,z,moisture,wear,design"
    assert report.rows == len(x) and report.outside == 0
    assert np.array_equal(table[:, :3], decimals(las))
    want = 3 * (x - OFFSETS[0]) + y - OFFSETS[1]
    assert np.allclose(table[:, 5], want, rtol=0, atol=1e-6)


def plane_grid():
    """z = 2x - y + 100 on 5 x 4 nodes with one node outside the mesh (NaN)."""
    axes = (np.array([10.0, 12.0, 14.0, 16.0, 18.0]), np.array([50.0, 51.0, 52.0, 53.0]))
    xx, yy = np.meshgrid(*axes, indexing="ij")
    z = 2 * xx - yy + 100
    z[0, 3] = np.nan
    flow = np.stack([xx, -yy], axis=-1)
    return Grid(axes, {"z": z, "flow": flow}, {"z": "m"})


def test_geotiff_against_rasterio(tmp_path):
    # the GeoTIFF is read back with rasterio; its xy() gives pixel centres (offset="center")
    grid = plane_grid()
    out = write_geotiff(tmp_path / "dem.tif", grid, crs="EPSG:32633")
    with rasterio.open(out) as src:
        assert src.transform == rasterio.Affine(2.0, 0.0, 9.0, 0.0, -1.0, 53.5)
        assert (src.width, src.height, src.count) == (5, 4, 3)
        assert src.dtypes == ("float64",) * 3 and np.isnan(src.nodata)
        assert src.descriptions == ("z", "flow_0", "flow_1")
        assert src.units == ("m", None, None)
        assert src.crs == rasterio.crs.CRS.from_epsg(32633)
        assert src.tags()["AREA_OR_POINT"] == "Area"
        z, u, v = src.read()
        masked = src.read(1, masked=True)
    rows, cols = np.mgrid[0:4, 0:5]
    x, y = rasterio.transform.xy(src.transform, rows.ravel(), cols.ravel())
    x, y = np.reshape(x, (4, 5)), np.reshape(y, (4, 5))
    want = 2 * x - y + 100
    want[0, 0] = np.nan  # node (x 10, y 53): the top-left pixel
    assert np.array_equal(z, want, equal_nan=True)
    assert masked.mask.sum() == 1 and masked.mask[0, 0]
    assert np.array_equal(u, x) and np.array_equal(v, -y)


def test_geotiff_without_crs_stores_none(tmp_path):
    grid = plane_grid()
    with rasterio.open(grid.save(tmp_path / "plain.tiff")) as src:
        assert src.crs is None
    with rasterio.open(Grid(grid.axes, grid.fields, crs="EPSG:2056").save(tmp_path / "c.tif")) as s:
        assert s.crs.to_epsg() == 2056


def test_geotiff_errors(tmp_path):
    axes = (np.arange(3.0), np.arange(2.0), np.arange(2.0))
    with pytest.raises(InterpError, match="2D grids only"):
        Grid(axes, {"t": np.zeros((3, 2, 2))}).save(tmp_path / "t.tif")
    with pytest.raises(InterpError, match="at least two nodes along y"):
        write_geotiff(
            tmp_path / "t.tif", Grid((np.arange(3.0), np.zeros(1)), {"t": np.zeros((3, 1))})
        )
    uneven = Grid((np.array([0.0, 1.0, 3.0]), np.arange(2.0)), {"t": np.zeros((3, 2))})
    with pytest.raises(InterpError, match="not evenly spaced"):
        write_geotiff(tmp_path / "t.tif", uneven)
    with pytest.raises(InterpError, match="not a coordinate reference system"):
        write_geotiff(tmp_path / "t.tif", plane_grid(), crs="EPSG:nonsense")
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_xarray_dataset(tmp_path):
    grid = plane_grid()
    ds = grid_to_xarray(grid, crs="EPSG:32633")
    assert ds["z"].dims == ("y", "x") and ds["flow"].dims == ("y", "x", "flow_component")
    for i, x in enumerate(grid.axes[0]):
        for j, y in enumerate(grid.axes[1]):
            assert np.array_equal(
                ds["z"].sel(x=x, y=y).item(), grid.fields["z"][i, j], equal_nan=True
            )
            assert ds["flow"].sel(x=x, y=y).values.tolist() == grid.fields["flow"][i, j].tolist()
    assert ds["z"].attrs == {"units": "m", "grid_mapping": "crs"}
    # CF grid mapping back through pyproj's CF reader
    assert pyproj.CRS.from_cf(ds["crs"].attrs) == pyproj.CRS("EPSG:32633")
    assert ds["x"].attrs["standard_name"] == "projection_x_coordinate"
    assert ds["x"].attrs["units"] == "m" and ds.attrs["Conventions"] == "CF-1.8"
    plain = grid.to_xarray()
    assert "crs" not in plain and "grid_mapping" not in plain["z"].attrs


def test_netcdf_round_trip_through_xarray(tmp_path):
    grid = plane_grid()
    out = Grid(grid.axes, grid.fields, grid.units, crs="EPSG:32633").save(tmp_path / "g.nc")
    with xarray.open_dataset(out) as ds:
        assert np.array_equal(ds["x"].values, grid.axes[0])
        assert np.array_equal(ds["z"].values, grid.fields["z"].T, equal_nan=True)
        assert np.array_equal(ds["flow"].values, grid.fields["flow"].transpose(1, 0, 2))
        assert ds["z"].attrs["units"] == "m"
        assert pyproj.CRS.from_wkt(ds["crs"].attrs["crs_wkt"]).to_epsg() == 32633
    axes = (np.arange(3.0), np.arange(2.0), np.arange(4.0))
    cube = Grid(axes, {"t": np.arange(24.0).reshape(3, 2, 4)})
    with xarray.open_dataset(write_netcdf(tmp_path / "c.nc", cube)) as ds:
        assert ds["t"].dims == ("z", "y", "x")
        assert ds["t"].sel(x=2.0, y=1.0, z=3.0).item() == cube.fields["t"][2, 1, 3]
        assert "crs" not in ds


def test_missing_extra_is_one_clear_error(tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "rasterio", None)
    monkeypatch.setitem(sys.modules, "xarray", None)
    with pytest.raises(InterpError, match=r"pip install 'interp\[geotiff\]'"):
        plane_grid().save(tmp_path / "g.tif")
    with pytest.raises(InterpError, match=r"pip install 'interp\[xarray\]'"):
        plane_grid().save(tmp_path / "g.nc")


FRAME = [[0, 0], [40, 0], [40, 30], [0, 30], [0, 0]]
HOLE = [[10, 10], [10, 20], [25, 20], [25, 10], [10, 10]]
POLYGON = {"type": "Polygon", "coordinates": [FRAME, HOLE]}


@pytest.mark.parametrize(
    "obj",
    [
        POLYGON,
        {"type": "MultiPolygon", "coordinates": [[FRAME, HOLE]]},
        {"type": "Feature", "properties": {"name": "pad"}, "geometry": POLYGON},
        {
            "type": "FeatureCollection",
            "features": [
                {"type": "Feature", "properties": {}, "geometry": None},
                {"type": "Feature", "properties": {}, "geometry": POLYGON},
            ],
        },
    ],
)
def test_geojson_polygon_against_shapely(tmp_path, obj):
    path = tmp_path / "pad.geojson"
    path.write_text(json.dumps(obj))
    rings = interp.read_polygon(path)
    # shapely's shape() reads the same GeoJSON geometry
    geometry = obj.get("geometry") or (obj.get("features") or [{}])[-1].get("geometry") or obj
    ref = shapely.geometry.shape(geometry)
    ref = ref.geoms[0] if ref.geom_type == "MultiPolygon" else ref
    assert np.array_equal(rings[0], np.asarray(ref.exterior.coords)[:-1])
    assert np.array_equal(rings[1], np.asarray(ref.interiors[0].coords)[:-1])
    assert interp.Polygon(rings[0], holes=rings[1:]).area == ref.area == 1050.0


def test_geojson_polygon_with_altitudes_and_json_suffix(tmp_path):
    path = tmp_path / "pad.json"
    ring = [[x, y, 12.5] for x, y in FRAME]
    path.write_text(json.dumps({"type": "Polygon", "coordinates": [ring]}))
    assert np.array_equal(read_geojson_polygon(path)[0], np.array(FRAME[:-1], dtype=float))


@pytest.mark.parametrize(
    ("obj", "message"),
    [
        ({"type": "LineString", "coordinates": FRAME}, "is a LineString, not a Polygon"),
        ({"type": "MultiPolygon", "coordinates": [[FRAME], [HOLE]]}, "holds 2 polygons"),
        ({"type": "FeatureCollection", "features": []}, "holds 0 polygons"),
        ({"type": "Polygon", "coordinates": [FRAME[:-1]]}, "not closed"),
        ({"type": "Polygon", "coordinates": [[["a", 0], [1, 0], [0, 1], ["a", 0]]]}, "numbers"),
        ({"type": "Polygon", "coordinates": [[0, 0, 1, 1]]}, "list of positions"),
        ({"type": "Polygon", "coordinates": []}, "no rings"),
        ({"coordinates": []}, "not a GeoJSON object"),
        # features and the polygons of a MultiPolygon count from 1, like every number
        (
            {
                "type": "FeatureCollection",
                "features": [
                    {"type": "Feature", "geometry": None},
                    {"type": "Feature", "geometry": {"type": "LineString", "coordinates": FRAME}},
                ],
            },
            "feature 2 is a LineString",
        ),
        (
            {"type": "MultiPolygon", "coordinates": [[FRAME[:-1]]]},
            r"polygon 1 exterior: the ring is not closed",
        ),
    ],
)
def test_geojson_errors(tmp_path, obj, message):
    path = tmp_path / "bad.geojson"
    path.write_text(json.dumps(obj))
    with pytest.raises(InterpError, match=message):
        read_geojson_polygon(path)


def test_geojson_not_json(tmp_path):
    path = tmp_path / "bad.geojson"
    path.write_text("x,y\n0,0\n")
    with pytest.raises(InterpError, match="not a JSON file"):
        interp.read_polygon(path)


def cli(*args):
    """Run the command line in this process; its exit status."""
    return main([str(a) for a in args])


def test_cli_las_to_geotiff(tmp_path, capsys):
    # ground (class 2) on the plane z = 0.5 x' - 0.25 y' + 10 (x', y' from the cloud's
    # corner), stored exactly in centimetres; noise (class 7) 50 m above.  A P1 surface
    # reproduces a plane exactly (common practice), so every pixel centre that rasterio
    # reports must carry the plane's value there.
    rng = np.random.default_rng(3)
    raw = np.column_stack([rng.integers(0, 1000, 600) * 20, rng.integers(0, 250, 600) * 40])
    raw = np.vstack([[[0, 0], [20_000, 0], [0, 10_000], [20_000, 10_000]], raw])
    z = raw[:, 0] // 20 - raw[:, 1] // 40 + 1000  # centimetres
    classes = np.where(np.arange(len(raw)) % 5 == 4, 7, 2)
    z[classes == 7] += 5000
    write_cloud(tmp_path / "cloud.laz", np.column_stack([raw, z]), classes, crs="EPSG:32633")
    out = tmp_path / "dem.tif"
    cloud = tmp_path / "cloud.laz"
    assert cli("grid", cloud, "--classes", 2, "--spacing", 0.5, "--field", "z", "-o", out) == 0
    assert "CRS stored" in capsys.readouterr().out
    with rasterio.open(out) as src:
        assert src.crs.to_epsg() == 32633
        values = src.read(1)
        rows, cols = np.mgrid[0 : src.height, 0 : src.width]
        px, py = rasterio.transform.xy(src.transform, rows.ravel(), cols.ravel())
    plane = 0.5 * (np.asarray(px) - OFFSETS[0]) - 0.25 * (np.asarray(py) - OFFSETS[1]) + 10
    assert values.shape == (21, 41)
    assert np.allclose(values.ravel(), plane, rtol=0, atol=1e-9)
    with pytest.raises(SystemExit) as usage:
        cli("grid", cloud, "--every", 0, "--spacing", 1, "-o", out)
    assert usage.value.code == 2


def test_cli_crs_option_and_geojson_region(tmp_path, capsys):
    rows = [f"{x},{y},{x + 2 * y}" for x in range(0, 41, 5) for y in range(0, 31, 5)]
    (tmp_path / "s.csv").write_text("x,y,z\n" + "\n".join(rows) + "\n")
    (tmp_path / "pad.geojson").write_text(json.dumps(POLYGON))
    rings = [f"{x},{y},0" for x, y in FRAME[:-1]] + [f"{x},{y},1" for x, y in HOLE[:-1]]
    (tmp_path / "pad.csv").write_text("x,y,ring\n" + "\n".join(rings) + "\n")
    results = []
    for region in ("pad.geojson", "pad.csv"):
        assert cli("integrate", tmp_path / "s.csv", "--region", tmp_path / region, "--json") == 0
        results.append(json.loads(capsys.readouterr().out))
    assert results[0] == results[1]
    # z = x + 2y over [0,40]x[0,30] less the hole [10,25]x[10,20], by hand:
    # (24000 + 36000) - (2625 + 4500) = 52875 over an area of 1200 - 150 = 1050
    assert results[0]["z"]["measure"] == pytest.approx(1050.0, rel=1e-12)
    assert results[0]["z"]["integral"] == pytest.approx(52875.0, rel=1e-12)
    out = tmp_path / "g.nc"
    assert cli("grid", tmp_path / "s.csv", "--spacing", 5, "--crs", "EPSG:2056", "-o", out) == 0
    with xarray.open_dataset(out) as ds:
        assert pyproj.CRS.from_cf(ds["crs"].attrs).to_epsg() == 2056
    out = tmp_path / "g.npz"
    assert cli("grid", tmp_path / "s.csv", "--spacing", 5, "--crs", "EPSG:2056", "-o", out) == 0
    assert "do not store a coordinate reference system" in capsys.readouterr().err
    assert cli("crossval", tmp_path / "s.csv", "--every", 2) == 1
    refusal = "--every, --lowest-per-cell) apply to LAS/LAZ point clouds only"
    assert refusal in capsys.readouterr().err
