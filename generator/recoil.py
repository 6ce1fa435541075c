"""Fast sampling of the electron recoil energy T given the neutrino energy and flavour.

Method (inverse-transform sampling, e.g. L. Devroye, *Non-Uniform Random Variate Generation*,
Springer 1986, §II.2): for each flavour a 2-D table holds the quantile function x(w, u) of the
normalised recoil variable x = (T − t_min)/(T_max(E) − t_min) ∈ [0, 1], on uniform grids in
u ∈ [0, 1] (the CDF value) and in w = ln(T_max(E) − t_min). The variable w makes the table
smooth through the kinematic threshold (the x-shape tends to uniform as the window closes)
and is ≈ ln E far above it. Sampling is one ``rng.random(n)`` call plus a hand-written
bilinear lookup (index arithmetic, no binary search). Monoenergetic lines get their own
finely tabulated 1-D quantile functions.

Table construction: per grid energy, dσ/dT is evaluated on a fixed set of x nodes that is
dense near x = 0 (√T and 1/T behaviour) and near x = 1 (radiative endpoint log), integrated
cumulatively with the trapezoid rule and inverted by linear interpolation. The total cross
section on the same w grid comes from Gauss–Legendre quadrature and is interpolated as the
smooth ratio σ/(T_max − t_min) with 4-point Lagrange interpolation in w.
"""

from __future__ import annotations

import math
import os
from dataclasses import asdict

import numpy as np
from numpy.typing import ArrayLike

from generator.cache import CacheRejected, cached_arrays, check_arrays, code_key
from generator.errors import ConfigError
from generator.kinematics import e_min_for_recoil, t_max
from generator.xsec import FLAVOURS, XsecModel, dsigma_dt_flavours, sigma_total

__all__ = ["RecoilSampler"]

#: Smallest recoil window T_max − t_min (MeV) resolved by the table; closer to threshold the
#: first table row is used (those energies carry a fraction ~1e-6 of any realistic rate).
_WIDTH_FLOOR = 1e-6
_N_LINE_U = 8193
#: x nodes of the 2-D table rows and of the line tables (:func:`_x_nodes`).
_N_X, _N_X_LINE = 1537, 16001


def _x_nodes(n_smooth: int) -> np.ndarray:
    """Fixed x nodes on [0, 1]: smoothstep-mapped uniform grid plus a geometric tail at 0."""
    s = np.linspace(0.0, 1.0, n_smooth)
    smooth = s * s * (3.0 - 2.0 * s)
    geometric = np.logspace(-10.0, -2.0, 161)
    return np.unique(np.concatenate([smooth, geometric]))


def _quantile_rows(pdf: np.ndarray, x: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Invert cumulative trapezoid integrals of ``pdf`` rows (k, n) on nodes x to quantiles at u."""
    dx = np.diff(x)
    inc = 0.5 * (pdf[:, 1:] + pdf[:, :-1]) * dx
    cdf = np.concatenate([np.zeros((pdf.shape[0], 1)), np.cumsum(inc, axis=1)], axis=1)
    total = cdf[:, -1:]
    out = np.empty((pdf.shape[0], u.size))
    for r in range(pdf.shape[0]):
        if total[r, 0] > 0.0:
            c = cdf[r] / total[r, 0]
            # strictly increasing copy for interpolation (plateaus where pdf = 0)
            out[r] = np.interp(u, c, x)
        else:
            out[r] = u
    out[:, 0] = 0.0
    out[:, -1] = 1.0
    return out


class RecoilSampler:
    """Tabulated inverse-CDF sampler of the recoil kinetic energy T (MeV).

    Parameters
    ----------
    model : XsecModel
        Interaction settings used to build the tables.
    pdgs : tuple of int
        Flavours (PDG codes) to tabulate.
    e_min, e_max : float
        Neutrino-energy range in MeV covered by the 2-D table.
    t_min : float
        Recoil threshold in MeV; sampled T ≥ t_min and σ is counted above it.
    n_energy, n_u : int
        Number of grid nodes in w = ln(T_max − t_min) and in the CDF value u.
    lines : tuple of float
        Exact line energies (MeV) that get their own 1-D tables (exact to ~1e-7 in the CDF).
    cache_dir : str, Path, or None
        Folder of the table cache (:mod:`generator.cache`; ``None`` ⇒ ``$SUNRECOIL_CACHE`` or
        ``~/.cache/sunrecoil``). The tables are keyed by every argument above, the package code
        and the numpy/scipy versions; a loaded entry is bit-identical to a fresh build.
    """

    def __init__(
        self,
        model: XsecModel,
        pdgs: tuple[int, ...] = (12, 14, 16),
        e_min: float = 0.05,
        e_max: float = 20.0,
        t_min: float = 0.0,
        n_energy: int = 512,
        n_u: int = 512,
        lines: tuple[float, ...] = (),
        cache_dir: str | os.PathLike | None = None,
    ) -> None:
        if not isinstance(model, XsecModel):
            raise ConfigError(f"model must be an XsecModel; got {type(model).__name__}")
        pdgs = tuple(int(p) for p in pdgs)
        if not pdgs or len(set(pdgs)) != len(pdgs) or not set(pdgs) <= set(FLAVOURS):
            raise ConfigError(f"pdgs = {pdgs}; allowed: distinct codes from {list(FLAVOURS)}")
        for name, val in (("e_min", e_min), ("e_max", e_max), ("t_min", t_min)):
            if not (isinstance(val, int | float) and math.isfinite(val)):
                raise ConfigError(f"{name} = {val!r}; allowed: a finite number of MeV")
        if not 0.0 < e_min < e_max <= 1000.0:
            raise ConfigError(
                f"e_min = {e_min!r}, e_max = {e_max!r} MeV; allowed: 0 < e_min < e_max <= 1000"
            )
        if not 0.0 <= t_min < float(t_max(e_max)):
            raise ConfigError(
                f"t_min = {t_min!r} MeV; allowed: 0 <= t_min < T_max(e_max) = "
                f"{float(t_max(e_max)):.6g} MeV"
            )
        if model.magnetic_moment and t_min <= 0.0:
            raise ConfigError(
                f"t_min = {t_min!r} MeV with magnetic_moment = {model.magnetic_moment}; the "
                "magnetic cross section diverges at T -> 0, allowed: t_min > 0"
            )
        for name, val, lo in (("n_energy", n_energy, 8), ("n_u", n_u, 16)):
            if not (isinstance(val, int) and lo <= val <= 65536):
                raise ConfigError(f"{name} = {val!r}; allowed: integer in [{lo}, 65536]")
        lines = tuple(float(x) for x in lines)
        if not all(math.isfinite(x) and x > 0.0 for x in lines):
            raise ConfigError(f"lines = {lines}; allowed: finite energies > 0 MeV")

        self.model = model
        self.pdgs = pdgs
        self.e_min, self.e_max, self.t_min = float(e_min), float(e_max), float(t_min)
        self.n_energy, self.n_u = n_energy, n_u
        self.e_threshold = float(e_min_for_recoil(t_min))
        self._lookup = np.full(33, -1, dtype=np.intp)  # pdg + 16 -> table index
        for k, p in enumerate(pdgs):
            self._lookup[p + 16] = k

        width_lo = max(float(t_max(e_min)) - t_min, _WIDTH_FLOOR)
        width_hi = float(t_max(e_max)) - t_min
        self._w0 = math.log(width_lo)
        self._dw = (math.log(width_hi) - self._w0) / (n_energy - 1)
        self._inv_dw = 1.0 / self._dw
        widths = np.exp(self._w0 + self._dw * np.arange(n_energy))
        energies = _energy_for_width(widths + t_min)
        self._grid_energy = energies

        self.lines = tuple(x for x in lines if x > self.e_threshold)
        self._line_u = np.linspace(0.0, 1.0, _N_LINE_U)
        tables = cached_arrays("recoil", self.table_key(),
                               lambda: self._build_tables(energies, widths),
                               self._validate_tables, directory=cache_dir)
        self._table = tables["table"]
        self._ratio = tables["ratio"]  # σ / (T_max − t_min), smooth in w
        if self.lines:
            self._line_table = tables["line_table"]
            self._line_sigma = tables["line_sigma"]

    # ------------------------------------------------------------------ building
    def table_key(self) -> dict:
        """Every input of the tables.

        The full key of their cache entry, and part of the keys of tables derived from them.
        """
        return {"table": "recoil-v1", **code_key(), "model": asdict(self.model),
                "pdgs": list(self.pdgs), "e_min": self.e_min, "e_max": self.e_max,
                "t_min": self.t_min, "n_energy": self.n_energy, "n_u": self.n_u,
                "lines": list(self.lines), "n_x": [_N_X, _N_X_LINE], "n_line_u": _N_LINE_U,
                "width_floor": _WIDTH_FLOOR}

    def _build_tables(self, energies: np.ndarray, widths: np.ndarray) -> dict[str, np.ndarray]:
        u = np.linspace(0.0, 1.0, self.n_u)
        table = self._build_quantiles(energies, u, _N_X)
        sig = np.stack([sigma_total(energies, p, self.model, self.t_min) for p in self.pdgs])
        out = {"table": table.astype(np.float64).reshape(-1), "ratio": sig / widths[None, :]}
        if self.lines:
            le = np.asarray(self.lines)
            out["line_table"] = self._build_quantiles(le, self._line_u, _N_X_LINE)
            out["line_sigma"] = np.stack([sigma_total(le, p, self.model, self.t_min)
                                          for p in self.pdgs])
        return out

    def _validate_tables(self, arrays: dict[str, np.ndarray]) -> None:
        """Shapes, finiteness and ranges of loaded tables (quantiles in [0, 1], σ ≥ 0)."""
        k, n = len(self.pdgs), len(self.lines)
        shapes = {"table": (k * self.n_energy * self.n_u,), "ratio": (k, self.n_energy)}
        if n:
            shapes.update(line_table=(k, n, _N_LINE_U), line_sigma=(k, n))
        check_arrays(arrays, shapes)
        for name, width in (("table", self.n_u), ("line_table", _N_LINE_U)):
            if name in arrays:
                q = arrays[name].reshape(-1, width)
                if q.min() < 0.0 or q.max() > 1.0 or np.any(np.diff(q, axis=1) < 0.0):
                    raise CacheRejected(f"{name}: quantiles outside [0, 1] or decreasing")
        if arrays["ratio"].min() < 0.0 or (n and arrays["line_sigma"].min() < 0.0):
            raise CacheRejected("negative cross sections")

    def _build_quantiles(self, energies: np.ndarray, u: np.ndarray, n_x: int) -> np.ndarray:
        """Quantile tables x(u), shape (n_pdg, len(energies), len(u))."""
        x = _x_nodes(n_x)
        width = t_max(energies) - self.t_min
        out = np.empty((len(self.pdgs), energies.size, u.size))
        chunk = max(1, 400_000 // x.size)
        for a in range(0, energies.size, chunk):
            e = energies[a : a + chunk, None]
            t = self.t_min + width[a : a + chunk, None] * x[None, :]
            pdf = dsigma_dt_flavours(e, t, self.pdgs, self.model)
            pdf[..., -1] = pdf[..., -2]  # T = T_max itself: use the adjacent node's density
            for k in range(len(self.pdgs)):
                out[k, a : a + chunk] = _quantile_rows(pdf[k], x, u)
        return out

    # ------------------------------------------------------------------ helpers
    def _flavour_index(self, pdg: ArrayLike) -> np.ndarray:
        p = np.asarray(pdg)
        if not np.issubdtype(p.dtype, np.integer):
            raise ConfigError(f"pdg must be integer PDG codes; got dtype {p.dtype}")
        idx = self._lookup[np.clip(p, -16, 16) + 16]
        if np.any(idx < 0) or np.any(np.abs(p) > 16):
            raise ConfigError(f"pdg codes outside the tabulated flavours {list(self.pdgs)}")
        return idx

    def _check_energy(self, e: np.ndarray) -> None:
        if e.size and not (e.min() >= self.e_min and e.max() <= self.e_max):
            raise ConfigError(
                f"energy outside the tabulated range [{self.e_min}, {self.e_max}] MeV "
                f"(got min {e.min():.6g}, max {e.max():.6g})"
            )

    def quantile(self, u: ArrayLike, energy: ArrayLike, pdg: ArrayLike) -> np.ndarray:
        """Recoil energy T (MeV) at CDF value ``u`` for each (energy, pdg).

        Parameters
        ----------
        u : array_like
            CDF values in [0, 1), shape (n,).
        energy : array_like
            Neutrino energies in MeV, shape (n,), within [e_min, e_max] and above threshold.
        pdg : int or array_like of int
            PDG code(s), scalar or shape (n,).

        Returns
        -------
        numpy.ndarray
            T in MeV, shape (n,), t_min ≤ T ≤ T_max(E).
        """
        e = np.asarray(energy, dtype=np.float64).reshape(-1)
        uu = np.asarray(u, dtype=np.float64).reshape(-1)
        self._check_energy(e)
        fi = self._flavour_index(pdg)
        width = t_max(e) - self.t_min
        if e.size and not width.min() > 0.0:
            raise ConfigError(
                f"energy at or below the recoil threshold {self.e_threshold:.6g} MeV "
                f"(t_min = {self.t_min} MeV): sigma = 0, nothing to sample"
            )
        n_u, n_e = self.n_u, self.n_energy
        pos = (np.log(np.maximum(width, _WIDTH_FLOOR)) - self._w0) * self._inv_dw
        i = np.minimum(np.maximum(pos, 0.0).astype(np.intp), n_e - 2)
        fw = np.minimum(np.maximum(pos - i, 0.0), 1.0)
        q = uu * (n_u - 1)
        j = np.minimum(q.astype(np.intp), n_u - 2)
        fu = q - j
        base = (fi * n_e + i) * n_u + j
        tab = self._table
        lo = tab[base] + fu * (tab[base + 1] - tab[base])
        hi = tab[base + n_u] + fu * (tab[base + n_u + 1] - tab[base + n_u])
        x = lo + fw * (hi - lo)
        if self.lines:
            self._apply_lines(x, uu, e, fi)
        return self.t_min + x * width

    def _apply_lines(self, x: np.ndarray, u: np.ndarray, e: np.ndarray, fi: np.ndarray) -> None:
        n_u = _N_LINE_U
        for k, line in enumerate(self.lines):
            sel = np.flatnonzero(e == line)
            if sel.size == 0:
                continue
            f = fi if np.ndim(fi) == 0 else fi[sel]
            q = u[sel] * (n_u - 1)
            j = np.minimum(q.astype(np.intp), n_u - 2)
            # element-wise gather: never materialise a (selected events × n_u) block
            lo = self._line_table[f, k, j]
            hi = self._line_table[f, k, j + 1]
            x[sel] = lo + (q - j) * (hi - lo)

    # ------------------------------------------------------------------ public API
    def sample(self, rng: np.random.Generator, energy: ArrayLike, pdg: ArrayLike) -> np.ndarray:
        """Sample recoil kinetic energies for mixed energies and flavours.

        Parameters
        ----------
        rng : numpy.random.Generator
            Randomness source; exactly one ``rng.random(n)`` call.
        energy : array_like
            Neutrino energies in MeV, shape (n,), in [e_min, e_max] and above threshold.
        pdg : int or array_like of int
            PDG code(s), scalar or shape (n,), among the tabulated flavours.

        Returns
        -------
        numpy.ndarray
            T in MeV, shape (n,), t_min ≤ T ≤ T_max(E).
        """
        e = np.asarray(energy, dtype=np.float64).reshape(-1)
        return self.quantile(rng.random(e.size), e, pdg)

    def sigma(self, energy: ArrayLike, pdg: ArrayLike) -> np.ndarray:
        """Total cross section above t_min, interpolated from the table (rel. error < 1e-4).

        Parameters
        ----------
        energy : array_like
            Neutrino energies in MeV, ≤ e_max (any shape).
        pdg : int or array_like of int
            PDG code(s), broadcast with ``energy``.

        Returns
        -------
        numpy.ndarray
            σ in cm²; zero at and below the recoil threshold, and zero below ``e_min``:
            neutrinos below ``e_min`` are not generated (for the default 0.05 MeV and t_min = 0
            they carry a fraction ≈ (0.05/0.42)⁵ ~ 1e-5 of the pp scattering rate, since
            flux ∝ E² and σ ∝ E² there — estimate, common practice, no source).
        """
        e, p = np.broadcast_arrays(np.asarray(energy, dtype=np.float64), np.asarray(pdg))
        if e.size and not e.max() <= self.e_max:
            raise ConfigError(
                f"energy {e.max():.6g} MeV above the tabulated maximum e_max = {self.e_max} MeV"
            )
        fi = self._flavour_index(p)
        width = t_max(e) - self.t_min
        pos = (np.log(np.maximum(width, _WIDTH_FLOOR)) - self._w0) * self._inv_dw
        n_e = self.n_energy
        i = np.clip(np.floor(pos).astype(np.intp) - 1, 0, n_e - 4)
        s = pos - i  # position relative to node i, nominally in [1, 2]
        s = np.clip(s, 0.0, 3.0)
        w0 = -(s - 1.0) * (s - 2.0) * (s - 3.0) / 6.0
        w1 = s * (s - 2.0) * (s - 3.0) / 2.0
        w2 = -s * (s - 1.0) * (s - 3.0) / 2.0
        w3 = s * (s - 1.0) * (s - 2.0) / 6.0
        r = self._ratio
        ratio = w0 * r[fi, i] + w1 * r[fi, i + 1] + w2 * r[fi, i + 2] + w3 * r[fi, i + 3]
        out = np.where((width > 0.0) & (e >= self.e_min), ratio * np.maximum(width, 0.0), 0.0)
        for k, line in enumerate(self.lines):
            sel = e == line
            if np.any(sel):
                out = np.where(sel, self._line_sigma[fi, k], out)
        return out

    def sigma_flavours(self, energy: ArrayLike) -> np.ndarray:
        """:meth:`sigma` of every tabulated flavour at once, shape (n, 3) (cm²).

        Column k holds ``sigma(energy, pdgs[k])`` bit for bit (the same arithmetic; the table
        position and the interpolation weights are computed once for all flavours); columns
        beyond ``len(pdgs)`` are zero.
        """
        e = np.asarray(energy, dtype=np.float64).reshape(-1)
        if e.size and not e.max() <= self.e_max:
            raise ConfigError(
                f"energy {e.max():.6g} MeV above the tabulated maximum e_max = {self.e_max} MeV"
            )
        width = t_max(e) - self.t_min
        pos = (np.log(np.maximum(width, _WIDTH_FLOOR)) - self._w0) * self._inv_dw
        n_e = self.n_energy
        i = np.clip(np.floor(pos).astype(np.intp) - 1, 0, n_e - 4)
        s = pos - i
        s = np.clip(s, 0.0, 3.0)
        w0 = -(s - 1.0) * (s - 2.0) * (s - 3.0) / 6.0
        w1 = s * (s - 2.0) * (s - 3.0) / 2.0
        w2 = -s * (s - 1.0) * (s - 3.0) / 2.0
        w3 = s * (s - 1.0) * (s - 2.0) / 6.0
        live = (width > 0.0) & (e >= self.e_min)
        scale = np.maximum(width, 0.0)
        on_line = [(k, np.flatnonzero(e == line)) for k, line in enumerate(self.lines)]
        out = np.zeros((e.size, 3))
        for f in range(len(self.pdgs)):
            r = self._ratio[f]
            ratio = w0 * r[i] + w1 * r[i + 1] + w2 * r[i + 2] + w3 * r[i + 3]
            col = np.where(live, ratio * scale, 0.0)
            for k, sel in on_line:
                col[sel] = self._line_sigma[f, k]
            out[:, f] = col
        return out

    @property
    def sigma_knots(self) -> np.ndarray:
        """Neutrino energies (MeV) where :meth:`sigma` changes interpolation segment.

        Between two consecutive knots (and on the far side of the first and the last one)
        :meth:`sigma` is one fixed cubic in the table variable times T_max(E) − t_min; the
        recoil lines, where it returns the exact line value, are listed in :attr:`lines`.
        """
        return self._grid_energy.copy()

    def sigma_upper(self, lo: ArrayLike, hi: ArrayLike, pdg: int) -> np.ndarray:
        """Rigorous upper bound of :meth:`sigma` on each energy interval [lo, hi] (cm²).

        Valid for intervals with no :attr:`sigma_knots` strictly inside (a knot within 10⁻⁶
        of a table step of an end is tolerated: both neighbouring segments are bounded). On
        such an interval the table variable s(E) = (ln(T_max(E) − t_min) − w₀)/Δw − i is
        non-decreasing in E and the interpolated ratio σ/(T_max − t_min) is one cubic p(s)
        (4-point Lagrange form of :meth:`sigma`). A cubic on [s_a, s_b] in the Bernstein
        basis has the coefficients
        p(s_a), p(s_a) + h p'(s_a)/3, p(s_b) − h p'(s_b)/3, p(s_b) (h = s_b − s_a), and lies
        below the largest of them (convex-hull property; G. Farin, *Curves and Surfaces for
        CAGD*, 5th ed., Morgan Kaufmann 2002, ch. 4; from memory). As T_max − t_min grows with E,
        σ ≤ max(p, 0) · (T_max(hi) − t_min). Recoil lines inside the interval add their exact
        values.

        Parameters
        ----------
        lo, hi : array_like
            Interval ends in MeV, shape (k,), lo ≤ hi ≤ e_max.
        pdg : int
            One tabulated PDG code.

        Returns
        -------
        numpy.ndarray
            Bound in cm², shape (k,).
        """
        a = np.asarray(lo, dtype=np.float64).reshape(-1)
        b = np.asarray(hi, dtype=np.float64).reshape(-1)
        k = int(self._flavour_index(np.array([pdg]))[0])
        n_e = self.n_energy

        def pos(e: np.ndarray) -> np.ndarray:
            width = t_max(e) - self.t_min
            return (np.log(np.maximum(width, _WIDTH_FLOOR)) - self._w0) * self._inv_dw

        pa, pb = pos(a), pos(b)
        tol = 1e-6  # table steps; rounding of T_max(E) − t_min near threshold is ~1e-8
        inside = np.floor(pb - tol) > np.floor(pa + tol)
        if np.any(inside & (np.floor(pb - tol) >= 2) & (np.floor(pa + tol) < n_e - 3)):
            raise ValueError("sigma_upper: an interval contains a table knot (split it there)")
        r = self._ratio[k]

        def segment_bound(i: np.ndarray) -> np.ndarray:
            sa = np.clip(pa - i, 0.0, 3.0)
            sb = np.clip(pb - i, 0.0, 3.0)
            r0, r1, r2, r3 = (r[i + j] for j in range(4))
            d1, d2, d3 = r1 - r0, r2 - 2.0 * r1 + r0, r3 - 3.0 * r2 + 3.0 * r1 - r0

            def p(s: np.ndarray) -> np.ndarray:  # Newton form of the same cubic
                return r0 + s * (d1 + (s - 1.0) * (0.5 * d2 + (s - 2.0) * d3 / 6.0))

            def dp(s: np.ndarray) -> np.ndarray:
                return 0.5 * d3 * s * s + (d2 - d3) * s + (d1 - 0.5 * d2 + d3 / 3.0)

            h = sb - sa
            return np.maximum.reduce([p(sa), p(sa) + h * dp(sa) / 3.0,
                                      p(sb) - h * dp(sb) / 3.0, p(sb)])

        # the segment of the interior, and those of the two ends (which differ from it only
        # when an end lies within rounding of a knot): :meth:`sigma` uses one of these three
        top = np.maximum.reduce([
            segment_bound(np.clip(np.floor(x).astype(np.intp) - 1, 0, n_e - 4))
            for x in (0.5 * (pa + pb), pa, pb)])
        width_hi = t_max(b) - self.t_min
        out = np.maximum(top, 0.0) * np.maximum(width_hi, 0.0)
        for j, line in enumerate(self.lines):
            out = np.where((a <= line) & (line <= b), np.maximum(out, self._line_sigma[k, j]),
                           out)
        return out

    def sigma_exact(self, energy: ArrayLike, pdg: ArrayLike) -> np.ndarray:
        """Total cross section above t_min by direct quadrature (slow reference), in cm².

        Parameters
        ----------
        energy : array_like
            Neutrino energies in MeV.
        pdg : int or array_like of int
            PDG code(s), broadcast with ``energy``.

        Returns
        -------
        numpy.ndarray
            σ in cm².
        """
        return sigma_total(energy, pdg, self.model, self.t_min)


def _energy_for_width(tmax: np.ndarray) -> np.ndarray:
    """Neutrino energy whose T_max equals ``tmax`` (MeV); inverse of kinematics.t_max."""
    return e_min_for_recoil(tmax)
