"""Tests of generator.kinematics (two-body ν e⁻ → ν e⁻ kinematics).

Check values: computed ([C]) from the textbook relations T_max = 2E²/(m + 2E) and
cos θ = [(E + m)/E]√(T/(T + 2m)) (PDG Review of Particle Physics, "Kinematics"; J. N. Bahcall,
Neutrino Astrophysics (1989), ch. 8), as listed in the project reference sheet
/work/shared/reference/xsec.md §1.1 (rounded to the printed digits).
"""

from __future__ import annotations

import tempfile

import numpy as np
import pytest
from hypothesis import configuration as hyp_configuration
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from generator.constants import ELECTRON_MASS
from generator.errors import ConfigError
from generator.kinematics import (
    cos_theta_electron,
    e_min_for_recoil,
    orthonormal_basis,
    scatter,
    t_max,
)

# Keep hypothesis' cache out of the repository: pyproject's norecursedirs replaces pytest's
# defaults, so a ./.hypothesis directory would raise a collection warning (error) next run.
hyp_configuration.set_hypothesis_home_dir(tempfile.mkdtemp(prefix="hypothesis-"))


@pytest.mark.parametrize(
    ("energy", "expected"),
    [
        (0.8618, 0.6647),  # 7Be line; xsec.md §1.1 [C]
        (0.3843, 0.2308),  # 7Be line; xsec.md §1.1 [C]
        (0.420, 0.2611),  # pp endpoint; xsec.md §1.1 [C]
        (1.442, 1.2250),  # pep; xsec.md §1.1 [C]
        (10.0, 9.7509),  # xsec.md §1.1 [C]
    ],
)
def test_t_max_check_values(energy: float, expected: float) -> None:
    # tolerance: half a unit of the 4th printed decimal
    assert abs(float(t_max(energy)) - expected) <= 5e-5


def test_e_min_inverts_t_max() -> None:
    e = np.geomspace(1e-3, 100.0, 200)
    np.testing.assert_allclose(e_min_for_recoil(t_max(e)), e, rtol=1e-12)


def test_cos_theta_check_value_and_endpoint() -> None:
    # E = 10 MeV, T = 4.8754 MeV (= T_max/2, printed rounded) -> cos θ = 0.955695
    # (xsec.md §1.1 [C]); evaluated at T_max(10)/2 = 4.875433 MeV
    assert abs(float(cos_theta_electron(10.0, 0.5 * t_max(10.0))) - 0.955695) <= 5e-7
    e = np.array([0.1, 0.8618, 10.0])
    np.testing.assert_allclose(cos_theta_electron(e, t_max(e)), 1.0, atol=1e-12)


def _random_dirs(rng: np.random.Generator, n: int) -> np.ndarray:
    v = rng.normal(size=(n, 3))
    return v / np.linalg.norm(v, axis=1)[:, None]


def test_scatter_conservation_1e5() -> None:
    rng = np.random.default_rng(20240601)
    n = 100_000
    e = rng.uniform(0.05, 20.0, n)
    t = rng.random(n) * t_max(e)
    n_dir = _random_dirs(rng, n)
    e_dir, nu, el = scatter(np.random.default_rng(7), e, t, n_dir)
    m = ELECTRON_MASS
    # energy: E + m = E' + (T + m); momentum: E n = p' + p_e
    np.testing.assert_allclose(nu[:, 0] + el[:, 0], e + m, rtol=1e-12)
    mom = nu[:, 1:] + el[:, 1:] - e[:, None] * n_dir
    assert np.max(np.abs(mom) / e[:, None]) < 1e-9
    # mass shells: massless outgoing neutrino, electron of mass m
    p_nu = np.linalg.norm(nu[:, 1:], axis=1)
    assert np.max(np.abs(p_nu - nu[:, 0]) / e) < 1e-9
    m2 = el[:, 0] ** 2 - np.einsum("ij,ij->i", el[:, 1:], el[:, 1:])
    assert np.max(np.abs(m2 - m * m)) / (m * m) < 1e-9 * np.max(e / m) ** 2
    np.testing.assert_allclose(np.linalg.norm(e_dir, axis=1), 1.0, atol=1e-12)
    c = np.einsum("ij,ij->i", e_dir, n_dir)
    np.testing.assert_allclose(c, cos_theta_electron(e, t), atol=1e-9)
    assert np.all(np.abs(c) <= 1.0 + 1e-12)


def test_scatter_azimuth_uniform_and_stream() -> None:
    n = 50_000
    rng = np.random.default_rng(11)
    e = np.full(n, 5.0)
    t = np.full(n, 2.0)
    n_dir = np.tile(np.array([[0.0, 0.6, -0.8]]), (n, 1))
    e_dir, _, _ = scatter(rng, e, t, n_dir)
    u, v = orthonormal_basis(n_dir)
    phi = np.mod(np.arctan2(np.einsum("ij,ij->i", e_dir, v), np.einsum("ij,ij->i", e_dir, u)),
                 2 * np.pi)
    # KS test of uniform azimuth; p > 1e-3 (fixed seed, false-alarm rate 1e-3)
    assert stats.kstest(phi / (2 * np.pi), "uniform").pvalue > 1e-3
    # exactly one rng.random(n) call
    r1, r2 = np.random.default_rng(5), np.random.default_rng(5)
    scatter(r1, e, t, n_dir)
    r2.random(n)
    assert r1.random() == r2.random()


def test_scatter_deterministic() -> None:
    rng = np.random.default_rng(3)
    e = rng.uniform(1, 10, 100)
    t = 0.5 * t_max(e)
    d = _random_dirs(rng, 100)
    a = scatter(np.random.default_rng(9), e, t, d)
    b = scatter(np.random.default_rng(9), e, t, d)
    for x, y in zip(a, b, strict=True):
        np.testing.assert_array_equal(x, y)


def test_orthonormal_basis_poles() -> None:
    n = np.array([[0, 0, 1.0], [0, 0, -1.0], [1.0, 0, 0], [0, 1.0, 0]])
    u, v = orthonormal_basis(n)
    for a, b in ((u, v), (u, n), (v, n)):
        np.testing.assert_allclose(np.einsum("ij,ij->i", a, b), 0.0, atol=1e-15)
    np.testing.assert_allclose(np.cross(u, v), n, atol=1e-15)


@pytest.mark.parametrize(
    ("kwargs", "word"),
    [
        ({"t": [20.0]}, "'t'"),
        ({"energy": [-1.0]}, "'energy'"),
        ({"nu_dir": [[0.0, 0.0, 2.0]]}, "'nu_dir'"),
    ],
)
def test_scatter_rejects_bad_input(kwargs: dict, word: str) -> None:
    args = {"energy": [10.0], "t": [1.0], "nu_dir": [[0.0, 0.0, 1.0]]}
    args.update(kwargs)
    with pytest.raises(ConfigError, match=word):
        scatter(np.random.default_rng(0), **args)


@settings(max_examples=200, deadline=None, database=None)
@given(
    energy=st.floats(1e-3, 1e3),
    frac=st.floats(0.0, 1.0),
    theta=st.floats(0.0, np.pi),
    phi=st.floats(0.0, 2 * np.pi),
    seed=st.integers(0, 2**32 - 1),
)
def test_scatter_properties(energy: float, frac: float, theta: float, phi: float,
                            seed: int) -> None:
    d = np.array([[np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi), np.cos(theta)]])
    e = np.array([energy])
    t = frac * t_max(e)
    e_dir, nu, el = scatter(np.random.default_rng(seed), e, t, d)
    assert abs(np.linalg.norm(e_dir) - 1.0) < 1e-12
    assert np.all(np.abs(nu[:, 1:] + el[:, 1:] - energy * d) <= 1e-9 * energy)
    assert abs(nu[0, 0] + el[0, 0] - energy - ELECTRON_MASS) <= 1e-12 * (energy + 1)
    assert abs(np.linalg.norm(nu[0, 1:]) - nu[0, 0]) <= 1e-9 * energy
    c = float(cos_theta_electron(e, t)[0])
    assert 0.0 <= c <= 1.0
    assert nu[0, 0] >= 0.0
