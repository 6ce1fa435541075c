"""Sensitivity tool: Asimov significance against the closed form, toys, templates, CLI errors."""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from generator import cli
from generator.config import load_config
from generator.errors import ConfigError
from generator.likelihood import (
    Component,
    Parameter,
    TemplateModel,
    asimov_z,
    counting_asimov_z,
)
from generator.pipeline import build_plan
from generator.rates import compute_rates
from generator.sensitivity import asimov_scan, prepare, resolve_config, run_toys
from generator.sensitivity_config import SensitivityConfig

ROOT = Path(__file__).resolve().parents[1]
WATER = ROOT / "configs" / "water_cherenkov.toml"
#: Every background and the hep flux held fixed: a counting experiment with known background.
KNOWN_BACKGROUND = ("flux_hep", "bkg_214Bi", "bkg_208Tl", "bkg_8Li", "bkg_12B", "bkg_16N",
                    "energy_scale", "energy_resolution")


@pytest.fixture(scope="module")
def water():
    cfg = load_config(WATER)
    return cfg, build_plan(cfg)


@pytest.fixture(scope="module")
def small(water):
    """Day/night × 4 reconstructed-energy bins × 3 cos θ_sun bins, every nuisance profiled."""
    cfg, plan = water
    sens = SensitivityConfig(exposures_days=(365.0,), poi="flux_8B",
                             energy_edges_mev=(4.0, 6.0, 8.0, 11.0, 16.0), cos_sun_bins=3,
                             day_night=True)
    return prepare(cfg, sens, plan)


# ----------------------------------------------------------------- closed-form counting
@pytest.mark.parametrize("s,b", [(10.0, 100.0), (30.0, 5.0), (1e4, 3e5), (2.0, 0.5)])
def test_counting_experiment_matches_closed_form(s, b):
    """One bin, known background: √q₀,A = √(2((s+b) ln(1+s/b) − s)) (Cowan, Cranmer, Gross &
    Vitells, Eur. Phys. J. C 71, 1554 (2011), eq. 97)."""
    model = TemplateModel([Parameter("mu", 1.0, None, 0.0, 10.0)],
                          [Component("s", np.array([s]), (("mu", 1.0, 0.0),)),
                           Component("b", np.array([b]))])
    z_closed = math.sqrt(2.0 * ((s + b) * math.log(1.0 + s / b) - s))
    assert asimov_z(model, "mu", 0.0) == pytest.approx(z_closed, abs=1e-6)
    assert counting_asimov_z(s, b) == pytest.approx(z_closed, rel=1e-12)


def test_physics_counting_experiment_matches_closed_form(water):
    """The full chain in one bin with the backgrounds fixed is the same counting experiment:
    Z of the ⁸B flux against 0 is the closed form with s = ⁸B events and b = hep + backgrounds
    (Cowan et al. 2011, eq. 97), within 1e-6."""
    cfg, plan = water
    sens = SensitivityConfig(exposures_days=(100.0,), poi="flux_8B",
                             energy_edges_mev=(6.0, 12.0), cos_sun_bins=1,
                             fix=KNOWN_BACKGROUND)
    an = prepare(cfg, sens, plan)
    row = asimov_scan(an)[0]
    f = 100.0 / an.templates.live_days
    sig = an.templates.nominal_signal()
    s = float(sig[an.templates.sources.index("8B")].sum()) * f
    b = float(sig.sum()) * f - s + float(an.templates.background[:, 0].sum()) * f
    assert row["z_discovery"] == pytest.approx(counting_asimov_z(s, b), abs=1e-6)
    # the interval of a Poisson counting measurement: q_A(μ) = 1 has the closed form too
    # (−2 ln λ for n = s + b, μs + b expected; Cowan et al. 2011, eq. 12 with one bin)
    lo, hi = row["interval"]
    for mu in (lo, hi):
        n, m = s + b, mu * s + b
        assert 2.0 * (m - n - n * math.log(m / n)) == pytest.approx(1.0, abs=1e-6)


# ----------------------------------------------------------------- templates
def test_nominal_templates_are_the_rate_tables(water, small):
    """Summed over moments and cos θ_sun, the templates reproduce compute_rates per
    reconstructed window (internal consistency: the same integral, no external source)."""
    from generator.sensitivity_templates import REFINE_BINS, _refine

    cfg, plan = water
    an = small
    # the templates split every bin into REFINE_BINS parts for the response matrix
    fine = _refine(np.asarray(an.sens.energy_edges_mev), REFINE_BINS)
    r = compute_rates(cfg, reco_edges=fine, plan=plan)
    s, z, _, f = r.reco_counts.shape
    r.reco_counts = r.reco_counts.reshape(s, z, -1, REFINE_BINS, f).sum(axis=3)
    nom = an.templates.nominal_signal()                       # (source, group, E, cos)
    np.testing.assert_allclose(nom.sum(axis=(1, 3)), r.reco_counts.sum(axis=(1, 3)),
                               rtol=1e-7)
    dn = r.day_night(r.reco_counts.sum(axis=-1))
    np.testing.assert_allclose(nom[:, 1].sum(axis=-1), dn["night"], rtol=1e-7)
    # ν_e- and ν_μτ-scattering templates per source are the rates' flavour groups
    split = an.templates.flavour_split.sum(axis=(2, 4))      # (source, flavour, E)
    fl = r.by_flavour(r.reco_counts.sum(axis=1))
    np.testing.assert_allclose(split[:, 0], fl["nu_e"], rtol=1e-7)
    np.testing.assert_allclose(split[:, 1], fl["nu_mu_tau"], rtol=1e-7)
    # ⁸B recoils point away from the Sun: the forward bin holds most of the signal
    # (two-body kinematics, cos θ_e > 0.9 for T > 4 MeV, smeared by the response)
    cos = nom[0].sum(axis=(0, 1))
    assert cos[-1] > 0.7 * cos.sum()


def test_asimov_uncertainty_matches_fisher(small):
    """Median expected σ from q_A = 1 agrees with the Fisher-information σ (Cowan et al.
    2011, Sec. 3.1: the Asimov data set gives the covariance of the estimators) to 5 % at
    large counts (common practice, no source, for the tolerance)."""
    rows = asimov_scan(small, [30.0, 365.0, 3650.0])
    for r in rows:
        assert r["sigma"] == pytest.approx(r["sigma_fisher"], rel=0.05)
    sig = [r["sigma"] for r in rows]
    assert sig[0] > sig[1] > sig[2]


@pytest.mark.parametrize("poi", ["numutau_scale", "pee_slope", "day_night", "sterile_fraction",
                                 "flux_8B"])
def test_every_poi_profile_matches_fisher(water, small, poi):
    """Every selectable POI on the same templates: finite σ, profile ≈ Fisher within 5 %
    (Cowan et al. 2011, Sec. 3.1); Z = 0 exactly where truth = null (pee_slope, sterile)."""
    from generator.sensitivity import build_model

    _, plan = water
    sens = dataclasses.replace(small.sens, poi=poi)
    model, _ = build_model(plan, sens, small.templates)
    an = dataclasses.replace(small, sens=sens, model=model)
    row = asimov_scan(an, [365.0])[0]
    assert 0 < row["sigma"] < math.inf
    assert row["sigma"] == pytest.approx(row["sigma_fisher"], rel=0.05)
    assert (row["z_discovery"] == 0.0) == (sens.truth == sens.null)


def test_iminuit_agrees_with_scipy(small):
    """The optional MIGRAD minimiser gives the same Asimov interval (maintained libraries
    both; agreement to 10⁻⁴ relative is common practice, no source)."""
    pytest.importorskip("iminuit")
    from generator.sensitivity import build_model

    sens = dataclasses.replace(small.sens, minimiser="iminuit")
    model, _ = build_model(small.plan, sens, small.templates)
    a = asimov_scan(small, [365.0])[0]
    b = asimov_scan(dataclasses.replace(small, sens=sens, model=model), [365.0])[0]
    assert b["sigma"] == pytest.approx(a["sigma"], rel=1e-4)
    assert b["z_discovery"] == pytest.approx(a["z_discovery"], rel=1e-4)


# ----------------------------------------------------------------- toys
N_TOYS = 1000


@pytest.fixture(scope="module")
def toys(small):
    return run_toys(small, N_TOYS, seed=20261202, exposure_days=365.0)


def test_toy_pulls_are_standard_normal(toys):
    """Pulls of 1000 toys: mean 0 ± 0.05 and width 1 ± 0.05 (the issue's thresholds; the
    statistical 1σ of the mean and width are 0.032 and 0.022)."""
    assert toys["n_failed"] == 0
    assert abs(toys["pull_mean"]) < 0.05
    assert abs(toys["pull_std"] - 1.0) < 0.05


def test_asimov_sigma_is_the_toy_spread(small, toys):
    """The Asimov median σ is within 10 % of the spread of the fitted values (the issue's
    threshold)."""
    sigma = asimov_scan(small, [365.0])[0]["sigma"]
    assert toys["fitted_std"] == pytest.approx(sigma, rel=0.10)


def test_interval_coverage(toys):
    """Coverage of the 68.27 % profile interval within 2σ (binomial) of 0.6827 (Wilks'
    theorem; the binomial 1σ is √(p(1 − p)/N))."""
    p = 0.6827
    sd = math.sqrt(p * (1.0 - p) / N_TOYS)
    assert abs(toys["coverage_68"] - p) < 2.0 * sd


def test_toys_are_reproducible(small):
    a = run_toys(small, 5, seed=99, exposure_days=100.0)
    b = run_toys(small, 5, seed=99, exposure_days=100.0)
    assert a["fitted"] == b["fitted"] and a["seed_entropy"] == "99"


# ----------------------------------------------------------------- file templates
@pytest.fixture(scope="module")
def event_file(water, tmp_path_factory):
    """300 000 events of the water demo (response and backgrounds on)."""
    from generator.pipeline import generate

    path = tmp_path_factory.mktemp("sens") / "t.h5"
    generate(water[0], path, n_events=300_000, seed=4242)
    return path


def test_file_templates_agree_with_tables(water, event_file):
    """Templates histogrammed from 300 000 generated events agree with the tables: per
    component, χ² = Σ (file − table)² / Σw² over non-empty bins stays below the 0.1 % upper
    quantile of χ²(ndf) (binned goodness of fit, common practice)."""
    from generator.sensitivity_templates import file_templates

    cfg, plan = water
    path = event_file
    sens = SensitivityConfig(exposures_days=(1.0,), energy_edges_mev=(4.0, 6.0, 8.0, 11.0),
                             cos_sun_bins=4, day_night=True)
    tab = prepare(cfg, sens, plan).templates
    fil = file_templates(str(path), plan, tab.binning, sens, tab, variance=True)
    checks = [("8B nominal", tab.nominal_signal()[0], fil.nominal_signal()[0],
               fil.var_nominal[0])]
    # ν_e / ν_μτ split: binomial-like variance from the same file (Σw² of each class)
    for k, g in enumerate(("nu_e", "nu_mu_tau")):
        f = fil.flavour_split[0, k]
        checks.append((f"8B {g}", tab.flavour_split[0, k], f,
                       f * float(fil.var_nominal[0].sum() / fil.nominal_signal()[0].sum())))
    checks += [(f"8B moment {m}", tab.signal[0, m, 0], fil.signal[0, m, 0], fil.var_signal[0, m])
               for m in (0, 2, 3, 4)]
    checks += [(f"background {n}", tab.background[i, 0], fil.background[i, 0],
                fil.var_background[i]) for i, n in enumerate(tab.bkg_names)]
    for name, t, f, v in checks:
        ok = v > 0
        chi2 = float(np.sum((f[ok] - t[ok]) ** 2 / v[ok]))
        ndf = int(ok.sum())
        assert chi2 < stats.chi2.isf(1e-3, ndf), (name, chi2, ndf)


# ----------------------------------------------------------------- configuration and CLI
def _config(tmp_path, text: str) -> Path:
    body = WATER.read_text().replace('path = "outputs/ossory_deep_8b.h5"',
                                     f'path = "{tmp_path / "x.h5"}"')
    p = tmp_path / "c.toml"
    p.write_text(body.split("[sensitivity]")[0] + "\n[sensitivity]\n" + text)
    return p


@pytest.mark.parametrize("text,key", [
    ("exposures_days = []\n", "exposures_days"),
    ("exposures_days = [100]\nenergy_edges_mev = [5.0]\n", "energy_edges_mev"),
    ("exposures_days = [100]\nenergy_edges_mev = [8.0, 6.0]\n", "energy_edges_mev"),
    ("exposures_days = [100]\nenergy_scale_sigma = 0.0\n", "energy_scale_sigma"),
    ("exposures_days = [100]\nbackground_sigma = -0.1\n", "background_sigma"),
    ("exposures_days = [100]\n[sensitivity.flux_sigma]\n8B = 0\n", "flux_sigma.8B"),
    ("exposures_days = [100]\npoi = \"theta13\"\n", "sensitivity.poi"),
    ("exposures_days = [100]\nn_toys = -1\n", "n_toys"),
    ("exposures_days = [100]\ncolour = 1\n", "colour"),
])
def test_bad_sensitivity_section(tmp_path, text, key):
    with pytest.raises(ConfigError, match=key.replace(".", r"\.")):
        load_config(_config(tmp_path, text))


def test_cli_bad_input_exits_2_and_writes_nothing(tmp_path, capsys):
    cfg = _config(tmp_path, "exposures_days = [100]\n")
    png = tmp_path / "s.png"
    cases = [["--exposures", ""], ["--poi", "theta13"], ["--exposures", "100,-5"],
             ["--exposures", "100", "--plot", str(tmp_path / "no" / "s.png")]]
    for extra in cases:
        assert cli.main(["sensitivity", str(cfg), "--plot", str(png), *extra]) == 2
        assert not png.exists()
    empty = _config(tmp_path, "exposures_days = [100]\nenergy_edges_mev = [60.0, 70.0]\n")
    assert cli.main(["sensitivity", str(empty), "--plot", str(png)]) == 2
    assert "no expected signal event" in capsys.readouterr().err
    assert not png.exists()
    with pytest.raises(ConfigError, match="exposures_days"):
        resolve_config(dataclasses.replace(load_config(cfg), sensitivity=None))


def test_cli_json_plot_table_and_file_templates(tmp_path, event_file, capsys):
    """--json (schema, exposures), --plot (a PNG), the readable table, and `--templates FILE`
    giving nearly the tables' Asimov σ (the file's templates carry ≈ 1 % statistical noise
    per bin; 10 % is common practice, no source); a file of another detector is refused."""
    from generator.sensitivity import render

    cfg = _config(tmp_path, "exposures_days = [30, 365]\npoi = \"flux_8B\"\n"
                            "energy_edges_mev = [5.0, 8.0, 12.0]\ncos_sun_bins = 2\n")
    png = tmp_path / "s.png"
    assert cli.main(["sensitivity", str(cfg), "--json", "--plot", str(png)]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["schema"] == "sunrecoil.sensitivity" and rep["schema_version"] == 1
    assert [r["exposure_days"] for r in rep["exposures"]] == [30.0, 365.0]
    assert rep["exposures"][1]["sigma"] < rep["exposures"][0]["sigma"]
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    text = render(rep)
    assert "σ(POI)" in text and "flux_8B" in text
    assert cli.main(["sensitivity", str(cfg), "--json", "--templates", str(event_file)]) == 0
    fil = json.loads(capsys.readouterr().out)
    assert fil["templates"] == "file" and fil["template_file"] == str(event_file)
    for a, b in zip(fil["exposures"], rep["exposures"], strict=True):
        assert a["sigma"] == pytest.approx(b["sigma"], rel=0.1)
    other = tmp_path / "other.toml"
    other.write_text(cfg.read_text().replace("Ossory Deep 100 kt", "Ossory Deeper 100 kt"))
    assert cli.main(["sensitivity", str(other), "--templates", str(event_file)]) == 2
    assert "generated for detector" in capsys.readouterr().err

@pytest.mark.parametrize("change,match", [
    ({"poi": "flux_7Be"}, "sources.include"),
    ({"fix": ("bkg_40K",)}, "sensitivity.fix"),
    ({"flux_sigma": (("pp", 0.1),)}, "flux_sigma.pp"),
])
def test_bad_choices_for_this_configuration(water, small, change, match):
    from generator.sensitivity import build_model

    with pytest.raises(ConfigError, match=match):
        build_model(water[1], dataclasses.replace(small.sens, **change), small.templates)

