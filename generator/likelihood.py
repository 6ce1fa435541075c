"""Binned Poisson likelihood of template components with Gaussian-constrained nuisances.

Model
-----
The expected count in bin i is

    μ_i(θ) = Σ_c k_c(θ) [T_ci + Σ_m (u_m D1_cmi + u_m² D2_cmi)],   u_m = (θ_m − c_m)/h_m,

with k_c = Π_f (a_f θ_{p_f} + b_f) a product of linear factors (normalisations, physics
parameters) and m the morphing parameters whose ±1 step (θ_m = c_m ± h_m) templates T^± give
D1 = (T⁺ − T⁻)/2, D2 = (T⁺ + T⁻ − 2T)/2 (quadratic interpolation through the three templates;
one-sided D1 = T⁺ − T, D2 = 0 when no T⁻ exists). Vertical template morphing is common
practice (no source).

Test statistic
--------------
−2 ln L(θ) = 2 Σ_i [μ_i − n_i + n_i ln(n_i/μ_i)] + Σ_p ((θ_p − a_p)/σ_p)², the Poisson
likelihood-ratio form of Baker & Cousins (Nucl. Instrum. Meth. 221, 437 (1984), eq. 9) plus
Gaussian constraints with auxiliary measurements a_p (the central values for the Asimov data).
The profile likelihood ratio, its test statistics q = −2 ln λ and the Asimov data set
(n_i = μ_i(θ_true), a_p = c_p) follow Cowan, Cranmer, Gross & Vitells, Eur. Phys. J. C 71,
1554 (2011): the median discovery significance is √q₀,A (their Sec. 3.2 and eq. 97 for a
counting experiment), the median expected 1σ interval is where q_A(p) = 1 (Wilks' theorem,
their Sec. 3.1). Minimisation is scipy.optimize (L-BFGS-B with the analytic gradient) or, if
installed and requested, iminuit's MIGRAD; the profile interval's end points are found by
Newton iteration of scipy.optimize.root_scalar, using that the derivative of the profiled
−2 ln L is the partial derivative at the profiled point (envelope theorem).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import ConfigError, SunrecoilError

__all__ = ["Parameter", "Component", "TemplateModel", "FitResult", "asimov_z",
           "counting_asimov_z"]


@dataclass(frozen=True)
class Parameter:
    """One model parameter.

    Attributes
    ----------
    name : str
    centre : float
        Nominal value: the truth of the Asimov data and the centre of the constraint.
    sigma : float or None
        Width of the Gaussian constraint (None: unconstrained). For a morphing parameter the
        ±1 templates are evaluated at centre ± sigma (``step`` if sigma is None).
    lo, hi : float
        Bounds of the fit.
    morph : bool
        Template-morphing parameter.
    fixed : bool
        Held at ``centre`` in every fit.
    step : float or None
        Morphing step when the parameter is unconstrained.
    """

    name: str
    centre: float
    sigma: float | None = None
    lo: float = -math.inf
    hi: float = math.inf
    morph: bool = False
    fixed: bool = False
    step: float | None = None


@dataclass
class Component:
    """A template with its coefficient factors and morphing shifts.

    ``factors`` are (parameter name, a, b) meaning a·θ + b; ``up``/``down`` map morphing
    parameter names to the templates at centre ± step.
    """

    name: str
    template: np.ndarray
    factors: tuple[tuple[str, float, float], ...] = ()
    up: dict[str, np.ndarray] = field(default_factory=dict)
    down: dict[str, np.ndarray] = field(default_factory=dict)


@dataclass
class FitResult:
    """Best-fit values (all parameters), −2 ln L at the minimum and the fit status."""

    theta: np.ndarray
    nll2: float
    success: bool
    n_calls: int = 0
    message: str = ""


#: Floor of the expected count per bin (keeps ln μ finite where a fit tries μ ≤ 0).
MU_FLOOR = 1e-300


class TemplateModel:
    """μ(θ), −2 ln L and its gradient, fits, profiles, Asimov data and toys.

    Parameters
    ----------
    params : sequence of Parameter
    components : sequence of Component
        Templates over the same flattened bins.
    minimiser : {"scipy", "iminuit"}
    """

    def __init__(self, params: list[Parameter], components: list[Component],
                 minimiser: str = "scipy"):
        self.params = list(params)
        self.names = [p.name for p in self.params]
        self.index = {n: i for i, n in enumerate(self.names)}
        if len(self.index) != len(self.names):
            raise ValueError("duplicate parameter names")
        self.components = list(components)
        if not self.components:
            raise ConfigError("sensitivity: the model has no template")
        self.n_bins = int(self.components[0].template.size)
        self.centre = np.array([p.centre for p in self.params], dtype=np.float64)
        sig = np.array([np.nan if p.sigma is None else p.sigma for p in self.params])
        self.constrained = np.isfinite(sig)
        self.sigma = np.where(self.constrained, sig, 1.0)
        self.fixed = np.array([p.fixed for p in self.params])
        self.lo = np.array([p.lo for p in self.params])
        self.hi = np.array([p.hi for p in self.params])
        self.morph_idx = np.array([i for i, p in enumerate(self.params) if p.morph], dtype=int)
        step = [p.sigma if p.sigma is not None else (p.step or 1.0) for p in self.params]
        self.morph_step = np.array([step[i] for i in self.morph_idx], dtype=np.float64)
        c, m, b = len(self.components), self.morph_idx.size, self.n_bins
        self.T = np.stack([np.asarray(cp.template, np.float64) for cp in self.components])
        self.D1 = np.zeros((c, m, b))
        self.D2 = np.zeros((c, m, b))
        for ci, cp in enumerate(self.components):
            for mi, pi in enumerate(self.morph_idx):
                name = self.names[pi]
                if name in cp.up and name in cp.down:
                    self.D1[ci, mi] = 0.5 * (cp.up[name] - cp.down[name])
                    self.D2[ci, mi] = 0.5 * (cp.up[name] + cp.down[name]) - cp.template
                elif name in cp.up:
                    self.D1[ci, mi] = cp.up[name] - cp.template
        kmax = max([len(cp.factors) for cp in self.components] + [1])
        self.fp = np.full((c, kmax), -1, dtype=int)
        self.fa = np.zeros((c, kmax))
        self.fb = np.ones((c, kmax))
        for ci, cp in enumerate(self.components):
            for k, (name, a, b0) in enumerate(cp.factors):
                self.fp[ci, k] = self.index[name]
                self.fa[ci, k], self.fb[ci, k] = a, b0
        self.minimiser = minimiser
        self.scale = self.sigma.copy()
        self.n_calls = 0

    # ------------------------------------------------------------------ model
    def with_exposure(self, factor: float) -> TemplateModel:
        """The same model with every template multiplied by ``factor`` (exposure scaling)."""
        other = object.__new__(TemplateModel)
        other.__dict__.update(self.__dict__)
        other.T, other.D1, other.D2 = self.T * factor, self.D1 * factor, self.D2 * factor
        other.n_calls = 0
        return other

    def _factor_values(self, theta: np.ndarray) -> np.ndarray:
        th = np.append(theta, 0.0)            # index −1 → 0 · a + 1
        return self.fa * th[self.fp] + np.where(self.fp >= 0, self.fb, 1.0)

    def _effective(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        u = (theta[self.morph_idx] - self.centre[self.morph_idx]) / self.morph_step
        teff = self.T + np.einsum("m,cmb->cb", u, self.D1) + np.einsum("m,cmb->cb", u * u,
                                                                        self.D2)
        return teff, u

    def expected(self, theta: Any) -> np.ndarray:
        """μ_i(θ), events per bin."""
        theta = np.asarray(theta, dtype=np.float64)
        teff, _ = self._effective(theta)
        k = np.prod(self._factor_values(theta), axis=1)
        return k @ teff

    def jacobian(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(μ, ∂μ/∂θ) with shapes (B,) and (P, B)."""
        teff, u = self._effective(theta)
        fv = self._factor_values(theta)
        k = np.prod(fv, axis=1)
        mu = k @ teff
        jac = np.zeros((len(self.params), self.n_bins))
        for kk in range(self.fp.shape[1]):
            others = np.prod(np.delete(fv, kk, axis=1), axis=1) * self.fa[:, kk]
            ok = self.fp[:, kk] >= 0
            if ok.any():
                np.add.at(jac, self.fp[ok, kk], others[ok, None] * teff[ok])
        if self.morph_idx.size:
            dm = np.einsum("c,cmb->mb", k, self.D1 + 2.0 * u[None, :, None] * self.D2)
            jac[self.morph_idx] += dm / self.morph_step[:, None]
        return mu, jac

    def nll2(self, theta: Any, data: np.ndarray, aux: np.ndarray | None = None,
             grad: bool = False) -> Any:
        """−2 ln L (Baker–Cousins form, 0 for a perfect fit without constraints)."""
        theta = np.asarray(theta, dtype=np.float64)
        aux = self.centre if aux is None else aux
        if grad:
            mu, jac = self.jacobian(theta)
        else:
            mu = self.expected(theta)
        mu_c = np.maximum(mu, MU_FLOOR)
        n = data
        pos = n > 0
        val = 2.0 * float(np.sum(mu_c - n) + np.sum(n[pos] * np.log(n[pos] / mu_c[pos])))
        r = np.where(self.constrained, (theta - aux) / self.sigma, 0.0)
        val += float(r @ r)
        if not grad:
            return val
        g = jac @ (2.0 * (1.0 - n / mu_c)) + 2.0 * r / self.sigma
        return val, g

    # ------------------------------------------------------------------ data
    def asimov(self, theta: Any = None) -> tuple[np.ndarray, np.ndarray]:
        """Asimov data μ(θ_true) and auxiliary values (the constraint centres)."""
        th = self.centre if theta is None else np.asarray(theta, np.float64)
        return self.expected(th), self.centre.copy()

    def toy(self, rng: np.random.Generator, theta: Any = None
            ) -> tuple[np.ndarray, np.ndarray]:
        """A pseudo-experiment: Poisson counts and Gaussian-fluctuated auxiliary values.

        Draws, in order: one Poisson count per bin (``rng.poisson``), then one standard normal
        per constrained, non-fixed parameter.
        """
        th = self.centre if theta is None else np.asarray(theta, np.float64)
        n = rng.poisson(np.maximum(self.expected(th), 0.0)).astype(np.float64)
        aux = self.centre.copy()
        free = self.constrained & ~self.fixed
        aux[free] += self.sigma[free] * rng.standard_normal(int(free.sum()))
        return n, aux

    # ------------------------------------------------------------------ fitting
    def fit(self, data: np.ndarray, aux: np.ndarray | None = None,
            fix: dict[str, float] | None = None, start: np.ndarray | None = None
            ) -> FitResult:
        """Minimise −2 ln L over the free parameters (``fix`` holds others at given values)."""
        theta0 = (self.centre if start is None else np.asarray(start, np.float64)).copy()
        free = ~self.fixed
        for name, v in (fix or {}).items():
            theta0[self.index[name]] = v
            free[self.index[name]] = False
        idx = np.flatnonzero(free)
        if idx.size == 0:
            return FitResult(theta0, self.nll2(theta0, data, aux), True, 1)
        sc = self.scale[idx]
        c0 = self.centre[idx]
        theta0[idx] = np.clip(theta0[idx], self.lo[idx], self.hi[idx])
        base = theta0.copy()

        def f(x: np.ndarray) -> tuple[float, np.ndarray]:
            th = base.copy()
            th[idx] = c0 + sc * x
            v, g = self.nll2(th, data, aux, grad=True)
            self.n_calls += 1
            return v, g[idx] * sc

        def hess(x: np.ndarray) -> np.ndarray:
            th = base.copy()
            th[idx] = c0 + sc * x
            return self.gauss_newton(th, data, idx) * np.outer(sc, sc)

        x0 = (theta0[idx] - c0) / sc
        bounds = list(zip((self.lo[idx] - c0) / sc, (self.hi[idx] - c0) / sc, strict=True))
        if self.minimiser == "iminuit":
            x, ok, msg = _migrad(f, x0, bounds)
        else:
            x, ok, msg = _scipy_minimise(f, hess, x0, bounds)
        th = base.copy()
        th[idx] = c0 + sc * x
        return FitResult(th, self.nll2(th, data, aux), ok, self.n_calls, msg)

    def gauss_newton(self, theta: np.ndarray, data: np.ndarray, idx: np.ndarray
                     ) -> np.ndarray:
        """Positive-definite approximation of the Hessian of −2 ln L over parameters ``idx``.

        2 Σ_i (n_i/μ_i²) ∂μ_i ∂μ_i + 2/σ² (the terms with second derivatives of μ, weighted
        by 1 − n_i/μ_i, are dropped: Gauss–Newton, exact at n = μ for models linear in θ).
        """
        mu, jac = self.jacobian(theta)
        mu = np.maximum(mu, MU_FLOOR)
        j = jac[idx]
        w = np.maximum(data, 1e-3 * mu) / (mu * mu)
        h = 2.0 * (j * w) @ j.T
        h += np.diag(np.where(self.constrained[idx], 2.0 / self.sigma[idx] ** 2, 0.0))
        return h

    def hessian(self, theta: np.ndarray, data: np.ndarray, aux: np.ndarray | None = None,
                fix: tuple[str, ...] = ()) -> tuple[np.ndarray, np.ndarray]:
        """Hessian of −2 ln L over the free parameters (central differences of the gradient).

        Returns the free-parameter indices and the matrix.
        """
        free = ~self.fixed
        for name in fix:
            free[self.index[name]] = False
        idx = np.flatnonzero(free)
        h = np.zeros((idx.size, idx.size))
        for a, i in enumerate(idx):
            step = 1e-4 * self.scale[i]
            tp, tm = theta.copy(), theta.copy()
            tp[i] += step
            tm[i] -= step
            gp = self.nll2(tp, data, aux, grad=True)[1]
            gm = self.nll2(tm, data, aux, grad=True)[1]
            h[a] = (gp[idx] - gm[idx]) / (2.0 * step)
        return idx, 0.5 * (h + h.T)

    def errors(self, theta: np.ndarray, data: np.ndarray, aux: np.ndarray | None = None
               ) -> np.ndarray:
        """Parabolic 1σ errors of every parameter (0 for fixed ones): √diag(2 H⁻¹)."""
        idx, h = self.hessian(theta, data, aux)
        out = np.zeros(len(self.params))
        try:
            cov = 2.0 * np.linalg.inv(h)
        except np.linalg.LinAlgError:
            raise SunrecoilError("the fit's Hessian is singular: a parameter has no effect "
                                 "on the expected counts") from None
        out[idx] = np.sqrt(np.maximum(np.diag(cov), 0.0))
        return out

    def fisher_errors(self, theta: Any = None) -> np.ndarray:
        """Asimov (Fisher-matrix) 1σ errors: V⁻¹ = Σ_i ∂μ∂μ/μ + diag(1/σ²) at θ.

        The expected-information covariance that the Asimov data set reproduces
        (Cowan et al. 2011, Sec. 3.1); 0 for fixed parameters.
        """
        th = self.centre if theta is None else np.asarray(theta, np.float64)
        mu, jac = self.jacobian(th)
        idx = np.flatnonzero(~self.fixed)
        j = jac[idx]
        info = (j / np.maximum(mu, MU_FLOOR)) @ j.T
        info += np.diag(np.where(self.constrained[idx], 1.0 / self.sigma[idx] ** 2, 0.0))
        out = np.zeros(len(self.params))
        try:
            cov = np.linalg.inv(info)
        except np.linalg.LinAlgError:
            cov = np.full_like(info, np.nan)
        d = np.diag(cov)
        if not np.all(np.isfinite(d) & (d > 0)):
            bad = [self.names[i] for i, v in zip(idx, d, strict=True)
                   if not (np.isfinite(v) and v > 0)]
            raise ConfigError(f"sensitivity: parameter(s) {bad} have no effect on the expected "
                              "counts of the chosen bins (the Fisher matrix is singular); "
                              "choose another POI or fix them (sensitivity.fix)")
        out[idx] = np.sqrt(d)
        return out

    def profile(self, poi: str, value: float, data: np.ndarray, aux: np.ndarray | None,
                start: np.ndarray | None = None) -> FitResult:
        """Fit with ``poi`` held at ``value`` (the profiled nuisances)."""
        return self.fit(data, aux, {poi: value}, start)

    def interval(self, poi: str, data: np.ndarray, aux: np.ndarray | None,
                 best: FitResult, level: float = 1.0, guess: float | None = None,
                 xtol: float = 1e-7) -> tuple[float, float]:
        """End points of {p : −2 ln λ(p) ≤ level} (profile likelihood; 1 → 68.27 %).

        Newton iteration (scipy.optimize.root_scalar) on q(p) − level with dq/dp the partial
        derivative of −2 ln L at the profiled point; an end point beyond the parameter's bound
        is returned as the bound. ``xtol`` is the end points' tolerance in units of ``guess``.
        """
        from scipy.optimize import root_scalar

        i = self.index[poi]
        p_hat = float(best.theta[i])
        sig = guess if guess is not None else float(self.scale[i])
        out = []
        for sign in (-1.0, 1.0):
            state = {"start": best.theta.copy()}
            bound = self.lo[i] if sign < 0 else self.hi[i]

            def g(p: float, state: dict = state) -> tuple[float, float]:
                r = self.profile(poi, p, data, aux, state["start"])
                state["start"] = r.theta
                _, grad = self.nll2(r.theta, data, aux, grad=True)
                return r.nll2 - best.nll2 - level, float(grad[i])

            x0 = p_hat + sign * sig * math.sqrt(level)
            if math.isfinite(bound) and sign * (x0 - bound) >= 0:
                x0 = p_hat + 0.5 * (bound - p_hat)
            try:
                res = root_scalar(g, x0=x0, fprime=True, method="newton",
                                  xtol=xtol * sig, maxiter=50)
                root = float(res.root) if res.converged else math.nan
            except (RuntimeError, ZeroDivisionError, FloatingPointError):
                root = math.nan
            if not math.isfinite(root) or sign * (root - p_hat) <= 0:
                root = self._bisect(g, p_hat, sign, sig, bound)
            if math.isfinite(bound) and sign * (root - bound) > 0:
                root = float(bound)
            out.append(root)
        return out[0], out[1]

    @staticmethod
    def _bisect(g: Any, p_hat: float, sign: float, sig: float, bound: float) -> float:
        """Fallback: bracket the crossing by doubling steps, then scipy's brentq."""
        from scipy.optimize import brentq

        a, step = p_hat, sig
        for _ in range(40):
            b = p_hat + sign * step
            if math.isfinite(bound) and sign * (b - bound) >= 0:
                b = float(bound)
                if g(b)[0] < 0:
                    return b
            if g(b)[0] > 0:
                return float(brentq(lambda p: g(p)[0], min(a, b), max(a, b),
                                    xtol=1e-7 * sig))
            a, step = b, 2.0 * step
        return math.nan


#: Convergence: largest gradient component of −2 ln L in units of the parameter scales.
GRAD_TOL = 1e-6


def _scipy_minimise(f: Any, hess: Any, x0: np.ndarray, bounds: list
                    ) -> tuple[np.ndarray, bool, str]:
    """Minimise with scipy.optimize; returns (x, converged, message).

    Trust-region Newton ('trust-exact') with the Gauss–Newton Hessian first; L-BFGS-B with the
    bounds when that result leaves them or does not converge.
    """
    from scipy.optimize import minimize

    lo = np.array([b[0] for b in bounds])
    hi = np.array([b[1] for b in bounds])
    best = None
    if np.all((x0 > lo) & (x0 < hi)):
        res = minimize(f, x0, jac=True, hess=hess, method="trust-exact",
                       options={"gtol": GRAD_TOL, "maxiter": 500})
        if np.all((res.x >= lo) & (res.x <= hi)):
            best = res
            if np.max(np.abs(res.jac)) <= 10 * GRAD_TOL:
                return np.asarray(res.x), True, str(res.message)
    start = np.clip(x0 if best is None else best.x, lo, hi)
    res = minimize(f, start, jac=True, method="L-BFGS-B", bounds=bounds,
                   options={"maxiter": 20000, "maxfun": 40000, "ftol": 1e-15,
                            "gtol": GRAD_TOL, "maxcor": 30})
    if best is None or res.fun < best.fun:
        best = res
    # projected gradient: components pushing against an active bound do not count
    g = np.asarray(best.jac)
    at_lo = (best.x <= lo) & (g > 0)
    at_hi = (best.x >= hi) & (g < 0)
    g = np.where(at_lo | at_hi, 0.0, g)
    ok = bool(np.max(np.abs(g)) < 1e-3)
    return np.asarray(best.x), ok, str(best.message)


def _migrad(f: Any, x0: np.ndarray, bounds: list) -> tuple[np.ndarray, bool, str]:
    try:
        from iminuit import Minuit
    except ImportError:
        raise ConfigError("sensitivity.minimiser: 'iminuit' is not installed; install it "
                          "with pip install 'sunrecoil[fit]' or use 'scipy'") from None
    m = Minuit(lambda x: f(x)[0], x0, grad=lambda x: f(x)[1])
    m.errordef = Minuit.LEAST_SQUARES           # −2 ln L: Δ = 1 for 1σ
    m.limits = [(lo if np.isfinite(lo) else None, hi if np.isfinite(hi) else None)
                for lo, hi in bounds]
    m.tol = 1e-6
    m.strategy = 2
    m.migrad()
    return np.asarray(m.values), bool(m.valid), "migrad valid" if m.valid else "migrad invalid"


def counting_asimov_z(s: float, b: float) -> float:
    """Z_A = √(2((s + b) ln(1 + s/b) − s)) for a counting experiment with known background.

    The median discovery significance (Cowan et al., EPJC 71, 1554 (2011), eq. 97).
    """
    return math.sqrt(2.0 * ((s + b) * math.log1p(s / b) - s))


def asimov_z(model: TemplateModel, poi: str, null: float, best: FitResult | None = None,
             data: Any = None) -> float:
    """√q₀,A: significance of rejecting ``poi = null`` with the Asimov data (signed).

    q₀ = −2 ln [L(null, profiled nuisances) / L(θ̂)]; the sign is that of θ̂ − null.
    """
    if data is None:
        data = model.asimov()
    n, aux = data
    if best is None:
        best = model.fit(n, aux, start=model.centre)
    r = model.profile(poi, null, n, aux, best.theta)
    q0 = max(r.nll2 - best.nll2, 0.0)
    sign = 1.0 if best.theta[model.index[poi]] >= null else -1.0
    return sign * math.sqrt(q0)
