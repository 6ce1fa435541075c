"""Stopping power, CSDA range, Cherenkov and Birks light, multiple scattering."""

from __future__ import annotations

import numpy as np
import pytest

from generator.media import MEDIA
from generator.response.light import (
    birks_visible_energy,
    cherenkov_photons,
    cherenkov_threshold,
    frank_tamm_per_cm,
)
from generator.response.scattering import (
    highland_theta0,
    radiation_length_g_cm2,
    track_mcs_variance,
)
from generator.response.stopping import (
    K_BETHE,
    collision_stopping_power,
    csda_range,
    total_stopping_power,
)

WATER = MEDIA["water"]
T = np.array([0.1, 1.0, 10.0])

#: NIST ESTAR, liquid water (Berger, Coursey, Zucker & Chang, NIST Standard Reference Database
#: 124; ICRU Report 37): collision stopping power (MeV cm²/g) and CSDA range (g/cm²) at
#: 0.1, 1 and 10 MeV — from memory (the values of the reference note, tagged [M] there; not
#: re-read from the NIST table).
ESTAR_S_COL = np.array([4.115, 1.849, 1.968])
ESTAR_S_TOT = np.array([4.119, 1.862, 2.149])
ESTAR_CSDA = np.array([0.01431, 0.4367, 4.975])


def test_bethe_constant_pdg():
    # PDG RPP notation table: K = 4π N_A r_e² m_e c² = 0.307075 MeV mol⁻¹ cm²
    assert K_BETHE == pytest.approx(0.307075, rel=2e-6)


def test_collision_stopping_power_water_vs_estar():
    np.testing.assert_allclose(collision_stopping_power(T, WATER), ESTAR_S_COL, rtol=0.02)


def test_total_stopping_power_water_vs_estar():
    # the radiative part is a rule of thumb; the total still agrees within 2 %
    np.testing.assert_allclose(total_stopping_power(T, WATER), ESTAR_S_TOT, rtol=0.02)


def test_csda_range_water_vs_estar():
    np.testing.assert_allclose(csda_range(T, WATER), ESTAR_CSDA, rtol=0.02)


def test_positron_stopping_power_differs_as_rohrlich_carlson():
    # F⁺ vs F⁻ (ICRU 37): at 0.1 MeV positrons lose more than electrons in water, at 1 MeV less
    # (reference note [C]: 4.274 and 1.801 MeV cm²/g) — regression values of the same formula
    pos = collision_stopping_power(np.array([0.1, 1.0]), WATER, positron=True)
    np.testing.assert_allclose(pos, [4.274, 1.801], rtol=2e-3)


def test_radiation_length_water_pdg():
    # PDG atomic and nuclear properties: X₀(water) = 36.08 g/cm² (from memory)
    assert radiation_length_g_cm2(WATER) == pytest.approx(36.08, rel=2e-3)


def test_cherenkov_threshold_formula():
    # β n > 1 ⇔ T > m_e (1/√(1 − 1/n²) − 1); n = 1.333 → 261.8 keV (reference note table [C])
    assert cherenkov_threshold(1.333) == pytest.approx(0.2618, abs=2e-4)
    t = cherenkov_threshold(1.34)
    assert frank_tamm_per_cm(np.array([t * 0.999]), 1.34)[0] == 0.0
    assert frank_tamm_per_cm(np.array([t * 1.001]), 1.34)[0] > 0.0


def test_frank_tamm_yield():
    # PDG: d²N/dx dE = (α/ħc) sin²θ_C ≈ 370 sin²θ_C eV⁻¹ cm⁻¹ (≈ 370 is the PDG rounding);
    # 300–600 nm spans 2.0664 eV, so β → 1 at n = 1.34 gives 369.8 × 2.0664 × (1 − 1/n²)
    import scipy.constants as sc

    de_ev = sc.h * sc.c / sc.e * (1 / 300e-9 - 1 / 600e-9)
    expected = sc.alpha / (sc.hbar * sc.c / sc.e * 100) * de_ev * (1 - 1 / 1.34**2)
    assert frank_tamm_per_cm(np.array([1e4]), 1.34)[0] == pytest.approx(expected, rel=1e-6)
    assert expected == pytest.approx(339, abs=1)      # reference note [C]: 339 photons/cm


def test_cherenkov_photons_track_integral():
    # ≈ 170 photons (300–600 nm) per MeV above a few MeV (reference note §1.2, [C])
    n = cherenkov_photons(np.array([5.0, 10.0]), MEDIA["water"])
    assert 140 < (n[1] - n[0]) / 5.0 < 180


def test_birks_identities():
    pc = MEDIA["pc"]
    t = np.array([0.05, 0.5, 3.0])
    # kB = 0: no quenching
    np.testing.assert_allclose(birks_visible_energy(t, pc, 0.0), t, rtol=1e-6)
    # kB dE/dx ≫ 1: E_vis → ∫ dE/(kB dE/dx) = R_col/kB (collision CSDA range in cm)
    kb = 1e3
    r_cm = csda_range(t, pc, collision_only=True) / pc.density_g_cm3
    np.testing.assert_allclose(birks_visible_energy(t, pc, kb), r_cm / kb, rtol=0.01)


def test_birks_quenching_pc_snapshot():
    # regression/snapshot: the reference note's [C] table computed with the same formula
    # (PC, kB = 0.011 cm/MeV): E_vis/T = 0.906, 0.962, 0.972 at 0.1, 0.5, 1 MeV
    t = np.array([0.1, 0.5, 1.0])
    np.testing.assert_allclose(birks_visible_energy(t, MEDIA["pc"], 0.011) / t,
                               [0.906, 0.962, 0.972], atol=2e-3)


def test_highland_pdg_values():
    # PDG Highland formula: p = 1 GeV, β = 1, x = X₀ → 13.6 mrad; x = 0.01 X₀ →
    # 13.6 × 0.1 × (1 + 0.038 ln 0.01) mrad
    np.testing.assert_allclose(highland_theta0(np.array([1000.0, 1000.0]), np.array([1.0, 1.0]),
                                               np.array([1.0, 0.01])),
                               [13.6e-3, 1.36e-3 * (1 + 0.038 * np.log(0.01))], rtol=1e-12)


def test_track_mcs_against_stepwise_simulation():
    # The reference note §1.5 gives a step-wise Rossi–Greisen simulation of the light-weighted
    # direction in water ([C], computed independently of this code): 68 % containment 43°,
    # 39°, 33°, 28° at 3, 5, 10, 15 MeV. Our track-integrated Highland width, read as a
    # von Mises–Fisher with κ = 1/σ², agrees within 10 %.
    t = np.array([3.0, 5.0, 10.0, 15.0])
    kappa = 1.0 / track_mcs_variance(t, WATER)
    theta68 = np.degrees(np.arccos(1.0 + np.log(0.32) / kappa))
    np.testing.assert_allclose(theta68, [43.0, 39.0, 33.0, 28.0], rtol=0.10)
    assert np.all(np.diff(theta68) < 0)
