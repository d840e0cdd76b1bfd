"""Zero-temperature Parisi solver: values against published ones (named beside each check) and an independent quadrature."""

from __future__ import annotations

import math
import os
import time

import numpy as np
import pytest
from scipy import integrate, special

from spinward.plugins.iamp import parisi


@pytest.fixture(autouse=True)
def private_cache(tmp_path_factory, monkeypatch):
    """Never touch the user's cache; one directory per session so solutions are shared."""
    monkeypatch.setenv(parisi.CACHE_ENV, str(tmp_path_factory.getbasetemp() / "spinward-cache"))


def test_replica_symmetric_value_is_sqrt_2_over_pi():
    # Sherrington & Kirkpatrick (1975): the RS zero-temperature value is √(2/π), exact closed form.
    assert abs(parisi.solve_k(0).value - math.sqrt(2 / math.pi)) < 1e-9


def test_one_step_value():
    # 1RSB ≈ 0.7652 (Parisi 1979–80), from memory, tolerance 5e-4.
    sol, _ = parisi.cached_solve(1)
    assert abs(sol.value - 0.7652) < 5e-4
    assert 0 < sol.q[0] < 1 and sol.m[0] > 0


def test_full_rsb_value():
    # P* = 0.7631667 ± 1e-6 (Crisanti & Rizzo, Phys. Rev. E 65, 046137 (2002)), from memory; we allow 2e-6.
    assert abs(parisi.full_rsb(k=12) - 0.7631667) < 2e-6


def test_values_decrease_towards_full_value():
    values = [parisi.cached_solve(k)[0].value for k in (0, 1, 2, 3, 5)]
    assert all(a > b for a, b in zip(values, values[1:]))
    assert values[-1] > 0.7631667 - 2e-6  # P* (Crisanti & Rizzo 2002) from memory; P_k is an upper approximation


def _one_step_by_quadrature(q0: float, m: float) -> float:
    """P(γ) for γ = m·1[q0, 1), written out plainly with scipy.integrate.quad.

    Φ(q0, a) = m⁻¹ log E exp(m|a + √(1−q0) Z|), E e^{m|a+σZ|} = e^{m²σ²/2}(e^{ma}N((a+mσ²)/σ) + e^{−ma}N((−a+mσ²)/σ)).
    """
    sd = math.sqrt(1 - q0)

    def phi(a: float) -> float:
        inner = math.exp(m * a) * special.ndtr((a + m * sd**2) / sd) + math.exp(-m * a) * special.ndtr((-a + m * sd**2) / sd)
        return (0.5 * m * m * sd * sd + math.log(inner)) / m

    outer = integrate.quad(lambda y: phi(math.sqrt(q0) * y) * math.exp(-0.5 * y * y) / math.sqrt(2 * math.pi),
                           -12, 12, epsabs=1e-13, epsrel=1e-13)[0]
    return outer - 0.25 * m * (1 - q0 * q0)


@pytest.mark.parametrize("q0, m", [(0.48, 1.36), (0.2, 3.0), (0.7, 0.5)])
def test_grid_evaluation_matches_quadrature(q0, m):
    value, _, _ = parisi.evaluate(np.array([q0]), np.array([m]), parisi.x_grid())
    assert abs(value - _one_step_by_quadrature(q0, m)) < 1e-9


def test_gradient_matches_finite_differences():
    x = parisi.x_grid()
    q = np.array([0.2, 0.6, 0.9])
    m = np.array([0.5, 1.2, 3.0])
    _, gq, gm = parisi.evaluate(q, m, x, grad=True)
    eps = 1e-6
    for i in range(3):
        e = np.zeros(3)
        e[i] = eps
        fd_q = (parisi.evaluate(q + e, m, x)[0] - parisi.evaluate(q - e, m, x)[0]) / (2 * eps)
        fd_m = (parisi.evaluate(q, m + e, x)[0] - parisi.evaluate(q, m - e, x)[0]) / (2 * eps)
        assert abs(fd_m - gm[i]) < 1e-7
        assert abs(fd_q - gq[i]) < 5e-5  # breakpoint formula is continuous-time; ∂xΦ by differences


def test_tables_are_cached_and_consistent():
    start = time.perf_counter()
    tables, cached = parisi.load_tables(k=5, steps=50)
    assert not cached or time.perf_counter() - start < 5
    again, cached_again = parisi.load_tables(k=5, steps=50)
    assert cached_again
    np.testing.assert_array_equal(tables.d2, again.d2)
    files = os.listdir(parisi.cache_dir())
    assert any(name.startswith("iamp-") and name.endswith(".npz") for name in files)
    # ∂xΦ(1⁻, x) → sign(x) and ∂xΦ is odd; ∂xxΦ ≥ 0 (Φ is convex in x)
    x = tables.x
    assert np.allclose(tables.d1[:, ::-1], -tables.d1, atol=1e-9)
    assert np.all(tables.d2 >= 0)
    assert np.all(np.sign(tables.d1[-1][np.abs(x) > 1]) == np.sign(x[np.abs(x) > 1]))


def test_stationarity_of_optimised_levels():
    # Parisi stationarity: on the support of γ, E[(∂xΦ(t, X_t))²] = t at every breakpoint.
    sol, _ = parisi.cached_solve(5)
    x = parisi.x_grid()
    _, gq, gm = parisi.evaluate(sol.q, sol.m, x, grad=True)
    assert np.max(np.abs(gm)) < 1e-6
    assert np.max(np.abs(gq)) < 1e-5


def test_table_rows_and_format():
    rows = parisi.parisi_table(ks=(0, 1), full_k=8)
    assert [r["k"] for r in rows] == [0, 1, "full"]
    text = parisi.format_parisi_table(rows)
    assert "full" in text and "0.79788" in text
    assert abs(rows[-1]["value"] - 0.7631667) < 5e-5  # P* (Crisanti & Rizzo 2002) from memory; coarse levels here


def test_top_level_at_time_one_is_the_absolute_value() -> None:
    """Φ(1, x) = |x| (the zero-temperature terminal condition, common practice): an optimiser that
    puts the last breakpoint at q = 1 leaves a top level of length 0, which must not fail."""
    from spinward.plugins.iamp.parisi import top_level

    x = np.linspace(-3, 3, 13)
    phi, dphi, ddphi = top_level(x, 0.7, 0.0)
    assert np.array_equal(phi, np.abs(x)) and np.array_equal(dphi, np.sign(x)) and not ddphi.any()
