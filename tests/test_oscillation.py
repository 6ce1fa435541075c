"""Tests of generator.oscillation: parameters, solar MSW, vacuum split and FlavourModel."""

from __future__ import annotations

import numpy as np
import pytest
from msw_reference import reduced_cos2_theta12, reduced_fractions
from scipy.integrate import solve_ivp

from generator import earth, solar_model
from generator.constants import MATTER_POTENTIAL_EV_PER_NA, R_SUN_KM
from generator.errors import ConfigError
from generator.oscillation import (
    PRESETS,
    FlavourModel,
    OscillationParams,
    get_preset,
    pmns_matrix,
    sun_mass_fractions,
    vacuum_flavour_probs,
)

# Parameters of the oscillation.md §2.3/§2.7 check tables: the nufit-6.0 preset (NO without
# the external atmospheric χ²; provenance in generator/oscillation.py).
REF = OscillationParams(0.307, 0.02195, 0.561, 177.0, 7.49e-5, 2.534e-3)


# ----------------------------------------------------------------------------- parameters
@pytest.mark.parametrize(
    "field,value",
    [
        ("sin2_theta12", -0.1),
        ("sin2_theta12", 1.5),
        ("sin2_theta13", float("nan")),
        ("sin2_theta23", float("inf")),
        ("dm2_21", 0.0),
        ("dm2_21", -7e-5),
        ("dm2_31", 0.0),
        ("delta_cp_deg", float("nan")),
    ],
)
def test_params_validation(field, value):
    kw = dict(
        sin2_theta12=0.3,
        sin2_theta13=0.02,
        sin2_theta23=0.5,
        delta_cp_deg=0.0,
        dm2_21=7.5e-5,
        dm2_31=2.5e-3,
    )
    kw[field] = value
    with pytest.raises(ConfigError, match=field):
        OscillationParams(**kw)


def test_inverted_ordering_allowed_and_presets():
    OscillationParams(0.3, 0.02, 0.5, 270.0, 7.5e-5, -2.5e-3)
    assert set(PRESETS) >= {"nufit-6.0", "pdglive-pre2024"}
    assert get_preset("nufit-6.0") is PRESETS["nufit-6.0"]
    with pytest.raises(ConfigError, match="preset"):
        get_preset("nufit-0.1")
    with pytest.raises(ConfigError, match="renamed 'pdglive-pre2024'"):
        get_preset("pdg-2024")


def test_preset_values_against_their_sources():
    # NuFIT 6.0, NO without the external atmospheric χ² (arXiv:2410.05380), as quoted by
    # independent public codes (secondary sources; see PRESETS): θ12 33.68°, θ13 8.52°,
    # θ23 48.5°, δ 177°, Δm²21 7.49e-5 eV², Δm²31 +2.534e-3 eV²; angles printed to 0.01°/0.1°.
    nf = PRESETS["nufit-6.0"]
    # the angle, rounded as printed, and the sin² value, rounded as printed, must overlap
    for s2, s2_step, deg, deg_step in [(nf.sin2_theta12, 1e-3, 33.68, 0.01),
                                       (nf.sin2_theta13, 1e-5, 8.52, 0.01),
                                       (nf.sin2_theta23, 1e-3, 48.5, 0.1)]:
        lo, hi = np.sin(np.radians([deg - deg_step / 2, deg + deg_step / 2])) ** 2
        assert lo <= s2 + s2_step / 2 and hi >= s2 - s2_step / 2
    assert (nf.delta_cp_deg, nf.dm2_21, nf.dm2_31) == (177.0, 7.49e-5, 2.534e-3)
    # pdgLive listings (S067, S067DM1, S067DEL; S067P13/S067P23 as quoted in the reference
    # note): sin²θ12 0.307, Δm²21 7.53e-5, sin²θ13 0.0219, sin²θ23 0.547 (NO),
    # Δm²32 2.437e-3 eV² (NO), δ 1.36π.
    pl = PRESETS["pdglive-pre2024"]
    assert (pl.sin2_theta12, pl.sin2_theta13, pl.sin2_theta23) == (0.307, 0.0219, 0.547)
    assert pl.delta_cp_deg == pytest.approx(1.36 * 180.0)
    assert pl.dm2_21 == 7.53e-5 and pl.dm2_31 - pl.dm2_21 == pytest.approx(2.437e-3, rel=1e-12)


def test_bad_model_inputs(tmp_path):
    with pytest.raises(ConfigError, match="solar_profile"):
        FlavourModel(
            REF, ["8B"], latitude_deg=40, depth_m=100, solar_profile="flat", cache_dir=tmp_path
        )
    with pytest.raises(ConfigError, match="source"):
        FlavourModel(REF, ["8Li"], latitude_deg=40, depth_m=100, cache_dir=tmp_path)
    with pytest.raises(ConfigError, match="latitude"):
        FlavourModel(REF, ["8B"], latitude_deg=95, depth_m=100, cache_dir=tmp_path)


# ------------------------------------------------------------------------------- PMNS
def test_pmns_unitary_and_moduli():
    u = pmns_matrix(REF)
    np.testing.assert_allclose(u @ u.conj().T, np.eye(3), atol=1e-14)
    s12, s13, s23 = REF.sin2_theta12, REF.sin2_theta13, REF.sin2_theta23
    c12, c13, c23 = 1 - s12, 1 - s13, 1 - s23
    cd = np.cos(np.deg2rad(REF.delta_cp_deg))
    x = 2 * np.sqrt(s12 * c12 * s23 * c23 * s13) * cd
    # |U_αi|² in the PDG parametrisation (PDG Review "Neutrino mixing"; oscillation.md §2.7)
    expect = np.array(
        [
            [c12 * c13, s12 * c13, s13],
            [s12 * c23 + c12 * s23 * s13 + x, c12 * c23 + s12 * s23 * s13 - x, s23 * c13],
            [s12 * s23 + c12 * c23 * s13 - x, c12 * s23 + s12 * c23 * s13 + x, c23 * c13],
        ]
    )
    np.testing.assert_allclose(np.abs(u) ** 2, expect, atol=1e-14)


# --------------------------------------------------- reduced MSW (comparison formula only)
# oscillation.md §2.3 table [D]: standard adiabatic formula (Parke, PRL 57, 1275 (1986),
# P_c = 0) with the 3ν reduction P_ee = c13⁴ P_2ν + s13⁴ (Kuo & Pantaleone, RMP 61, 937
# (1989)); values given to 3 decimals → tolerance 6e-4.  This checks the test-only reduced
# formula of tests/msw_reference.py, which the 3ν tests (test_solar_3nu.py) compare with.
TABLE_23 = [
    (100, 0.300, 0.333, 0.564, 0.540),
    (100, 0.862, 0.226, 0.544, 0.521),
    (100, 1.440, 0.107, 0.521, 0.499),
    (100, 5.0, -0.552, 0.394, 0.377),
    (100, 10.0, -0.867, 0.333, 0.319),
    (80, 0.862, 0.260, 0.550, 0.527),
    (80, 10.0, -0.795, 0.347, 0.332),
    (60, 10.0, -0.660, 0.373, 0.357),
]


@pytest.mark.parametrize("ne,e,c2m,p2,p3", TABLE_23)
def test_adiabatic_table(ne, e, c2m, p2, p3):
    c = float(reduced_cos2_theta12(e, ne, REF))
    assert c == pytest.approx(c2m, abs=6e-4)
    p2nu = 0.5 + 0.5 * c * (1 - 2 * REF.sin2_theta12)
    assert p2nu == pytest.approx(p2, abs=6e-4)
    frac = reduced_fractions(e, ne, REF)[None, :]
    assert vacuum_flavour_probs(frac, REF)[0, 0] == pytest.approx(p3, abs=6e-4)


def test_low_energy_limit():
    s12, s13 = REF.sin2_theta12, REF.sin2_theta13
    sin2_2t = 4 * s12 * (1 - s12)
    # vacuum-averaged limit c13⁴(1 − ½ sin²2θ12) + s13⁴ (oscillation.md §2.3, = 0.550)
    low = vacuum_flavour_probs(sun_mass_fractions([1e-4], "pp", REF), REF)[0, 0]
    assert low == pytest.approx((1 - s13) ** 2 * (1 - 0.5 * sin2_2t) + s13**2, abs=1e-4)
    assert low == pytest.approx(0.550, abs=1e-3)
    # (high-density limits of the full 3ν fractions: test_solar_3nu.py)


def _numerical_pee(energy, x0, p, profile="ssm"):
    """Integrate the 2ν (c13² V) Schrödinger equation with DOP853 from x0 outward.

    Integration runs until β = V/ω < 0.1 (and at least 0.005 R⊙); beyond that the evolution
    has no level crossing; the state is projected on the local matter eigenstates, whose
    populations are conserved from there on.
    """
    c13sq = 1 - p.sin2_theta13
    omega = p.dm2_21 / (2 * energy * 1e6) * earth.EV_TO_INV_KM
    kv = c13sq * MATTER_POTENTIAL_EV_PER_NA * earth.EV_TO_INV_KM
    c2, s2 = 1 - 2 * p.sin2_theta12, 2 * np.sqrt(p.sin2_theta12 * (1 - p.sin2_theta12))

    def v_of(r_km):
        return kv * solar_model.electron_density(r_km / R_SUN_KM, profile)

    xs = np.linspace(x0, 1.0, 20001)
    beta = kv * solar_model.electron_density(xs, profile) / omega
    x_end = xs[np.argmax(beta < 0.1)] if np.any(beta < 0.1) else 1.0
    x_end = min(1.0, max(x_end, x0 + 0.005))

    def rhs(r, y):
        v = v_of(r)
        h11 = 0.5 * (v - omega * c2)
        h12 = 0.5 * omega * s2
        return -1j * np.array([h11 * y[0] + h12 * y[1], h12 * y[0] - h11 * y[1]])

    sol = solve_ivp(
        rhs,
        (x0 * R_SUN_KM, x_end * R_SUN_KM),
        np.array([1 + 0j, 0j]),
        method="DOP853",
        rtol=1e-9,
        atol=1e-11,
    )
    psi = sol.y[:, -1]
    c2m = float(reduced_cos2_theta12(energy, v_of(x_end * R_SUN_KM) / kv, p))
    cm, sm_ = np.sqrt((1 + c2m) / 2), np.sqrt((1 - c2m) / 2)
    p1 = abs(cm * psi[0] - sm_ * psi[1]) ** 2
    p2nu = p1 * (1 - p.sin2_theta12) + (1 - p1) * p.sin2_theta12
    return c13sq**2 * p2nu + p.sin2_theta13**2


@pytest.mark.slow
@pytest.mark.parametrize("energy", [0.1, 1.0, 5.0, 10.0, 20.0])
def test_adiabatic_vs_numerical_integration(energy):
    # Reduced (2ν, c13² V) treatment through the whole path and the 1–2 resonance: adiabatic
    # P_ee within 2e-3 of DOP853, 0.1–20 MeV; published non-adiabatic corrections for LMA are
    # 1e-9–1e-7 (de Holanda, Liao & Smirnov 2004).  The tolerance is loose because the
    # tabulated profile's printed log10 n_e (3 decimals) makes the interpolated slope jump at
    # every zone (see test_solar_3nu.py).  The generator's full 3ν fractions are checked
    # against a 3×3 integration in test_solar_3nu.py.
    x0 = 0.05
    num = _numerical_pee(energy, x0, REF)
    c = float(reduced_cos2_theta12(energy, solar_model.electron_density(x0), REF))
    c13sq = 1 - REF.sin2_theta13
    ad = c13sq**2 * (0.5 + 0.5 * c * (1 - 2 * REF.sin2_theta12)) + REF.sin2_theta13**2
    assert num == pytest.approx(ad, abs=2e-3)


# -------------------------------------------------------------------- μ/τ split (§2.7)
@pytest.mark.parametrize(
    "s23,delta,pee,pem,pet",
    [
        (0.561, 177.0, 0.3243, 0.3555, 0.3201),
        (0.470, 212.0, 0.3243, 0.4037, 0.2720),
        (0.500, 0.0, 0.3243, 0.2819, 0.3937),
        (0.500, 180.0, 0.3243, 0.3937, 0.2819),
    ],
)
def test_mu_tau_split(s23, delta, pee, pem, pet):
    # oscillation.md §2.7 table [D] (P_α = Σ P_ei |U_αi|², PDG parametrisation); 4 decimals.
    p = OscillationParams(0.307, 0.02195, s23, delta, 7.49e-5, 2.534e-3)
    got = vacuum_flavour_probs(np.array([[0.080, 0.898, 0.022]]), p)[0]
    np.testing.assert_allclose(got, [pee, pem, pet], atol=1.5e-4)


# -------------------------------------------------------------------------- FlavourModel
@pytest.fixture(scope="module")
def model(tmp_path_factory):
    return FlavourModel(
        REF,
        ["8B", "7Be", "pp"],
        latitude_deg=41.0,
        depth_m=1200.0,
        cache_dir=tmp_path_factory.mktemp("flv"),
    )


def test_rows_sum_to_one_and_day_matches_direct(model):
    rng = np.random.default_rng(7)
    e = rng.uniform(0.05, 20.0, 200000)
    c = rng.uniform(-1, 1, e.size)
    p = model.probabilities("8B", e, c)
    assert np.max(np.abs(p.sum(axis=1) - 1)) < 1e-10
    assert np.all(p > -1e-12)
    day = c >= 0
    direct = vacuum_flavour_probs(sun_mass_fractions(e[day][:2000], "8B", REF), REF)
    np.testing.assert_allclose(p[day][:2000], direct, atol=2e-5)
    # repeat call → identical (no hidden state, no randomness)
    np.testing.assert_array_equal(p, model.probabilities("8B", e, c))


def test_no_oscillation_and_no_earth(tmp_path):
    m0 = FlavourModel(None, ["8B"], latitude_deg=0.0, depth_m=0.0, cache_dir=tmp_path)
    p = m0.probabilities("8B", np.array([1.0, 10.0]), np.array([-0.5, 0.5]))
    np.testing.assert_array_equal(p, [[1, 0, 0], [1, 0, 0]])
    m1 = FlavourModel(REF, ["8B"], latitude_deg=0.0, depth_m=0.0, earth=False, cache_dir=tmp_path)
    e = np.linspace(1, 15, 50)
    np.testing.assert_allclose(
        m1.probabilities("8B", e, np.full(50, -0.7)),
        m1.probabilities("8B", e, np.full(50, 0.7)),
        atol=1e-14,
    )


def test_night_table_cached(tmp_path, monkeypatch):
    kw = dict(latitude_deg=30.0, depth_m=500.0, e_min=4.0, e_max=8.0, cache_dir=tmp_path)
    a = FlavourModel(REF, ["8B"], **kw)
    assert len(list(tmp_path.glob("earth_*.npz"))) == 1

    def boom(*args, **kwargs):
        raise AssertionError("table rebuilt although cached")

    monkeypatch.setattr(earth, "smoothed_transition_table", boom)
    b = FlavourModel(REF, ["8B"], **kw)
    np.testing.assert_array_equal(a.night_table()["p_earth"], b.night_table()["p_earth"])
    with pytest.raises(AssertionError, match="rebuilt"):
        FlavourModel(REF, ["8B"], **{**kw, "depth_m": 600.0})


def test_tables_and_describe(model):
    e, p = model.day_table("8B")
    assert p.shape == (e.size, 3)
    nt = model.night_table()
    assert nt["p_earth"].shape == (nt["energy"].size, nt["cos_zenith"].size, 3, 3)
    np.testing.assert_allclose(nt["p_earth"].sum(axis=-1), 1.0, atol=1e-10)
    d = model.describe()
    assert d["earth"]["y_e_core"] == 0.4656 and d["sun"]["electron_density_profile"] == "ssm"


def test_out_of_range_energy(model):
    with pytest.raises(ConfigError, match="energy"):
        model.probabilities("8B", np.array([25.0]), np.array([0.1]))
    with pytest.raises(ConfigError, match="energy"):
        model.probabilities("8B", np.array([-1.0]), np.array([0.1]))
    # below e_min the e_min value is used (documented clamp)
    low = model.probabilities("pp", np.array([0.0, 0.01, 0.05]), np.array([0.2, -0.3, 0.2]))
    np.testing.assert_allclose(low, np.repeat(low[2:], 3, axis=0), atol=2e-4)


def test_profile_shift_8b_and_7be():
    # README number: P_ee change between the BS05(AGS,OP) table ("ssm") and the exponential.
    # Expect the exponential (2.4× denser centre) to lower ⁸B P_ee at 10 MeV; size ≈ 0.02
    # (brief, from memory) — checked loosely (0.005–0.04).
    pe = {}
    for prof in ("ssm", "exponential"):
        pe[prof] = [
            vacuum_flavour_probs(sun_mass_fractions([e], s, REF, prof), REF)[0, 0]
            for s, e in (("8B", 10.0), ("7Be", 0.862))
        ]
    d8 = pe["ssm"][0] - pe["exponential"][0]
    assert 0.005 < d8 < 0.04
    assert abs(pe["ssm"][1] - pe["exponential"][1]) < 0.02


def test_config_names_the_renamed_preset():
    import tomllib
    from pathlib import Path

    from generator.config import default_config_text, parse_config

    data = tomllib.loads(default_config_text())
    data["oscillation"]["preset"] = "pdg-2024"
    with pytest.raises(ConfigError, match="'pdg-2024' is now 'pdglive-pre2024'"):
        parse_config(data, Path.cwd())
