"""Rates: deterministic expected counts against generated events and a hand calculation."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.constants as sc
from conftest import make_config
from scipy import integrate, stats

from generator import cli
from generator.errors import ConfigError
from generator.pipeline import build_plan, chunk_seed, generate_chunk
from generator.rates import FLAVOUR_GROUPS, compute_rates, to_dict


@pytest.fixture(scope="session")
def week_rates():
    """One week, all sources, 0.5 MeV threshold, truth only."""
    cfg = make_config({
        "exposure": {"start_utc": "2031-03-01T00:00:00Z", "stop_utc": "2031-03-08T00:00:00Z"},
        "interaction": {"threshold_mev": 0.5},
        "response": {"enabled": False},
        "run": {"chunk_size": 250_000},
    })
    return compute_rates(cfg)


def test_totals_are_the_generators_normalisation(week_rates):
    # regression: the same tables as build_plan (no second derivation of the physics)
    plan = week_rates.plan
    assert week_rates.total == pytest.approx(plan.expected_total, rel=1e-12)
    for s, sp in enumerate(plan.sources):
        assert week_rates.counts[s].sum() == pytest.approx(sp.expected_events, rel=1e-12)


def test_rates_match_one_million_generated_events(week_rates):
    """χ² of source × flavour group × day/night counts of 10⁶ events (p > 1e-3)."""
    plan = week_rates.plan
    n, chunk, entropy = 1_000_000, plan.config.run.chunk_size, 424242
    codes = np.array(week_rates.codes)
    observed = np.zeros((len(codes), 2, 2))
    done = 0
    for k in range(-(-n // chunk)):          # exactly the chunks generate() writes
        m = min(chunk, n - done)
        ev = generate_chunk(plan, np.random.default_rng(chunk_seed(entropy, k)), m, 1.0)
        s = np.searchsorted(codes, ev["origin"])
        g = (ev["nu_pdg"] != 12).astype(int)
        np.add.at(observed, (s, g, ev["is_night"].astype(int)), 1)
        done += m
    dn = week_rates.day_night(week_rates.counts)
    exp = np.zeros_like(observed)
    for gi, cols in enumerate(FLAVOUR_GROUPS.values()):
        exp[:, gi, 0] = dn["day"][:, list(cols)].sum(axis=1)
        exp[:, gi, 1] = dn["night"][:, list(cols)].sum(axis=1)
    exp *= n / exp.sum()
    o, e = observed.ravel(), exp.ravel()
    big = e >= 20.0                          # pool the sparse cells (χ² validity)
    o = np.append(o[big], o[~big].sum())
    e = np.append(e[big], e[~big].sum())
    chi2 = float(np.sum((o - e) ** 2 / e))
    dof = o.size - 1                         # fixed total count: multinomial
    p = stats.chi2.sf(chi2, dof)
    assert dof >= 20
    assert p > 1e-3, (chi2, dof)


def _tree_dsigma_dt(e, t, s2):
    """Tree-level ν_e–e dσ/dT in cm²/MeV ('t Hooft, Phys. Lett. B 37, 195 (1971); Bahcall,
    Neutrino Astrophysics (1989) eq. 8.31): (2 G_F² m_e/π)[g_L² + g_R²(1−T/E)² − g_L g_R m T/E²],
    g_L = ½ + s², g_R = s²; G_F and m_e from scipy.constants (CODATA)."""
    me = sc.physical_constants["electron mass energy equivalent in MeV"][0]
    gf = sc.physical_constants["Fermi coupling constant"][0] * 1e-6          # MeV⁻²
    hbarc_cm = sc.physical_constants["reduced Planck constant times c in MeV fm"][0] * 1e-13
    gl, gr = 0.5 + s2, s2
    pref = 2.0 * gf**2 * me / math.pi * hbarc_cm**2
    return pref * (gl**2 + gr**2 * (1 - t / e) ** 2 - gl * gr * me * t / e**2)


def _t_max(e):
    me = sc.physical_constants["electron mass energy equivalent in MeV"][0]
    return 2 * e * e / (me + 2 * e)


def _hand_config(source: str, threshold: float):
    return make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2032-01-01T00:00:00Z"},
        "sources": {"include": [source]},
        "oscillation": {"enabled": False},
        "interaction": {"threshold_mev": threshold, "corrections": "tree"},
        "response": {"enabled": False},
    })


def _exposure_and_target(plan):
    """Live time × ⟨(1 AU/r)²⟩ over one orbit, 1/√(1−e²) (Kepler motion; e = 0.0167086,
    Astronomical Almanac, from memory), and N_e of the water fiducial cylinder
    (10 electrons per H₂O of molar mass 18.015 g/mol, IUPAC atomic weights; N_A CODATA)."""
    ecc = 0.0167086
    w = plan.exposure.live_seconds / math.sqrt(1 - ecc**2)
    det = plan.config.detector
    vol = math.pi * (det.fiducial_radius_m * 100) ** 2 * 2 * det.fiducial_half_height_m * 100
    n_e = vol * plan.medium.density_g_cm3 / 18.015 * 10 * sc.N_A
    return w, n_e


def test_be7_line_cell_against_hand_quadrature():
    """⁷Be ν_e, no oscillation, tree level: N = N_e Φ BR σ(0.8618 MeV; T > 0.3) ∫dt/r²."""
    r = compute_rates(_hand_config("7Be", 0.3))
    w, n_e = _exposure_and_target(r.plan)
    phi = 4.93e9          # B16-GS98 ⁷Be flux (Vinyoles et al., ApJ 835, 202 (2017), Table 6)
    e, br = 0.8619, 0.8956  # Q_EC and ground-state branching (ENSDF ⁷Be, from memory)
    s2 = r.plan.xsec.sin2_theta_w
    sigma = integrate.quad(lambda t: _tree_dsigma_dt(e, t, s2), 0.3, _t_max(e), epsabs=0,
                           epsrel=1e-10)[0]
    hand = n_e * phi * br * sigma * w
    assert r.total == pytest.approx(hand, rel=2e-3)


def test_b8_day_cell_against_hand_quadrature():
    """⁸B ν_e by day, no oscillation, tree level, nested quad over E and T above 5 MeV."""
    r = compute_rates(_hand_config("8B", 5.0))
    plan = r.plan
    spec = plan.sources[0].spectrum
    s2 = plan.xsec.sin2_theta_w
    me = sc.physical_constants["electron mass energy equivalent in MeV"][0]
    e_lo = 0.5 * (5.0 + math.sqrt(25.0 + 2 * me * 5.0))
    def sig(e):
        return integrate.quad(lambda t: _tree_dsigma_dt(e, t, s2), 5.0, _t_max(e), epsabs=0,
                              epsrel=1e-9)[0]

    integral = integrate.quad(lambda e: float(spec.pdf(np.array([e]))[0]) * sig(e), e_lo,
                              spec.e_max, limit=200, epsrel=1e-7)[0]
    wz = plan.zenith_weights
    day = r.zenith_edges[:-1] >= 0.0
    hand_day = plan.n_electrons * 5.46e6 * integral * wz[day].sum()   # Φ(⁸B) B16-GS98, Table 6
    got = r.day_night(r.counts)["day"][0, 0]
    assert got == pytest.approx(hand_day, rel=1e-3)
    # day fraction of the exposure against the 1/√(1−e²) orbit average is a separate check
    w, _ = _exposure_and_target(plan)
    assert wz.sum() == pytest.approx(w, rel=1e-4)


def test_windows_partition_the_total(week_rates):
    cfg = week_rates.plan.config
    r = compute_rates(cfg, t_edges=[0.0, 1.0, 3.0, np.inf], plan=week_rates.plan)
    # the table σ of the generator agrees with the exact windows to its stated 1e-4
    np.testing.assert_allclose(r.t_counts.sum(axis=(1, 2, 3)), r.counts.sum(axis=(1, 2)),
                               rtol=2e-4, atol=1e-9)


def test_threshold_zero_and_magnetic_divergence():
    cfg = _hand_config("7Be", 0.3)
    r0 = compute_rates(cfg, threshold=0.0)
    r3 = compute_rates(cfg)
    assert r0.total > r3.total > 0
    import dataclasses
    mu = dataclasses.replace(cfg, interaction=dataclasses.replace(cfg.interaction,
                                                                  magnetic_moment=1.0))
    with pytest.raises(ConfigError, match="diverges"):
        compute_rates(mu, threshold=0.0)


def test_flux_sigma_and_json(week_rates, capsys):
    rep = to_dict(week_rates, [-1.0, 0.0, 1.0])
    b8 = next(d for d in rep["sources"] if d["name"] == "8B")
    # B16-GS98 ⁸B 1σ = 12 % (Vinyoles et al. 2017, Table 6)
    assert b8["flux_sigma_events"] == pytest.approx(0.12 * b8["events"], rel=1e-12)
    assert b8["day"] + b8["night"] == pytest.approx(b8["events"], rel=1e-12)
    assert sum(b8["zenith"]["nu_e"]) == pytest.approx(b8["nu_e"], rel=1e-12)
    assert rep["schema_version"] == 2
    json.dumps(rep)


@pytest.mark.parametrize("argv, msg", [
    (["--t-windows", "3"], "defines no bin"),
    (["--t-windows", "5,4"], "strictly increasing"),
    (["--zenith=-1,0.123,1"], "grid"),
    (["--threshold", "-1"], "threshold"),
])
def test_cli_bad_windows_exit_2(argv, msg, capsys, tmp_path):
    cfg = tmp_path / "c.toml"
    cfg.write_text('[sources]\ninclude = ["hep"]\n[response]\nenabled = false\n'
                   '[exposure]\nstart_utc = "2031-01-01T00:00:00Z"\n'
                   'stop_utc = "2031-01-02T00:00:00Z"\n')
    assert cli.main(["rates", str(cfg), *argv]) == 2
    assert msg in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == [cfg]


def test_cli_json(capsys, tmp_path):
    cfg = tmp_path / "c.toml"
    cfg.write_text('[sources]\ninclude = ["hep"]\n'
                   '[exposure]\nstart_utc = "2031-01-01T00:00:00Z"\n'
                   'stop_utc = "2031-01-02T00:00:00Z"\n')
    assert cli.main(["rates", str(cfg), "--json", "--reco-windows", "4,6,20"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["schema"] == "sunrecoil.rates"
    tot = rep["total"]["reco_windows"]
    assert 0 < sum(w["events"] for w in tot) <= rep["total"]["events"] * 1.05
    assert cli.main(["rates", str(cfg)]) == 0
    assert "ν_μ+ν_τ" in capsys.readouterr().out


def test_build_plan_unchanged_by_rates():
    plan = build_plan(_hand_config("7Be", 0.3))
    assert plan.sources[0].zenith_flavour.shape == (plan.zenith_edges.size - 1, 3)
