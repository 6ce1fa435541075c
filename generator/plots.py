"""First-look figures of an event file (``sunrecoil inspect FILE --plots DIR``), PNG via Agg.

Figures (matplotlib, extra ``plots``); every histogram is weighted with the ``weight`` field,
so the y axes are expected events for the file's exposure:

* ``spectrum_true.png`` — recoil kinetic energy, stacked by origin and by flavour at detection;
  ``spectrum_reco.png`` the same for ``reco_energy`` when the response stage is present;
* ``cos_sun.png`` — cos θ_sun (true, and reconstructed when present);
* ``annual_rate.png`` — signal rate per live day through the exposure, against the 1/r²
  expectation ∝ ∫ (1 AU / r(t))² dt over the live time of each bin (Earth–Sun distance of
  :func:`generator.ephemeris.sun_distance_au`);
* ``day_night.png`` — night/day ratio of the signal spectrum, each normalised by its
  1/r²-weighted live time from ``/exposure/zenith_weights``;
* ``p_ee.png`` — daytime P(ν_e → ν_e)(E) per source, exactly the tables in ``/flavour/day``.

The file is read in chunks (bounded memory). Background events (origin ≥ 100) appear in the
spectra and cos θ_sun stacks and are left out of the rate and day/night figures.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

import numpy as np

from .ephemeris import sun_distance_au
from .errors import InputError
from .export import require_extra
from .export.records import BACKGROUND_MIN_CODE
from .io.reader import EventFile

__all__ = ["render_plots", "PLOT_NAMES", "STYLE", "PALETTE"]

#: File names written (``spectrum_reco.png`` only when the file has ``reco_energy``).
PLOT_NAMES = ("spectrum_true.png", "spectrum_reco.png", "cos_sun.png", "annual_rate.png",
              "day_night.png", "p_ee.png")

#: The project's own muted palette (chosen here, not taken from any program).
PALETTE = ("#2f5d8a", "#d08c3e", "#5b8c5a", "#9b4f6f", "#8a7f3a", "#3e8c95", "#b5584a",
           "#6c5c9a", "#7d7d7d", "#a8a23e", "#4a4a4a", "#c27aa0")

#: Neutral figure style: white background, light grid, no top/right frame.
STYLE = {
    "figure.facecolor": "white", "axes.facecolor": "white", "axes.edgecolor": "#444444",
    "axes.grid": True, "grid.color": "#dddddd", "grid.linewidth": 0.6,
    "axes.spines.top": False, "axes.spines.right": False, "axes.labelsize": 10,
    "axes.titlesize": 11, "legend.fontsize": 8, "legend.frameon": False,
    "xtick.labelsize": 9, "ytick.labelsize": 9, "font.family": "DejaVu Sans",
    "savefig.dpi": 110, "figure.dpi": 110,
}

_FLAVOUR = {12: r"$\nu_e$", 14: r"$\nu_\mu$", 16: r"$\nu_\tau$", -12: r"$\bar\nu_e$",
            -14: r"$\bar\nu_\mu$", -16: r"$\bar\nu_\tau$"}
_CHUNK = 1 << 20


class _Hist:
    """Weighted histograms per category, filled chunk by chunk (sums of w and w²)."""

    def __init__(self, edges: np.ndarray):
        self.edges = edges
        self.w: dict[int, np.ndarray] = {}
        self.w2: dict[int, np.ndarray] = {}

    def fill(self, x: np.ndarray, cat: np.ndarray, w: np.ndarray) -> None:
        ok = np.isfinite(x)
        x, cat, w = x[ok], cat[ok], w[ok]
        nb = self.edges.size - 1
        b = np.clip(np.searchsorted(self.edges, x, side="right") - 1, 0, nb - 1)
        inside = (x >= self.edges[0]) & (x <= self.edges[-1])
        for c in np.unique(cat[inside]).tolist():
            m = inside & (cat == c)
            self.w.setdefault(c, np.zeros(nb))
            self.w2.setdefault(c, np.zeros(nb))
            self.w[c] += np.bincount(b[m], weights=w[m], minlength=nb)
            self.w2[c] += np.bincount(b[m], weights=w[m] ** 2, minlength=nb)

    def total(self, cats: Iterable[int] | None = None) -> tuple[np.ndarray, np.ndarray]:
        keys = list(self.w) if cats is None else [c for c in cats if c in self.w]
        nb = self.edges.size - 1
        return (sum((self.w[c] for c in keys), np.zeros(nb)),
                sum((self.w2[c] for c in keys), np.zeros(nb)))


def _live_before(t: np.ndarray, intervals: np.ndarray) -> np.ndarray:
    """Live seconds before each time t (piecewise linear over the live periods)."""
    starts, lengths = intervals[:, 0], intervals[:, 1] - intervals[:, 0]
    cum = np.concatenate([[0.0], np.cumsum(lengths)])
    i = np.clip(np.searchsorted(starts, t, side="right") - 1, 0, starts.size - 1)
    inside = np.clip(t - starts[i], 0.0, lengths[i])
    return np.where(t < starts[0], 0.0, cum[i] + inside)


def annual_expectation(edges: np.ndarray, intervals: np.ndarray, step: float = 3600.0
                       ) -> tuple[np.ndarray, np.ndarray]:
    """Live seconds and ∫(1 AU/r)² dt over the live time of each time bin.

    Parameters
    ----------
    edges : numpy.ndarray
        Time-bin edges, UTC Unix seconds, shape (m + 1,).
    intervals : numpy.ndarray
        Live periods [start, stop], shape (k, 2).
    step : float
        Integration cell, s (r varies by < 1e-5 AU per hour).

    Returns
    -------
    live, weighted : numpy.ndarray
        Each shape (m,), in s.
    """
    cells = np.unique(np.concatenate([np.arange(edges[0], edges[-1], step), edges]))
    live = np.diff(_live_before(cells, intervals))
    inv_r2 = 1.0 / sun_distance_au(0.5 * (cells[1:] + cells[:-1])) ** 2
    b = np.clip(np.searchsorted(edges, cells[:-1], side="right") - 1, 0, edges.size - 2)
    m = edges.size - 1
    return (np.bincount(b, weights=live, minlength=m),
            np.bincount(b, weights=live * inv_r2, minlength=m))


def _stack(ax, hist: _Hist, labels: dict[int, str], xlabel: str, title: str,
           by_code: bool = False) -> None:
    centres = 0.5 * (hist.edges[1:] + hist.edges[:-1])
    widths = np.diff(hist.edges)
    bottom = np.zeros(centres.size)
    order = (sorted(hist.w, key=lambda c: (c == 0, abs(c), c < 0)) if by_code
             else sorted(hist.w, key=lambda c: -hist.w[c].sum()))
    for i, c in enumerate(order):
        y = hist.w[c] / widths
        ax.bar(centres, y, width=widths, bottom=bottom, color=PALETTE[i % len(PALETTE)],
               linewidth=0, label=labels.get(c, str(c)), align="center")
        bottom = bottom + y
    ax.set_yscale("log")
    top = bottom.max() if bottom.size and bottom.max() > 0 else 1.0
    ax.set_ylim(top * 1e-4, top * 2.0)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("expected events / MeV")
    ax.set_title(title)
    ax.legend(ncol=2, loc="upper right")


def _energy_edges(emin: float, emax: float, n: int = 60) -> np.ndarray:
    emin = max(0.0, emin if np.isfinite(emin) else 0.0)
    emax = max(emax, emin + 1e-3)
    return np.linspace(emin, emin + (emax - emin) * 1.0001, n + 1)


def render_plots(path: str | os.PathLike[str], outdir: str | os.PathLike[str]) -> list[Path]:
    """Write the first-look PNG figures of an event file into ``outdir``.

    Parameters
    ----------
    path : path
        sunrecoil event file.
    outdir : path
        Folder for the PNG files (created if its parent exists).

    Returns
    -------
    list of Path
        The files written.

    Raises
    ------
    InputError
        matplotlib is missing (extra ``plots``), the input is not a sunrecoil file, or the
        folder cannot be created.
    """
    require_extra("matplotlib", "plots", "inspect --plots")
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    with EventFile(path) as ev:
        outdir = Path(outdir)
        if outdir.exists() and not outdir.is_dir():
            raise InputError(f"--plots {str(outdir)!r} exists and is not a folder")
        if not outdir.parent.is_dir():
            raise InputError(f"--plots {str(outdir)!r}: the parent folder does not exist")
        data = _accumulate(ev)
        outdir.mkdir(exist_ok=True)
        with matplotlib.rc_context(STYLE):
            written = []
            for name, draw in _FIGURES:
                fig = draw(plt, data)
                if fig is None:
                    continue
                target = outdir / name
                fig.savefig(target, format="png")
                plt.close(fig)
                written.append(target)
    return written


def _accumulate(ev: EventFile) -> dict:
    names = ev.origin_names
    has_reco = "reco_energy" in ev.fields
    emin = rmin = np.inf
    emax = rmax = 0.0
    for c in ev.iter_chunks(_CHUNK, ["e_kinetic", *(["reco_energy"] if has_reco else [])]):
        if c["e_kinetic"].size:
            emin = min(emin, float(np.nanmin(c["e_kinetic"])))
            emax = max(emax, float(np.nanmax(c["e_kinetic"])))
            if has_reco and np.isfinite(c["reco_energy"]).any():
                rmin = min(rmin, float(np.nanmin(c["reco_energy"])))
                rmax = max(rmax, float(np.nanmax(c["reco_energy"])))
    intervals = np.asarray(ev.table("exposure/intervals"), dtype=np.float64)
    tmin, tmax = float(intervals[0, 0]), float(intervals[-1, 1])
    span_days = (tmax - tmin) / 86400.0
    n_time = int(np.clip(round(span_days / 14.0), 4, 52))
    d = {
        "names": names, "has_reco": has_reco, "n": ev.n_events,
        "e_origin": _Hist(_energy_edges(emin, emax)),
        "e_flavour": _Hist(_energy_edges(emin, emax)),
        "r_origin": _Hist(_energy_edges(rmin, rmax)),
        "r_flavour": _Hist(_energy_edges(rmin, rmax)),
        "cos": _Hist(np.linspace(-1.0, 1.0, 41)), "rcos": _Hist(np.linspace(-1.0, 1.0, 41)),
        "time": _Hist(np.linspace(tmin, tmax, n_time + 1)),
        "dn": _Hist(_energy_edges(emin, emax, 12)),
        "intervals": intervals,
        "zenith_edges": np.asarray(ev.table("exposure/zenith_edges")),
        "zenith_weights": np.asarray(ev.table("exposure/zenith_weights")),
        "flavour": ev.table("flavour/day") if "flavour" in ev._f else {},
    }
    fields = ["e_kinetic", "origin", "nu_pdg", "weight", "cos_sun", "time_utc", "is_night"]
    fields += ["reco_energy", "reco_cos_sun"] if has_reco else []
    for c in ev.iter_chunks(_CHUNK, fields):
        w = c["weight"].astype(np.float64)
        bkg = c["origin"] >= BACKGROUND_MIN_CODE
        flav = np.where(bkg, 0, c["nu_pdg"]).astype(np.int64)
        origin = c["origin"].astype(np.int64)
        d["e_origin"].fill(c["e_kinetic"], origin, w)
        d["e_flavour"].fill(c["e_kinetic"], flav, w)
        d["cos"].fill(c["cos_sun"], np.where(bkg, 1, 0), w)
        sig = ~bkg
        d["time"].fill(c["time_utc"][sig], np.zeros(int(sig.sum()), np.int64), w[sig])
        d["dn"].fill(c["e_kinetic"][sig], c["is_night"][sig].astype(np.int64), w[sig])
        if has_reco:
            d["r_origin"].fill(c["reco_energy"], origin, w)
            d["r_flavour"].fill(c["reco_energy"], flav, w)
            d["rcos"].fill(c["reco_cos_sun"], np.where(bkg, 1, 0), w)
    return d


def _spectrum(plt, d: dict, which: str = "e"):
    flav = {**_FLAVOUR, 0: "background (no ν)"}
    fig, axes = plt.subplots(1, 2, figsize=(11, 4.2))
    label = ("recoil kinetic energy T (MeV)" if which == "e"
             else "reconstructed energy (MeV, electron-equivalent)")
    _stack(axes[0], d[f"{which}_origin"], d["names"], label, "by origin")
    _stack(axes[1], d[f"{which}_flavour"], flav, label, "by flavour at detection", True)
    fig.suptitle(f"{'true' if which == 'e' else 'reconstructed'} energy spectrum "
                 f"({d['n']} events, weighted)")
    fig.tight_layout()
    return fig


def _reco_spectrum(plt, d: dict):
    return _spectrum(plt, d, "r") if d["has_reco"] and d["r_origin"].w else None


def _finish(fig, ax, xlabel: str, ylabel: str, title: str, loc: str = "best"):
    """Axis labels (with units), title, legend and layout of a one-panel figure."""
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.set_title(title)
    ax.legend(loc=loc)
    fig.tight_layout()
    return fig


def _cos_sun(plt, d: dict):
    fig, ax = plt.subplots(figsize=(6.5, 4.2))
    for hist, label, colour in ((d["cos"], "true", PALETTE[0]),
                                (d["rcos"], "reconstructed", PALETTE[1])):
        if not hist.w:
            continue
        y, y2 = hist.total()
        widths = np.diff(hist.edges)
        ax.stairs(y / widths, hist.edges, color=colour, linewidth=1.6, label=label)
        if 1 in hist.w:
            ax.stairs(hist.w[1] / widths, hist.edges, color=colour, linestyle=":",
                      label=f"{label}, backgrounds")
    ax.set_yscale("log")
    ax.set_xlim(-1, 1)
    return _finish(fig, ax, r"cos $\theta_\odot$ (electron direction vs Sun → detector direction)",
                   r"expected events per unit cos $\theta_\odot$", "direction to the Sun",
                   "upper left")


def _annual(plt, d: dict):
    import datetime as dt

    hist = d["time"]
    obs, obs2 = hist.total()
    live, weighted = annual_expectation(hist.edges, d["intervals"])
    ok = live > 0
    if not ok.any() or obs.sum() <= 0:
        return None
    expected = obs.sum() * weighted / weighted.sum()
    days = live / 86400.0
    centres = 0.5 * (hist.edges[1:] + hist.edges[:-1])
    dates = [dt.datetime.fromtimestamp(float(t), dt.UTC) for t in centres[ok]]
    fig, ax = plt.subplots(figsize=(8, 4.2))
    ax.errorbar(dates, obs[ok] / days[ok], yerr=np.sqrt(obs2[ok]) / days[ok], fmt="o", ms=3.5,
                color=PALETTE[0], label="generated signal events")
    ax.step(dates, expected[ok] / days[ok], where="mid", color=PALETTE[1], linewidth=1.6,
            label="1/r² expectation (same total)")
    fig.autofmt_xdate()
    return _finish(fig, ax, "date (UTC)", "expected events per live day",
                   "event rate through the exposure")


def _day_night(plt, d: dict):
    hist = d["dn"]
    edges, weights = d["zenith_edges"], d["zenith_weights"]
    w_night = float(weights[edges[1:] <= 0.0].sum())
    w_day = float(weights[edges[:-1] >= 0.0].sum())
    if 0 not in hist.w or 1 not in hist.w or w_day <= 0 or w_night <= 0:
        return None
    day, day2 = hist.w[0] / w_day, hist.w2[0] / w_day**2
    night, night2 = hist.w[1] / w_night, hist.w2[1] / w_night**2
    ok = (day > 0) & (night > 0)
    ratio = np.where(ok, night / np.where(ok, day, 1), np.nan)
    err = ratio * np.sqrt(np.where(ok, night2 / np.where(ok, night, 1) ** 2
                                   + day2 / np.where(ok, day, 1) ** 2, np.nan))
    centres = 0.5 * (hist.edges[1:] + hist.edges[:-1])
    fig, ax = plt.subplots(figsize=(6.5, 4.2))
    ax.axhline(1.0, color="#999999", linewidth=1)
    ax.errorbar(centres[ok], ratio[ok], yerr=err[ok], xerr=0.5 * np.diff(hist.edges)[ok],
                fmt="o", ms=3.5, color=PALETTE[2], label="night / day, per 1/r²-weighted live s")
    return _finish(fig, ax, "recoil kinetic energy T (MeV)", "night / day event-rate ratio",
                   "day/night spectrum ratio (signal)")


def _p_ee(plt, d: dict):
    tables = d["flavour"]
    if not tables:
        return None
    fig, ax = plt.subplots(figsize=(6.5, 4.2))
    for i, (region, t) in enumerate(sorted(tables.items())):
        energy, prob = np.asarray(t["energy"]), np.asarray(t["probability"])
        ax.plot(energy, prob[:, 0], color=PALETTE[i % len(PALETTE)], linewidth=1.5,
                label=region)
    ax.set_xscale("log")
    ax.set_ylim(0.0, 1.0)
    return _finish(fig, ax, "neutrino energy E (MeV)", r"$P(\nu_e \to \nu_e)$, daytime",
                   "electron-neutrino survival as applied (/flavour/day)", "upper right")


_FIGURES = (("spectrum_true.png", _spectrum), ("spectrum_reco.png", _reco_spectrum),
            ("cos_sun.png", _cos_sun), ("annual_rate.png", _annual),
            ("day_night.png", _day_night), ("p_ee.png", _p_ee))
