"""Deterministic background rates against generated events (issue 10: rates include backgrounds).

The expected counts of :func:`generator.rates.compute_rates` for the radioactive backgrounds
are compared with the events of generated runs by Pearson χ² (sparse cells pooled, p > 1e-3),
per isotope × day/night and per isotope × window of deposited and of reconstructed energy.
The totals must equal rate × mass × live time × visible fraction exactly (the normalisation of
:func:`generator.backgrounds.stage.expected_events`).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats

from generator import cli
from generator.backgrounds.expected import window_counts
from generator.config import load_config
from generator.examples import example_path
from generator.pipeline import memory_run
from generator.rates import compute_rates

N_EVENTS = 400_000
EDGES = np.array([0.0, 0.15, 0.3, 0.5, 0.8, 1.2, 1.6, 2.0, 2.6, 3.2, 4.0, 6.0])


def _chi2_p(o: np.ndarray, e: np.ndarray, fixed_total: bool) -> tuple[float, int, float]:
    """Pearson χ² with cells of expectation < 10 pooled into one."""
    o, e = np.asarray(o, float).ravel(), np.asarray(e, float).ravel()
    big = e >= 10.0
    o = np.append(o[big], o[~big].sum())
    e = np.append(e[big], e[~big].sum())
    keep = e > 0
    o, e = o[keep], e[keep]
    chi2 = float(np.sum((o - e) ** 2 / e))
    dof = o.size - (1 if fixed_total else 0)
    return chi2, dof, float(stats.chi2.sf(chi2, dof))


@pytest.fixture(scope="module")
def scint_run():
    cfg = load_config(example_path("scintillator"))
    sink, summary = memory_run(cfg, N_EVENTS, 20261202)
    r = compute_rates(cfg, t_edges=EDGES, reco_edges=EDGES[1:], plan=summary.plan)
    return sink.arrays(), summary, r


def test_background_totals_are_rate_times_mass_times_live_time(scint_run):
    _, summary, r = scint_run
    bg = summary.plan.backgrounds
    assert r.bg_names == [p.iso.name for p in bg.isotopes]
    for i, p in enumerate(bg.isotopes):
        # exact normalisation, rate [Bq/kg] × mass [kg] × live time [s] × visible fraction
        assert r.bg_counts[i].sum() == pytest.approx(
            p.bq_per_kg * bg.mass_kg * bg.live_seconds * p.iso.visible_fraction, rel=1e-12)
    # the signal totals are untouched by the background block
    assert r.total == pytest.approx(summary.plan.expected_total - bg.expected.sum(), rel=1e-12)


def test_background_day_night_cells_match_generated_events(scint_run):
    a, _, r = scint_run
    obs = np.array([[np.sum((a["origin"] == c) & (a["is_night"] == k)) for k in (0, 1)]
                    for c in r.bg_codes])
    dn = r.day_night(r.bg_counts[:, :, None])
    exp = np.stack([dn["day"][:, 0], dn["night"][:, 0]], axis=1)
    exp *= obs.sum() / exp.sum()           # conditional on the number of background events
    chi2, dof, p = _chi2_p(obs, exp, True)
    assert dof >= 10 and p > 1e-3, (chi2, dof)


@pytest.mark.parametrize("reco", [False, True])
def test_background_energy_windows_match_generated_events(scint_run, reco):
    a, _, r = scint_run
    w = float(a["weight"][0])                      # expected events per generated event
    edges = r.reco_edges if reco else r.t_edges
    table = (r.bg_reco_counts if reco else r.bg_t_counts).sum(axis=1)
    obs = []
    for c in r.bg_codes:
        sel = a["origin"] == c
        if reco:
            sel &= a["triggered"].astype(bool)
            x = a["reco_energy"][sel]
        else:
            x = a["e_kinetic"][sel].astype(np.float64) + a["gamma_energy"][sel]
        obs.append(np.histogram(x, edges)[0])
    chi2, dof, p = _chi2_p(np.array(obs), table / w, False)
    assert dof >= 15 and p > 1e-3, (chi2, dof)


def test_window_counts_partition_the_total(scint_run):
    _, summary, r = scint_run
    # deposited-energy windows from 0 to inf hold every generated decay
    full = window_counts(summary.plan, [0.0, 1.0, np.inf])
    np.testing.assert_allclose(full.sum(axis=1), summary.plan.backgrounds.expected, rtol=1e-9)
    # triggered fractions never exceed the generated decays
    reco = window_counts(summary.plan, [0.05, 20.0], reco=True)
    assert np.all(reco[:, 0] <= summary.plan.backgrounds.expected * (1 + 1e-9))


def test_rates_json_and_table_carry_backgrounds(capsys):
    assert cli.main(["rates", str(example_path("scintillator")), "--json",
                     "--reco-windows", "0.2,1,3"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["schema_version"] == 2
    iso = rep["backgrounds"]["isotopes"]
    assert {d["name"] for d in iso} >= {"14C", "210Po", "11C"}
    tot = rep["backgrounds"]["total"]
    assert tot["events"] == pytest.approx(sum(d["events"] for d in iso), rel=1e-12)
    assert tot["day"] + tot["night"] == pytest.approx(tot["events"], rel=1e-9)
    assert len(tot["reco_windows"]) == 2
    assert cli.main(["rates", str(example_path("scintillator"))]) == 0
    assert "radioactive backgrounds" in capsys.readouterr().out


def test_reco_background_windows_need_response():
    from generator.errors import ConfigError

    cfg = load_config(example_path("scintillator"))
    import dataclasses

    cfg = dataclasses.replace(cfg, response=dataclasses.replace(cfg.response, enabled=False))
    with pytest.raises(ConfigError, match="response"):
        compute_rates(cfg, reco_edges=[0.5, 1.0])
