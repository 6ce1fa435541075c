"""First-look figures (``inspect --plots``): valid, non-trivial PNGs, weighted totals, 1/r².

PNG layout (signature, IHDR width/height) from the PNG specification (ISO/IEC 15948:2004,
§5.2 and §11.2.2). Orbit check: the Earth–Sun distance varies between a(1 − e) and a(1 + e)
with e = 0.0167 (Astronomical Almanac, "low-precision formulas for the Sun"; from memory), so
the 1/r² rate at perihelion over aphelion is ((1 + e)/(1 − e))² ≈ 1.069.
"""

from __future__ import annotations

import struct
import sys
from pathlib import Path

import numpy as np
import pytest
from conftest import make_config

from generator.cli import main
from generator.io import EventFile, read_events
from generator.pipeline import generate
from generator.plots import _accumulate, annual_expectation

mpl_image = pytest.importorskip("matplotlib.image")

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # ISO/IEC 15948 §5.2
DAY = 86400.0
T0 = 1_924_992_000.0  # 2031-01-01T00:00:00Z


@pytest.fixture(scope="session")
def plot_file(tmp_path_factory) -> Path:
    cfg = make_config({
        "interaction": {"threshold_mev": 0.5},
        "run": {"chunk_size": 1500},
    })
    out = tmp_path_factory.mktemp("plots") / "events.h5"
    generate(cfg, out, n_events=4000, seed=31)
    return out


@pytest.fixture(scope="session")
def rendered(plot_file, tmp_path_factory) -> Path:
    outdir = tmp_path_factory.mktemp("figs") / "figures"
    assert main(["inspect", str(plot_file), "--plots", str(outdir)]) == 0
    return outdir


def test_every_figure_is_a_valid_nontrivial_png(rendered, plot_file):
    with EventFile(plot_file) as ev:
        has_reco = "reco_energy" in ev.fields
    expected = {"spectrum_true.png", "cos_sun.png", "annual_rate.png", "day_night.png",
                "p_ee.png"} | ({"spectrum_reco.png"} if has_reco else set())
    assert {p.name for p in rendered.iterdir()} == expected
    for png in rendered.iterdir():
        raw = png.read_bytes()
        assert raw[:8] == PNG_SIGNATURE, png.name
        assert raw[12:16] == b"IHDR"  # first chunk (§11.2.2)
        width, height = struct.unpack(">II", raw[16:24])
        assert width >= 500 and height >= 350, (png.name, width, height)
        assert len(raw) > 15_000, png.name
        img = mpl_image.imread(png)
        assert img.shape[:2] == (height, width)
        colours = np.unique(img.reshape(-1, img.shape[-1])[::7], axis=0)
        assert len(colours) > 20, png.name  # not blank: text, axes, data in several colours


def test_histograms_are_weighted_and_complete(plot_file):
    t = read_events(plot_file, ["weight", "e_kinetic"])
    with EventFile(plot_file) as ev:
        d = _accumulate(ev)
    total = t["weight"].sum()
    for key in ("e_origin", "e_flavour", "cos", "time"):
        assert d[key].total()[0].sum() == pytest.approx(total, rel=1e-12), key
    night_day = d["dn"].total()[0].sum()
    assert night_day == pytest.approx(total, rel=1e-12)


def test_annual_expectation_live_time_and_orbit():
    # two live periods with a gap; bins of one day over the year
    intervals = np.array([[T0, T0 + 100 * DAY], [T0 + 150.5 * DAY, T0 + 365 * DAY]])
    edges = T0 + DAY * np.arange(0, 366)
    live, weighted = annual_expectation(edges, intervals)
    assert live.sum() == pytest.approx(314.5 * DAY, rel=1e-12)
    assert live[120] == 0.0 and live[150] == pytest.approx(0.5 * DAY)
    # perihelion (early January) over aphelion (early July), full live days
    e = 0.0167  # Astronomical Almanac (from memory)
    ratio = weighted[:10].max() / weighted[170:200].min()
    assert ratio == pytest.approx(((1 + e) / (1 - e)) ** 2, rel=2e-3)


def test_plots_errors_exit_2_and_write_nothing(plot_file, tmp_path, capsys, monkeypatch):
    foreign = tmp_path / "notes.h5"
    foreign.write_text("not hdf5")
    out = tmp_path / "figs"
    assert main(["inspect", str(foreign), "--plots", str(out)]) == 2
    assert not out.exists()
    assert main(["inspect", str(plot_file), "--plots", str(tmp_path / "no" / "such")]) == 2
    assert "parent folder does not exist" in capsys.readouterr().err
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # as if the extra were missing
    assert main(["inspect", str(plot_file), "--plots", str(out)]) == 2
    assert "pip install 'sunrecoil[plots]'" in capsys.readouterr().err
    assert not out.exists()
