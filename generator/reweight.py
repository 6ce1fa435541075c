"""Reweighting an event file to another configuration (``sunrecoil reweight``).

What a weight is
----------------
An event file generated under configuration A samples, for every signal event, the density
(module docstring of :mod:`generator.pipeline`)

    dN_A = N_e Φ_s (1 AU / r(t))² f_s(E) P_α(s, E, θ_z(t)) dσ_α/dT(E, T)  dt dE dT,  T ≥ T_A.

For an alternative configuration B with the same detector, target and exposure the ratio at an
event's truth variables (source s, E = ``nu_energy``, T = ``e_kinetic``, α = ``nu_pdg``,
cos θ_z = ``sun_cos_zenith``) is

    r = dN_B / dN_A = [Φ_s^B f_s^B(E)] / [Φ_s^A f_s^A(E)]
                      × P_α^B(s, E, θ_z) / P_α^A(s, E, θ_z)
                      × [dσ_α/dT]^B / [dσ_α/dT]^A × 1[T ≥ T_B];

N_e and (1 AU/r(t))² cancel because B must have the same target and exposure, so the event
time enters only through θ_z. For monoenergetic lines f_s is a sum of δ functions and the
first factor is the ratio of line strengths Φ_s b_ℓ (flux × branching). The weight of an
event under B is ``weight × r`` (``weight`` being the file's expected events per event):
weighted histograms of A estimate the event numbers B would give. Background events
(origin ≥ 100) keep r = 1 when B has the same ``[backgrounds]`` and get r = 0 when B has
none.

Each factor that B leaves unchanged is exactly 1 and is not evaluated. The factors that
change are evaluated as the generator evaluates them: the spectra by their tabulated pdfs
(:meth:`generator.spectra.Spectrum.pdf`), the flavour probabilities by the
:class:`~generator.oscillation.FlavourModel` tables each configuration builds, the cross
sections by the closed forms of :func:`generator.xsec.dsigma_dt` (tree level: 't Hooft 1971;
radiative: Bahcall, Kamionkowski & Sirlin 1995; magnetic moment: Vogel & Engel 1989). The
generator draws T by inverting tabulated CDFs of the same dσ/dT (:mod:`generator.recoil`), so
the ratio of the densities it actually samples differs from r by the table interpolation
(relative 10⁻⁴ in σ, CDF resolution 1/511 per cell): far below the statistics of any file.

Normalisation
-------------
The deterministic expected count of B (``expected_events``, from
:func:`generator.pipeline.build_plan` of B, the same number ``sunrecoil rates`` prints) is
recorded in the attributes. Σ_i weight_i r_i is a Monte Carlo estimate of it, with error
``weight_sum_mc_error`` = √(Σw² − (Σw)²/n) (n events drawn independently from the generated
density, i.e. multinomial source fractions of a fixed count; Poisson counts add a relative
1/√n). The sum is exactly B's count (to rounding) only
when r is the same constant for every event, e.g. a flux override or flux model change of a
single-source file; with several sources whose fluxes change by different factors it
fluctuates with the sampled source fractions.

Changes that cannot be reweighted are refused (:class:`ReweightError`, exit status 2):
detector geometry, target, site, medium, exposure window or run list, an added source (or
one A generated with zero flux), a lower threshold, any change of the detector response or of
the background model, switching oscillations on when A had them off (A has no ν_μ, ν_τ
events), and spectra or lines that B has where A has none (no events there).
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import hashlib
import os
import re
import tomllib
from collections import deque
from collections.abc import Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from . import __version__, spectra
from .config import Config, parse_config, to_toml
from .errors import DataFileError, InputError
from .io.preflight import check_target
from .io.reader import EventFile
from .kinematics import t_max
from .oscillation import FlavourModel
from .userfiles import clip
from .xsec import XsecModel, dsigma_dt_magnetic

__all__ = ["ReweightError", "DensityRatio", "ReweightSummary", "config_sha256",
           "check_reweightable", "load_alternative", "reweight", "append_weights",
           "REWEIGHT_LAYOUT_VERSION", "READ_FIELDS"]

#: Version of the weight-file layout (``/weights/ratio``, ``/weights/weight`` + attributes).
REWEIGHT_LAYOUT_VERSION = "1"

#: Event fields the reweighting reads.
READ_FIELDS = ("origin", "nu_pdg", "nu_energy", "e_kinetic", "sun_cos_zenith", "weight")

#: Bytes per event of the written weights (two float64 columns, uncompressed).
WEIGHT_BYTES_PER_EVENT = 16.0

#: Events per read chunk (bounded memory: about 200 bytes per event in flight for the
#: radiative cross sections, i.e. ≈ 50 MB).
DEFAULT_CHUNK = 1 << 18

_NAME = re.compile(r"^[A-Za-z0-9_.-]{1,64}$")
_FLAVOUR_COLUMN = np.full(33, -1, dtype=np.intp)
_FLAVOUR_COLUMN[[12 + 16, 14 + 16, 16 + 16]] = [0, 1, 2]


class ReweightError(InputError):
    """The alternative cannot be reached by reweighting, or the input files do not match."""


def config_sha256(text: str) -> str:
    """SHA-256 (hex) of a configuration's TOML text, as recorded in ``config_sha256``."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


# --------------------------------------------------------------------------- configurations
def load_alternative(path: str | Path, base: Config | None = None) -> Config:
    """Read an alternative configuration file, merged over ``base`` (default: the default).

    With ``base`` the file only needs the keys that change (same merge rules as over the
    embedded default, :func:`generator.config.load_config`).
    """
    from .config import load_config

    return load_config(path, under=tomllib.loads(to_toml(base)) if base is not None else None)


def _source_names(cfg: Config) -> list[str]:
    return list(cfg.sources.include) + [c.name for c in cfg.sources.custom]


def _spectrum(cfg: Config, name: str) -> Any:
    for c in cfg.sources.custom:
        if c.name == name:
            return spectra.load_custom_spectrum(c.spectrum_file, c.name)
    return spectra.get_spectrum(name, cfg.sources.b8_shape if name == "8B" else "nominal")


def _region(cfg: Config, name: str) -> str:
    return next((c.production_region for c in cfg.sources.custom if c.name == name), name)


def _xsec(cfg: Config) -> XsecModel:
    ic = cfg.interaction
    return XsecModel(corrections=ic.corrections, magnetic_moment=ic.magnetic_moment,
                     nsi_eps_l=ic.nsi_eps_l, nsi_eps_r=ic.nsi_eps_r)


def _support_problem(name: str, gen: Any, alt: Any) -> str | None:
    """Why ``alt`` has spectrum where ``gen`` has none (None when its support is covered)."""
    gen_lines = {float(np.float32(e)) for e, b in gen.lines if b > 0}
    for e, b in alt.lines:
        if b > 0 and float(np.float32(e)) not in gen_lines:
            return f"source {name}: line at {e:.6g} MeV not in the generated spectrum"
    if alt.continuous_fraction > 0:
        if gen.continuous_fraction <= 0:
            return f"source {name}: continuous spectrum where the generated one has lines only"
        e_alt = alt.grid()[0]
        x = np.concatenate([e_alt, 0.5 * (e_alt[1:] + e_alt[:-1])])
        bad = (alt.pdf(x) > 0) & (gen.pdf(x) <= 0)
        if np.any(bad):
            return (f"source {name}: spectrum non-zero at {x[bad].min():.6g} MeV where the "
                    "generated one is zero")
    return None


def _same_spectrum(a: Any, b: Any) -> bool:
    if a is b:
        return True
    ea, fa = a.grid()
    eb, fb = b.grid()
    return (a.lines == b.lines and a.continuous_fraction == b.continuous_fraction
            and np.array_equal(ea, eb) and np.array_equal(fa, fb))


def check_reweightable(gen: Config, alt: Config) -> list[str]:
    """Refuse alternatives that reweighting cannot reach; return the list of changes.

    Raises
    ------
    ReweightError
        Naming every change that is not allowed and why.
    """
    why: list[str] = []
    keep = dataclasses.replace
    if keep(gen.detector, name="") != keep(alt.detector, name=""):
        diff = [f.name for f in dataclasses.fields(gen.detector) if f.name != "name"
                and getattr(gen.detector, f.name) != getattr(alt.detector, f.name)]
        why.append(f"detector.{'/'.join(diff)} changed: the target, geometry and site fix "
                   "N_e, the vertices and the zenith-angle exposure of the generated events")
    if gen.media != alt.media:
        why.append("[media] changed: the target medium fixes N_e and the response")
    if gen.response != alt.response:
        why.append("[response] changed: the reconstructed fields were drawn with the "
                   "generated response and cannot be reweighted")
    if alt.backgrounds is not None and gen.backgrounds != alt.backgrounds:
        why.append("[backgrounds] added or changed: background spectra and rates cannot be "
                   "reweighted (removing the section is allowed: weight 0)")
    if alt.interaction.threshold_mev < gen.interaction.threshold_mev:
        why.append(f"interaction.threshold_mev lowered from {gen.interaction.threshold_mev} to "
                   f"{alt.interaction.threshold_mev} MeV: no events were generated below the "
                   "generated threshold (a higher threshold is allowed)")
    if not gen.oscillation.enabled and alt.oscillation.enabled:
        why.append("oscillation.enabled switched on: the generated file has ν_e only, the "
                   "alternative needs ν_μ and ν_τ events")
    gen_names = set(_source_names(gen))
    for name in _source_names(alt):
        if name not in gen_names:
            why.append(f"source {name} added: no events of it were generated")
    if not why:
        for name in _source_names(alt):
            g, a = _spectrum(gen, name), _spectrum(alt, name)
            if not _same_spectrum(g, a):
                problem = _support_problem(name, g, a)
                if problem:
                    why.append(problem + "; no events were generated there")
    if why:
        raise ReweightError("cannot reweight to the alternative: " + "; ".join(why))
    return _changes(gen, alt)


def _changes(gen: Config, alt: Config) -> list[str]:
    out = []
    for sec in ("sources", "oscillation", "interaction", "backgrounds"):
        a, b = getattr(gen, sec), getattr(alt, sec)
        if a == b:
            continue
        if b is None or a is None:
            out.append(f"[{sec}] removed")
            continue
        out += [f"{sec}.{f.name}" for f in dataclasses.fields(a)
                if getattr(a, f.name) != getattr(b, f.name)]
    return out


# --------------------------------------------------------------------------- the ratio
@dataclass
class _SourceRatio:
    """Per-source part of r: spectrum × flux factors and the production regions."""

    code: int
    name: str
    region_gen: str
    region_alt: str | None           # None: source removed in the alternative (r = 0)
    continuum: float                 # Φ_B / Φ_A (continuous part)
    shape: Any = None                # _PdfRatio, set when the continuous shape changes
    line_e32: np.ndarray = field(default_factory=lambda: np.zeros(0, np.float32))
    line_e: np.ndarray = field(default_factory=lambda: np.zeros(0))
    line_factor: np.ndarray = field(default_factory=lambda: np.zeros(0))


class _PdfRatio:
    """f_B(E)/f_A(E) of two continuous spectra (0 where f_A = 0), vectorised.

    Both pdfs are linear between their grid nodes (:meth:`generator.spectra.Spectrum.pdf`);
    when both use the same uniform grid (the ⁸B variants do) the cell is found once by index
    arithmetic instead of two binary searches (equal to the pdfs to rounding).
    """

    def __init__(self, gen: Any, alt: Any) -> None:
        self.gen, self.alt = gen, alt
        x, fg = gen.grid()
        xa, fa = alt.grid()
        h = np.diff(x)
        self.uniform = (bool(np.array_equal(x, xa)) and x.size >= 2
                        and bool(np.all(np.abs(h - h.mean()) <= 1e-9 * h.mean())))
        if self.uniform:
            self.x0, self.inv_h, self.top = float(x[0]), float((x.size - 1) / (x[-1] - x[0])), \
                float(x.size - 1)
            # value and slope per cell (per unit of the cell coordinate u), last cell repeated
            self.fg, self.dg = fg, np.append(np.diff(fg), 0.0)
            self.fa, self.da = fa, np.append(np.diff(fa), 0.0)

    def __call__(self, e: np.ndarray) -> np.ndarray:
        if not self.uniform:
            pg, pa = self.gen.pdf(e), self.alt.pdf(e)
        else:
            u = (e - self.x0) * self.inv_h                  # cell coordinate, 0 … n − 1
            i = np.clip(u.astype(np.intp), 0, self.fg.size - 2)
            frac = u - i                  # continuous across nodes: rounding of i is harmless
            pg = self.fg[i] + frac * self.dg[i]
            pa = self.fa[i] + frac * self.da[i]
            out = (u < 0.0) | (u > self.top)
            pg[out] = 0.0
        ok = pg > 0
        return np.where(ok, pa / np.where(ok, pg, 1.0), 0.0)


class DensityRatio:
    """The ratio r = dN_B/dN_A at the truth variables of events (vectorised).

    Parameters
    ----------
    gen : Config
        Configuration the events were generated with (A).
    gen_flux : dict of str to float
        Flux at 1 AU of every generated source in cm⁻² s⁻¹ (the file's ``sources/flux``).
    source_codes : dict of str to int
        Origin code of every generated source (the file's ``sources/code``).
    alt_plan : generator.pipeline.RunPlan
        The plan of the alternative (B), from :func:`generator.pipeline.build_plan`.
    intervals : ndarray, optional
        The generated live periods (the file's ``exposure/intervals``, UTC s); B's must be the
        same (checked here when given; :func:`reweight` always checks). The exposure is
        compared by its intervals, so a run list moved to another path is accepted.
    """

    def __init__(self, gen: Config, gen_flux: dict[str, float], source_codes: dict[str, int],
                 alt_plan: Any, intervals: np.ndarray | None = None) -> None:
        alt = alt_plan.config
        self.changes = check_reweightable(gen, alt)
        if intervals is not None:
            _check_exposure(intervals, alt_plan)
        self.alt_plan = alt_plan
        alt_src = {sp.name: sp for sp in alt_plan.sources}
        self.sources: list[_SourceRatio] = []
        for name, code in source_codes.items():
            spec_g = _spectrum(gen, name)
            sp = alt_src.get(name)
            phi_g = gen_flux[name]
            if sp is not None and phi_g == 0.0 and sp.flux > 0.0:
                raise ReweightError(f"cannot reweight to the alternative: source {name} was "
                                    "generated with zero flux; no events of it to reweight")
            if sp is None or sp.flux == 0.0:
                self.sources.append(_SourceRatio(code, name, _region(gen, name), None, 0.0))
                continue
            k = sp.flux / phi_g
            same = _same_spectrum(sp.spectrum, spec_g)
            alt_lines = {float(np.float32(e)): b for e, b in sp.spectrum.lines}
            gl = [(e, b) for e, b in spec_g.lines if b > 0]
            fac = [k * alt_lines.get(float(np.float32(e)), 0.0) / b for e, b in gl]
            self.sources.append(_SourceRatio(
                code, name, _region(gen, name), sp.production_region, k,
                None if same else _PdfRatio(spec_g, sp.spectrum),
                np.array([e for e, _ in gl], np.float32), np.array([e for e, _ in gl]),
                np.array(fac)))
        self._lookup = np.full(1 << 16, -1, dtype=np.intp)       # int16 code + 32768 → index
        for i, s in enumerate(self.sources):
            self._lookup[s.code + 32768] = i
        self.backgrounds = 0.0 if alt.backgrounds is None else 1.0
        self.threshold = (alt.interaction.threshold_mev
                          if alt.interaction.threshold_mev > gen.interaction.threshold_mev
                          else None)
        self.xsec_gen, self.xsec_alt = _xsec(gen), alt_plan.xsec
        self.same_xsec = self.xsec_gen == self.xsec_alt
        self.flavour_alt = alt_plan.flavour
        self._e_top: dict[tuple[int, str], float] = {}
        self.flavour_gen = None
        if gen.oscillation != alt.oscillation or any(
                s.region_alt not in (None, s.region_gen) for s in self.sources):
            self.flavour_gen = _flavour_model(gen)

    def __call__(self, ev: dict[str, np.ndarray]) -> np.ndarray:
        """The ratio for a chunk of events.

        Parameters
        ----------
        ev : dict of str to ndarray
            Fields ``origin``, ``nu_pdg``, ``nu_energy`` (MeV), ``e_kinetic`` (MeV) and
            ``sun_cos_zenith`` of n events.

        Returns
        -------
        numpy.ndarray
            r = dN_B/dN_A, float64, shape (n,), ≥ 0.
        """
        origin = np.asarray(ev["origin"])
        n = origin.size
        r = np.zeros(n)
        idx = self._lookup[origin.astype(np.int64) + 32768]
        r[idx < 0] = self.backgrounds
        e32 = np.asarray(ev["nu_energy"])
        energy = e32.astype(np.float64)
        for i, s in enumerate(self.sources):
            if s.region_alt is None:
                continue
            sel = np.flatnonzero(idx == i)
            if not sel.size:
                continue
            f = np.full(sel.size, s.continuum)
            is_line = np.zeros(sel.size, bool)
            for le32, le, lf in zip(s.line_e32, s.line_e, s.line_factor, strict=True):
                m = e32[sel] == le32
                f[m] = lf
                energy[sel[m]] = le                    # the exact line energy
                is_line |= m
            if s.shape is not None:
                c = ~is_line
                f[c] *= s.shape(energy[sel[c]])
            r[sel] = f
            if self.flavour_gen is not None:
                self._flavour(r, sel, s, energy, ev)
        if not self.same_xsec:
            live = (idx >= 0) & (r > 0)
            sig: Any = slice(None) if live.all() else np.flatnonzero(live)   # skip the gathers
            e = energy[sig]
            t = np.asarray(ev["e_kinetic"])[sig].astype(np.float64)
            np.minimum(t, t_max(e) * (1.0 - 1e-6), out=t)  # float32 rounding above T_max(E)
            d_gen, d_alt = _dsigma_pair(e, t, np.asarray(ev["nu_pdg"])[sig], self.xsec_gen,
                                        self.xsec_alt)
            ok = d_gen > 0
            r[sig] *= np.where(ok, d_alt / np.where(ok, d_gen, 1.0), 0.0)
        if self.threshold is not None:
            t = np.asarray(ev["e_kinetic"]).astype(np.float64)
            r[(idx >= 0) & (t < self.threshold)] = 0.0
        return r

    def _flavour(self, r: np.ndarray, sel: np.ndarray, s: _SourceRatio, energy: np.ndarray,
                 ev: dict[str, np.ndarray]) -> None:
        sel = sel[r[sel] > 0]
        if not sel.size:
            return
        col = _FLAVOUR_COLUMN[np.asarray(ev["nu_pdg"])[sel].astype(np.int64) + 16]
        cz = np.clip(np.asarray(ev["sun_cos_zenith"])[sel].astype(np.float64), -1.0, 1.0)
        rows = np.arange(sel.size)
        p = []
        for fm, region in ((self.flavour_gen, s.region_gen), (self.flavour_alt, s.region_alt)):
            key = (id(fm), region)
            if key not in self._e_top:
                self._e_top[key] = float(fm.day_table(region)[0][-1])
            e = np.minimum(energy[sel], self._e_top[key])
            p.append(fm.probabilities(region, e, cz)[rows, col])
        ok = p[0] > 0
        r[sel] *= np.where(ok, p[1] / np.where(ok, p[0], 1.0), 0.0)


def _dsigma_pair(e: np.ndarray, t: np.ndarray, pdg: np.ndarray, gen: XsecModel,
                 alt: XsecModel) -> tuple[np.ndarray, np.ndarray]:
    """dσ/dT (cm²/MeV) of both models at 0 < T < T_max(E), sharing what they have in common.

    The same closed forms as :func:`generator.xsec.dsigma_dt` (weak part: tree level or
    Bahcall–Kamionkowski–Sirlin 1995, NSI in the couplings; plus Vogel & Engel 1989 magnetic
    part), evaluated once where the two models agree: the QED factors when the corrections
    agree, the whole weak part when only the magnetic moment differs.
    """
    weak_gen = _weak(e, t, pdg, gen, None)
    if dataclasses.replace(gen, magnetic_moment=0.0) == dataclasses.replace(
            alt, magnetic_moment=0.0):
        weak_alt = weak_gen
    else:
        weak_alt = _weak(e, t, pdg, alt, weak_gen[1] if alt.corrections == gen.corrections
                         else None)
    out = []
    for model, (weak, _) in ((gen, weak_gen), (alt, weak_alt)):
        out.append(weak + dsigma_dt_magnetic(e, t, model.magnetic_moment)
                   if model.magnetic_moment else weak)
    return out[0], out[1]


def _weak(e: np.ndarray, t: np.ndarray, pdg: np.ndarray, model: XsecModel, terms: Any
          ) -> tuple[np.ndarray, Any]:
    """The weak part of dσ/dT inside the kinematic range, and its QED factors."""
    from .xsec import _combine, _qed_terms

    terms = _qed_terms(model, e, t) if terms is None else terms
    return np.maximum(_combine(model, e, t, pdg, terms), 0.0), terms


def _check_exposure(intervals: np.ndarray, plan: Any) -> None:
    if not np.array_equal(np.asarray(intervals), plan.exposure.intervals):
        raise ReweightError("cannot reweight to the alternative: the exposure window or run "
                            "list changed; the event times and the Earth–Sun distances belong "
                            "to the generated exposure")


def _flavour_model(cfg: Config) -> FlavourModel:
    """The flavour tables :func:`generator.pipeline.build_plan` builds for ``cfg``."""
    from .pipeline import oscillation_params

    names = _source_names(cfg)
    e_max = max(max(_spectrum(cfg, n).e_max for n in names), 1.0) * 1.001
    return FlavourModel(oscillation_params(cfg), sorted({_region(cfg, n) for n in names}),
                        latitude_deg=cfg.detector.latitude_deg, depth_m=cfg.detector.depth_m,
                        e_min=0.05, e_max=max(e_max, 1.0), earth=cfg.oscillation.earth_matter,
                        solar_profile=cfg.oscillation.solar_profile)


# --------------------------------------------------------------------------- files
def _open_events(path: str | Path) -> tuple[EventFile, Config]:
    """Open and vet an event file for reweighting; return it and its configuration."""
    if not Path(path).exists():
        raise DataFileError(f"{clip(str(path))}: no such event file")
    ev = EventFile(path)
    try:
        a = ev.attrs
        where = repr(str(path))
        if str(a["tool_version"]) != __version__:
            raise ReweightError(f"{where}: written by sunrecoil {a['tool_version']}, this is "
                                f"{__version__}; reweight with the version that generated it")
        text = str(a["config_toml"])
        if "config_sha256" not in a:
            raise ReweightError(f"{where}: no config_sha256 attribute (the file predates "
                                "configuration hashes); regenerate it")
        if str(a["config_sha256"]) != config_sha256(text):
            raise ReweightError(f"{where}: config_sha256 does not match the embedded "
                                "config_toml; the provenance was altered")
        if not str(a["seed_entropy"]).isdigit():
            raise ReweightError(f"{where}: seed_entropy {str(a['seed_entropy'])[:40]!r} is not "
                                "an integer")
        missing = [k for k in READ_FIELDS if k not in ev.events]
        if missing or not {"sources/name", "sources/code", "sources/flux",
                           "exposure/intervals"} <= _tables(ev):
            raise ReweightError(f"{where}: fields {missing} or source/exposure tables missing")
        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise ReweightError(f"{where}: config_toml is not valid TOML ({exc})") from None
        gen = parse_config(data, None, str(a.get("config_source", "")) or None)
    except BaseException:
        ev.close()
        raise
    return ev, gen


def _tables(ev: EventFile) -> set[str]:
    out: set[str] = set()
    ev._f.visit(lambda name: out.add(name))
    return out


def _file_identity(ev: EventFile) -> dict[str, Any]:
    a = ev.attrs
    return {"event_file": os.path.abspath(ev.path),
            "event_file_tool_version": str(a["tool_version"]),
            "event_file_seed_entropy": str(a["seed_entropy"]),
            "event_file_config_sha256": str(a["config_sha256"]),
            "event_file_n_events": int(ev.n_events),
            "event_file_expected_events": float(a["expected_events"])}


def _same_file(ident: dict[str, Any], ev: EventFile) -> list[str]:
    mine = _file_identity(ev)
    return [k for k in ("event_file_seed_entropy", "event_file_config_sha256",
                        "event_file_n_events", "event_file_tool_version")
            if str(ident.get(k)) != str(mine[k])]


@dataclass
class ReweightSummary:
    """What :func:`reweight` wrote."""

    path: Path
    group: str
    n_events: int
    weight_sum: float
    weight_sum_mc_error: float
    expected_events: float
    attrs: dict[str, Any] = field(repr=False)


def _chunks(ev: EventFile, size: int) -> Iterator[dict[str, np.ndarray]]:
    return ev.iter_chunks(size, list(READ_FIELDS))


def reweight(event_file: str | Path, alternative: Config | str | Path,
             out: str | Path | None = None, *, append: bool = False, name: str = "alt",
             force: bool = False, base: str = "file", chunk_size: int = DEFAULT_CHUNK,
             alt_plan: Any = None, density_ratio: DensityRatio | None = None
             ) -> ReweightSummary:
    """Compute r = dN_B/dN_A for every event of ``event_file`` and write it.

    Parameters
    ----------
    event_file : str or Path
        A sunrecoil event file (of this version, with an intact ``config_sha256``).
    alternative : Config, str or Path
        The alternative configuration B, or a TOML file merged over ``base``.
    out : str or Path, optional
        Side file to write (datasets ``/weights/ratio`` and ``/weights/weight``).
    append : bool
        Instead, add the group ``/reweight/<name>`` to the event file itself.
    name : str
        Name of the appended group (letters, digits, ``_.-``; at most 64).
    force : bool
        Overwrite an existing side file or appended group of that name.
    base : {"file", "default"}
        What an alternative file is merged over: the event file's configuration or the
        embedded default.
    chunk_size : int
        Events per read chunk.
    alt_plan : RunPlan, optional
        A prebuilt :func:`~generator.pipeline.build_plan` of the alternative.
    density_ratio : DensityRatio, optional
        A prebuilt ratio for this event file and ``alt_plan`` (benchmarks: the tables are
        then not part of the timed pass).

    Raises
    ------
    ReweightError, InputError
        Before anything is written, for unusable inputs or alternatives.
    """
    from .pipeline import build_plan

    if (out is None) == (not append):
        raise ReweightError("reweight: give either an output side file or append=True")
    if base not in ("file", "default"):
        raise ReweightError(f"base = {base!r}; allowed: 'file', 'default'")
    if not (isinstance(chunk_size, int) and 1 <= chunk_size <= 1 << 24):
        raise ReweightError(f"chunk_size = {chunk_size!r}; allowed: 1 … 2**24 events")
    if append and not _NAME.match(name):
        raise ReweightError(f"--name {clip(name)!r}: use 1–64 letters, digits, '_', '.' or '-'")
    ev, gen = _open_events(event_file)
    with ev:
        if append:
            _check_append_target(ev, name, force)
            check_target(ev.path, True, ev.n_events, WEIGHT_BYTES_PER_EVENT)
            if not os.access(ev.path, os.W_OK):
                raise ReweightError(f"--append: {clip(str(ev.path))} is not writable")
        else:
            _check_side_target(Path(out), ev.path, force)
            check_target(Path(out), force, ev.n_events, WEIGHT_BYTES_PER_EVENT)
        if isinstance(alternative, Config):
            alt = alternative
        else:
            alt = load_alternative(alternative, gen if base == "file" else None)
        check_reweightable(gen, alt)
        plan = alt_plan if alt_plan is not None else build_plan(alt)
        if plan.config != alt:
            raise ReweightError("reweight: alt_plan was built from another configuration")
        intervals = np.asarray(ev.table("exposure/intervals"))
        _check_exposure(intervals, plan)
        names = [str(_dec(x)) for x in ev.table("sources/name")]
        codes = dict(zip(names, (int(c) for c in ev.table("sources/code")), strict=True))
        flux = dict(zip(names, (float(x) for x in ev.table("sources/flux")), strict=True))
        ratio = density_ratio if density_ratio is not None else DensityRatio(gen, flux, codes,
                                                                             plan)
        if ratio.alt_plan is not plan:
            raise ReweightError("reweight: density_ratio was built for another alternative")
        attrs = _attributes(ev, alt, plan, ratio)
        n_events = ev.n_events
        target = Path(out) if out is not None else Path(event_file)
        tmp = target.with_name(f".{target.name}.reweight-{os.getpid()}.tmp")
        try:
            stats = _write_side(tmp, ev, ratio, attrs, chunk_size)
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
    attrs.update(stats)
    try:
        with h5py.File(tmp, "r+") as f:
            f.attrs.update(stats)
        if append:
            _copy_into(tmp, Path(event_file), name, force)
            tmp.unlink()
        else:
            os.replace(tmp, target)
    finally:
        tmp.unlink(missing_ok=True)
    return ReweightSummary(target, f"reweight/{name}" if append else "weights", n_events,
                           stats["weight_sum"], stats["weight_sum_mc_error"],
                           attrs["expected_events"], attrs)


def _check_side_target(out: Path, event_path: Path, force: bool) -> None:
    if out.exists() and out.resolve() == event_path.resolve():
        raise ReweightError(f"-o {clip(str(out))}: is the event file itself; use --append")


def _check_append_target(ev: EventFile, name: str, force: bool) -> None:
    """Refuse appending to a file whose earlier weights came from a different file."""
    grp = ev._f.get("reweight")
    if grp is None:
        return
    for key, g in grp.items():
        bad = _same_file({k: _dec(v) for k, v in g.attrs.items()}, ev)
        if bad:
            raise ReweightError(f"{str(ev.path)!r}: its weights /reweight/{key} were computed "
                                f"for a different event file ({', '.join(bad)} differ); "
                                "refusing to append more")
    if name in grp and not force:
        raise ReweightError(f"{str(ev.path)!r}: /reweight/{name} exists; choose another --name "
                            "or give --force")


def _dec(v: Any) -> Any:
    return v.decode() if isinstance(v, bytes) else v


def _attributes(ev: EventFile, alt: Config, plan: Any, ratio: DensityRatio) -> dict[str, Any]:
    text = to_toml(alt)
    bg = float(plan.backgrounds.expected.sum()) if plan.backgrounds is not None else 0.0
    return {
        "tool": "sunrecoil",
        "file_kind": "reweight",
        "tool_version": __version__,
        "reweight_layout_version": REWEIGHT_LAYOUT_VERSION,
        **_file_identity(ev),
        "alt_config_toml": text,
        "alt_config_sha256": config_sha256(text),
        "alt_config_source": alt.source_file or "given as a Config object",
        "changes": "; ".join(ratio.changes) or "none",
        "expected_events": plan.expected_total,
        "expected_events_signal": plan.expected_total - bg,
        "expected_events_backgrounds": bg,
        "alt_source_names": np.array([sp.name for sp in plan.sources], dtype=object),
        "alt_source_expected_events": np.array([sp.expected_events for sp in plan.sources]),
        "ratio_definition": "ratio = dN_alt/dN_gen at the event's truth variables (source, "
                            "nu_energy, e_kinetic, nu_pdg, sun_cos_zenith); weight = the event "
                            "file's weight x ratio (expected events of the alternative per "
                            "event); see generator/reweight.py",
        "normalisation": "expected_events is the alternative's deterministic expected count "
                         "(build_plan, as sunrecoil rates); weight_sum is its Monte Carlo "
                         "estimate with standard error weight_sum_mc_error",
        "created_utc": _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "units_convention": "weight in expected events; ratio dimensionless",
        **_partial_note(ev),
    }


def _partial_note(ev: EventFile) -> dict[str, str]:
    """Say when Σw does not estimate expected_events (triggered-only files, shards)."""
    a = ev.attrs
    if "shard_index" in a:
        return {"weight_sum_note": "the event file is one shard of a run: weight_sum covers "
                                   "this shard's events only"}
    if "n_generated" in a and int(a["n_generated"]) != ev.n_events:
        return {"weight_sum_note": "the event file keeps triggered events only: weight_sum "
                                   "estimates the alternative's triggered count, "
                                   "expected_events counts all events above threshold"}
    return {}


def _write_side(tmp: Path, ev: EventFile, ratio: DensityRatio, attrs: dict[str, Any],
                chunk_size: int) -> dict[str, Any]:
    n = ev.n_events
    rows = max(1, min(n, 1 << 16))
    s1 = sw = sw2 = 0.0
    with h5py.File(tmp, "w") as f:
        for k, v in attrs.items():
            if isinstance(v, np.ndarray) and v.dtype == object:
                v = np.array([str(x) for x in v], dtype=h5py.string_dtype())
            f.attrs[k] = v
        g = f.create_group("weights")
        d_r = g.create_dataset("ratio", (n,), "f8", chunks=(rows,), fletcher32=True)
        d_w = g.create_dataset("weight", (n,), "f8", chunks=(rows,), fletcher32=True)
        d_r.attrs.update({"units": "", "description": "dN_alt/dN_gen at the event's truth "
                          "variables"})
        d_w.attrs.update({"units": "events", "description": "expected events of the "
                          "alternative represented by this event (event weight x ratio)"})
        start = 0
        # ratios of the next chunks are computed in worker threads (numpy releases the GIL)
        # while this thread reads and writes; results are taken in order, so the file and the
        # sums are the same for any number of threads
        from .pipeline import default_threads

        threads = default_threads()
        pending: deque[tuple[dict[str, np.ndarray], Future[np.ndarray]]] = deque()
        with ThreadPoolExecutor(threads) as pool:
            chunks = iter(_chunks(ev, chunk_size))
            while True:
                for chunk in chunks:
                    pending.append((chunk, pool.submit(ratio, chunk)))
                    if len(pending) > threads:
                        break
                if not pending:
                    break
                chunk, fut = pending.popleft()
                r = fut.result()
                w = chunk["weight"] * r
                stop = start + r.size
                d_r[start:stop] = r
                d_w[start:stop] = w
                s1 += float(r.sum())
                sw += float(w.sum())
                sw2 += float(np.dot(w, w))
                start = stop
    # standard error of Σw for n events drawn independently from the generated density
    err = float(np.sqrt(max(sw2 - sw * sw / n, 0.0))) if n else 0.0
    return {"n_events": n, "weight_sum": sw, "weight_sum_mc_error": err,
            "ratio_mean": s1 / n if n else 0.0}


def _copy_into(side: Path, event_path: Path, name: str, force: bool) -> None:
    """Copy a side file's weights into ``/reweight/<name>`` of the event file."""
    with h5py.File(side, "r") as src, h5py.File(event_path, "r+") as dst:
        grp = dst.require_group("reweight")
        if name in grp:
            if not force:
                raise ReweightError(f"{str(event_path)!r}: /reweight/{name} exists")
            del grp[name]
        try:
            src.copy(src["weights"], grp, name)
            for k, v in src.attrs.items():
                grp[name].attrs[k] = v
        except BaseException:
            if name in grp:
                del grp[name]
            raise


def append_weights(event_file: str | Path, side_file: str | Path, name: str = "alt",
                   force: bool = False) -> None:
    """Append an existing side file's weights to the event file they were computed for.

    Raises
    ------
    ReweightError
        When the side file was computed for a different file (seed, configuration hash, event
        count or tool version differ), is not a sunrecoil weight file, or the group exists.
    """
    if not _NAME.match(name):
        raise ReweightError(f"--name {clip(name)!r}: use 1–64 letters, digits, '_', '.' or '-'")
    side = Path(side_file)
    if not side.exists():
        raise DataFileError(f"{clip(str(side))}: no such weight file")
    try:
        with h5py.File(side, "r") as f:
            a = {k: _dec(v) for k, v in f.attrs.items()}
            ok = "weights/ratio" in f and "weights/weight" in f
    except (OSError, ValueError) as exc:
        raise DataFileError(f"{clip(str(side))}: not a readable HDF5 file ({exc})") from None
    if a.get("file_kind") != "reweight" or not ok:
        raise ReweightError(f"{clip(str(side))}: not a sunrecoil weight file")
    ev, _ = _open_events(event_file)
    with ev:
        bad = _same_file(a, ev)
        if bad:
            raise ReweightError(f"{clip(str(side))}: computed for a different event file "
                                f"({', '.join(bad)} differ from {str(event_file)!r})")
        _check_append_target(ev, name, force)
    _copy_into(side, Path(event_file), name, force)
