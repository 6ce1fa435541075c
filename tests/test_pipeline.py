"""Whole-sample tests of the generation pipeline.

Three kinds of checks: reproducibility (bit-identical reruns, chunk independence), physics
identities on every generated event (failing with the violating events), and seeded
statistical acceptance tests against the deterministic expectations of the same plan.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from conftest import make_config
from scipy import stats

from generator import kinematics
from generator.io import read_events
from generator.io.schema import EVENT_FIELDS
from generator.io.writer import MemorySink
from generator.pipeline import build_plan, chunk_seed, generate, generate_chunk, memory_run


@pytest.fixture(scope="module")
def sample(small_config):
    sink, summary = memory_run(small_config, 20000, seed=99)
    return sink.arrays(), summary


def test_bit_identical_rerun_and_seed_dependence(small_config):
    a, _ = memory_run(small_config, 5000, seed=42)
    b, _ = memory_run(small_config, 5000, seed=42)
    c, _ = memory_run(small_config, 5000, seed=43)
    for f in EVENT_FIELDS:
        assert np.array_equal(a.arrays()[f.name], b.arrays()[f.name]), f.name
    assert not np.array_equal(a.arrays()["e_kinetic"], c.arrays()["e_kinetic"])


def test_chunks_are_independent_streams(small_config):
    """Chunk k depends only on (seed, k): the basis for resume and sharding."""
    sink, summary = memory_run(small_config, 10000, seed=7)
    arrays = sink.arrays()
    chunk = small_config.run.chunk_size
    plan = summary.plan
    k = 1
    rng = np.random.default_rng(chunk_seed(7, k))
    direct = generate_chunk(plan, rng, chunk, plan.expected_total / 10000)
    for f in EVENT_FIELDS:
        got = arrays[f.name][k * chunk:(k + 1) * chunk]
        assert np.array_equal(got, direct[f.name].astype(f.dtype)), f.name


def test_hdf5_and_memory_backends_identical(small_config, tmp_path: Path):
    sink, _ = memory_run(small_config, 3000, seed=11)
    generate(small_config, tmp_path / "e.h5", n_events=3000, seed=11)
    disk = read_events(tmp_path / "e.h5")
    for f in EVENT_FIELDS:
        assert np.array_equal(disk[f.name], sink.arrays()[f.name]), f.name


def _violations(mask: np.ndarray) -> list[int]:
    return np.flatnonzero(~mask)[:20].tolist()


def test_envelope_bounds_acceptance(small_config):
    """A whole sample runs without the acceptance guard firing (SamplingError otherwise)."""
    memory_run(small_config, 20000, seed=5)


def test_physics_identities_on_every_event(sample, small_config):
    ev, summary = sample
    e = ev["nu_energy"].astype(float)
    t = ev["e_kinetic"].astype(float)
    thr = small_config.interaction.threshold_mev
    # T_max = 2E²/(m + 2E) (two-body kinematics); float32 storage allows 1e-6 relative
    tmax = kinematics.t_max(e)
    ok = t <= tmax * (1 + 2e-6)
    assert ok.all(), _violations(ok)
    ok = t >= thr * (1 - 1e-6)
    assert ok.all(), _violations(ok)
    for vec in ("nu_dir", "e_dir"):
        norm = np.linalg.norm(ev[vec].astype(float), axis=1)
        ok = np.abs(norm - 1) < 1e-6
        assert ok.all(), (vec, _violations(ok))
    ok = np.abs(ev["cos_sun"]) <= 1.0
    assert ok.all(), _violations(ok)
    # the angle to the Sun direction equals the kinematic angle cos θ(E, T)
    ok = np.abs(ev["cos_sun"] - kinematics.cos_theta_electron(e, t)) < 2e-5
    assert ok.all(), _violations(ok)
    ok = (ev["is_night"] == 1) == (ev["sun_cos_zenith"] < 0)
    assert ok.all(), _violations(ok)
    iv = summary.plan.exposure.intervals
    ok = (ev["time_utc"] >= iv[0, 0]) & (ev["time_utc"] <= iv[-1, 1])
    assert ok.all(), _violations(ok)
    # the neutrino arrives from above the horizon by day, from below by night
    ok = np.abs(-ev["nu_dir"][:, 2] - ev["sun_cos_zenith"]) < 1e-3
    assert ok.all(), _violations(ok)
    r = np.linalg.norm(ev["vertex"].astype(float)[:, :2], axis=1)
    ok = r <= small_config.detector.fiducial_radius_m * 1000 * (1 + 1e-6)
    assert ok.all(), _violations(ok)
    assert set(np.unique(ev["nu_pdg"])) <= {12, 14, 16}
    np.testing.assert_allclose(ev["weight"].sum(), summary.expected_events, rtol=1e-9)


def test_source_mix_follows_expected_rates(sample):
    """χ² of the per-source counts against the plan's expected fractions (p > 1e-3)."""
    ev, summary = sample
    plan = summary.plan
    codes = np.array([sp.code for sp in plan.sources])
    expected = np.array([sp.expected_events for sp in plan.sources]) / plan.expected_total
    counts = np.array([(ev["origin"] == c).sum() for c in codes])
    p, obs, exp = source_mix_pvalue(counts, expected)
    assert p > 1e-3, (obs, exp)


def source_mix_pvalue(counts: np.ndarray, fractions: np.ndarray):
    """χ² p-value of per-source counts against expected fractions (sources with < 5 expected
    events pooled into one cell); returns (p, observed, expected)."""
    keep = fractions * counts.sum() > 5       # χ² needs ≳ 5 expected per cell
    obs = np.append(counts[keep], counts[~keep].sum())
    exp = np.append(fractions[keep], fractions[~keep].sum()) * counts.sum()
    if exp[-1] == 0:
        obs, exp = obs[:-1], exp[:-1]
    return stats.chisquare(obs, exp).pvalue, obs, exp


def test_flavour_mix_follows_probabilities(sample):
    """For ⁸B events the ν_e : ν_μ : ν_τ counts follow ∫ f P_α σ_α (χ², p > 1e-3)."""
    ev, summary = sample
    plan = summary.plan
    sp = next(s for s in plan.sources if s.name == "8B")
    sel = ev["origin"] == sp.code
    frac = _zenith_flavour_rates(plan, "8B").sum(axis=0)
    frac /= frac.sum()
    obs = np.array([(ev["nu_pdg"][sel] == k).sum() for k in (12, 14, 16)])
    p = stats.chisquare(obs, frac * obs.sum()).pvalue
    assert p > 1e-3, (obs, frac * obs.sum())


def test_recoil_spectrum_of_fixed_flavour_line(small_config):
    """⁷Be 0.862 MeV ν_e events: KS of T against dσ/dT above threshold (p > 1e-3)."""
    from generator.xsec import dsigma_dt

    cfg = make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-05T00:00:00Z"},
        "sources": {"include": ["7Be"]},
        "oscillation": {"enabled": False},
        "interaction": {"threshold_mev": 0.25},
    })
    sink, summary = memory_run(cfg, 20000, seed=3)
    ev = sink.arrays()
    e_line = summary.plan.sources[0].spectrum.lines[0][0]
    sel = np.abs(ev["nu_energy"] - e_line) < 1e-4
    t = ev["e_kinetic"][sel].astype(float)
    grid = np.linspace(0.25, kinematics.t_max(e_line), 4001)
    dens = dsigma_dt(e_line, grid, 12, summary.plan.xsec)
    cdf = np.concatenate([[0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(grid))])
    cdf /= cdf[-1]
    p = stats.kstest(t, lambda x: np.interp(x, grid, cdf)).pvalue
    assert p > 1e-3


def test_no_oscillation_gives_only_electron_neutrinos(small_config):
    cfg = make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-03T00:00:00Z"},
        "oscillation": {"enabled": False},
        "interaction": {"threshold_mev": 1.0},
    })
    sink, _ = memory_run(cfg, 2000, seed=1)
    assert set(np.unique(sink.arrays()["nu_pdg"])) == {12}


def test_expected_count_scales_with_flux_and_exposure():
    base = make_config({"sources": {"include": ["8B"]},
                        "exposure": {"start_utc": "2031-01-01T00:00:00Z",
                                     "stop_utc": "2032-01-01T00:00:00Z"}})
    doubled = make_config({"sources": {"include": ["8B"], "scale": {"8B": 2.0}},
                           "exposure": {"start_utc": "2031-01-01T00:00:00Z",
                                        "stop_utc": "2032-01-01T00:00:00Z"}})
    a = build_plan(base).expected_total
    b = build_plan(doubled).expected_total
    np.testing.assert_allclose(b, 2 * a, rtol=1e-12)


def test_failed_run_leaves_no_file(small_config, tmp_path: Path, monkeypatch):
    import generator.pipeline as pl

    def boom(*a, **k):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(pl, "generate_chunk", boom)
    out = tmp_path / "x.h5"
    with pytest.raises(RuntimeError):
        generate(small_config, out, n_events=100, seed=1)
    assert not out.exists()
    assert not list(tmp_path.iterdir())


def test_memory_sink_matches_schema(small_config):
    sink = MemorySink(EVENT_FIELDS)
    generate(small_config, n_events=100, seed=2, sink=sink)
    arr = sink.arrays()
    for f in EVENT_FIELDS:
        assert arr[f.name].dtype == np.dtype(f.dtype)
    assert sink.attrs["/"]["n_events"] == 100


def test_count_modes():
    """'expected' writes round(expected); 'poisson' a reproducible Poisson draw around it."""
    base = {"exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-03T00:00:00Z"},
            "sources": {"include": ["8B"]}, "interaction": {"threshold_mev": 5.0}}
    cfg_e = make_config({**base, "run": {"count_mode": "expected", "events": 1}})
    sink, summary = memory_run_mode(cfg_e, seed=1)
    assert summary.n_events == round(summary.expected_events)
    cfg_p = make_config({**base, "run": {"count_mode": "poisson", "events": 1}})
    a = memory_run_mode(cfg_p, seed=1)[1].n_events
    b = memory_run_mode(cfg_p, seed=1)[1].n_events
    counts = {memory_run_mode(cfg_p, seed=s)[1].n_events for s in range(2, 8)}
    assert a == b
    assert len(counts) > 1       # Poisson spread (expected ≈ 54; P(all six equal) < 1e-7)


def memory_run_mode(cfg, seed):
    sink = MemorySink(EVENT_FIELDS)
    return sink, generate(cfg, seed=seed, sink=sink)


def _zenith_flavour_rates(plan, name):
    """Rate per cos-zenith bin and flavour, ∝ w_b ∫ f(E) P_α(E, c_b) σ_α(E) dE, shape (bins, 3)."""
    from generator.pipeline import _sigma_matrix

    sp = next(s for s in plan.sources if s.name == name)
    e_grid, pdf = sp.spectrum.grid()
    sig = _sigma_matrix(plan.recoil, e_grid, plan.pdgs)
    centres = 0.5 * (plan.zenith_edges[:-1] + plan.zenith_edges[1:])
    rows = []
    for c, w in zip(centres, plan.zenith_weights, strict=True):
        p = plan.flavour.probabilities(name, e_grid, np.full(e_grid.size, c))
        rows.append(w * np.trapezoid(pdf[:, None] * p * sig, e_grid, axis=0))
    return np.array(rows)


def _expected_night_fraction(plan, name="8B"):
    rate = _zenith_flavour_rates(plan, name).sum(axis=1)
    centres = 0.5 * (plan.zenith_edges[:-1] + plan.zenith_edges[1:])
    return rate[centres < 0].sum() / rate.sum()


@pytest.mark.parametrize("earth", [True, False])
def test_night_fraction_of_events_matches_regeneration(earth):
    """End to end: the fraction of night events equals the plan's zenith-resolved expectation.

    With Earth matter the ⁸B night rate is enhanced (A_DN ≈ −1.8 % at NuFIT 6.0, see
    test_earth); the expected night fraction differs from the Earth-off value by ≈ 0.004, four
    binomial σ for 2 × 10⁵ events, so the test resolves regeneration. Binomial z-test, |z| < 3.3
    (two-sided p > 1e-3).
    """
    cfg = make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2032-01-01T00:00:00Z"},
        "sources": {"include": ["8B"]},
        "oscillation": {"earth_matter": earth},
        "interaction": {"threshold_mev": 5.0},
        "run": {"chunk_size": 65536},
    })
    sink, summary = memory_run(cfg, 200_000, seed=2024)
    night = sink.arrays()["is_night"].astype(bool)
    f_exp = _expected_night_fraction(summary.plan)
    z = (night.mean() - f_exp) / np.sqrt(f_exp * (1 - f_exp) / night.size)
    assert abs(z) < 3.3, (night.mean(), f_exp)
    if earth:
        cfg_off = make_config({
            "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2032-01-01T00:00:00Z"},
            "sources": {"include": ["8B"]},
            "oscillation": {"earth_matter": False},
            "interaction": {"threshold_mev": 5.0},
        })
        f_off = _expected_night_fraction(build_plan(cfg_off))
        assert f_exp - f_off > 0.002   # regeneration raises the night rate
