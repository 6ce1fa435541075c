"""Demo detectors sit at fictional sites: none within 50 km of a real underground laboratory,
and the size in each demo name matches its fiducial mass."""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path

import pytest

from generator.config import load_config
from generator.geometry import make_fiducial
from generator.media import get_medium

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = [None, *sorted((ROOT / "configs").glob("*.toml")),
           *sorted((ROOT / "examples").glob("*.toml"))]
EXCLUSION_KM = 50.0
EARTH_RADIUS_KM = 6371.0  # mean radius (IUGG), adequate at the 50 km scale


def _labs() -> list[tuple[str, float, float]]:
    path = ROOT / "tests" / "data" / "underground_laboratories.csv"
    rows = [ln for ln in path.read_text("utf-8").splitlines() if ln and not ln.startswith("#")]
    return [(r["name"], float(r["latitude_deg"]), float(r["longitude_deg"]))
            for r in csv.DictReader(rows)]


def _distance_km(lat1, lon1, lat2, lon2) -> float:
    """Great-circle distance on a sphere (haversine formula)."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dp, dl = p2 - p1, math.radians(lon2 - lon1)
    a = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * EARTH_RADIUS_KM * math.asin(math.sqrt(a))


def test_distance_formula_reference():
    """One degree of latitude is 111.19 km on a 6371 km sphere (2πR/360)."""
    assert _distance_km(0, 0, 1, 0) == pytest.approx(2 * math.pi * EARTH_RADIUS_KM / 360)


@pytest.mark.parametrize("path", CONFIGS, ids=lambda p: "default" if p is None else p.name)
def test_demo_site_is_not_a_real_laboratory(path):
    det = load_config(path).detector
    for name, lat, lon in _labs():
        d = _distance_km(det.latitude_deg, det.longitude_deg, lat, lon)
        assert d > EXCLUSION_KM, f"{det.name} is {d:.0f} km from {name}"


@pytest.mark.parametrize("path", CONFIGS, ids=lambda p: "default" if p is None else p.name)
def test_size_in_the_name_matches_the_fiducial_mass(path):
    det = load_config(path).detector
    m = re.search(r"(\d+(?:\.\d+)?)\s*kt", det.name)
    if m is None:
        pytest.skip("no size in the name")
    fid = make_fiducial(det.fiducial_shape, det.fiducial_radius_m, det.fiducial_half_height_m)
    kt = fid.volume_cm3 * get_medium(det.medium).density_g_cm3 / 1e9
    assert kt == pytest.approx(float(m.group(1)), rel=0.01), (det.name, kt)
