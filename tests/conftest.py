"""Shared fixtures and reference solvers for the pipeopt tests."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest


def colebrook_mpmath(re: float, rr: float, digits: int = 40) -> float:
    """Root of Colebrook-White (3.7 / 2.51 form, Colebrook 1939) to ``digits`` digits.

    Solved in x = 1/sqrt(f): x = -2 log10(rr/3.7 + 2.51 x / Re), with mpmath's secant/Newton
    root finder started from the smooth-pipe Prandtl-Karman estimate. An independent reference:
    it shares no code with pipeopt.
    """
    with mp.workdps(digits):
        R = mp.mpf(re)
        k = mp.mpf(rr)
        g = lambda x: x + 2 * mp.log10(k / mp.mpf("3.7") + mp.mpf("2.51") * x / R)  # noqa: E731
        x0 = mp.mpf(-2) * mp.log10(k / mp.mpf("3.7") + mp.mpf(5.74) / R ** mp.mpf("0.9"))
        x = mp.findroot(g, x0, tol=mp.mpf(10) ** (-digits + 5))
        return float(1 / (x * x))


@pytest.fixture(scope="session")
def colebrook_grid():
    """A wide (Re, relative roughness) grid and its 40-digit Colebrook-White roots.

    Re 4e3-1e8 (41 values, log-spaced), relative roughness 0 and 1e-7-0.05 (25 values).
    """
    re = np.logspace(np.log10(4e3), 8, 41)
    rr = np.concatenate([[0.0], np.logspace(-7, np.log10(0.05), 24)])
    R, K = np.meshgrid(re, rr, indexing="ij")
    R, K = R.ravel(), K.ravel()
    f = np.array([colebrook_mpmath(a, b) for a, b in zip(R, K, strict=True)])
    return R, K, f
