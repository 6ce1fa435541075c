"""Energy grids of the sources and the rejection envelope of the event sampler.

Every source is evaluated on one fine energy grid (:func:`source_grid`): a uniform grid of
:data:`ENVELOPE_POINTS` points from the kinematic threshold E_min(T_th) to the top of the
spectrum, merged with every knot of the spectrum's own table (a user table keeps its kinks),
of the flavour-probability table and of the cross-section table, and with the line energies.
On each cell of that grid the spectrum pdf, the flavour probabilities (for a fixed zenith
angle) and the envelope are linear, and the cross section is one cubic of its table variable.

The envelope B(E) ≥ g(E, θ_z) = Σ_α P_α(E, θ_z) σ_α(E) for every E and every zenith angle,
where P_α and σ_α are exactly the interpolated functions the sampler evaluates
(:meth:`generator.oscillation.FlavourModel.probabilities`, :meth:`generator.recoil.RecoilSampler.
sigma`). Proof of the bound (:func:`cell_bounds`, :func:`build_envelope`):

1. P_α(E, c) is bilinear in (E, cos θ_z = c) on each cell of the flavour table's uniform
   (E, c) grid at night, and linear in E and independent of c by day. A fine-grid cell
   [a, b] lies inside one flavour E cell, so for c between two night nodes c_j, c_{j+1}
   P(E, c) is a convex combination of P(a, c_j), P(a, c_{j+1}), P(b, c_j), P(b, c_{j+1});
   by day of P(a, day), P(b, day). Night values next to c = 0⁻ tend to the c = 0 node
   (evaluated at the largest negative double, where the interpolation weight is exactly 0).
2. P_α ≥ 0, so g(E, c) ≤ Σ_α P_α(E, c) S_α with S_α ≥ sup_[a,b] σ_α
   (:meth:`~generator.recoil.RecoilSampler.sigma_upper`, Bernstein bound of the cubic, lines
   included), and this linear function of P takes its maximum over the convex hull at a
   corner: M_cell = max over corners (E ∈ {a, b}, all night nodes, day) of Σ_α P_α S_α.
3. The envelope is piecewise linear on the uniform grid u_i; each uniform cell i is a union
   of fine cells, M_i = their largest M_cell, and the node values are
   v_i = m · max(M_{i−1}, M_i) (m = :data:`ENVELOPE_MARGIN`). On cell i the linear
   interpolant is ≥ min(v_i, v_{i+1}) ≥ m M_i ≥ m g.
4. The margin m − 1 = 10⁻⁶ covers floating-point rounding of the interpolation formulas
   (≲ 10⁻¹² relative) and the 10⁻⁶-step tolerance of knot positions in the cross-section
   table; it costs 10⁻⁶ of acceptance.

Hence the acceptance g/B never exceeds 1; :func:`generator.pipeline.generate_chunk` still
checks every candidate and stops the run with :class:`~generator.errors.SamplingError` if it
ever did. The loose ends of the bound (S_α at the cell's upper end, the maximum over all zenith
angles, two neighbouring cells) cost ≈ 1 % of acceptance; the day–night spread of P is the
main term of the 95–99 % acceptance.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Envelope", "ENVELOPE_MARGIN", "ENVELOPE_POINTS", "source_grid", "zenith_nodes",
           "cell_bounds", "build_envelope"]

#: Relative safety margin of the envelope: floating-point rounding only (see the module text).
ENVELOPE_MARGIN = 1.0 + 1e-6

#: Points of the uniform energy grid of the acceptance envelope (and of the fine source grid).
ENVELOPE_POINTS = 2048


@dataclass
class Envelope:
    """Upper bound B(E) ≥ Σ_α P_α(E, θ_z) σ_α(E) over all zenith angles (cm²).

    Piecewise linear on a uniform energy grid, so evaluating it is index arithmetic.
    """

    e0: float
    inv_de: float
    values: np.ndarray = field(repr=False)

    def __call__(self, energy: np.ndarray) -> np.ndarray:
        """B(E) in cm² for energies in MeV (clamped to the grid)."""
        x = (np.asarray(energy, dtype=np.float64) - self.e0) * self.inv_de
        i = np.clip(x.astype(np.intp), 0, self.values.size - 2)
        f = np.clip(x - i, 0.0, 1.0)
        v = self.values
        return v[i] + f * (v[i + 1] - v[i])

    @property
    def nodes(self) -> np.ndarray:
        """Energies (MeV) of the envelope's grid nodes."""
        de = 1.0 / self.inv_de if self.inv_de > 0.0 else 0.0
        return self.e0 + de * np.arange(self.values.size)


def source_grid(lo: float, hi: float, knots: list[np.ndarray], points: int = ENVELOPE_POINTS
                ) -> tuple[np.ndarray, np.ndarray]:
    """The fine energy grid of a source and its uniform envelope sub-grid.

    Parameters
    ----------
    lo, hi : float
        Range in MeV (lo < hi): the kinematic threshold E_min(T_th) (or the start of the
        spectrum, if higher) and the top of the spectrum.
    knots : list of ndarray
        Energies in MeV that must be grid points (spectrum table, flavour and cross-section
        table knots, line energies); those outside (lo, hi) are dropped.
    points : int
        Points of the uniform envelope grid (fewer suffice for a source of lines only).

    Returns
    -------
    grid : ndarray, shape (n,)
        Strictly increasing fine grid in MeV, from ``lo`` to ``hi``.
    uniform : ndarray, shape (points,)
        The uniform envelope nodes (a subset of ``grid``).
    """
    uniform = np.linspace(lo, hi, points)
    inner = [k[(k > lo) & (k < hi)] for k in (np.asarray(x, dtype=np.float64) for x in knots)]
    grid = np.unique(np.concatenate([uniform, *inner]))
    return grid, uniform


def zenith_nodes(flavour: Any) -> np.ndarray:
    """Cos-zenith values at which the flavour probabilities take their extreme values.

    The night nodes of the Earth table (the c = 0 node as the largest negative double, see the
    module text) and one day value. When the Earth table does not depend on the zenith angle
    (Earth matter or oscillations off) one night node stands for all.
    """
    night = flavour.night_table()
    cz = np.asarray(night["cos_zenith"], dtype=np.float64).copy()
    p = night["p_earth"]
    if np.array_equal(p, np.broadcast_to(p[:, :1], p.shape)):
        cz = cz[:1]
    cz[cz >= 0.0] = -np.finfo(np.float64).smallest_subnormal
    return np.concatenate([cz, [0.5]])


def cell_bounds(flavour: Any, region: str, recoil: Any, pdgs: tuple[int, ...],
                grid: np.ndarray) -> np.ndarray:
    """M_cell ≥ sup of Σ_α P_α σ_α over each fine-grid cell and all zenith angles (cm²).

    Parameters
    ----------
    flavour : FlavourModel
        Flavour probabilities.
    region : str
        Production region of the source.
    recoil : RecoilSampler
        Cross-section tables (:meth:`~generator.recoil.RecoilSampler.sigma_upper`).
    pdgs : tuple of int
        Produced flavours, in the e, μ, τ column order.
    grid : ndarray, shape (n,)
        Fine grid from :func:`source_grid` (contains every table knot).

    Returns
    -------
    ndarray, shape (n − 1,)
    """
    s_up = np.zeros((grid.size - 1, 3))
    for j, pdg in enumerate(pdgs):
        s_up[:, j] = recoil.sigma_upper(grid[:-1], grid[1:], pdg)
    best = np.zeros(grid.size - 1)
    for c in zenith_nodes(flavour):
        p = np.maximum(flavour.probabilities(region, grid, np.full(grid.size, c)), 0.0)
        best = np.maximum(best, np.einsum("ij,ij->i", p[:-1], s_up))
        best = np.maximum(best, np.einsum("ij,ij->i", p[1:], s_up))
    return best


def build_envelope(grid: np.ndarray, uniform: np.ndarray, bounds: np.ndarray) -> Envelope:
    """The piecewise-linear envelope on ``uniform`` that dominates the fine-cell ``bounds``.

    Parameters
    ----------
    grid, uniform : ndarray
        From :func:`source_grid`.
    bounds : ndarray, shape (grid.size − 1,)
        From :func:`cell_bounds`.

    Returns
    -------
    Envelope
    """
    cell = np.clip(np.searchsorted(uniform, grid[:-1], side="right") - 1, 0, uniform.size - 2)
    m = np.zeros(uniform.size - 1)
    np.maximum.at(m, cell, bounds)
    v = np.empty(uniform.size)
    v[0], v[-1] = m[0], m[-1]
    v[1:-1] = np.maximum(m[:-1], m[1:])
    lo, hi = float(uniform[0]), float(uniform[-1])
    return Envelope(lo, (uniform.size - 1) / (hi - lo), v * ENVELOPE_MARGIN)
