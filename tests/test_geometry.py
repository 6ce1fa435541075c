"""Fiducial shapes (cylinder, sphere, box) and vessels."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import make_config
from scipy import stats

from generator.errors import ConfigError
from generator.geometry import make_fiducial, make_vessel


def test_box_volume_and_uniform_vertices():
    """Box volume 8 hx hy hz (geometry); vertices uniform per axis (KS p > 1e-3, seeded)."""
    fid = make_fiducial("box", 0.0, 0.0, (1.0, 2.0, 3.0))
    assert fid.volume_cm3 == pytest.approx(8 * 100.0 * 200.0 * 300.0)
    xyz = fid.sample(np.random.default_rng(1), 20_000)
    for i, h in enumerate((1000.0, 2000.0, 3000.0)):
        assert stats.kstest(xyz[:, i], "uniform", args=(-h, 2 * h)).pvalue > 1e-3


def test_box_from_config_and_errors():
    cfg = make_config({"detector": {"fiducial_shape": "box",
                                    "fiducial_half_lengths_m": [5.0, 5.0, 10.0]}})
    assert cfg.detector.fiducial_half_lengths_m == (5.0, 5.0, 10.0)
    with pytest.raises(ConfigError, match=r"detector\.fiducial_half_lengths_m"):
        make_config({"detector": {"fiducial_shape": "box"}})
    with pytest.raises(ConfigError, match=r"detector\.fiducial_half_lengths_m\[1\]"):
        make_config({"detector": {"fiducial_shape": "box",
                                  "fiducial_half_lengths_m": [5.0, -1.0, 10.0]}})


def test_vessel_depth_and_containment():
    fid = make_fiducial("sphere", 6.0, 0.0)
    v = make_vessel(fid, 7.0, None, "backgrounds.vessel")
    assert v.min_depth(fid) == pytest.approx(1000.0)
    np.testing.assert_allclose(v.depth(np.array([[0.0, 0.0, 6500.0]])), [500.0])
    with pytest.raises(ConfigError, match="outside the vessel"):
        make_vessel(fid, 5.0, None, "backgrounds.vessel")
    box = make_fiducial("box", 0.0, 0.0, (3.0, 4.0, 2.0))      # half-diagonal in xy: 5 m
    with pytest.raises(ConfigError, match="outside the vessel"):
        make_vessel(box, 4.9, 3.0, "backgrounds.vessel")
    cyl = make_vessel(box, 5.5, 3.0, "backgrounds.vessel")
    assert cyl.min_depth(box) == pytest.approx(500.0)
