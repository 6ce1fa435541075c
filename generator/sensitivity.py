"""Expected sensitivity of a configuration: Asimov scans over exposure and seeded toys.

The binned Poisson likelihood (:mod:`generator.likelihood`) runs over (day/night,) recoil
energy (reconstructed with ``[response]``, true otherwise) × cos θ_sun bins. Its templates
(:mod:`generator.sensitivity_templates`) are the deterministic rate tables or histograms of a
high-statistics event file. Parameters:

* the POI (``[sensitivity] poi``): ``numutau_scale`` a, ``pee_slope`` b (MeV⁻¹),
  ``day_night`` d, ``sterile_fraction`` f_s (the P_ee modification of
  :mod:`generator.sensitivity_templates`, applied to every source), or the normalisation of
  the ⁸B or ⁷Be flux (``flux_8B``, ``flux_7Be``, relative to the flux model, unconstrained);
  the other physics parameters are held at their nominal values;
* nuisances with Gaussian priors: every source's flux normalisation (the flux model's relative
  1σ, e.g. Vinyoles et al., ApJ 835, 202 (2017), Table 6, via
  :func:`generator.spectra.flux_uncertainty`; sources with an overridden flux have none and
  are fixed), every background isotope's normalisation, the energy scale and the energy
  resolution (template morphing).

For each exposure the templates are scaled with live time and the Asimov data set gives the
median expected 1σ interval (profile likelihood, q_A = 1) and the median discovery significance
√q₀,A against ``poi_null`` (Cowan, Cranmer, Gross & Vitells, Eur. Phys. J. C 71, 1554 (2011)).
Toys (``n_toys``) draw Poisson counts and Gaussian auxiliary values from a recorded
:class:`numpy.random.SeedSequence` and report the fitted values, pulls and the coverage of the
68 % profile interval.
"""

from __future__ import annotations

import dataclasses
import math
import secrets
import time
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .errors import ConfigError, InputError
from .likelihood import Component, FitResult, Parameter, TemplateModel, asimov_z
from .sensitivity_config import POI_NAMES, SensitivityConfig, check_exposures
from .sensitivity_templates import Binning, Templates, build_templates, file_templates

__all__ = ["SENSITIVITY_SCHEMA", "SENSITIVITY_SCHEMA_VERSION", "Analysis", "prepare",
           "build_model", "asimov_scan", "run_toys", "run_sensitivity", "render", "plot",
           "nuisance_names", "resolve_config"]

SENSITIVITY_SCHEMA = "sunrecoil.sensitivity"
SENSITIVITY_SCHEMA_VERSION = 1
#: Physics parameters of the P_ee modification: (nominal value, moment index).
PHYSICS = {"numutau_scale": (1.0, 1), "day_night": (1.0, 2), "pee_slope": (0.0, 3),
           "sterile_fraction": (0.0, 4)}
#: Default energy bins: this many bins of this width (MeV) from the threshold.
DEFAULT_BINS, DEFAULT_WIDTH = 12, 0.5


@dataclasses.dataclass
class Analysis:
    """A prepared analysis: configuration, plan, binning, templates and the likelihood model."""

    cfg: Any
    sens: SensitivityConfig
    plan: Any
    binning: Binning
    templates: Templates
    model: TemplateModel
    mask: np.ndarray


def resolve_config(cfg: Any, **overrides: Any) -> SensitivityConfig:
    """The ``[sensitivity]`` section with CLI overrides (None values are ignored).

    Raises
    ------
    ConfigError
        For an empty exposure list and the checks of :mod:`generator.sensitivity_config`.
    """
    base = cfg.sensitivity if cfg.sensitivity is not None else SensitivityConfig()
    over = {k: v for k, v in overrides.items() if v is not None}
    if "exposures_days" in over:
        over["exposures_days"] = check_exposures(list(over["exposures_days"]),
                                                 "--exposures")
    if "poi" in over and over["poi"] not in POI_NAMES:
        raise ConfigError(f"--poi: {over['poi']!r} is not allowed; use one of {POI_NAMES}")
    if "n_toys" in over and not 0 <= over["n_toys"] <= 1_000_000:
        raise ConfigError(f"--toys: {over['n_toys']} is not allowed; give 0 to 1000000")
    if "template_file" in over:
        over["templates"] = "file"
    sens = dataclasses.replace(base, **over)
    if not sens.exposures_days:
        raise ConfigError("sensitivity.exposures_days: the exposure list is empty; give live "
                          "times in days (e.g. exposures_days = [100, 365]) or --exposures")
    return sens


def _edges(plan: Any, sens: SensitivityConfig, reco: bool) -> np.ndarray:
    from .rates import check_edges

    if sens.energy_edges_mev is not None:
        e = np.asarray(sens.energy_edges_mev, dtype=np.float64)
    else:
        lo = plan.response.params["analysis_threshold_mev"] if reco else \
            plan.config.interaction.threshold_mev
        e = lo + DEFAULT_WIDTH * np.arange(DEFAULT_BINS + 1)
    return check_edges(e, "sensitivity.energy_edges_mev", 0.0)


def nuisance_names(plan: Any) -> list[str]:
    """Names of the nuisance parameters a plan can have."""
    out = [f"flux_{sp.name}" for sp in plan.sources]
    if plan.backgrounds is not None:
        out += [f"bkg_{p.iso.name}" for p in plan.backgrounds.isotopes]
    return out + ["energy_scale", "energy_resolution"]


def prepare(cfg: Any, sens: SensitivityConfig, plan: Any = None,
            templates: Templates | None = None) -> Analysis:
    """Build the plan (unless given), the templates and the likelihood model."""
    from .pipeline import build_plan

    if plan is None:
        plan = build_plan(cfg)
    reco = plan.response is not None
    edges = _edges(plan, sens, reco)
    directional = (not reco) or plan.response.directional
    n_cos = sens.cos_sun_bins if directional else 1
    binning = Binning(edges, np.linspace(-1.0, 1.0, n_cos + 1), sens.day_night, reco)
    if templates is None:
        if sens.templates == "file":
            templates = file_templates(sens.template_file, plan, binning, sens)
        else:
            templates = build_templates(plan, binning, sens)
    model, mask = build_model(plan, sens, templates)
    return Analysis(cfg, sens, plan, binning, templates, model, mask)


def _flux_prior(plan: Any, sens: SensitivityConfig, name: str) -> float:
    from .rates import _flux_rel

    given = dict(sens.flux_sigma)
    if name in given:
        return given[name]
    return _flux_rel(plan.config, name)


def build_model(plan: Any, sens: SensitivityConfig, t: Templates
                ) -> tuple[TemplateModel, np.ndarray]:
    """The likelihood model of the templates (parameters of the module docstring).

    Returns the model and the mask of the kept (non-empty) bins of the flattened binning.

    Raises
    ------
    ConfigError
        For an unknown POI or nuisance name, a flux POI of a source that is not included, or
        bins that are all empty.
    """
    poi = sens.poi
    if poi not in POI_NAMES:
        raise ConfigError(f"sensitivity.poi: {poi!r} is not allowed; use one of {POI_NAMES}")
    known = nuisance_names(plan)
    for f in sens.fix:
        if f not in known:
            raise ConfigError(f"sensitivity.fix: {f!r} is not a nuisance of this "
                              f"configuration; allowed: {known}")
    given = dict(sens.flux_sigma)
    for name in given:
        if name not in t.sources:
            raise ConfigError(f"sensitivity.flux_sigma.{name}: not an included source; "
                              f"included: {t.sources}")
    if poi.startswith("flux_") and poi[5:] not in t.sources:
        raise ConfigError(f"sensitivity.poi: {poi!r} needs source {poi[5:]!r} in "
                          f"sources.include; included: {t.sources}")
    params: list[Parameter] = []
    for name, (nominal, _) in PHYSICS.items():
        if name == poi:
            params.append(Parameter(name, sens.truth, None))
        else:
            params.append(Parameter(name, nominal, None, fixed=True))
    for src in t.sources:
        pname = f"flux_{src}"
        if pname == poi:
            params.append(Parameter(pname, sens.truth, None, lo=0.0))
            continue
        sig = _flux_prior(plan, sens, src)
        fixed = sig <= 0.0 or pname in sens.fix
        params.append(Parameter(pname, 1.0, sig if sig > 0 else None, lo=0.0, fixed=fixed))
    bg_sig = dict(sens.background_sigma_by_isotope)
    for iso in t.bkg_names:
        pname = f"bkg_{iso}"
        params.append(Parameter(pname, 1.0, bg_sig.get(iso, sens.background_sigma), lo=0.0,
                                fixed=pname in sens.fix))
    morphs = []
    for pname, v_up, v_dn, sig in (("energy_scale", 1, 2, t.scale_sigma),
                                   ("energy_resolution", 3, 4, t.res_sigma)):
        if np.all(np.isnan(t.signal[:, :, v_up])):
            continue
        morphs.append((pname, v_up, v_dn))
        params.append(Parameter(pname, 0.0, sig, lo=-5.0 * sig, hi=5.0 * sig, morph=True,
                                fixed=pname in sens.fix))
    n_sig = float(np.nansum(t.nominal_signal()))
    if not n_sig > 1e-6:
        edges = t.binning.energy_edges
        raise ConfigError(f"sensitivity.energy_edges_mev: [{edges[0]:g}, …, {edges[-1]:g}] "
                          f"MeV: no expected signal event falls in the analysis bins "
                          f"({n_sig:.3g}); choose windows that overlap the recoil spectra")
    comps: list[Component] = []
    moment_factor = {0: (), 1: (("numutau_scale", 1.0, 0.0),), 2: (("day_night", 1.0, 0.0),),
                     3: (("pee_slope", 1.0, 0.0),), 4: (("sterile_fraction", -1.0, 1.0),)}

    def variants(arr: np.ndarray) -> tuple[dict, dict]:
        up, dn = {}, {}
        for pname, vu, vd in morphs:
            if np.all(np.isfinite(arr[vu])):
                up[pname] = arr[vu].ravel()
                if np.all(np.isfinite(arr[vd])):
                    dn[pname] = arr[vd].ravel()
        return up, dn

    for s, src in enumerate(t.sources):
        for m in range(5):
            arr = t.signal[s, m]
            if not np.any(arr[0] != 0.0):
                continue
            up, dn = variants(arr)
            comps.append(Component(f"{src}:M{m}", arr[0].ravel(),
                                   ((f"flux_{src}", 1.0, 0.0),) + moment_factor[m], up, dn))
    for i, iso in enumerate(t.bkg_names):
        arr = t.background[i]
        if not np.any(arr[0] != 0.0):
            continue
        up, dn = variants(arr)
        comps.append(Component(f"bkg:{iso}", arr[0].ravel(), ((f"bkg_{iso}", 1.0, 0.0),),
                               up, dn))
    if not comps:
        raise ConfigError("sensitivity.energy_edges_mev: no expected event falls in the "
                          "analysis bins; choose windows that overlap the spectra")
    total = sum(np.abs(c.template) for c in comps)
    mask = total > 0.0
    if not mask.any():
        raise ConfigError("sensitivity.energy_edges_mev: every analysis bin is empty")
    for c in comps:
        c.template = c.template[mask]
        c.up = {k: v[mask] for k, v in c.up.items()}
        c.down = {k: v[mask] for k, v in c.down.items()}
    model = TemplateModel(params, comps, sens.minimiser)
    return model, mask


def _asimov_best(model: TemplateModel) -> tuple[np.ndarray, np.ndarray, FitResult]:
    n, aux = model.asimov()
    return n, aux, FitResult(model.centre.copy(), model.nll2(model.centre, n, aux), True)


def _counts(an: Analysis, factor: float) -> tuple[float, float]:
    t = an.templates
    sig = float(t.nominal_signal().sum()) * factor
    bkg = float(t.background[:, 0].sum()) * factor if t.background.size else 0.0
    return sig, bkg


def asimov_scan(an: Analysis, exposures: Any = None) -> list[dict[str, Any]]:
    """Median expected 1σ interval and discovery significance per exposure (Asimov data).

    Returns one row per exposure: ``exposure_days``, ``signal_events``, ``background_events``,
    ``sigma`` (half width of the q_A ≤ 1 profile interval), ``interval`` (its end points),
    ``sigma_fisher`` (the expected-information estimate), ``z_discovery`` (√q₀,A against
    ``poi_null``) and ``fit_calls``.
    """
    sens = an.sens
    exposures = sens.exposures_days if exposures is None else exposures
    rows = []
    for days in exposures:
        f = float(days) / an.templates.live_days
        m = an.model.with_exposure(f)
        m.scale = np.where(m.fixed, 1.0, m.fisher_errors())
        m.scale[m.scale <= 0] = 1.0
        n, aux, best = _asimov_best(m)
        i = m.index[sens.poi]
        lo, hi = m.interval(sens.poi, n, aux, best, 1.0, float(m.scale[i]))
        z = asimov_z(m, sens.poi, sens.null, best, (n, aux)) if sens.null != sens.truth \
            else 0.0
        s, b = _counts(an, f)
        rows.append({"exposure_days": float(days), "signal_events": s, "background_events": b,
                     "sigma": 0.5 * (hi - lo), "interval": [lo, hi],
                     "sigma_fisher": float(m.scale[i]), "z_discovery": z,
                     "fit_calls": m.n_calls})
    return rows


def run_toys(an: Analysis, n_toys: int, seed: int | None = None,
             exposure_days: float | None = None, intervals: bool = True) -> dict[str, Any]:
    """Seeded pseudo-experiments at one exposure: fitted POI, pulls and interval coverage.

    Toy k draws from ``numpy.random.default_rng(SeedSequence(seed, spawn_key=(k,)))`` (one
    Poisson count per bin, then one normal per constrained nuisance), so every toy is
    reproducible on its own. The pull is (p̂ − p_true)/σ̂ with σ̂ the half of the 68.27 %
    profile interval on the side of p_true (the parabolic error of the numerical Hessian when
    ``intervals`` is false); coverage counts toys whose profile interval contains p_true.
    """
    sens = an.sens
    entropy = int(seed) if seed is not None else secrets.randbits(128)
    days = float(exposure_days if exposure_days is not None else sens.exposures_days[0])
    m = an.model.with_exposure(days / an.templates.live_days)
    m.scale = np.where(m.fixed, 1.0, m.fisher_errors())
    i = m.index[sens.poi]
    truth = float(m.centre[i])
    fitted, errors, pulls, covered, failed = [], [], [], [], 0
    t0 = time.perf_counter()
    for k in range(n_toys):
        rng = np.random.default_rng(np.random.SeedSequence(entropy, spawn_key=(k,)))
        n, aux = m.toy(rng)
        best = m.fit(n, aux, start=m.centre)
        if not best.success:
            failed += 1
            continue
        try:
            err = float(m.errors(best.theta, n, aux)[i]) if not intervals else \
                _gn_error(m, best.theta, n, i)
        except Exception:              # singular Hessian of one toy: counted as failed
            failed += 1
            continue
        if not err > 0.0:
            failed += 1
            continue
        p_hat = float(best.theta[i])
        fitted.append(p_hat)
        errors.append(err)
        if intervals:
            lo, hi = m.interval(sens.poi, n, aux, best, 1.0, err, xtol=1e-5)
            covered.append(lo <= truth <= hi)
            errors[-1] = 0.5 * (hi - lo)
            # asymmetric pull: the interval's half on the side of the truth
            side = (hi - p_hat) if truth >= p_hat else (p_hat - lo)
            pulls.append((p_hat - truth) / side if side > 0 else (p_hat - truth) / err)
        else:
            pulls.append((p_hat - truth) / err)
    fitted_a = np.array(fitted)
    pulls_a = np.array(pulls)
    n_ok = fitted_a.size
    out: dict[str, Any] = {
        "n_toys": int(n_toys), "n_failed": failed, "seed_entropy": str(entropy),
        "exposure_days": days, "truth": truth,
        "fitted_mean": float(fitted_a.mean()) if n_ok else math.nan,
        "fitted_std": float(fitted_a.std(ddof=1)) if n_ok > 1 else math.nan,
        "error_median": float(np.median(errors)) if n_ok else math.nan,
        "pull_mean": float(pulls_a.mean()) if n_ok else math.nan,
        "pull_std": float(pulls_a.std(ddof=1)) if n_ok > 1 else math.nan,
        "seconds": time.perf_counter() - t0}
    if intervals and covered:
        c = float(np.mean(covered))
        out["coverage_68"] = c
        out["coverage_68_sigma"] = math.sqrt(0.6827 * 0.3173 / len(covered))
    out["fitted"] = fitted
    out["pulls"] = [float(p) for p in pulls]
    return out


def _gn_error(m: TemplateModel, theta: np.ndarray, n: np.ndarray, i: int) -> float:
    """Parabolic error of parameter i from the Gauss–Newton Hessian (a cheap first guess)."""
    idx = np.flatnonzero(~m.fixed)
    h = m.gauss_newton(theta, n, idx)
    cov = 2.0 * np.linalg.inv(h)
    return float(math.sqrt(max(cov[list(idx).index(i), list(idx).index(i)], 0.0)))


def run_sensitivity(cfg: Any, sens: SensitivityConfig | None = None, plan: Any = None,
                    templates: Templates | None = None) -> dict[str, Any]:
    """The full report (schema :data:`SENSITIVITY_SCHEMA`): Asimov scan, toys if asked."""
    if sens is None:
        sens = resolve_config(cfg)
    t0 = time.perf_counter()
    an = prepare(cfg, sens, plan, templates)
    t1 = time.perf_counter()
    rows = asimov_scan(an)
    t2 = time.perf_counter()
    rep = report(an, rows)
    rep["seconds"] = {"templates": t1 - t0, "asimov_scan": t2 - t1}
    if sens.n_toys > 0:
        toys = run_toys(an, sens.n_toys, sens.toy_seed, sens.toy_exposure_days)
        toys.pop("fitted")
        toys.pop("pulls")
        asimov_sigma = asimov_scan(an, [toys["exposure_days"]])[0]["sigma"]
        toys["asimov_sigma"] = asimov_sigma
        rep["toys"] = toys
        rep["seconds"]["toys"] = toys.pop("seconds")
    return rep


def report(an: Analysis, rows: list[dict[str, Any]]) -> dict[str, Any]:
    """JSON-ready report of an analysis and its Asimov rows."""
    cfg, sens, t, m = an.cfg, an.sens, an.templates, an.model
    b = an.binning
    params = [{"name": p.name, "centre": p.centre, "sigma": p.sigma, "fixed": p.fixed,
               "kind": ("poi" if p.name == sens.poi else "morph" if p.morph else
                        "physics" if p.name in PHYSICS else "normalisation")}
              for p in m.params]
    sig = t.nominal_signal().sum(axis=(1, 2, 3))
    bkg = t.background[:, 0].sum(axis=(1, 2, 3)) if t.background.size else np.zeros(0)
    return {
        "schema": SENSITIVITY_SCHEMA, "schema_version": SENSITIVITY_SCHEMA_VERSION,
        "tool_version": __version__, "config_source": cfg.source_file or "embedded default",
        "detector": cfg.detector.name, "poi": sens.poi, "poi_truth": sens.truth,
        "poi_null": sens.null, "templates": t.mode, **t.meta, "minimiser": sens.minimiser,
        "bins": {"energy": "reconstructed" if b.reco else "true recoil kinetic",
                 "energy_edges_mev": b.energy_edges.tolist(),
                 "cos_sun_edges": b.cos_edges.tolist(), "groups": list(b.groups),
                 "n_bins": int(np.prod(b.shape)), "n_used": int(an.mask.sum())},
        "config_live_days": t.live_days,
        "expected_config_exposure": {
            "signal": {n: float(v) for n, v in zip(t.sources, sig, strict=True)},
            **({} if t.flavour_split is None else {
                f"signal_{g}": {n: float(t.flavour_split[i, k].sum())
                                for i, n in enumerate(t.sources)}
                for k, g in enumerate(("nu_e", "nu_mu_tau"))}),
            "background": {n: float(v) for n, v in zip(t.bkg_names, bkg, strict=True)}},
        "parameters": params, "exposures": rows,
        "units": {"exposure_days": "live days", "signal_events/background_events":
                  "expected events in the analysis bins", "pee_slope": "MeV^-1",
                  "flux_*": "relative to the flux model",
                  "sigma": "median expected 1 sigma (Asimov, profile likelihood)",
                  "z_discovery": "median significance (Asimov) of rejecting poi_null"},
        "method": "binned Poisson likelihood, Gaussian nuisance constraints, profile "
                  "likelihood; Asimov data set (Cowan, Cranmer, Gross & Vitells, EPJC 71, "
                  "1554 (2011))"}


def _fmt(x: float) -> str:
    return f"{x:.4g}" if math.isfinite(x) else str(x)


def render(rep: dict[str, Any]) -> str:
    """The readable table of a :func:`run_sensitivity` report."""
    b = rep["bins"]
    out = [f"sunrecoil sensitivity — {rep['config_source']} ({rep['detector']})\n",
           f"POI {rep['poi']} (truth {rep['poi_truth']:g}, null {rep['poi_null']:g}); "
           f"{b['energy']} energy {b['energy_edges_mev'][0]:g}–{b['energy_edges_mev'][-1]:g} "
           f"MeV in {len(b['energy_edges_mev']) - 1} bins × {len(b['cos_sun_edges']) - 1} "
           f"cos θ_sun bins × {'/'.join(b['groups'])}; templates from {rep['templates']}\n"]
    ex = rep["expected_config_exposure"]
    if "signal_nu_e" in ex:
        parts = [f"{n} {_fmt(v)} (ν_e {_fmt(ex['signal_nu_e'][n])}, ν_μτ "
                 f"{_fmt(ex['signal_nu_mu_tau'][n])})" for n, v in ex["signal"].items()]
        out.append(f"in the bins for the configured {rep['config_live_days']:g} live days: "
                   f"{'; '.join(parts)}; backgrounds {_fmt(sum(ex['background'].values()))}\n")
    free = [p["name"] for p in rep["parameters"]
            if not p["fixed"] and p["kind"] != "poi"]
    out.append(f"profiled nuisances: {', '.join(free) if free else 'none'}\n\n")
    head = ["live days", "signal", "background", "σ(POI)", "interval", "σ Fisher", "Z"]
    rows = [[_fmt(r["exposure_days"]), _fmt(r["signal_events"]),
             _fmt(r["background_events"]), _fmt(r["sigma"]),
             f"[{_fmt(r['interval'][0])}, {_fmt(r['interval'][1])}]",
             _fmt(r["sigma_fisher"]), _fmt(r["z_discovery"])] for r in rep["exposures"]]
    w = [max(len(x[i]) for x in rows + [head]) for i in range(len(head))]
    line = "  ".join(h.rjust(w[i]) for i, h in enumerate(head))
    out.append(line + "\n" + "-" * len(line) + "\n")
    out += ["  ".join(c.rjust(w[i]) for i, c in enumerate(r)) + "\n" for r in rows]
    if "toys" in rep:
        t = rep["toys"]
        out.append(f"\n{t['n_toys']} toys at {t['exposure_days']:g} live days (seed "
                   f"{t['seed_entropy']}, {t['n_failed']} failed): fitted {rep['poi']} "
                   f"mean {_fmt(t['fitted_mean'])} std {_fmt(t['fitted_std'])} (Asimov σ "
                   f"{_fmt(t['asimov_sigma'])}); pull mean {_fmt(t['pull_mean'])} std "
                   f"{_fmt(t['pull_std'])}")
        if "coverage_68" in t:
            out.append(f"; 68 % interval coverage {_fmt(t['coverage_68'])} ± "
                       f"{_fmt(t['coverage_68_sigma'])}")
        out.append("\n")
    out.append("\nσ: median expected 1σ (Asimov data, profile likelihood q = 1); Z: median "
               "discovery significance √q₀ against the null (Cowan et al. 2011)\n")
    return "".join(out)


def check_plot_target(path: str) -> Path:
    """Validate a ``--plot`` target before any work: .png name, existing folder."""
    p = Path(path)
    if p.suffix.lower() != ".png":
        raise InputError(f"--plot {path!r}: give a file name ending in .png")
    if not p.parent.is_dir():
        raise InputError(f"--plot {path!r}: the folder {str(p.parent)!r} does not exist")
    if p.exists() and p.is_dir():
        raise InputError(f"--plot {path!r} is a folder")
    return p


def plot(rep: dict[str, Any], path: str) -> Path:
    """PNG of the median expected uncertainty (and significance) versus exposure (Agg)."""
    from .export import require_extra

    require_extra("matplotlib", "plots", "sensitivity --plot")
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    from .plots import PALETTE, STYLE

    target = check_plot_target(path)
    rows = rep["exposures"]
    x = np.array([r["exposure_days"] for r in rows])
    y = np.array([r["sigma"] for r in rows])
    yf = np.array([r["sigma_fisher"] for r in rows])
    z = np.array([r["z_discovery"] for r in rows])
    order = np.argsort(x)
    with matplotlib.rc_context(STYLE):
        fig, ax = plt.subplots(figsize=(6.0, 4.0))
        ax.plot(x[order], y[order], "o-", color=PALETTE[0], label="profile likelihood (Asimov)")
        ax.plot(x[order], yf[order], "--", color=PALETTE[1], label="Fisher information")
        ax.set_xscale("log" if x.size > 1 and x.max() / x.min() > 20 else "linear")
        ax.set_yscale("log" if y.size > 1 and y.max() / max(y.min(), 1e-300) > 20 else "linear")
        ax.set_xlabel("live time (days)")
        ax.set_ylabel(f"median expected 1σ of {rep['poi']}")
        ax.set_title(f"{rep['detector']}"[:70])
        if np.any(z != 0):
            ax2 = ax.twinx()
            ax2.plot(x[order], z[order], ":", color=PALETTE[2], label="discovery Z (Asimov)")
            ax2.set_ylabel(f"Z against {rep['poi']} = {rep['poi_null']:g}")
            ax2.grid(False)
            h1, l1 = ax.get_legend_handles_labels()
            h2, l2 = ax2.get_legend_handles_labels()
            ax.legend(h1 + h2, l1 + l2, loc="best")
        else:
            ax.legend(loc="best")
        fig.tight_layout()
        fig.savefig(target, format="png")
        plt.close(fig)
    return target
