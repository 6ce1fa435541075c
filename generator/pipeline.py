"""The generation pipeline: from a validated configuration to an event file.

Physics of the event density
----------------------------
For source s with flux Φ_s at 1 AU and normalised spectrum f_s(E), the differential number of
recoil-electron events with kinetic energy T above the generation threshold is

    dN = N_e Φ_s (1 AU / r(t))² f_s(E) Σ_α P_α(s, E, θ_z(t)) dσ_α/dT  dt dE dT,

with N_e target electrons, r(t) the Earth–Sun distance, P_α the probability that the νe
produced by source s arrives as flavour α (day or night, through the Sun's zenith angle θ_z)
and dσ_α/dT the ν_α–e cross section. Events are drawn exactly from this density:

1. the source, in proportion to its expected count (computed deterministically, see
   :func:`build_plan`);
2. (E, t) from the proposal f_s(E) B(E) × (1 AU / r(t))² on live time, where the envelope
   B(E) ≥ Σ_α P_α(E, θ_z) σ_α(E; T > T_th) for every zenith angle, provably
   (:mod:`generator.envelope`; every candidate is checked and a violation stops the run);
3. the flavour α with probability P_α σ_α / B; the remaining probability rejects the pair,
   which is drawn again (exact rejection sampling; the acceptance, 95–99 %, never enters the
   normalisation);
4. T from dσ_α/dT (E) above the threshold, the electron direction from exact two-body
   kinematics around the Sun-to-detector direction at time t, and the vertex uniformly in
   the fiducial volume.

Randomness and stream stability
-------------------------------
One :class:`numpy.random.SeedSequence` per run; chunk k of ``chunk_size`` events draws from
``SeedSequence(entropy, spawn_key=(k,))`` only. A chunk is therefore a pure function of
(package version, configuration, seed, chunk index, chunk size): reruns are bit-identical, and a
later resume or a shard that generates chunks k₀…k₁ produces exactly the same events.
The Poisson-fluctuated event count (``count_mode = "poisson"``) uses spawn key (2³¹,).
With ``[backgrounds]`` on, the origin of each event is drawn from one combined table over
(sources, background isotopes) by the same uniform that picks the source, and background events
are filled from ``spawn_key=(k, 2)`` (:mod:`generator.backgrounds.stage`); the weights stay
expected events (signal + backgrounds) per generated event.
"""

from __future__ import annotations

import logging
import os
import secrets
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from . import kinematics, spectra
from .backgrounds import background_seed
from .cache import CacheRejected, cached_arrays, check_arrays, code_key
from .chunks import FLAVOUR_PDG, chunk_seed, generate_chunk
from .chunks import sigma_matrix as _sigma_matrix
from .config import MAX_EVENTS, Config
from .constants import SECONDS_PER_DAY
from .envelope import ENVELOPE_POINTS, Envelope, build_envelope, cell_bounds, source_grid
from .errors import ConfigError, InputError
from .expected import quadrature_weights, zenith_flavour_table
from .exposure import Exposure, load_run_list, parse_utc
from .geometry import FiducialVolume, make_fiducial
from .io.preflight import check_target
from .io.writer import HDF5Sink, MemorySink, chunk_rows_for
from .media import Medium, get_medium, target_electrons
from .oscillation import PRESETS, FlavourModel, OscillationParams
from .production import Shard, resumed_seed, run_chunks, start_output, work_range
from .provenance import ABSENT_STAGES, provenance, stage_names, write_tables
from .recoil import RecoilSampler
from .xsec import XsecModel

__all__ = ["Envelope", "RunPlan", "SourcePlan", "build_plan", "generate", "generate_chunk",
           "chunk_seed", "RunSummary", "COUNT_SPAWN_KEY", "provenance", "memory_run"]

log = logging.getLogger(__name__)

#: Spawn key of the stream used for the Poisson-fluctuated event count.
COUNT_SPAWN_KEY = (1 << 31,)

#: Upper limit of the default number of chunk-generation threads (each chunk in flight costs
#: its temporaries, ≈ 90 MB at the default chunk size).
MAX_DEFAULT_THREADS = 2

#: Zenith-angle bins used for the deterministic exposure average of the flavour probabilities.
N_ZENITH_BINS = 200

#: Kept importable from here (moved with the chunk code and the provenance attributes).
_REEXPORTED = (FLAVOUR_PDG, ABSENT_STAGES)
_stage_names, _write_tables = stage_names, write_tables


@dataclass
class SourcePlan:
    """Everything needed to draw events of one neutrino source."""

    name: str
    code: int
    production_region: str
    flux: float                       # cm⁻² s⁻¹ at 1 AU, after scaling/override
    spectrum: Any                     # generator.spectra.Spectrum
    proposal: Any                     # InverseCDFSampler over f_s(E) σ_max(E)
    expected_events: float            # for the configured exposure
    mean_sigma: float                 # exposure- and flavour-averaged σ per neutrino (cm²)
    lines: tuple[tuple[float, float], ...] = ()
    envelope: Any = None              # Envelope: bound on Σ_α P_α σ_α over zenith angles
    efficiency: float = 1.0           # expected acceptance of the rejection step
    quad_energy: Any = None           # MeV, E-quadrature nodes (grid above E_min(T_th), lines)
    quad_weights: Any = None          # their weights (generator.expected.quadrature_weights)
    zenith_flavour: Any = None        # events per (cos-zenith bin, flavour e/μ/τ), sums to
    #                                   expected_events (generator.expected)


@dataclass
class RunPlan:
    """Precomputed tables of one run (built once, reused by every chunk)."""

    config: Config
    medium: Medium
    fiducial: FiducialVolume
    n_electrons: float
    exposure: Exposure
    xsec: XsecModel
    recoil: RecoilSampler
    flavour: FlavourModel
    pdgs: tuple[int, ...]
    sources: list[SourcePlan]
    expected_total: float
    source_cdf: np.ndarray = field(repr=False)
    zenith_edges: np.ndarray = field(repr=False)
    zenith_weights: np.ndarray = field(repr=False)
    response: Any = None              # generator.response.ResponseModel, or None when off
    backgrounds: Any = None           # generator.backgrounds.BackgroundPlan, or None when off

    @property
    def expected_rate_per_day(self) -> float:
        """Expected events per live day (above threshold, all sources)."""
        return self.expected_total / (self.exposure.live_seconds / SECONDS_PER_DAY)


def _intervals(cfg: Config) -> np.ndarray:
    ex = cfg.exposure
    if ex.run_list is not None:
        return load_run_list(ex.run_list)
    t0 = parse_utc(ex.start_utc, "exposure.start_utc")
    if ex.stop_utc is not None:
        t1 = parse_utc(ex.stop_utc, "exposure.stop_utc")
    else:
        t1 = t0 + ex.live_days * SECONDS_PER_DAY
    return np.array([[t0, t1]], dtype=np.float64)


def oscillation_params(cfg: Config) -> OscillationParams | None:
    """The oscillation parameters of a configuration (None when oscillations are off)."""
    oc = cfg.oscillation
    if not oc.enabled:
        return None
    base = PRESETS[oc.preset]
    over = {k: getattr(oc, k) for k in ("sin2_theta12", "sin2_theta13", "sin2_theta23",
                                        "delta_cp_deg", "dm2_21", "dm2_31")
            if getattr(oc, k) is not None}
    if not over:
        return base
    vals = {k: getattr(base, k) for k in ("sin2_theta12", "sin2_theta13", "sin2_theta23",
                                          "delta_cp_deg", "dm2_21", "dm2_31")}
    vals.update(over)
    return OscillationParams(**vals)


def build_plan(cfg: Config) -> RunPlan:
    """Validate data files and precompute every table of a run.

    All user-input problems (data files, inconsistent choices) surface here as
    :class:`~generator.errors.InputError`, before any output is opened.
    """
    det = cfg.detector
    from .response import build_media, build_response

    medium = get_medium(det.medium, build_media(cfg.media))
    fid = make_fiducial(det.fiducial_shape, det.fiducial_radius_m, det.fiducial_half_height_m,
                        det.fiducial_half_lengths_m)
    n_e = target_electrons(medium, fid.volume_cm3, det.target_mass_t, det.target_electrons)
    response = build_response(cfg, medium)
    exposure = Exposure(_intervals(cfg), det.latitude_deg, det.longitude_deg)

    ic = cfg.interaction
    xs = XsecModel(corrections=ic.corrections, magnetic_moment=ic.magnetic_moment,
                   nsi_eps_l=ic.nsi_eps_l, nsi_eps_r=ic.nsi_eps_r)
    params = oscillation_params(cfg)
    pdgs = (12, 14, 16) if params is not None else (12,)

    # --- sources: spectra and fluxes
    sc = cfg.sources
    scale = dict(sc.scale)
    override = dict(sc.flux_override)
    entries: list[tuple[str, int, str, float, Any]] = []
    for name in sc.include:
        variant = sc.b8_shape if name == "8B" else "nominal"
        phi = override.get(name, spectra.flux(name, sc.flux_model)) * scale.get(name, 1.0)
        entries.append((name, spectra.SOURCE_CODES[name], name, phi,
                        spectra.get_spectrum(name, variant)))
    next_code = max(spectra.SOURCE_CODES.values()) + 1
    for i, c in enumerate(sc.custom):
        spec = spectra.load_custom_spectrum(c.spectrum_file, c.name)
        phi = override.get(c.name, c.flux) * scale.get(c.name, 1.0)
        entries.append((c.name, next_code + i, c.production_region, phi, spec))

    e_max = max(max(e[4].e_max for e in entries), 1.0) * 1.001
    lines = sorted({ln[0] for e in entries for ln in e[4].lines})
    recoil = RecoilSampler(xs, pdgs=pdgs, e_min=0.05, e_max=max(e_max, 1.0),
                           t_min=ic.threshold_mev, lines=tuple(lines))
    flavour = FlavourModel(params, sorted({e[2] for e in entries}),
                           latitude_deg=det.latitude_deg, depth_m=det.depth_m,
                           e_min=0.05, e_max=max(e_max, 1.0),
                           earth=cfg.oscillation.earth_matter,
                           solar_profile=cfg.oscillation.solar_profile)

    edges = np.linspace(-1.0, 1.0, N_ZENITH_BINS + 1)
    wz = _zenith_exposure(exposure, edges, det.latitude_deg, det.longitude_deg)
    centres = 0.5 * (edges[:-1] + edges[1:])
    w_total = float(wz.sum())

    plans: list[SourcePlan] = []
    for name, code, region, phi, spec in entries:
        plans.append(_plan_source(name, code, region, phi, spec, recoil, flavour, pdgs,
                                  centres, wz, w_total, n_e))
    from .backgrounds import build_backgrounds, combined_cdf

    bg = build_backgrounds(cfg, fid, medium.density_g_cm3, exposure.live_seconds,
                           exposure.intervals)
    expected = np.array([p.expected_events for p in plans])
    total = float(expected.sum()) + (float(bg.expected.sum()) if bg is not None else 0.0)
    if not total > 0.0:
        raise _no_events_error(plans, n_e, exposure, ic.threshold_mev)
    return RunPlan(cfg, medium, fid, n_e, exposure, xs, recoil, flavour, pdgs, plans, total,
                   combined_cdf(expected, bg), edges, wz, response, bg)


def _zenith_exposure(exposure: Exposure, edges: np.ndarray, latitude_deg: float,
                     longitude_deg: float) -> np.ndarray:
    """s, ∫ dt (1 AU/r)² per cos-zenith bin (:meth:`Exposure.zenith_exposure`), cached."""
    total = exposure.live_seconds * exposure.mean_inverse_r2

    def validate(arrays: dict[str, np.ndarray]) -> None:
        _check_nonnegative(arrays, {"weights": (edges.size - 1,)})
        if abs(float(arrays["weights"].sum()) - total) > 1e-6 * total:
            raise CacheRejected("zenith weights do not add up to the flux-weighted live time")

    key = {"table": "zenith-exposure-v1", **code_key(), "intervals": exposure.intervals,
           "latitude_deg": latitude_deg, "longitude_deg": longitude_deg,
           "step_s": exposure.table.step_s, "edges": edges}
    return cached_arrays("exposure", key,
                         lambda: {"weights": exposure.zenith_exposure(edges)},
                         validate)["weights"]


def _no_events_error(plans: list[SourcePlan], n_e: float, exposure: Exposure,
                     threshold: float) -> ConfigError:
    """The configuration error that explains why the expected count is zero or not finite."""
    expected = [p.expected_events for p in plans]
    if not all(np.isfinite(expected)):
        bad = [p.name for p in plans if not np.isfinite(p.expected_events)]
        return ConfigError(f"sources: the expected count of {bad} is not finite; check "
                           "sources.scale, sources.flux_override and the interaction settings")
    if not n_e > 0.0:
        return ConfigError(f"detector: the target has {n_e} electrons; the fiducial volume or "
                           "target mass must be positive")
    if not exposure.live_seconds > 0.0:
        return ConfigError("exposure: the live time is zero")
    if all(p.flux == 0.0 for p in plans):
        return ConfigError("sources: every included source has zero flux (sources.scale or "
                           "sources.flux_override); give at least one a positive flux")
    return ConfigError(f"interaction.threshold_mev: no source can produce a recoil above "
                       f"{threshold} MeV; lower the threshold or include other sources")


def _energy_range(spec: Any, e_lo: float) -> tuple[float, float]:
    """Energy range (MeV) of a source's grid: threshold (or table start) to the top."""
    hi = max([ln[0] for ln in spec.lines], default=e_lo)
    if spec.continuous_fraction <= 0:
        return e_lo, hi
    e, f = spec.grid()
    nz = np.flatnonzero(f > 0.0)               # support of the pdf (its zero ends dropped)
    top = float(e[min(nz[-1] + 1, e.size - 1)])
    return max(e_lo, float(e[max(nz[0] - 1, 0)])), max(hi, top)


def _check_nonnegative(arrays: dict[str, np.ndarray], shapes: dict[str, tuple[int, ...]]
                       ) -> None:
    """Validator of cached plan tables: float64, the expected shapes, finite and ≥ 0."""
    check_arrays(arrays, shapes)
    if any(arrays[k].min(initial=0.0) < 0.0 for k in shapes):
        raise CacheRejected("negative values")


def _plan_source(name, code, region, phi, spec, recoil, flavour, pdgs, centres, wz, w_total,
                 n_e) -> SourcePlan:
    from .spectra import InverseCDFSampler

    # one fine grid from E_min(T_th) up (2048 uniform points plus every knot of the spectrum,
    # flavour and cross-section tables; see generator.envelope): the expected count, the
    # proposal and the envelope all use it
    lo, hi = _energy_range(spec, float(kinematics.e_min_for_recoil(recoil.t_min)))
    line_e = np.array([ln[0] for ln in spec.lines])
    line_b = np.array([ln[1] for ln in spec.lines])
    if not hi > lo:                      # nothing above the kinematic threshold
        return SourcePlan(name, code, region, phi, spec, None, 0.0, 0.0, tuple(spec.lines),
                          None, 1.0, np.zeros(0), np.zeros(0), np.zeros((centres.size, 3)))
    knots = [recoil.sigma_knots, np.asarray(recoil.lines), flavour.day_table(region)[0],
             line_e]
    continuous = spec.continuous_fraction > 0
    if continuous:
        knots.append(spec.grid()[0])
    e_grid, uniform = source_grid(lo, hi, knots, ENVELOPE_POINTS if continuous else 64)
    pdf = spec.pdf(e_grid) if continuous else np.zeros(e_grid.size)
    n_grid = e_grid.size if continuous else 0
    all_e = np.concatenate([e_grid[:n_grid], line_e])
    qw = quadrature_weights(e_grid[:n_grid], pdf[:n_grid], line_b, continuous)
    # the two expensive tables come from the disk cache when a valid entry exists; both are
    # keyed by every array they are computed from and by the recoil and flavour inputs
    base = {**code_key(), "recoil": recoil.table_key(), "flavour": flavour.table_key(region),
            "pdgs": list(pdgs)}

    def zenith_table() -> dict[str, np.ndarray]:
        # expected events per zenith bin and flavour: the shared code path of
        # generator.expected
        sig = _sigma_matrix(recoil, all_e, pdgs)
        return {"table": zenith_flavour_table(flavour, region, all_e, qw, sig[:, None, :],
                                              centres, wz)[:, 0, :]}

    def bounds() -> dict[str, np.ndarray]:
        return {"bounds": cell_bounds(flavour, region, recoil, pdgs, e_grid)}

    table = cached_arrays(
        "zenith", {**base, "table": "zenith-v1", "energy": all_e, "weights": qw,
                   "centres": centres, "exposure": wz}, zenith_table,
        lambda a: _check_nonnegative(a, {"table": (centres.size, 3)}))["table"]
    mean_sigma = float(table.sum() / w_total)
    counts = n_e * phi * table
    expected = float(counts.sum())
    cells = cached_arrays(
        "envelope", {**base, "table": "envelope-v1", "grid": e_grid}, bounds,
        lambda a: _check_nonnegative(a, {"bounds": (e_grid.size - 1,)}))["bounds"]
    envelope = build_envelope(e_grid, uniform, cells)
    proposal = None
    efficiency = 1.0
    if expected > 0.0:
        # pdf and B are linear on every fine cell; their product is drawn as its linear
        # interpolant on the fine grid, which deviates from it by at most |Δf ΔB|/4 in a cell
        # (relative ~10⁻⁶, below the 1.5 × 10⁻⁵ CDF resolution of the sampler)
        dens = pdf * envelope(e_grid)
        line_w = line_b * envelope(line_e) * ((line_e >= lo) & (line_e <= hi))
        keep_l = line_w > 0
        proposal = InverseCDFSampler(e_grid, dens, lines=tuple(line_e[keep_l]),
                                     line_weights=tuple(line_w[keep_l]))
        efficiency = min(1.0, mean_sigma / proposal.total)
    return SourcePlan(name, code, region, phi, spec, proposal, float(expected), mean_sigma,
                      tuple(spec.lines), envelope, efficiency, all_e, qw, counts)


@dataclass
class RunSummary:
    """What a run produced."""

    path: Path | None
    n_events: int
    expected_events: float
    seed_entropy: int
    chunk_size: int
    n_chunks: int
    plan: RunPlan = field(repr=False)


def _event_count(plan: RunPlan, entropy: int, n_events: int | None) -> int:
    rc = plan.config.run
    if n_events is not None:
        return n_events
    if rc.count_mode == "fixed":
        return rc.events
    if plan.expected_total > MAX_EVENTS:
        raise ConfigError(
            f"run.count_mode = {rc.count_mode!r}: the expected count {plan.expected_total:.4g} "
            f"is above the limit of {MAX_EVENTS:.0e} events per run; reduce the exposure, the "
            "detector or sources.scale, or use count_mode = 'fixed'")
    if rc.count_mode == "expected":
        return int(round(plan.expected_total))
    rng = np.random.default_rng(np.random.SeedSequence(entropy, spawn_key=COUNT_SPAWN_KEY))
    return int(rng.poisson(plan.expected_total))


def generate(cfg: Config, out: str | Path | None = None, *, n_events: int | None = None,
             seed: int | None = None, force: bool = False, sink: Any | None = None,
             progress: Callable[[int], None] | None = None,
             on_start: Callable[[int], None] | None = None, shard: Shard | None = None,
             resume: bool = False, threads: int | None = None,
             plan: RunPlan | None = None) -> RunSummary:
    """Generate events for a configuration and write them to an HDF5 file (or a given sink).

    Parameters
    ----------
    cfg : Config
        Validated configuration.
    out : str or Path, optional
        Output path (default ``cfg.output.path``). Ignored when ``sink`` is given.
    n_events : int, optional
        Number of events; overrides ``run.events`` and ``run.count_mode``.
    seed : int, optional
        Root seed; overrides ``run.seed``. When neither is given a random seed is drawn from
        the operating system and recorded in the file (a resumed run takes the seed of its
        temporary file).
    force : bool
        Overwrite an existing output file (and discard the temporary file of a killed run).
    sink : object, optional
        An event sink (e.g. :class:`~generator.io.writer.MemorySink`).
    progress : callable, optional
        Called with the number of events of each finished chunk.
    on_start : callable, optional
        Called once with the event count of this process, after the tables are built.
    shard : Shard, optional
        Write only this shard's chunks (:func:`generator.production.work_range`).
    resume : bool
        Continue the killed run whose temporary file lies beside ``out``.
    threads : int, optional
        Threads that generate chunks (default :func:`default_threads`: the usable CPUs, at
        most 2); the output does not depend on it.
    plan : RunPlan, optional
        The tables of ``cfg``, already built (e.g. shipped to a worker), instead of
        :func:`build_plan`; its configuration must equal ``cfg``.

    Raises
    ------
    InputError
        Before any file is created, for bad configuration or data files.
    """
    path = Path(out if out is not None else cfg.output.path)
    if seed is None:
        seed = cfg.run.seed
    if seed is None and resume:
        seed = resumed_seed(path)
    entropy = int(seed) if seed is not None else secrets.randbits(128)
    if sink is None:                          # fail early, before the expensive tables
        known = n_events if n_events is not None else (
            cfg.run.events if cfg.run.count_mode == "fixed" else None)
        check_target(path, force, known, create_folder=out is None)
    elif resume:
        raise InputError("resume needs the HDF5 output (no custom sink)")
    if plan is None:
        plan = build_plan(cfg)
    elif plan.config != cfg:
        raise InputError("generate: the given plan was built for another configuration")
    n_total = _event_count(plan, entropy, n_events)
    if sink is None and n_events is None and cfg.run.count_mode != "fixed":
        check_target(path, force, n_total)
    work = work_range(n_total, cfg.run.chunk_size, shard)
    if on_start is not None:
        on_start(work.n_events)
    weight = plan.expected_total / n_total if n_total else 0.0
    own_sink = sink is None
    attrs = {**provenance(plan, entropy, n_total), **work.attrs()}
    from .response import ResponseStage, output_fields

    stage = ResponseStage(plan.response, lambda t: plan.exposure.sun(t)[0]) \
        if plan.response is not None else None
    if own_sink:
        sink = HDF5Sink(path, output_fields(cfg), compression=cfg.output.compression,
                        compression_level=cfg.output.compression_level,
                        chunk_rows=chunk_rows_for(work.chunk), force=force, resume=resume)
    first = start_output(sink, work, attrs, resume)
    try:
        if stage is not None and first > work.k0:     # resumed: restore the trigger counts
            stage.n_generated = min(first * work.chunk, n_total) - work.event_start
            stage.n_triggered = sink.count_nonzero("triggered")

        def make(k: int, m: int) -> dict[str, np.ndarray]:
            bg_rng = np.random.default_rng(background_seed(entropy, k)) \
                if plan.backgrounds is not None else None
            ev = generate_chunk(plan, np.random.default_rng(chunk_seed(entropy, k)), m, weight,
                                bg_rng)
            return stage.process(ev, entropy, k) if stage is not None else ev

        run_chunks(sink, work, first, make, progress,
                   default_threads() if threads is None else threads)
        bgp = plan.backgrounds.isotopes if plan.backgrounds is not None else []
        codes = [sp.code for sp in plan.sources] + [p.iso.code for p in bgp]
        names = [sp.name for sp in plan.sources] + [p.iso.name for p in bgp]
        sink.set_field_attrs("origin", {"codes": np.array(codes, np.int16),
                                        "names": np.array(names, dtype=object)})
        write_tables(sink, plan)
        if plan.backgrounds is not None:
            plan.backgrounds.write_tables(sink)
        sink.set_attrs(attrs)
        if stage is not None:
            stage.write_tables(sink)
            sink.set_attrs({**stage.attrs(weight),
                            **stage_names(True, plan.backgrounds is not None)})
        result = sink.commit()
    except BaseException:
        sink.abort()
        raise
    return RunSummary(result if own_sink else None, work.n_events, plan.expected_total,
                      entropy, work.chunk, work.k1 - work.k0, plan)


def default_threads() -> int:
    """Chunk-generation threads of :func:`generate` by default: usable CPUs, at most 2."""
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):      # pragma: no cover - not Linux
        n = os.cpu_count() or 1
    return max(1, min(n, MAX_DEFAULT_THREADS))


def memory_run(cfg: Config, n_events: int, seed: int) -> tuple[MemorySink, RunSummary]:
    """Run into an in-memory sink (tests, notebooks)."""
    from .response import output_fields

    sink = MemorySink(output_fields(cfg))
    summary = generate(cfg, n_events=n_events, seed=seed, sink=sink)
    return sink, summary
