"""Statistical regression suite: large samples of every demo configuration against the
deterministic rate and pdf calculations of the same plan (regression tests, outside the
default run).

Run with ``pytest -m regression`` (10⁷ events per configuration, several minutes per
configuration on 2 cores); ``SUNRECOIL_REGRESSION_EVENTS=200000 pytest -m regression`` is a
smoke run. Every configuration runs with the detector response off: the checks are on the
truth-level distributions, which the response does not change.

These compare the generator's samples with calculations from the same formulas (regression
tests in the sense of the project rules); the formulas themselves are checked against
published sources in test_xsec, test_spectra, test_oscillation and test_exposure. Thresholds:
p > 1e-3 for χ² tests, |z| < 3.3 (two-sided p > 1e-3) for the binomial test.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

import numpy as np
import pytest
from scipy import stats
from test_pipeline import _expected_night_fraction, source_mix_pvalue

from generator import kinematics
from generator.config import load_config
from generator.io.schema import EVENT_FIELDS
from generator.io.writer import MemorySink
from generator.pipeline import generate
from generator.xsec import dsigma_dt

pytestmark = [pytest.mark.slow, pytest.mark.regression]

N_EVENTS = int(float(os.environ.get("SUNRECOIL_REGRESSION_EVENTS", "1e7")))
ROOT = Path(__file__).resolve().parents[1]
CONFIGS = [None, *sorted(str(p) for p in (ROOT / "configs").glob("*.toml"))]
KEEP = ("origin", "e_kinetic", "is_night")


class _SlimSink(MemorySink):
    """Memory sink keeping only the fields the checks need (10⁷ events ≈ 70 MB)."""

    keep = KEEP

    def write_chunk(self, chunk):
        for f in self.fields:
            if f.name in self.keep:
                self.chunks[f.name].append(np.asarray(chunk[f.name]).astype(f.dtype))
        self.n_written += len(chunk[self.fields[0].name])


@pytest.fixture(scope="module", params=CONFIGS,
                ids=lambda p: "default" if p is None else Path(p).name)
def run(request):
    cfg = load_config(request.param)
    cfg = dataclasses.replace(cfg, response=dataclasses.replace(cfg.response, enabled=False))
    sink = _SlimSink(EVENT_FIELDS)
    summary = generate(cfg, n_events=N_EVENTS, seed=20261202, sink=sink)
    ev = {k: np.concatenate(sink.chunks[k]) for k in KEEP}
    return ev, summary.plan


def test_source_counts_follow_expected_fractions(run):
    """χ² of the per-source counts against the plan's expected fractions (p > 1e-3)."""
    ev, plan = run
    codes = np.array([sp.code for sp in plan.sources])
    # fractions among signal events (background isotopes, origin ≥ 100, are not sources)
    exp_sig = np.array([sp.expected_events for sp in plan.sources])
    frac = exp_sig / exp_sig.sum()
    counts = np.array([(ev["origin"] == c).sum() for c in codes])
    p, obs, exp = source_mix_pvalue(counts, frac)
    assert p > 1e-3, (obs, exp)


def recoil_bin_probabilities(plan, name: str, edges: np.ndarray, n_sub: int = 24,
                             n_e: int = 1501) -> np.ndarray:
    """P(T in bin) for source ``name``: ∫ dE f(E) Σ_α P̄_α(E) dσ_α/dT(E, T), normalised.

    P̄_α is the exposure average over the plan's cos-zenith bins (weights = live time ×
    (1 AU/r)²). For each T the energy integral starts exactly at E_min(T) (no trapezoid error
    from the kinematic edge); the T integral uses ``n_sub`` trapezoid points per bin.
    """
    sp = next(s for s in plan.sources if s.name == name)
    spec = sp.spectrum
    e_top = float(spec.grid()[0][-1])
    t = np.unique(np.concatenate([np.linspace(a, b, n_sub) for a, b in
                                  zip(edges[:-1], edges[1:], strict=True)]))
    e_lo = np.maximum(kinematics.e_min_for_recoil(t), float(spec.grid()[0][0]))
    u = np.linspace(0.0, 1.0, n_e)
    e = e_lo[:, None] + (e_top - e_lo)[:, None] * u[None, :]          # (n_t, n_e)
    centres = 0.5 * (plan.zenith_edges[:-1] + plan.zenith_edges[1:])
    w = plan.zenith_weights / plan.zenith_weights.sum()
    flat = e.ravel()
    e_nodes = np.linspace(float(e_lo.min()), e_top, 4001)              # P̄ is smooth in E
    p_nodes = np.zeros((e_nodes.size, 3))
    for c, wb in zip(centres, w, strict=True):
        if wb > 0:
            p_nodes += wb * plan.flavour.probabilities(sp.production_region, e_nodes,
                                                       np.full(e_nodes.size, c))
    pbar = np.column_stack([np.interp(flat, e_nodes, p_nodes[:, j]) for j in range(3)])
    integrand = np.zeros(flat.size)
    tt = np.broadcast_to(t[:, None], e.shape).ravel()
    for j, pdg in enumerate(plan.pdgs):
        integrand += pbar[:, j] * dsigma_dt(flat, tt, pdg, plan.xsec)
    integrand = (integrand * spec.pdf(flat)).reshape(e.shape)
    dens = np.trapezoid(integrand, e, axis=1)                           # dN/dT at t
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(t))])
    probs = np.diff(np.interp(edges, t, cum))
    return probs / probs.sum()


def test_recoil_spectrum_of_8b_follows_cross_section_times_spectrum(run):
    """Binned χ² of the ⁸B recoil spectrum against dσ/dT ⊗ spectrum (p > 1e-3)."""
    ev, plan = run
    sp = next(s for s in plan.sources if s.name == "8B")
    t = ev["e_kinetic"][ev["origin"] == sp.code].astype(np.float64)
    t_th = plan.recoil.t_min
    t_hi = float(kinematics.t_max(sp.spectrum.grid()[0][-1]))
    edges = np.concatenate([np.linspace(t_th, min(14.0, t_hi), 41)[:-1], [t_hi]])
    p = recoil_bin_probabilities(plan, "8B", edges)
    obs = np.histogram(t, edges)[0]
    assert obs.sum() == t.size
    exp = p * t.size
    keep = exp > 5
    obs = np.append(obs[keep], obs[~keep].sum())
    exp = np.append(exp[keep], exp[~keep].sum())
    if exp[-1] == 0:
        obs, exp = obs[:-1], exp[:-1]
    pval = stats.chisquare(obs, exp * obs.sum() / exp.sum()).pvalue
    assert pval > 1e-3, (obs, exp)


def test_night_fraction_of_8b_follows_zenith_exposure(run):
    """Binomial z of the ⁸B night fraction against the zenith-resolved expectation (|z| < 3.3)."""
    ev, plan = run
    sp = next(s for s in plan.sources if s.name == "8B")
    night = ev["is_night"][ev["origin"] == sp.code].astype(bool)
    f = _expected_night_fraction(plan, "8B")
    z = (night.mean() - f) / np.sqrt(f * (1 - f) / night.size)
    assert abs(z) < 3.3, (night.mean(), f, night.size)


KEEP_RECO = ("origin", "reco_energy", "triggered", "weight")
RESPONSE_CONFIGS = sorted(str(p) for p in (ROOT / "configs").glob("*.toml"))


class _RecoSink(_SlimSink):
    """Memory sink keeping the reconstructed-energy fields only."""

    keep = KEEP_RECO


@pytest.fixture(scope="module", params=RESPONSE_CONFIGS, ids=lambda p: Path(p).name)
def reco_run(request):
    from generator.io.schema import RESPONSE_FIELDS

    cfg = load_config(request.param)
    sink = _RecoSink(EVENT_FIELDS + RESPONSE_FIELDS)
    summary = generate(cfg, n_events=N_EVENTS, seed=20261203, sink=sink)
    ev = {k: np.concatenate(sink.chunks[k]) for k in KEEP_RECO}
    return ev, summary.plan


def test_reco_spectrum_follows_rates_and_background_tables(reco_run):
    """χ² of the reconstructed-energy spectrum of triggered events, per origin (every source
    and background isotope), against the deterministic response fold of ``rates`` and
    :func:`generator.backgrounds.expected.window_counts` (p > 1e-3; cells < 10 pooled).

    The expectation in events is converted to generated events with the file's weight per
    event (expected events / generated events, untriggered events kept or dropped alike).
    """
    from generator.backgrounds.expected import window_counts
    from generator.rates import compute_rates

    ev, plan = reco_run
    thr = plan.response.params["analysis_threshold_mev"]
    lo = max(thr, 0.05)
    edges = (np.concatenate([np.linspace(lo, 3.0, 30), np.linspace(3.2, 16.0, 33)])
             if lo < 2.5 else np.linspace(lo, 16.0, 50))
    r = compute_rates(plan.config, reco_edges=edges, plan=plan)
    exp_rows = list(r.reco_counts.sum(axis=(1, 3)))
    codes = list(r.codes)
    if plan.backgrounds is not None:
        exp_rows += list(window_counts(plan, edges, reco=True))
        codes += [p.iso.code for p in plan.backgrounds.isotopes]
    w = float(ev["weight"][0])
    trig = ev["triggered"].astype(bool)
    obs = np.array([np.histogram(ev["reco_energy"][trig & (ev["origin"] == c)], edges)[0]
                    for c in codes], dtype=np.float64)
    exp = np.array(exp_rows) / w
    o, e = obs.ravel(), exp.ravel()
    big = e >= 10.0
    o = np.append(o[big], o[~big].sum())
    e = np.append(e[big], e[~big].sum())
    chi2 = float(np.sum((o - e) ** 2 / e))
    dof = o.size                      # Poisson cells (the triggered total is not fixed)
    pval = stats.chi2.sf(chi2, dof)
    worst = np.argsort(-((o - e) ** 2 / e))[:5]
    assert pval > 1e-3, (chi2, dof, [(o[i], e[i]) for i in worst])
