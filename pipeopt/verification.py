"""Verification record: every published reference check pipeopt relies on, in one list.

``pipeopt verify`` prints the table (check, source, expected, computed, tolerance, pass) and
exits non-zero when any check fails; the test suite asserts the same table from the same
definitions (:data:`CHECKS`). Values that a source gives only "from memory" say so.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import pandas as pd

__all__ = ["Check", "CHECKS", "run_checks"]


@dataclass(frozen=True)
class Check:
    """One reference check: ``compute()`` must be within ``tolerance`` of ``expected``.

    ``relative`` tolerances compare |computed / expected − 1|; absolute ones |computed − expected|.
    """

    area: str
    name: str
    source: str
    expected: float
    compute: Callable[[], float]
    tolerance: float
    relative: bool = True


def _colebrook(re: float, rr: float) -> Callable[[], float]:
    def f() -> float:
        from .friction import friction_factor

        return float(friction_factor(re, rr))
    return f


def _water(t_c: float, what: str) -> Callable[[], float]:
    def f() -> float:
        from .fluid import Fluid

        w = Fluid.water(f"{t_c} degC")
        return w.density if what == "density" else w.viscosity
    return f


def _catalog(material: str, designation: str, column: str) -> Callable[[], float]:
    def f() -> float:
        from .catalog import lookup

        return float(lookup(material, designation)[column]) * 1000.0
    return f


def _crf(i: float, n: int) -> Callable[[], float]:
    def f() -> float:
        from .economics import capital_recovery_factor

        return float(capital_recovery_factor(i, n))
    return f


def _shamir_howard(n0: float, a: float, cb: float, cr: float, r: float) -> Callable[[], float]:
    """Best year of a breaks-only replacement found by the upgrade study's scan."""
    def f() -> float:
        from .costs import EnergyTariff
        from .duty import DutyProfile
        from .fluid import Fluid
        from .sizing import Economics
        from .upgrade import ExistingLine, UpgradeOption, UpgradeStudy

        ex = ExistingLine("2 km", "10 m", "cast-iron", inner_diameter="0.3 m",
                          roughness="0.1 mm", breaks_per_year=n0, break_growth=a, break_cost=cb)
        opt = UpgradeOption("replace", name="replace", material="ductile-iron",
                            inner_diameter="0.3 m", roughness="0.1 mm",
                            cost_per_metre=cr / 2000.0, life=1e9)
        st = UpgradeStudy(Fluid.water("15 degC"), ex, DutyProfile((0.08,), (6000,)), 0.7,
                          EnergyTariff(0.1), Economics(r, 120, 80), [opt])
        return float(st.best_year("replace").year)
    return f


def _shamir_howard_expected(n0: float, a: float, cb: float, cr: float, r: float) -> float:
    return math.log(math.log1p(r) * cr / (cb * n0)) / a


def _closed_form(which: str) -> Callable[[], float]:
    """Continuous optimum with a constant friction factor against D* = (5B/(mA))^(1/(m+5))."""
    def f() -> float:
        import numpy as np

        from .economics import capital_recovery_factor
        from .lifecycle import evaluate
        from .sizing import SizingStudy

        st = SizingStudy.from_dict(_CLOSED_FORM_STUDY)
        opt = st.run().optimum.iloc[0]
        d = float(opt["inner_diameter_m"])
        if which == "diameter":
            return d
        at = evaluate(st.scenario, np.array([d]), 0.0, 0.0, np.array([1500.0 * d**1.4]))
        crf = float(capital_recovery_factor(0.06, 30))
        return float(at.pv_energy[0] * crf / (at.capex_pipe[0] * crf))
    return f


_CLOSED_FORM_STUDY = {
    "fluid": {"kind": "custom", "density": "1000 kg/m^3", "viscosity": "1 mPa*s"},
    "line": {"length": "2 km", "static_head": "0 m"},
    "duty": [{"flow": "0.2 m^3/s", "hours": 8000}],
    "pumping": {"efficiency": 0.75},
    "energy": {"price": 0.1},
    "economics": {"discount_rate": 0.06, "horizon": 30, "pipe_life": 30},
    "hydraulics": {"friction_method": "constant", "friction_factor": 0.015},
    "material": [{"name": "pe100", "classes": ["SDR 17"],
                  "cost": {"coefficient": 1500.0, "exponent": 1.4}}],
}


def _closed_form_diameter() -> float:
    crf = 0.06 * 1.06**30 / (1.06**30 - 1)
    big_a = 1500.0 * crf
    big_b = 8 * 0.015 * 1000.0 * 0.2**3 * 8000.0 * 0.1 / (math.pi**2 * 0.75 * 1000.0)
    return (5 * big_b / (1.4 * big_a)) ** (1 / 6.4)


def _r12(t_k: float, rho: float) -> Callable[[], float]:
    def f() -> float:
        from .water import iapws2008_viscosity

        return float(iapws2008_viscosity(t_k, rho) * 1e6)
    return f


def _wave(d_over_e: float, modulus: float) -> Callable[[], float]:
    def f() -> float:
        from .surge import wave_speed

        return float(wave_speed(2.19e9, 998.2, d_over_e, 1.0, modulus))
    return f


_COLEBROOK = [(4e3, 0.0, 0.0399070141), (1e4, 0.0, 0.0308829504), (1e4, 1e-3, 0.0323818064),
              (1e5, 0.0, 0.0179897731), (1e5, 1e-4, 0.0185138661), (1e5, 1e-2, 0.0385035435),
              (1e6, 1e-4, 0.0134414377), (1e6, 1e-3, 0.0199434658), (1e7, 1e-3, 0.0196670524),
              (1e8, 0.05, 0.0715509041)]

CHECKS: list[Check] = [
    *[Check("friction", f"Colebrook-White f at Re {re:g}, eps/D {rr:g}",
            "Colebrook (1939) equation, 40-digit root (project REFERENCES, computed)", f_ref,
            _colebrook(re, rr), 2.6e-9) for re, rr, f_ref in _COLEBROOK],
    Check("friction", "laminar f at Re 1000", "Hagen-Poiseuille, 64/Re", 0.064,
          _colebrook(1000.0, 1e-3), 1e-15),
    Check("friction", "Hazen-Williams: 200 gpm, 3.048 in, C 140, 30 ft",
          "The Engineering ToolBox worked example: 2.7 ft of head (9 ft per 100 ft, rounded)",
          2.7, lambda: _hw_example(), 0.04),
    *[Check("water", f"density at {t:g} degC, 1 atm", "IAPWS-95 (project REFERENCES, computed)",
            rho, _water(t, "density"), 5e-5, relative=False)
      for t, rho in [(15.0, 999.1026), (20.0, 998.2072), (25.0, 997.0476)]],
    *[Check("water", f"viscosity at {t:g} degC, 1 atm",
            "IAPWS R12-08 (project REFERENCES, computed)", mu, _water(t, "viscosity"), 1e-5)
      for t, mu in [(15.0, 1.13757e-3), (20.0, 1.00160e-3), (25.0, 0.890022e-3)]],
    *[Check("water", f"viscosity at {t:g} K, {rho:g} kg/m3 [uPa s]",
            "IAPWS R12-08 verification table (project REFERENCES)", mu, _r12(t, rho), 1e-6)
      for t, rho, mu in [(298.15, 998.0, 889.735100), (298.15, 1200.0, 1437.649467),
                         (373.15, 1000.0, 307.883622), (433.15, 1000.0, 217.685358)]],
    *[Check("surge", f"Korteweg wave speed, D/e {de:g}, E {e / 1e9:g} GPa [m/s]",
            "Wylie & Streeter (1993) thin-wall formula, K 2.19 GPa, c1 = 1 (project "
            "REFERENCES, computed, to the nearest m/s)", a, _wave(de, e), 1.0, relative=False)
      for de, e, a in [(30.0, 207e9, 1291.0), (43.0, 170e9, 1188.0), (20.0, 3.3e9, 392.0),
                       (10.0, 1.1e9, 324.0)]],
    Check("catalog", "NPS 4 outside diameter [mm]", "ASME B36.10M Table 1", 114.3,
          _catalog("steel", "NPS 4 Sch 40", "outside_diameter_m"), 1e-9, relative=False),
    Check("catalog", "NPS 4 Sch 40 wall [mm]", "ASME B36.10M Table 1", 6.02,
          _catalog("steel", "NPS 4 Sch 40", "wall_m"), 1e-9, relative=False),
    Check("catalog", "NPS 12 outside diameter [mm]", "ASME B36.10M Table 1", 323.8,
          _catalog("steel", "NPS 12 STD", "outside_diameter_m"), 1e-9, relative=False),
    Check("catalog", "110 SDR 11 minimum wall [mm]", "ISO 4427-2 / EN 12201-2 Table 2", 10.0,
          _catalog("pe100", "110 SDR 11", "wall_m"), 1e-9, relative=False),
    Check("catalog", "315 SDR 11 minimum wall [mm]", "ISO 4427-2 / EN 12201-2 Table 2", 28.6,
          _catalog("pe100", "315 SDR 11", "wall_m"), 1e-9, relative=False),
    Check("catalog", "200 SDR 17 minimum wall [mm]", "ISO 4427-2 / EN 12201-2 Table 2", 11.9,
          _catalog("pe100", "200 SDR 17", "wall_m"), 1e-9, relative=False),
    Check("catalog", "PE 100 SDR 11 rating [bar]", "ISO 4427-1 / EN 12201-1: PN 16 at C = 1.25",
          16.0, lambda: _rating_bar("pe100", "110 SDR 11"), 1e-12),
    Check("catalog", "PE 100 SDR 17 rating [bar]", "ISO 4427-1 / EN 12201-1: PN 10 at C = 1.25",
          10.0, lambda: _rating_bar("pe100", "200 SDR 17"), 1e-12),
    *[Check("catalog", f"DN {dn} outside diameter [mm]", "EN 545:2010 Table 16", od,
            _catalog("ductile-iron", f"DN {dn} C40", "outside_diameter_m"), 1e-9,
            relative=False)
      for dn, od in [(80, 98), (200, 222), (400, 429), (600, 635), (1000, 1048)]],
    *[Check("economics", f"CRF {i * 100:g} %, {n} years",
            "CRF = i(1+i)^n/((1+i)^n - 1) (project REFERENCES, computed)", crf, _crf(i, n),
            5e-8, relative=False)
      for i, n, crf in [(0.05, 20, 0.0802426), (0.08, 30, 0.0888274), (0.03, 50, 0.0388655)]],
    Check("economics", "CRF at zero rate, 25 years", "straight line, 1/n", 0.04, _crf(0.0, 25),
          1e-15),
    *[Check("renewal", f"best replacement year, N0 {p[0]:g}, A {p[1]:g}",
            "Shamir & Howard (1979), J. AWWA 71(5): t* = ln(ln(1+R) Cr/(Cb N0))/A (from memory"
            ", re-derived); within one year", _shamir_howard_expected(*p), _shamir_howard(*p),
            1.0, relative=False)
      for p in [(2.0, 0.08, 1e4, 1.5e6, 0.05), (5.0, 0.05, 8e3, 2e6, 0.04)]],
    Check("sizing", "continuous optimum, constant f [m]",
          "closed form D* = (5B/(mA))^(1/(m+5)) (Genereaux 1937, from memory; REFERENCES)",
          _closed_form_diameter(), _closed_form("diameter"), 1e-6, relative=False),
    Check("sizing", "energy over capital charge at D*", "m/5 at the closed-form optimum", 1.4 / 5,
          _closed_form("ratio"), 1e-6),
]


def _rating_bar(material: str, designation: str) -> float:
    from .catalog import lookup

    return float(lookup(material, designation)["pressure_rating_pa"]) / 1e5


def _hw_example() -> float:
    from .friction import hazen_williams_head_loss

    q = 200 * 3.785411784e-3 / 60
    return float(hazen_williams_head_loss(q, 3.048 * 0.0254, 30 * 0.3048, 140.0) / 0.3048)


def run_checks(checks: list[Check] | None = None) -> pd.DataFrame:
    """Run the checks; a table with one row per check and a ``passed`` column."""
    rows = []
    for c in checks or CHECKS:
        try:
            value = float(c.compute())
            error = (abs(value / c.expected - 1.0) if c.relative and c.expected != 0
                     else abs(value - c.expected))
            passed = bool(error <= c.tolerance)
            note = ""
        except Exception as exc:  # noqa: BLE001 - a check that cannot run is a failed check
            value, error, passed, note = math.nan, math.nan, False, f"{type(exc).__name__}: {exc}"
        rows.append({"area": c.area, "check": c.name, "source": c.source,
                     "expected": c.expected, "computed": value,
                     "tolerance": f"{c.tolerance:g} {'relative' if c.relative else 'absolute'}",
                     "error": error, "passed": passed, "note": note})
    return pd.DataFrame(rows)
