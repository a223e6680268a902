"""The demo, run as a user runs it: ``interp demo`` on the bundled data."""

import json
import shutil
import subprocess

import numpy as np
import pytest
from matplotlib.image import imread

EXE = shutil.which("interp") or pytest.skip(
    "the interp command is not installed", allow_module_level=True
)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    r = subprocess.run(
        [EXE, "demo", "--out", str(out)], capture_output=True, text=True, timeout=600
    )
    assert r.returncode == 0, r.stderr
    return out, r.stdout, json.loads((out / "summary.json").read_text())


def test_stockpile_volumes_match_the_cones(demo):
    # the invented piles are right circular cones on the pad: V = pi r^2 h / 3 (geometry of
    # the cone). The toe ring is shot every 360/48 degrees, so the inscribed polygon loses
    # about 1 - sin(2 pi/48) / (2 pi/48) = 0.3% of the base area; with survey noise of 1 cm
    # the net volume should land within 1% of the cone volume.
    _, _, summary = demo
    for epoch, v in summary["volumes"].items():
        assert abs(v["net"] - v["true"]) / v["true"] < 0.01, (epoch, v)
        assert v["net"] == pytest.approx(v["above"] - v["below"], rel=1e-12)


def test_change_between_epochs(demo):
    _, _, summary = demo
    v = summary["volumes"]
    expected = v["2026_06"]["true"] - v["2026_03"]["true"]
    assert abs(summary["change"]["net"] - expected) / expected < 0.02


def test_bay_pile_volume_is_exact_with_breaklines(demo):
    # the bay's pile is a frustum of a square pyramid on a flat slab (toe side a, crest
    # side b, height h). Prismoidal formula V = h / 6 (A1 + 4 Am + A2), exact for prismoids
    # (J. Uren and W. F. Price, Surveying for Engineers, the chapter on earthwork volumes;
    # quoted from memory); the frustum formula V = h / 3 (A1 + A2 + sqrt(A1 A2)) of
    # mensuration agrees. Its points lie on its plane faces and every edge is a breakline,
    # so the P1 surface is the solid itself and its volume the closed form.
    from interp.demo import DATA

    _, stdout, summary = demo
    pile = json.loads((DATA / "scenario.json").read_text())["bay"]["pile"]
    a, b, h = pile["toe_side"], pile["crest_side"], pile["height"]
    prismoidal = h / 6 * (a * a + 4 * ((a + b) / 2) ** 2 + b * b)
    assert prismoidal == pytest.approx(h / 3 * (a * a + b * b + a * b), rel=1e-15)
    bay = summary["bay"]
    assert bay["closed_form"] == pytest.approx(prismoidal, rel=1e-15)
    assert bay["with_breaklines"] == pytest.approx(prismoidal, rel=1e-9)
    # without them the surface cuts across the toe, crest and hips and smears the wall's
    # step over the slab; measured 2026-12-03: 341.811 m3, +2.03%
    error = (bay["without_breaklines"] - prismoidal) / prismoidal
    assert 0.01 < error < 0.1
    assert f"without {bay['without_breaklines']:.3f} m3 ({100 * error:+.2f}%)" in stdout


def test_bracket_mean_temperature_is_exact(demo):
    # the temperature is quadratic, so the P2 mesh carries it exactly and its mean is the
    # closed-form mean written by scripts/make_demo_data.py
    _, _, summary = demo
    b = summary["bracket"]
    assert b["mean_temperature"] == pytest.approx(b["exact_mean_temperature"], rel=1e-10)
    assert b["volume"] == pytest.approx(0.06 * 0.06 * 0.04 + 0.06 * 0.06 * 0.02, rel=1e-12)


def test_residuals_reflect_survey_noise(demo):
    # the survey noise is 1 cm; leave-one-out residuals on a smooth pad and cone surface
    # must be of that order, not of the pile height
    _, _, summary = demo
    assert 0.005 < summary["crossvalidation"]["rms"] < 0.1


def test_outputs_and_pictures(demo):
    out, stdout, _ = demo
    assert "licensed practice" in stdout
    grid = np.load(out / "yard_2026_06_grid.npz")
    assert grid["z_2026_06"].shape == (len(grid["x"]), len(grid["y"]))
    lines = (out / "checkpoints_2026_06.csv").read_text().splitlines()
    assert lines[0] == "name,x,y,z_2026_06" and len(lines) == 6
    for name in (
        "yard_2026_06",
        "change_march_june",
        "section",
        "residuals_2026_06",
        "bracket_temperature",
        "north_bay",
    ):
        png = out / f"{name}.png"
        img = imread(png)
        assert img.shape[0] > 200 and img.std() > 0.02, name


@pytest.mark.filterwarnings("ignore:.*skipped the text column")
def test_demo_without_offscreen_rendering_still_reports(tmp_path, monkeypatch):
    # a server without EGL or OSMesa: the viewer refuses to draw, and the demo writes its
    # figures and files anyway, saying why the pictures are missing
    from interp import demo as demo_module
    from interp.errors import RenderingUnavailable
    from interp.view import _surfaces

    def refuse(*args, **kwargs):
        raise RenderingUnavailable("no off-screen OpenGL is available (test)")

    monkeypatch.setattr(_surfaces, "new_plotter", refuse)
    summary = demo_module.run(tmp_path)
    assert summary.figures["pictures"] == "skipped: no off-screen OpenGL is available (test)"
    assert "pictures skipped: no off-screen OpenGL" in summary.text()
    assert json.loads((tmp_path / "summary.json").read_text()) == summary.figures
    assert not list(tmp_path.glob("*.png"))
