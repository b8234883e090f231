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


def upgrade_study_for_main(main: dict, s) -> object:
    """One main as a single-main upgrade study with one "replace" option (public from_dict).

    ``main`` holds SI values: diameter, length, static_head, roughness (now), aging, flow
    [m³/s], hours, breaks_now, break_growth, capital, new_diameter; ``s`` is the
    :class:`pipeopt.replacement.RenewalScenario` whose shared inputs the study takes.
    """
    from pipeopt import UpgradeStudy

    return UpgradeStudy.from_dict({
        "fluid": {"kind": "water", "temperature": "10 degC"},
        "existing": {"material": "cast-iron-aged", "inner_diameter": f"{main['diameter']!r} m",
                     "length": f"{main['length']!r} m",
                     "static_head": f"{main['static_head']!r} m",
                     "minor_loss_k": s.minor_loss_k, "roughness": f"{main['roughness']!r} m",
                     "aging": f"{main['aging']!r} m/yr", "breaks_per_year": main["breaks_now"],
                     "break_growth": main["break_growth"], "break_cost": s.break_cost},
        "duty": [{"flow": f"{main['flow']!r} m^3/s", "hours": main["hours"]}],
        "growth": {"flow_per_year": s.flow_growth},
        "pumping": {"efficiency": s.efficiency},
        "energy": {"price": s.tariff.price, "escalation": s.tariff.escalation,
                   "demand_charge": s.tariff.demand_charge},
        "economics": {"discount_rate": s.discount_rate, "horizon": s.horizon,
                      "pipe_life": s.life},
        "option": [{"kind": "replace", "name": "replace", "material": "ductile-iron",
                    "inner_diameter": f"{main['new_diameter']!r} m",
                    "roughness": f"{s.new_roughness!r} m", "aging": f"{s.new_aging!r} m/yr",
                    "cost_per_metre": main["capital"] / main["length"], "life": s.life,
                    "maintenance": s.maintenance}],
    })
