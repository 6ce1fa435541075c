"""Tests of generator.solar_model: electron density and radial production distributions."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from generator import solar_model as sm
from generator.errors import ConfigError


def test_central_electron_density_matches_ssm_centre():
    # SSM central values ρ_c ≈ 150 g/cm³, X_c ≈ 0.35 (BP2000/BS05, from memory) give
    # n_e(0) = ρ_c (1 + X_c)/2 ≈ 101 N_A cm⁻³ ("≈ 100 N_A cm⁻³", from memory).
    ne0 = float(sm.electron_density(0.0))
    assert ne0 == pytest.approx(150.0 * 1.35 / 2.0, rel=1e-6)
    assert ne0 == pytest.approx(100.0, rel=0.05)
    assert float(sm.mass_density(0.0)) == pytest.approx(150.0, rel=1e-9)
    assert float(sm.hydrogen_fraction(0.0)) == pytest.approx(0.35, abs=1e-12)


def test_exponential_profile_and_core_overestimate():
    # Bahcall, Neutrino Astrophysics (1989): n_e = 245 N_A exp(-10.54 r/R) (from memory);
    # it overestimates the centre by ≈ 2.4× (brief / sources.md §3.2, from memory).
    assert float(sm.electron_density(0.0, "exponential")) == pytest.approx(245.0)
    assert float(sm.electron_density(0.5, "exponential")) == pytest.approx(245 * np.exp(-5.27))
    ratio = float(sm.electron_density(0.0, "exponential") / sm.electron_density(0.0, "ssm"))
    assert ratio == pytest.approx(2.42, abs=0.1)


def test_core_model_joins_exponential_outside_core():
    # Outside the core (0.3–0.9 R⊙) the model must follow the Bahcall (1989) exponential
    # (valid there, from memory) to within 4 %.
    x = np.linspace(0.3, 0.9, 13)
    r = sm.electron_density(x, "ssm") / sm.electron_density(x, "exponential")
    assert np.all(np.abs(r - 1.0) < 0.04), r


def test_density_monotonic_and_flat_at_centre():
    x = np.linspace(0.0, 1.0, 2001)
    ne = sm.electron_density(x)
    assert np.all(np.diff(ne) < 0)
    # zero slope at the centre (hydrostatic equilibrium): |d ln n_e/dx| over the first
    # 0.0005 R⊙ is < 0.5 per R⊙ (the exponential fit has 10.54; common practice, no source)
    assert abs(np.log(ne[1] / ne[0])) / (x[1] - x[0]) < 0.5


@pytest.mark.parametrize("source", sm.SOURCES)
def test_production_pdf_normalised(source):
    x = np.linspace(0.0, 0.5, 20001)
    f = sm.production_pdf(source, x)
    assert np.all(f >= 0)
    assert np.trapezoid(f, x) == pytest.approx(1.0, abs=1e-4)
    _, w = sm.production_quadrature(source)
    assert w.sum() == pytest.approx(1.0, abs=1e-12)


# Most-probable radius ranges (r/R⊙) read from SSM production tables — sources.md §3.1,
# Bahcall (1989) Fig./Table "production of neutrinos as a function of radius", from memory.
# Tolerance ±0.01 R⊙ on the rough published ranges.
PEAKS = {
    "pp": (0.09, 0.10),
    "pep": (0.08, 0.09),
    "hep": (0.12, 0.15),
    "7Be": (0.06, 0.06),
    "8B": (0.045, 0.05),
    "13N": (0.05, 0.05),
    "15O": (0.05, 0.05),
    "17F": (0.05, 0.05),
}


@pytest.mark.parametrize("source", sm.SOURCES)
def test_most_probable_radius(source):
    x, w = sm.production_quadrature(source)
    peak = x[np.argmax(w)]
    lo, hi = PEAKS[source]
    assert lo - 0.01 <= peak <= hi + 0.01, (source, peak)


def test_containment_radii():
    # "most flux inside": ⁸B ≲ 0.10, ⁷Be ≲ 0.15, pp ≲ 0.25–0.3 R⊙ (sources.md §3.1, from memory);
    # "most" taken as 90 %.
    for source, rmax in (("8B", 0.10), ("7Be", 0.15), ("pp", 0.30)):
        x, w = sm.production_quadrature(source)
        assert x[np.searchsorted(np.cumsum(w), 0.9)] < rmax, source


def test_sampled_radii_follow_distribution():
    rng = np.random.default_rng(20240601)
    r = sm.sample_production_radius("8B", 20000, rng)
    x, w = sm.production_quadrature("8B")
    dx = x[1] - x[0]
    edges = np.concatenate([x - dx / 2, [x[-1] + dx / 2]])
    cdf = np.concatenate([[0.0], np.cumsum(w)])

    def model_cdf(v):
        return np.interp(v, edges, cdf)

    # KS against the tabulated CDF; p > 1e-3 (a correct sampler fails 0.1 % of seeds).
    assert stats.kstest(r, model_cdf).pvalue > 1e-3
    again = sm.sample_production_radius("8B", 20000, np.random.default_rng(20240601))
    np.testing.assert_array_equal(r, again)


def test_bad_inputs():
    with pytest.raises(ConfigError, match="solar_profile"):
        sm.electron_density(0.1, "polytrope")
    with pytest.raises(ConfigError, match="source"):
        sm.production_quadrature("7Li")
