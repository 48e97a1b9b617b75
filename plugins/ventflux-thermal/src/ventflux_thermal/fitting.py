"""Small helpers shared by the reductions: record checks and least-squares standard errors."""

from __future__ import annotations

import numpy as np
from ventflux.plugin_api import InputError


def require_increasing(values, lines, path, field: str, unit: str):
    """Raise ``InputError`` naming the file line where ``values`` first fails to increase."""
    bad = np.flatnonzero(np.diff(values) <= 0)
    if bad.size:
        i = bad[0] + 1
        raise InputError(field, f"{values[i]:g} {unit} after {values[i - 1]:g} {unit}",
                         f"{field} values that increase down the file", where=f"{path}:{lines[i]}")


def first_parameter_se(sol) -> float:
    """Standard error of the first parameter of a ``scipy.optimize.least_squares`` solution.

    Covariance ``s² (JᵀJ)⁻¹`` with ``s²`` the residual variance on ``n − p``
    degrees of freedom (the usual linearized estimate).
    """
    r = sol.fun
    dof = max(r.size - sol.x.size, 1)
    s2 = float(r @ r) / dof
    cov = s2 * np.linalg.pinv(sol.jac.T @ sol.jac)
    return float(np.sqrt(cov[0, 0]))
