"""The cylinder decay function against an independent evaluation of the analytic solution."""

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).parent))  # the synthetic-record helper beside this file
from thermal_synthetic import cylinder_excess

from ventflux_thermal.decay import cylinder_decay, cylinder_decay_exact, line_source_decay


@pytest.mark.parametrize("alpha", [1.0, 2.0, 3.5])
def test_cylinder_function_matches_laplace_inversion(alpha):
    # Carslaw & Jaeger (1959) §13.7: the real-integral form (code) against the Laplace-domain form inverted by
    # Stehfest's algorithm (tests/thermal_synthetic.py); Stehfest's double-precision error is ~1e-5.
    tau = np.geomspace(0.02, 5e3, 40)
    np.testing.assert_allclose(cylinder_decay(alpha, tau), cylinder_excess(alpha, tau), rtol=5e-5)
    np.testing.assert_allclose(cylinder_decay(alpha, tau), cylinder_decay_exact(alpha, tau), rtol=1e-7)


def test_cylinder_function_limits():
    # F(α, 0) = 1 (the initial excess) and F → 1/(2ατ) at late times: the line source of strength S·V0
    # (Carslaw & Jaeger 1959, §10.3 and §13.7).
    assert cylinder_decay(2.0, np.array([0.0]))[0] == 1.0
    # early times: the surface cools into a half-space (Carslaw & Jaeger 1959, §2.5), F ≈ 1 − 2α·sqrt(τ/π)
    tau0 = np.array([1e-4, 4e-4])
    np.testing.assert_allclose(cylinder_decay(2.0, tau0), 1 - 4.0 * np.sqrt(tau0 / np.pi), atol=2e-3)
    tau = np.array([1e4, 1e5])
    np.testing.assert_allclose(cylinder_decay(2.0, tau) * 2 * 2.0 * tau, 1.0, rtol=2e-3)
    # monotone decay
    assert np.all(np.diff(cylinder_decay(2.0, np.geomspace(0.01, 1e5, 200))) < 0)


def test_line_source_formula():
    # Carslaw & Jaeger (1959) §10.3 at r = 0: ΔT = Q/(4πkt); by hand 1000 J/m in k = 1 W/(m K) after 100 s
    # is 1000/(400π) = 0.795774715 K.
    assert line_source_decay(1000.0, 1.0, 100.0) == pytest.approx(0.795774715, rel=1e-9)


@pytest.mark.parametrize("duration", [2.0, 10.0, 20.0])
def test_finite_pulse_response_matches_independent_superposition(duration):
    # Carslaw & Jaeger (1959) §13.7 for each instant of a constant-power pulse, superposed by the midpoint rule
    # over 400 sub-pulses of the Stehfest-inverted solution (tests/thermal_synthetic.py), against the code's
    # Gauss-Legendre sum of its tabulated F; after the pulse, where the fits look.
    from thermal_synthetic import finite_pulse_excess

    from ventflux_thermal.decay import cylinder_pulse_decay, cylinder_pulse_decay_and_slopes

    scale = 1.0 / 3.4e6 / 0.004**2  # κ/a² for k = 1 W/(m K), ρc = 3.4 MJ/(m³ K), a = 4 mm
    t = duration + np.array([10.0, 30.0, 100.0, 500.0])
    want = finite_pulse_excess(2.0, scale, t, duration, n_sub=400)
    np.testing.assert_allclose(cylinder_pulse_decay(2.0, t * scale, duration * scale), want, rtol=2e-4)
    G, S1, S2 = cylinder_pulse_decay_and_slopes(2.0, t * scale, duration * scale)
    np.testing.assert_allclose(G, want, rtol=2e-4)
    # the slope sums against central differences of G itself
    h = 1e-5
    dG_dtau = (cylinder_pulse_decay(2.0, t * scale * (1 + h), duration * scale)
               - cylinder_pulse_decay(2.0, t * scale * (1 - h), duration * scale)) / (2 * h * t * scale)
    np.testing.assert_allclose(S2, dG_dtau, rtol=1e-4)
    # and k ∂G/∂k (τ and τ_p both scale with k) against central differences
    k_dG_dk = (cylinder_pulse_decay(2.0, t * scale * (1 + h), duration * scale * (1 + h))
               - cylinder_pulse_decay(2.0, t * scale * (1 - h), duration * scale * (1 - h))) / (2 * h)
    np.testing.assert_allclose(S1, k_dG_dk, rtol=1e-4)
