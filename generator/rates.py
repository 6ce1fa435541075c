"""Expected event rates by deterministic integration (no Monte Carlo).

Every number is a sum over the tables that :func:`generator.pipeline.build_plan` computes to
normalise a run (:mod:`generator.expected`): per source s, arriving flavour α and solar
cos-zenith bin z, N_{s,z,α} = N_e Φ_s E_z ∫ f_s P_α σ_α dE. Totals above the generation
threshold are therefore *identical* to the ``expected_events`` written in event files; windows
of true recoil energy use exact cross-section differences on the same E quadrature, and
windows of reconstructed energy fold dσ/dT with the detector response's deterministic
probability matrix (trigger efficiency and analysis threshold included).

The flux-model 1σ of each source (relative uncertainty of the flux table, e.g. Vinyoles et al.,
ApJ 835, 202 (2017), Table 6) is propagated linearly: every count of a source scales with its
flux. Sources whose flux is overridden or user-defined carry no model uncertainty.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from . import __version__, spectra
from .config import Config
from .constants import SECONDS_PER_DAY
from .errors import ConfigError
from .expected import reco_window_sigma, window_sigma, zenith_flavour_table

__all__ = ["RATES_SCHEMA", "RATES_SCHEMA_VERSION", "Rates", "compute_rates", "with_threshold",
           "to_dict", "check_edges", "FLAVOUR_GROUPS"]

RATES_SCHEMA = "sunrecoil.rates"
RATES_SCHEMA_VERSION = 2   # 2: optional "backgrounds" block
#: Arriving-flavour groups reported: columns of the (e, μ, τ) tables summed.
FLAVOUR_GROUPS = {"nu_e": (0,), "nu_mu_tau": (1, 2)}


def check_edges(edges: Any, key: str, lo: float | None = None, hi: float | None = None,
                allow_inf: bool = False) -> np.ndarray:
    """Validate bin edges: ≥ 2 strictly increasing finite numbers (``inf`` last if allowed)."""
    try:
        e = np.asarray(edges, dtype=np.float64).ravel()
    except (TypeError, ValueError):
        raise ConfigError(f"{key}: {edges!r} is not a list of numbers") from None
    if e.size < 2:
        raise ConfigError(f"{key}: {e.tolist()} defines no bin; give at least two increasing "
                          "edges")
    fin = e[:-1] if allow_inf else e
    if not np.all(np.isfinite(fin)) or np.isnan(e[-1]) or (e[-1] == -np.inf):
        raise ConfigError(f"{key}: {e.tolist()}; edges must be finite numbers"
                          + (" (the last may be inf)" if allow_inf else ""))
    if not np.all(np.diff(e) > 0):
        raise ConfigError(f"{key}: {e.tolist()}; edges must be strictly increasing")
    if (lo is not None and e[0] < lo) or (hi is not None and e[-1] > hi):
        raise ConfigError(f"{key}: {e.tolist()}; allowed range [{lo}, {hi}]")
    return e


def with_threshold(cfg: Config, threshold: float) -> Config:
    """The configuration with another recoil threshold (MeV); 0 is allowed for rate totals.

    Raises
    ------
    ConfigError
        For a negative or non-finite threshold, or 0 with a magnetic moment: its cross section
        dσ/dT ∝ μ_ν² (1/T − 1/E) (Vogel & Engel, Phys. Rev. D 39, 3378 (1989), eq. 2)
        diverges as T → 0, so the total rate is infinite without a threshold.
    """
    if not (isinstance(threshold, int | float) and math.isfinite(threshold) and threshold >= 0):
        raise ConfigError(f"threshold: {threshold!r} MeV; allowed: a finite number >= 0")
    if threshold <= 0.0 and cfg.interaction.magnetic_moment:
        raise ConfigError(
            "threshold: 0 MeV with interaction.magnetic_moment = "
            f"{cfg.interaction.magnetic_moment}: the magnetic-moment cross section "
            "dσ/dT ∝ 1/T − 1/E diverges at T → 0 (its integral grows like ln(T_max/T_min)), "
            "so the rate has no finite total; give a threshold > 0")
    return dataclasses.replace(
        cfg, interaction=dataclasses.replace(cfg.interaction, threshold_mev=float(threshold)))


@dataclass
class Rates:
    """Expected counts of one configuration; arrays in events for the whole exposure.

    Axes: source, cos-zenith bin of the plan (``zenith_edges``), window, flavour (e, μ, τ).
    """

    names: list[str]
    codes: list[int]
    flux: np.ndarray                  # cm⁻² s⁻¹
    flux_rel_sigma: np.ndarray        # relative 1σ of the flux model (0 when unknown)
    zenith_edges: np.ndarray
    counts: np.ndarray                # (n_src, n_z, 3) above threshold
    live_days: float
    threshold_mev: float
    meta: dict[str, Any]
    t_edges: np.ndarray | None = None
    t_counts: np.ndarray | None = None        # (n_src, n_z, n_t, 3)
    reco_edges: np.ndarray | None = None
    reco_counts: np.ndarray | None = None     # (n_src, n_z, n_reco, 3)
    plan: Any = field(default=None, repr=False)
    # radioactive backgrounds (empty when [backgrounds] is off): axes isotope, zenith bin
    # (plain live time, backgrounds being uniform in time), window
    bg_names: list[str] = field(default_factory=list)
    bg_codes: list[int] = field(default_factory=list)
    bg_counts: np.ndarray | None = None         # (n_iso, n_z), all generated decays
    bg_t_counts: np.ndarray | None = None       # (n_iso, n_z, n_t), deposited energy
    bg_reco_counts: np.ndarray | None = None    # (n_iso, n_z, n_reco), triggered

    # ---------------------------------------------------------------- reductions
    def night_mask(self) -> np.ndarray:
        """Zenith bins below the horizon (cos θ_z < 0), as the generator's ``is_night``."""
        return self.zenith_edges[1:] <= 0.0

    def by_flavour(self, arr: np.ndarray) -> dict[str, np.ndarray]:
        """Sum the last (flavour) axis into :data:`FLAVOUR_GROUPS`."""
        return {g: arr[..., list(cols)].sum(axis=-1) for g, cols in FLAVOUR_GROUPS.items()}

    def day_night(self, arr: np.ndarray) -> dict[str, np.ndarray]:
        """Split the zenith axis (axis 1) into day and night sums."""
        night = self.night_mask()
        return {"day": arr[:, ~night].sum(axis=1), "night": arr[:, night].sum(axis=1)}

    def zenith_rebin(self, arr: np.ndarray, edges: Any) -> np.ndarray:
        """Sum the zenith axis into coarser bins whose edges lie on the plan's grid."""
        e = check_edges(edges, "zenith_edges", -1.0, 1.0)
        grid = self.zenith_edges
        idx = np.searchsorted(grid, e - 1e-9)
        if np.any(idx >= grid.size) or not np.allclose(grid[np.minimum(idx, grid.size - 1)],
                                                       e, atol=1e-9, rtol=0):
            step = float(grid[1] - grid[0])
            raise ConfigError(f"zenith_edges: {e.tolist()}; edges must lie on the exposure "
                              f"table's cos-zenith grid (multiples of {step:g} in [-1, 1])")
        return np.stack([arr[:, a:b].sum(axis=1) for a, b in zip(idx[:-1], idx[1:],
                                                                    strict=True)], axis=1)

    @property
    def total(self) -> float:
        """All sources and flavours above threshold (events)."""
        return float(self.counts.sum())

    @property
    def background_total(self) -> float:
        """All generated background decays (events; 0 without backgrounds)."""
        return 0.0 if self.bg_counts is None else float(self.bg_counts.sum())


def _flux_rel(cfg: Config, name: str) -> float:
    sc = cfg.sources
    if name in dict(sc.flux_override) or name not in spectra.SOURCE_CODES:
        return 0.0
    return float(spectra.flux_uncertainty(name, sc.flux_model))


def _reco_matrix(plan: Any, edges: np.ndarray, t_lo: float) -> tuple[np.ndarray, np.ndarray]:
    if plan.response is None:
        raise ConfigError("reco_edges: windows of reconstructed energy need the detector "
                          "response; set [response] enabled = true")
    t_hi = float(plan.recoil.e_max)          # T_max < E_max
    # nodes spaced by a fraction of the resolution (convex tails, see resolution_grid)
    t_grid = plan.response.resolution_grid(t_lo, t_hi)
    return t_grid, plan.response.energy_matrix(t_grid, edges, 11)


def _reco_sigma(plan: Any, sp: Any, e: np.ndarray, t_th: float, r_e: np.ndarray,
                matrix: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """Reco-window cross sections of one source's quadrature nodes (n, k, 3), cm².

    Continuous-spectrum nodes use the tabulated response matrix; line energies evaluate it at
    every T node (see :func:`generator.expected.reco_window_sigma`).
    """
    lines = np.isin(e, np.array([en for en, _ in sp.lines], dtype=np.float64))
    out = np.zeros((e.size, r_e.size - 1, 3))
    if (~lines).any():
        out[~lines] = reco_window_sigma(plan.xsec, e[~lines], plan.pdgs, t_th, *matrix)
    if lines.any():
        out[lines] = reco_window_sigma(
            plan.xsec, e[lines], plan.pdgs, t_th, *matrix,
            exact=lambda t: plan.response.energy_matrix(t, r_e, 11))
    return out


def compute_rates(cfg: Config, *, threshold: float | None = None, t_edges: Any = None,
                  reco_edges: Any = None, plan: Any = None) -> Rates:
    """Expected counts per source × cos-zenith bin × flavour, optionally in energy windows.

    Parameters
    ----------
    cfg : Config
        Validated configuration.
    threshold : float, optional
        Recoil threshold in MeV replacing ``interaction.threshold_mev`` (0 allowed unless a
        magnetic moment is set, see :func:`with_threshold`).
    t_edges : array_like, optional
        Window edges of the true recoil kinetic energy, MeV (last edge may be ``inf``).
    reco_edges : array_like, optional
        Window edges of the reconstructed energy, MeV (needs ``[response]``).
    plan : RunPlan, optional
        A plan already built for ``cfg`` (skips :func:`~generator.pipeline.build_plan`).

    Returns
    -------
    Rates
    """
    from .pipeline import build_plan

    if threshold is not None:
        cfg = with_threshold(cfg, threshold)
    t_e = check_edges(t_edges, "t_edges", 0.0, None, True) if t_edges is not None else None
    r_e = check_edges(reco_edges, "reco_edges", 0.0) if reco_edges is not None else None
    if plan is None:
        plan = build_plan(cfg)
    edges = plan.zenith_edges
    centres = 0.5 * (edges[1:] + edges[:-1])
    wz = plan.zenith_weights
    t_th = cfg.interaction.threshold_mev
    counts = np.stack([sp.zenith_flavour for sp in plan.sources])
    out = Rates([sp.name for sp in plan.sources], [sp.code for sp in plan.sources],
                np.array([sp.flux for sp in plan.sources]),
                np.array([_flux_rel(cfg, sp.name) for sp in plan.sources]), edges, counts,
                plan.exposure.live_seconds / SECONDS_PER_DAY, t_th,
                _meta(cfg, plan), plan=plan)
    matrix = _reco_matrix(plan, r_e, t_th) if r_e is not None else None
    tabs: dict[str, list[np.ndarray]] = {"t": [], "reco": []}
    kinds = [(key, n - 1) for key, n in (("t", 0 if t_e is None else t_e.size),
                                          ("reco", 0 if r_e is None else r_e.size)) if n]
    for sp in plan.sources:
        keep = sp.quad_weights > 0.0
        e, w = sp.quad_energy[keep], sp.quad_weights[keep]
        if sp.expected_events <= 0.0 or e.size == 0:
            for key, n_bins in kinds:
                tabs[key].append(np.zeros((edges.size - 1, n_bins, 3)))
            continue
        # every window column of the source in one table: the flavour probabilities are
        # evaluated once per source
        sig = np.concatenate([window_sigma(plan.xsec, e, plan.pdgs, t_th, t_e) if key == "t"
                              else _reco_sigma(plan, sp, e, t_th, r_e, matrix)
                              for key, _ in kinds], axis=1) if kinds else None
        if sig is None:
            continue
        tab = plan.n_electrons * sp.flux * zenith_flavour_table(
            plan.flavour, sp.production_region, e, w, sig, centres, wz)
        split = np.cumsum([n for _, n in kinds])[:-1]
        for (key, _), part in zip(kinds, np.split(tab, split, axis=1), strict=True):
            tabs[key].append(part)
    if t_e is not None:
        out.t_edges, out.t_counts = t_e, np.stack(tabs["t"])
    if r_e is not None:
        out.reco_edges, out.reco_counts = r_e, np.stack(tabs["reco"])
    if plan.backgrounds is not None:
        _add_backgrounds(out, plan, t_e, r_e)
    return out


def _add_backgrounds(out: Rates, plan: Any, t_e: np.ndarray | None,
                     r_e: np.ndarray | None) -> None:
    """Background counts: rate × mass × live time, split by the plain live time per zenith bin.

    Background decays are uniform in live time (:mod:`generator.backgrounds.stage`), so the
    fraction in zenith bin z is the live time with cos θ_z in z over the total live time;
    energy windows come from :func:`generator.backgrounds.expected.window_counts`.
    """
    from .backgrounds.expected import window_counts

    bg = plan.backgrounds
    live = plan.exposure.zenith_exposure(out.zenith_edges, weighted=False)
    frac = live / live.sum() if live.sum() > 0 else live
    out.bg_names = [p.iso.name for p in bg.isotopes]
    out.bg_codes = [int(p.iso.code) for p in bg.isotopes]
    out.bg_counts = bg.expected[:, None] * frac[None, :]
    if t_e is not None:
        out.bg_t_counts = window_counts(plan, t_e, False)[:, None, :] * frac[None, :, None]
    if r_e is not None:
        out.bg_reco_counts = window_counts(plan, r_e, True)[:, None, :] * frac[None, :, None]


def _meta(cfg: Config, plan: Any) -> dict[str, Any]:
    ex = plan.exposure
    return {"tool_version": __version__, "config_source": cfg.source_file or "embedded default",
            "detector": cfg.detector.name, "flux_model": cfg.sources.flux_model,
            "corrections": cfg.interaction.corrections,
            "oscillation": cfg.oscillation.preset if cfg.oscillation.enabled else "off",
            "target_electrons": plan.n_electrons, "live_seconds": ex.live_seconds,
            "mean_inverse_r2": ex.mean_inverse_r2}


def _cell(r: Rates, arr: np.ndarray) -> dict[str, Any]:
    """JSON cell of one source: arr has axes (zenith, flavour) → totals and splits."""
    night = r.night_mask()
    fl = {g: float(arr[:, list(c)].sum()) for g, c in FLAVOUR_GROUPS.items()}
    return {"events": float(arr.sum()), "per_day": float(arr.sum()) / r.live_days,
            "day": float(arr[~night].sum()), "night": float(arr[night].sum()), **fl}


def _bg_cell(r: Rates, arr: np.ndarray) -> dict[str, Any]:
    """JSON cell of one background isotope: arr has the zenith axis only."""
    night = r.night_mask()
    return {"events": float(arr.sum()), "per_day": float(arr.sum()) / r.live_days,
            "day": float(arr[~night].sum()), "night": float(arr[night].sum())}


def _bg_windows(r: Rates, edges: np.ndarray, arr: np.ndarray) -> list[dict[str, Any]]:
    return [{"lo_mev": float(edges[j]), "hi_mev": float(edges[j + 1]),
             **_bg_cell(r, arr[:, j])} for j in range(edges.size - 1)]


def _backgrounds_dict(r: Rates) -> dict[str, Any]:
    """The ``backgrounds`` block of the report (isotopes and their total)."""
    iso = []
    for i, name in enumerate(r.bg_names):
        d: dict[str, Any] = {"name": name, "code": r.bg_codes[i], **_bg_cell(r, r.bg_counts[i])}
        if r.bg_t_counts is not None:
            d["t_windows"] = _bg_windows(r, r.t_edges, r.bg_t_counts[i])
        if r.bg_reco_counts is not None:
            d["reco_windows"] = _bg_windows(r, r.reco_edges, r.bg_reco_counts[i])
        iso.append(d)
    total: dict[str, Any] = _bg_cell(r, r.bg_counts.sum(axis=0))
    if r.bg_t_counts is not None:
        total["t_windows"] = _bg_windows(r, r.t_edges, r.bg_t_counts.sum(axis=0))
    if r.bg_reco_counts is not None:
        total["reco_windows"] = _bg_windows(r, r.reco_edges, r.bg_reco_counts.sum(axis=0))
    return {"isotopes": iso, "total": total}


def _windows(r: Rates, edges: np.ndarray, arr: np.ndarray) -> list[dict[str, Any]]:
    return [{"lo_mev": float(edges[j]), "hi_mev": float(edges[j + 1]), **_cell(r, arr[:, j])}
            for j in range(edges.size - 1)]


def to_dict(r: Rates, zenith_edges: Any = None) -> dict[str, Any]:
    """JSON-ready report (schema :data:`RATES_SCHEMA`, version :data:`RATES_SCHEMA_VERSION`).

    Counts are events for the whole exposure, ``per_day`` events per live day; each source's
    ``flux_sigma_events`` is its count times the flux model's relative 1σ; the total's is the
    quadrature sum over sources (treated as uncorrelated).
    """
    zb = check_edges(zenith_edges, "zenith_edges", -1.0, 1.0) if zenith_edges is not None \
        else None
    zc = r.zenith_rebin(r.counts, zb) if zb is not None else None
    sources = []
    for s, name in enumerate(r.names):
        cell = _cell(r, r.counts[s])
        d: dict[str, Any] = {"name": name, "code": r.codes[s], "flux_cm2_s": float(r.flux[s]),
                             "flux_rel_sigma": float(r.flux_rel_sigma[s]), **cell,
                             "flux_sigma_events": cell["events"] * float(r.flux_rel_sigma[s])}
        if zc is not None:
            d["zenith"] = {g: zc[s][:, list(c)].sum(axis=1).tolist()
                           for g, c in FLAVOUR_GROUPS.items()}
        if r.t_counts is not None:
            d["t_windows"] = _windows(r, r.t_edges, r.t_counts[s])
        if r.reco_counts is not None:
            d["reco_windows"] = _windows(r, r.reco_edges, r.reco_counts[s])
        sources.append(d)
    total = _cell(r, r.counts.sum(axis=0))
    total["flux_sigma_events"] = float(math.sqrt(sum(d["flux_sigma_events"] ** 2
                                                     for d in sources)))
    out: dict[str, Any] = {
        "schema": RATES_SCHEMA, "schema_version": RATES_SCHEMA_VERSION, **r.meta,
        "threshold_mev": r.threshold_mev, "live_days": r.live_days,
        "units": {"events": "events over the whole exposure", "per_day": "events per live day",
                  "flux_cm2_s": "cm^-2 s^-1 at 1 AU", "lo_mev/hi_mev": "MeV",
                  "t_windows": "true recoil kinetic energy",
                  "reco_windows": "reconstructed energy, triggered and above the analysis "
                                  "threshold"},
        "flavour_groups": {"nu_e": "arriving as nu_e", "nu_mu_tau": "arriving as nu_mu or "
                                                                    "nu_tau"},
        "sources": sources, "total": total}
    if zb is not None:
        out["zenith_edges"] = zb.tolist()
    if r.t_counts is not None:
        out["total"]["t_windows"] = _windows(r, r.t_edges, r.t_counts.sum(axis=0))
    if r.reco_counts is not None:
        out["total"]["reco_windows"] = _windows(r, r.reco_edges,
                                                r.reco_counts.sum(axis=0))
    if r.bg_counts is not None:
        out["backgrounds"] = _backgrounds_dict(r)
        out["units"]["backgrounds"] = (
            "generated decays (rate x mass x live time x visible fraction); t_windows of "
            "the deposited energy (kinetic + accompanying gamma, unquenched), reco_windows of "
            "triggered events; day/night by live time")
    return out
