"""``sunrecoil reweight``: weights to an alternative configuration (generator/reweight.py).

Closure tests: a file generated under A and reweighted to B is compared with a file generated
under B. The statistic is Gagunashvili's χ² for an unweighted histogram (n_i, N = Σ n_i) against
a weighted one (W_i = Σ w, s_i² = Σ w², W = Σ W_i),

    X² = Σ (n_i − N p̂_i)² / (N p̂_i) + Σ (W_i − W p̂_i)² / s_i²,
    p̂_i = [W W_i − N s_i² + √((W W_i − N s_i²)² + 4 W² s_i² n_i)] / (2 W²),

approximately χ² with (bins − 1) degrees of freedom under the hypothesis that both estimate the
same shape (N. D. Gagunashvili, "Chi-square tests for comparing weighted histograms",
Nucl. Instrum. Meth. A 614 (2010) 287, arXiv:0905.4221, the unweighted–weighted test; formula
from memory). Required: p > 1e-3 (the issue's threshold). The normalisation is tested apart:
Σw against B's deterministic expected count within 4 standard errors (common practice, no
source), and exactly (1e-6) where r is one constant.
"""

from __future__ import annotations

import h5py
import numpy as np
import pytest
from conftest import make_config
from scipy import stats

from generator.cli import main
from generator.pipeline import build_plan, generate
from generator.rates import compute_rates
from generator.reweight import config_sha256, reweight
from generator.spectra import flux

BASE = {"sources": {"include": ["8B", "hep"]}, "response": {"enabled": False},
        "run": {"chunk_size": 65536}}
N_A, N_B = 150_000, 100_000
Z_MAX = 4.0                       # Σw vs expected, standard errors (common practice, no source)
P_MIN = 1e-3                      # χ² p-value threshold (the requirement)


def _cfg(**sections):
    over = {k: dict(v) for k, v in BASE.items()}
    for sec, vals in sections.items():
        over.setdefault(sec, {}).update(vals)
    return make_config(over)


def gagunashvili_uw(n: np.ndarray, w: np.ndarray, w2: np.ndarray) -> tuple[float, int, float]:
    """Unweighted (n) vs weighted (Σw, Σw²) histogram χ² (module docstring); (X², ndf, p)."""
    keep = (n > 0) | (w2 > 0)
    n, w, w2 = n[keep].astype(float), w[keep], w2[keep]
    big_n, big_w = n.sum(), w.sum()
    a = big_w * w - big_n * w2
    p = (a + np.sqrt(a * a + 4.0 * big_w**2 * w2 * n)) / (2.0 * big_w**2)
    x2 = np.sum((n - big_n * p) ** 2 / (big_n * p))
    s = w2 > 0
    x2 += np.sum((w[s] - big_w * p[s]) ** 2 / w2[s])
    ndf = int(keep.sum()) - 1
    return float(x2), ndf, float(stats.chi2.sf(x2, ndf))


def _read(path):
    with h5py.File(path, "r") as f:
        ev = {k: f["events"][k][()] for k in ("e_kinetic", "nu_energy", "sun_cos_zenith",
                                              "nu_pdg", "weight", "origin")}
    return ev


HISTOGRAMS = {
    "e_kinetic": lambda ev: np.digitize(ev["e_kinetic"], np.linspace(3.5, 14.0, 22)),
    "nu_energy": lambda ev: np.digitize(ev["nu_energy"], np.linspace(4.0, 16.0, 25)),
    "cos_zenith": lambda ev: np.digitize(ev["sun_cos_zenith"], np.linspace(-1, 1, 11)),
    "flavour_day_night": lambda ev: 2 * (ev["nu_pdg"] == 12) + (ev["sun_cos_zenith"] < 0),
}


def _compare(ev_a, w_a, ev_b):
    out = {}
    for name, binner in HISTOGRAMS.items():
        ia, ib = binner(ev_a), binner(ev_b)
        m = max(ia.max(), ib.max()) + 1
        n = np.bincount(ib, minlength=m)
        w = np.bincount(ia, weights=w_a, minlength=m)
        w2 = np.bincount(ia, weights=w_a**2, minlength=m)
        out[name] = gagunashvili_uw(n, w, w2)
    return out


@pytest.fixture(scope="module")
def file_a(tmp_path_factory):
    path = tmp_path_factory.mktemp("rw") / "a.h5"
    s = generate(_cfg(), path, n_events=N_A, seed=20310101)
    return path, s


def _closure(file_a, tmp_path, seed, **sections):
    cfg_b = _cfg(**sections)
    sb = generate(cfg_b, tmp_path / "b.h5", n_events=N_B, seed=seed)
    rw = reweight(file_a[0], cfg_b, tmp_path / "w.h5", alt_plan=sb.plan)
    with h5py.File(rw.path, "r") as f:
        w = f["weights/weight"][()]
        attrs = dict(f.attrs)
    assert attrs["expected_events"] == pytest.approx(sb.plan.expected_total, rel=1e-12)
    z = (rw.weight_sum - rw.expected_events) / rw.weight_sum_mc_error
    assert abs(z) < Z_MAX, z
    res = _compare(_read(file_a[0]), w, _read(tmp_path / "b.h5"))
    for name, (x2, ndf, p) in res.items():
        assert p > P_MIN, (sections, name, x2, ndf, p)
    return rw, w, attrs


# ---------------------------------------------------------------- closure, ≥ 3 kinds of change
def test_closure_flux_model_and_b8_shape(file_a, tmp_path):
    """B16-AGSS09met fluxes (Vinyoles et al. 2017) and the +1σ measured ⁸B shape."""
    _closure(file_a, tmp_path, 11, sources={"flux_model": "B16-AGSS09met",
                                            "b8_shape": "plus1sigma"})


def test_closure_oscillation_parameters(file_a, tmp_path):
    """sin²θ12 = 0.25 instead of the NuFIT 6.0 value 0.307 (a large change of P_ee)."""
    rw, w, attrs = _closure(file_a, tmp_path, 12, oscillation={"sin2_theta12": 0.25})
    # the recorded expected count equals what `sunrecoil rates` computes for B (own build)
    rates = compute_rates(_cfg(oscillation={"sin2_theta12": 0.25}))
    assert attrs["expected_events"] == pytest.approx(rates.total, rel=1e-6)
    # power: the reweighted A is *not* compatible with A itself (the change is visible)
    ev_a = _read(file_a[0])
    p_self = _compare(ev_a, w, ev_a)["flavour_day_night"][2]
    assert p_self < P_MIN


def test_closure_tree_level_and_higher_threshold(file_a, tmp_path):
    """Tree-level cross sections ('t Hooft 1971) and a 5 MeV threshold: weight 0 below it."""
    _, w, _ = _closure(file_a, tmp_path, 13,
                       interaction={"corrections": "tree", "threshold_mev": 5.0})
    ev = _read(file_a[0])
    assert np.all(w[ev["e_kinetic"] < 5.0] == 0.0)
    assert np.all(w[ev["e_kinetic"] >= 5.0] > 0.0)


def test_closure_magnetic_moment(file_a, tmp_path):
    """μ_ν = 5e-10 μ_B (magnetic_moment = 50 × 1e-11): Vogel & Engel 1989 cross section."""
    _, w, _ = _closure(file_a, tmp_path, 14, interaction={"magnetic_moment": 50.0})
    assert w.sum() > file_a[1].expected_events * 1.01      # the change is visible


def test_closure_nsi_and_removed_source(file_a, tmp_path):
    """ε_ee^L = 0.3 (flavour-diagonal NSI) and hep removed (its events get weight 0)."""
    _, w, _ = _closure(file_a, tmp_path, 15, sources={"include": ["8B"]},
                       interaction={"nsi_eps_l": [0.3, 0.0, 0.0]})
    ev = _read(file_a[0])
    assert np.all(w[ev["origin"] == 3] == 0.0)


# ---------------------------------------------------------------- exact normalisation
def test_flux_change_of_a_single_source_is_exact(tmp_path):
    """r constant (flux ratio) ⇒ Σw = r N_A = N_B exactly (identity; B16 fluxes, Vinyoles
    et al. 2017, through generator.spectra.flux)."""
    cfg = _cfg(sources={"include": ["8B"]})
    path = tmp_path / "a8.h5"
    generate(cfg, path, n_events=20_000, seed=3)
    for change in ({"flux_model": "B16-AGSS09met"}, {"flux_override": {"8B": 4.0e6}}):
        alt = _cfg(sources={"include": ["8B"], **change})
        out = tmp_path / "w.h5"
        s = reweight(path, alt, out, force=True)
        expected = build_plan(alt).expected_total
        assert s.weight_sum == pytest.approx(expected, rel=1e-6)
        with h5py.File(out, "r") as f:
            r = f["weights/ratio"][()]
        phi_b = change.get("flux_override", {}).get("8B") or flux("8B", "B16-AGSS09met")
        assert np.allclose(r, phi_b / flux("8B", "B16-GS98"), rtol=1e-12, atol=0)


def test_line_sources(tmp_path):
    """⁷Be lines: r = ratio of line strengths; pep removed: r = 0."""
    cfg = _cfg(sources={"include": ["7Be", "pep"]}, interaction={"threshold_mev": 0.3})
    path = tmp_path / "lines.h5"
    generate(cfg, path, n_events=20_000, seed=4)
    alt = _cfg(sources={"include": ["7Be"], "flux_override": {"7Be": 5.0e9}},
               interaction={"threshold_mev": 0.3})
    s = reweight(path, alt, tmp_path / "w.h5")
    with h5py.File(tmp_path / "w.h5", "r") as f:
        r = f["weights/ratio"][()]
    origin = _read(path)["origin"]
    assert np.all(r[origin == 2] == 0.0)
    assert np.allclose(r[origin == 4], 5.0e9 / flux("7Be", "B16-GS98"), rtol=1e-12)
    assert abs(s.weight_sum - s.expected_events) < Z_MAX * s.weight_sum_mc_error


# ---------------------------------------------------------------- CLI, refusals, bad input
def _alt_file(tmp_path, text, name="alt.toml"):
    p = tmp_path / name
    p.write_text(text)
    return str(p)


@pytest.mark.parametrize("text, msg", [
    ("[detector]\nfiducial_radius_m = 10.0\n", "detector.fiducial_radius_m"),
    ("[detector]\ndepth_m = 100.0\n", "detector.depth_m"),
    ("[exposure]\nstop_utc = \"2031-06-01T00:00:00Z\"\n", "exposure"),
    ("[sources]\ninclude = [\"8B\", \"hep\", \"pep\"]\n", "source pep added"),
    ("[interaction]\nthreshold_mev = 3.0\n", "threshold_mev lowered"),
    ("[response]\nenabled = true\n", "[response]"),
    ("[backgrounds]\nenabled = true\n", "[backgrounds]"),
    ("[interaction]\nthreshold_mev = -1.0\n", "interaction.threshold_mev"),
    ("[oscillation]\nsin2_theta12 = \"x\"\n", "oscillation.sin2_theta12"),
    ("[sources\n", "invalid TOML"),
])
def test_cli_refuses_unreweightable_changes(file_a, tmp_path, capsys, text, msg):
    out = tmp_path / "w.h5"
    assert main(["reweight", str(file_a[0]), _alt_file(tmp_path, text), "-o", str(out)]) == 2
    assert msg in capsys.readouterr().err
    assert not out.exists() and not list(tmp_path.glob("*.tmp"))


def test_cli_side_file_append_and_from(file_a, tmp_path, capsys):
    a = tmp_path / "a.h5"
    a.write_bytes(file_a[0].read_bytes())
    alt = _alt_file(tmp_path, "[oscillation]\nsin2_theta12 = 0.25\n")
    side = tmp_path / "w.h5"
    assert main(["reweight", str(a), alt, "-o", str(side)]) == 0
    with h5py.File(side, "r") as f, h5py.File(a, "r") as ev:
        assert f.attrs["event_file_seed_entropy"] == ev.attrs["seed_entropy"]
        assert f.attrs["event_file_config_sha256"] == config_sha256(ev.attrs["config_toml"])
        assert f.attrs["tool_version"] == ev.attrs["tool_version"]
        assert f["weights/weight"].attrs["units"] == "events"
        assert f["weights/ratio"].attrs["units"] == ""
        side_w = f["weights/weight"][()]
    assert main(["reweight", str(a), alt, "-o", str(side)]) == 2          # exists, no --force
    assert main(["reweight", str(a), "--append", "--from", str(side), "--name", "osc"]) == 0
    assert main(["reweight", str(a), alt, "--append", "--name", "osc2"]) == 0
    with h5py.File(a, "r") as f:
        assert np.array_equal(f["reweight/osc/weight"][()], side_w)
        assert np.array_equal(f["reweight/osc2/weight"][()], side_w)
    assert main(["check", str(a)]) == 0                                 # still a valid file
    capsys.readouterr()
    # a side file of another event file is refused, and so is appending onto a file that
    # carries weights of another file
    other = tmp_path / "other.h5"
    generate(_cfg(), other, n_events=2000, seed=99)
    assert main(["reweight", str(other), "--append", "--from", str(side)]) == 2
    assert "different event file" in capsys.readouterr().err
    with h5py.File(a, "r+") as f:
        f["reweight/osc"].attrs["event_file_seed_entropy"] = "7"
    assert main(["reweight", str(a), alt, "--append", "--name", "osc3"]) == 2
    assert "different event file" in capsys.readouterr().err
    with h5py.File(a, "r") as f:
        assert "osc3" not in f["reweight"]


def _tampered(file_a, tmp_path, key, value):
    p = tmp_path / "t.h5"
    p.write_bytes(file_a[0].read_bytes())
    with h5py.File(p, "r+") as f:
        f.attrs[key] = value
    return p


@pytest.mark.parametrize("key, value, msg", [
    ("tool_version", "0.1.0", "written by sunrecoil 0.1.0"),
    ("config_toml", "[run]\nevents = 5\n", "config_sha256 does not match"),
    ("config_sha256", "0" * 64, "config_sha256 does not match"),
    ("seed_entropy", "x12", "seed_entropy"),
])
def test_cli_bad_event_files(file_a, tmp_path, capsys, key, value, msg):
    p = _tampered(file_a, tmp_path, key, value)
    alt = _alt_file(tmp_path, "[interaction]\ncorrections = \"tree\"\n")
    out = tmp_path / "w.h5"
    assert main(["reweight", str(p), alt, "-o", str(out)]) == 2
    assert msg in capsys.readouterr().err
    assert not out.exists()


def test_cli_missing_and_foreign_files(tmp_path, capsys):
    alt = _alt_file(tmp_path, "[interaction]\ncorrections = \"tree\"\n")
    out = tmp_path / "w.h5"
    assert main(["reweight", str(tmp_path / "none.h5"), alt, "-o", str(out)]) == 2
    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as f:
        f["x"] = np.arange(3)
    assert main(["reweight", str(foreign), alt, "-o", str(out)]) == 2
    (tmp_path / "text.h5").write_text("not hdf5")
    assert main(["reweight", str(tmp_path / "text.h5"), alt, "-o", str(out)]) == 2
    assert not out.exists()
    good = tmp_path / "good.h5"
    generate(_cfg(), good, n_events=1000, seed=8)
    assert main(["reweight", str(good), alt, "-o", str(tmp_path / "no" / "w.h5")]) == 2
    assert main(["reweight", str(good), alt, "-o", str(good)]) == 2        # the file itself
    with pytest.raises(SystemExit) as exc:                                 # no -o / --append
        main(["reweight", str(good)])
    assert exc.value.code == 2
    assert main(["reweight", str(good), "-o", str(out)]) == 2              # no ALT_CONFIG
    err = capsys.readouterr().err
    assert "no such event file" in err and "not a sunrecoil event file" in err


def test_shared_cross_section_evaluation_equals_dsigma_dt():
    """The reweighting's shared evaluation of two models is bit-identical to xsec.dsigma_dt
    (same closed forms: 't Hooft 1971, Bahcall–Kamionkowski–Sirlin 1995, Vogel & Engel 1989)."""
    from generator.reweight import _dsigma_pair
    from generator.xsec import XsecModel, dsigma_dt

    rng = np.random.default_rng(1)
    e = rng.uniform(4.0, 15.0, 20_000)
    t = rng.uniform(0.01, 0.9, e.size) * e
    pdg = rng.choice([12, 14, 16], e.size)
    models = [XsecModel(), XsecModel(corrections="tree"), XsecModel(magnetic_moment=50.0),
              XsecModel(nsi_eps_l=(0.3, 0.0, 0.0)),
              XsecModel(corrections="tree", magnetic_moment=3.0, nsi_eps_r=(0.0, 0.1, 0.0))]
    for a in models:
        for b in models:
            x, y = _dsigma_pair(e, t, pdg, a, b)
            assert np.array_equal(x, dsigma_dt(e, t, pdg, a))
            assert np.array_equal(y, dsigma_dt(e, t, pdg, b))


def test_spectrum_ratio_matches_the_pdfs():
    """The shared-grid shape ratio equals Spectrum.pdf ratios (Winter et al. 2006 ⁸B table and
    its ±1σ variants, generator/spectra/boron8_measured.py) to rounding."""
    from generator.reweight import _PdfRatio
    from generator.spectra import get_spectrum

    e = np.concatenate([np.random.default_rng(2).uniform(0.0, 17.2, 50_000),
                        get_spectrum("8B", "measured").grid()[0]])
    for a, b in (("measured", "plus1sigma"), ("minus1sigma", "model")):
        ga, gb = get_spectrum("8B", a), get_spectrum("8B", b)
        pa, pb = ga.pdf(e), gb.pdf(e)
        ref = np.where(pa > 0, pb / np.where(pa > 0, pa, 1.0), 0.0)
        ratio = _PdfRatio(ga, gb)
        assert ratio.uniform
        r = ratio(e)
        # at a node where the generated pdf drops to exactly 0 the shortcut may return the
        # limit of the ratio from inside the cell instead of 0 (rounding; measure zero)
        live = pa > 1e-9 * pa.max()
        assert np.allclose(r[live], ref[live], rtol=1e-9, atol=0)
        assert np.all(r[e > 17.05] == 0.0) and np.all(r[e < 0.0] == 0.0)


def test_backgrounds_kept_or_removed_and_oscillations_off(tmp_path, capsys):
    """Background events: r = 1 with the same [backgrounds], 0 without; changed rates are
    refused. Oscillations off in B: P_B = (1, 0, 0), so ν_μ, ν_τ events get r = 0 (identity)."""
    bg = {"enabled": True, "11C": {"rate": 2500.0, "unit": "cpd/100t"}}
    path = tmp_path / "bg.h5"
    generate(_cfg(backgrounds=bg), path, n_events=20_000, seed=6)
    ev = _read(path)
    is_bg = ev["origin"] >= 100
    assert is_bg.sum() > 1000
    for alt, expect in ((_cfg(backgrounds=bg, interaction={"corrections": "tree"}), 1.0),
                        (_cfg(interaction={"corrections": "tree"}), 0.0)):
        reweight(path, alt, tmp_path / "w.h5", force=True)
        with h5py.File(tmp_path / "w.h5", "r") as f:
            assert np.all(f["weights/ratio"][()][is_bg] == expect)
    changed = _alt_file(tmp_path, "[backgrounds.11C]\nrate = 10.0\n")
    assert main(["reweight", str(path), changed, "-o", str(tmp_path / "x.h5")]) == 2
    assert "[backgrounds] added or changed" in capsys.readouterr().err
    s = reweight(path, _cfg(backgrounds=bg, oscillation={"enabled": False}), tmp_path / "o.h5")
    with h5py.File(tmp_path / "o.h5", "r") as f:
        r = f["weights/ratio"][()]
    assert np.all(r[~is_bg & (ev["nu_pdg"] != 12)] == 0.0)
    assert np.all(r[~is_bg & (ev["nu_pdg"] == 12)] > 1.0)       # 1 / P_ee
    assert abs(s.weight_sum - s.expected_events) < Z_MAX * s.weight_sum_mc_error


def test_closure_solar_profile_and_no_earth_matter(file_a, tmp_path):
    """Exponential solar density profile (Bahcall 1989 approximation, generator/solar_model.py)
    and no Earth regeneration (night probabilities = day)."""
    _closure(file_a, tmp_path, 16, oscillation={"solar_profile": "exponential",
                                                "earth_matter": False})


def test_custom_source_shape_and_flux(tmp_path):
    """Custom table spectra (linear between rows): r = (Φ_B f_B)/(Φ_A f_A) at E (identity with
    the tables written here: invented demo shapes)."""
    e = np.linspace(5.0, 12.0, 8)
    (tmp_path / "a.txt").write_text("".join(f"{x} {12.0 - x + 1.0}\n" for x in e))
    (tmp_path / "b.txt").write_text("".join(f"{x} {x - 4.0}\n" for x in e))

    def cfg(table, phi):
        return _cfg(sources={"include": ["8B"], "custom": [
            {"name": "demo", "spectrum_file": str(tmp_path / table), "flux": phi}]})

    path = tmp_path / "c.h5"
    generate(cfg("a.txt", 1.0e6), path, n_events=20_000, seed=9)
    s = reweight(path, cfg("b.txt", 2.0e6), tmp_path / "w.h5")
    with h5py.File(tmp_path / "w.h5", "r") as f:
        r = f["weights/ratio"][()]
    ev = _read(path)
    mine = ev["origin"] == 9
    x = ev["nu_energy"][mine].astype(float)
    fa = (13.0 - x) / np.trapezoid(13.0 - e, e)
    fb = (x - 4.0) / np.trapezoid(e - 4.0, e)
    assert mine.sum() > 1000
    assert np.allclose(r[mine], 2.0 * fb / fa, rtol=1e-9)
    assert np.all(r[~mine] == 1.0)
    assert abs(s.weight_sum - s.expected_events) < Z_MAX * s.weight_sum_mc_error


def test_generated_flavour_tables_are_the_generators(file_a):
    """The ratio's own FlavourModel for the generated configuration gives the same
    probabilities as the one build_plan made for the run (identity, same tables)."""
    from generator.reweight import _flavour_model

    plan = file_a[1].plan
    fm = _flavour_model(plan.config)
    rng = np.random.default_rng(3)
    e, cz = rng.uniform(0.1, 18.0, 5000), rng.uniform(-1.0, 1.0, 5000)
    for region in ("8B", "hep"):
        assert np.array_equal(fm.probabilities(region, e, cz),
                              plan.flavour.probabilities(region, e, cz))


def test_run_list_compared_by_its_intervals(tmp_path, capsys):
    """A run list copied to another path is the same exposure (accepted); one run more is
    another exposure (refused)."""
    runs = "start_utc,stop_utc\n2031-04-01T00:00:00Z,2031-04-03T12:00:00Z\n" \
           "2031-05-01T06:00:00Z,2031-05-20T18:00:00Z\n"
    (tmp_path / "runs.csv").write_text(runs)
    (tmp_path / "moved.csv").write_text(runs)
    (tmp_path / "more.csv").write_text(runs + "2031-06-01T00:00:00Z,2031-06-02T00:00:00Z\n")
    from generator.config import load_config

    path = tmp_path / "r.h5"
    gen = _alt_file(tmp_path, "[sources]\ninclude = [\"8B\"]\n[response]\nenabled = false\n"
                    f"[exposure]\nrun_list = \"{tmp_path / 'runs.csv'}\"\n", "gen.toml")
    generate(load_config(gen), path, n_events=5000, seed=10)
    for name, status in (("moved.csv", 0), ("more.csv", 2)):
        alt = _alt_file(tmp_path, f"[exposure]\nrun_list = \"{tmp_path / name}\"\n"
                        "[interaction]\ncorrections = \"tree\"\n")
        assert main(["reweight", str(path), alt, "-o", str(tmp_path / f"w_{name}.h5")]) == status
    assert "exposure window or run list changed" in capsys.readouterr().err
