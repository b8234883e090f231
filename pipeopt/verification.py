"""Verification record: every published reference value pipeopt is checked against, in one place.

This module is the single home of the reference data: the tests parametrise from the tables
below (and from ``pipeopt/data/standard_tables.csv`` for the pipe standards), and
``pipeopt verify`` prints :data:`CHECKS` (check, source, expected, computed, tolerance, pass)
and exits non-zero when any check fails. Each value names its source, recorded with the values
in the repository's ``docs/references.md`` (the anchor is given with each table); values a
source gives only "from memory" say so. A tolerance is never looser than the precision of the
source: a value printed to n decimals is held to half a unit of its last digit
(:func:`half_unit`), unless a stated reason (the rounding of a published constant) says more.
"""

from __future__ import annotations

import io
import math
from collections.abc import Callable
from dataclasses import dataclass
from decimal import Decimal
from importlib import resources

import pandas as pd

__all__ = ["Check", "CHECKS", "run_checks", "half_unit", "COLEBROOK_ROOTS", "WATER_AMBIENT",
           "R12_08_VERIFICATION", "CRF_VALUES", "WAVE_SPEED_CASES", "HAZEN_WILLIAMS",
           "PVC_PN_BY_SDR", "standard_tables", "catalog_reference_values", "STANDARD_ATMOSPHERE",
           "CRANE_FT", "CRANE_K_MULTIPLES", "CRANE_BUTTERFLY", "CRANE_FIXED_K",
           "AFFINITY_CASE"]

def half_unit(text: str) -> float:
    """Half a unit in the last digit of a number as printed: ``"0.0802426"`` -> 5e-8."""
    exponent = Decimal(text).as_tuple().exponent
    return 0.5 * 10.0 ** int(exponent)


# ------------------------------------------------------------------------------------------
# reference data (docs/references.md, one section each)
# ------------------------------------------------------------------------------------------
#: Colebrook-White roots (3.7 / 2.51 form), as (Re, eps/D, f printed to 10 decimals): the root
#: of Colebrook's (1939) equation to 40 digits with mpmath, rounded (docs/references.md#friction).
#: A check of the solver, not of the equation.
COLEBROOK_ROOTS = [(4e3, 0.0, "0.0399070141"), (1e4, 0.0, "0.0308829504"),
                   (1e4, 1e-3, "0.0323818064"), (1e5, 0.0, "0.0179897731"),
                   (1e5, 1e-4, "0.0185138661"), (1e5, 1e-2, "0.0385035435"),
                   (1e6, 1e-4, "0.0134414377"), (1e6, 1e-3, "0.0199434658"),
                   (1e7, 1e-3, "0.0196670524"), (1e8, 0.05, "0.0715509041")]
COLEBROOK_SOURCE = ("Colebrook (1939) equation, 40-digit mpmath root rounded to 10 decimals "
                    "(docs/references.md#friction)")

#: Liquid water at 0.101325 MPa, IAPWS-95 density and IAPWS R12-08 viscosity, as
#: (t [degC], density [kg/m3] to 4 decimals, viscosity [Pa s] to 6 significant digits)
#: (docs/references.md#water-properties).
WATER_AMBIENT = [(15.0, "999.1026", "1.13757e-3"), (20.0, "998.2072", "1.00160e-3"),
                 (25.0, "997.0476", "0.890022e-3")]
WATER_SOURCE = "IAPWS-95 and IAPWS R12-08 at 1 atm (docs/references.md#water-properties)"

#: IAPWS R12-08 verification values for liquid states, as (T [K], rho [kg/m3], mu [uPa s]).
R12_08_VERIFICATION = [(298.15, 998.0, "889.735100"), (298.15, 1200.0, "1437.649467"),
                       (373.15, 1000.0, "307.883622"), (433.15, 1000.0, "217.685358")]
R12_08_SOURCE = "IAPWS R12-08 (2008), verification table (docs/references.md#water-properties)"

#: Capital recovery factor i(1+i)^n/((1+i)^n - 1), as (i, n, CRF to 7 decimals)
#: (docs/references.md#economics).
CRF_VALUES = [(0.05, 20, "0.0802426"), (0.08, 30, "0.0888274"), (0.03, 50, "0.0388655")]
CRF_SOURCE = ("CRF = i(1+i)^n/((1+i)^n - 1), DeGarmo, Sullivan & Canada, Engineering Economy, "
              "values to 7 decimals (docs/references.md#economics)")

#: Korteweg wave speed, K = 2.19 GPa, rho = 998.2 kg/m3, expansion joints (psi = 1), as
#: (case, D_m/e, E [Pa], nu, thin-wall a [m/s], thick-wall a [m/s]), D_m the mean diameter of
#: the wall (the thick-wall factor takes the inner diameter D_m - e, as
#: :func:`pipeopt.surge.wave_speed` does); each a evaluated from the formula in mpmath at 30
#: digits and printed to 12 significant digits
#: (docs/references.md#surge).
WAVE_SPEED_CASES = [("steel", 30.0, 207e9, 0.30, "1290.49366936", "1287.22429704"),
                    ("ductile iron", 43.0, 170e9, 0.28, "1188.21761736", "1185.35532348"),
                    ("PVC-U SDR 21", 20.0, 3.3e9, 0.40, "392.066549924", "384.541208944"),
                    ("PE 100 SDR 11", 10.0, 1.1e9, 0.45, "323.925918747", "309.524858325")]
WAVE_SOURCE = ("Korteweg (1878) thin-wall formula; Wylie & Streeter (1993) thick-wall factor "
               "(from memory); K 2.19 GPa, rho 998.2 kg/m3, evaluated in mpmath "
               "(docs/references.md#surge)")
K_WATER, RHO_WAVE = 2.19e9, 998.2

#: Hazen-Williams forms (docs/references.md#friction): the US customary form h = 4.727 L
#: Q^1.852 / (C^1.852 D^4.8704) (ft, ft3/s) and the SI velocity form V = 0.849 C R^0.63 S^0.54
#: (m, m/s). pipeopt's SI constant 10.67 is a rounding of the exact conversion of 4.727 (10.674);
#: the tolerances are the sums of the roundings of the published constants.
HAZEN_WILLIAMS = {
    "us_k": 4.727,
    "si_velocity_k": 0.849,
    # 10.67 +-0.005 (4.7e-4) plus 4.727 +-0.0005 (1.1e-4)
    "us_tolerance": 5.8e-4,
    # 0.849 +-0.0005 (5.9e-4 in V, 1.1e-3 in h), 10.67 (4.7e-4), exponents 1.852 vs 1/0.54 and
    # 4.8704 vs 2.63/0.54 over 0.01-1 m3/s and 0.1-1 m (up to 8.5e-4 and 1e-4)
    "si_tolerance": 2.5e-3,
}

#: PN of PVC-U pipe by SDR, ISO 1452-2 (from memory): design stress 10 MPa (C = 2.5) up to
#: 90 mm, 12.5 MPa (C = 2.0) above; PN = 10 sigma / S to the nearest value of the nominal
#: pressure series of the standard (..., 5, 6, 8, 10, 12.5, 16, 20, ...; 6 is not an R10 number).
PE_SDR = (26.0, 21.0, 17.0, 13.6, 11.0, 9.0, 7.4)  # the PE series bundled (ISO 4427)
PVC_PN_BY_SDR = {"up to 90 mm": {41: 5.0, 33: 6.0, 26: 8.0, 21: 10.0, 17: 12.5, 13.6: 16.0},
                 "above 90 mm": {41: 6.0, 33: 8.0, 26: 10.0, 21: 12.5, 17: 16.0, 13.6: 20.0}}


#: Standard atmosphere (docs/references.md#long-lines): ISO 2533:1975 / ICAO table pressures at
#: geopotential altitudes, as (elevation [m], pressure [kPa] as printed) (from memory).
STANDARD_ATMOSPHERE = [(0.0, "101.325"), (500.0, "95.46"), (1000.0, "89.87"),
                       (2000.0, "79.50")]
ATMOSPHERE_SOURCE = ("ISO 2533:1975 standard atmosphere, table values (from memory; "
                     "docs/references.md#long-lines)")

#: Crane Technical Paper No. 410 (docs/references.md#long-lines), from memory: f_T of clean
#: commercial steel pipe in complete turbulence by nominal pipe size [in], and the resistance
#: coefficients of fittings as multiples of f_T (or fixed K).
CRANE_FT = {0.5: "0.027", 0.75: "0.025", 1.0: "0.023", 1.25: "0.022", 1.5: "0.021",
            2.0: "0.019", 2.5: "0.018", 3.0: "0.018", 4.0: "0.017", 5.0: "0.016", 6.0: "0.015",
            8.0: "0.014", 10.0: "0.014", 12.0: "0.013", 14.0: "0.013", 16.0: "0.013",
            18.0: "0.012", 20.0: "0.012", 24.0: "0.012"}
CRANE_K_MULTIPLES = {"gate-valve": 8, "ball-valve": 3, "globe-valve": 340, "angle-valve": 150,
                     "plug-valve": 18, "swing-check-valve": 100, "lift-check-valve": 600,
                     "foot-valve-poppet": 420, "foot-valve-hinged": 75,
                     "elbow-90-standard": 30, "elbow-45-standard": 16, "bend-90-r1": 20,
                     "bend-90-long-radius": 14, "bend-90-r2": 12, "bend-90-r3": 12,
                     "bend-90-r4": 14, "bend-90-r6": 17, "bend-90-r8": 24, "bend-90-r10": 30,
                     "close-return-bend": 50, "tee-through-run": 20, "tee-through-branch": 60}
#: Butterfly valves by size band [in]: 2-8 in 45 f_T, 10-14 in 35 f_T, 16-24 in 25 f_T.
CRANE_BUTTERFLY = [(4.0, 45), (8.0, 45), (10.0, 35), (14.0, 35), (16.0, 25), (24.0, 25)]
CRANE_FIXED_K = {"entrance-sharp": 0.5, "entrance-projecting": 0.78, "entrance-rounded": 0.04,
                 "exit": 1.0}
CRANE_SOURCE = ("Crane Co., Technical Paper No. 410, representative resistance coefficients "
                "and f_T (from memory; docs/references.md#long-lines)")

#: Affinity laws (docs/references.md#long-lines): a pump at 100 L/s, 40 m, 50 kW slowed to
#: 0.8 of its speed gives 80 L/s, 25.6 m and 25.6 kW (Q ~ n, H ~ n^2, P ~ n^3; Gulich,
#: Centrifugal Pumps, 2014, section 3.4, from memory), worked by hand.
AFFINITY_CASE = ((0.1, 40.0, 50e3, 0.8), ("0.08", "25.6", "25600"))
AFFINITY_SOURCE = ("affinity laws Q ~ n, H ~ n^2, P ~ n^3 (Gulich, Centrifugal Pumps, 3rd ed. "
                   "2014, section 3.4, from memory; docs/references.md#long-lines)")


def standard_tables() -> pd.DataFrame:
    """Recorded published table values of pipe dimensions and ratings.

    Columns ``group``, ``designation``, ``quantity``, ``value``, ``source``, ``basis`` as in
    ``pipeopt/data/standard_tables.csv`` (docs/references.md#pipe-dimensions).
    """
    text = (resources.files("pipeopt") / "data" / "standard_tables.csv").read_text(
        encoding="utf-8")
    return pd.read_csv(io.StringIO(text), comment="#", dtype={"value": str})


_QUANTITY_COLUMN = {"outside_diameter_mm": "outside_diameter_m", "wall_mm": "wall_m",
                    "lining_mm": "lining_m", "pressure_rating_bar": "pressure_rating_pa"}


def catalog_reference_values() -> pd.DataFrame:
    """Every recorded table value against the catalog rows it applies to.

    One row per (catalog material, designation, column): ``expected`` (SI), ``printed`` (the
    table's text), ``source``, ``basis``. A 'thermoplastics' wall applies to ``pe100`` and
    ``pe80`` (designation ``"d SDR x"``) and to ``pvc-u`` (its PN class for that SDR, from
    :data:`PVC_PN_BY_SDR`); a ductile-iron outside diameter or lining to every class of that DN
    in ``ductile-iron`` and ``ductile-iron-k``.
    """
    from .catalog import default_catalog

    sizes = default_catalog().all_sizes
    rows = []
    for rec in standard_tables().to_dict("records"):
        factor = 1e5 if rec["quantity"] == "pressure_rating_bar" else 1e-3
        column = _QUANTITY_COLUMN[rec["quantity"]]
        targets: list[tuple[str, str]] = []
        group, des = rec["group"], rec["designation"]
        if group == "thermoplastics":
            od, _, sdr = des.partition(" SDR ")
            if float(sdr) in PE_SDR:
                targets = [("pe100", des), ("pe80", des)]
            band = "up to 90 mm" if float(od) <= 90 else "above 90 mm"
            pn = PVC_PN_BY_SDR[band].get(float(sdr))
            if pn is not None and float(od) >= 63:
                targets.append(("pvc-u", f"{od} PN {pn:g}"))
        elif group == "ductile-iron" and rec["quantity"] != "wall_mm":
            sel = sizes["material"].isin(["ductile-iron", "ductile-iron-k"]) & (
                sizes["nominal"] == des)
            targets = list(zip(sizes.loc[sel, "material"], sizes.loc[sel, "designation"],
                               strict=True))
        else:
            targets = [(group, des)]
        for material, designation in targets:
            rows.append({"material": material, "designation": designation, "column": column,
                         "expected": float(rec["value"]) * factor, "printed": rec["value"],
                         "unit_factor": factor, "source": rec["source"],
                         "basis": rec["basis"]})
    return pd.DataFrame(rows)


# ------------------------------------------------------------------------------------------
# the checks `pipeopt verify` prints
# ------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Check:
    """One reference check: ``compute()`` must be within ``tolerance`` of ``expected``.

    ``relative`` tolerances compare |computed / expected − 1|; absolute ones |computed − expected|.
    ``why`` says what the tolerance rests on (the printed precision of the source, ...).
    """

    area: str
    name: str
    source: str
    expected: float
    compute: Callable[[], float]
    tolerance: float
    relative: bool = True
    why: str = ""


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
        st = UpgradeStudy(Fluid.water("15 degC"), ex, DutyProfile(("0.08 m^3/s",), (6000,)), 0.7,
                          EnergyTariff(0.1), Economics(r, 120, 80), [opt])
        return float(st.best_year("replace").year)
    return f


def _shamir_howard_expected(n0: float, a: float, cb: float, cr: float, r: float) -> float:
    return math.log(math.log1p(r) * cr / (cb * n0)) / a


def _closed_form(which: str) -> Callable[[], float]:
    """Continuous optimum with a constant friction factor against D* = (5B/(mA))^(1/(m+5))."""
    def f() -> float:
        import numpy as np

        from .catalog import list_sizes
        from .economics import capital_recovery_factor
        from .lifecycle import evaluate
        from .sizing import SizingStudy

        # a textbook cost model on the bore, a D^m, priced for every size of the class: the
        # continuous optimum interpolates it log-log, which reproduces the power law exactly
        sizes = list_sizes("pe100", classes="SDR 17")
        table = {d: 1500.0 * b**1.4 for d, b in zip(sizes["designation"],
                                                      sizes["inner_diameter_m"], strict=True)}
        study = {**_CLOSED_FORM_STUDY, "material": [{"name": "pe100", "classes": ["SDR 17"],
                                                      "cost": {"table": table}}]}
        st = SizingStudy.from_dict(study)
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


def _wave(d_over_e: float, modulus: float, nu: float, theory: str) -> Callable[[], float]:
    def f() -> float:
        from .surge import wave_speed

        return float(wave_speed(K_WATER, RHO_WAVE, d_over_e, 1.0, modulus, nu,
                                wall_theory=theory))
    return f


def _hw_us_form(q_cfs: float, d_ft: float, l_ft: float, c: float) -> float:
    """The US customary Hazen-Williams form, head loss in ft."""
    return HAZEN_WILLIAMS["us_k"] * l_ft * q_cfs**1.852 / (c**1.852 * d_ft**4.8704)


def _hw_si_velocity_form(q: float, d: float, length: float, c: float) -> float:
    """Head loss [m] from the SI velocity form V = 0.849 C R^0.63 S^0.54, solved for S."""
    v = q / (math.pi * d * d / 4.0)
    return length * (v / (HAZEN_WILLIAMS["si_velocity_k"] * c * (d / 4.0) ** 0.63)) ** (1 / 0.54)


def _hw_code(q: float, d: float, length: float, c: float, to_ft: bool = False) -> Callable:
    def f() -> float:
        from .friction import hazen_williams_head_loss

        h = float(hazen_williams_head_loss(q, d, length, c))
        return h / 0.3048 if to_ft else h
    return f


def _catalog_max_error(materials: tuple[str, ...]) -> Callable[[], float]:
    """Largest |catalog − recorded table| [mm or bar] over the recorded values of materials."""
    def f() -> float:
        from .catalog import default_catalog

        ref = catalog_reference_values()
        ref = ref[ref["material"].isin(materials)]
        sizes = default_catalog().all_sizes.set_index(["material", "designation"])
        got = sizes.loc[list(zip(ref["material"], ref["designation"], strict=True))]
        values = got.to_numpy()[range(len(ref)),
                                [list(sizes.columns).index(c) for c in ref["column"]]]
        err = (values.astype(float) - ref["expected"].to_numpy()) / ref["unit_factor"].to_numpy()
        return float(abs(err).max())
    return f


def _atmosphere(z: float) -> Callable[[], float]:
    def run() -> float:
        from .pumps import standard_atmosphere_pressure

        return float(standard_atmosphere_pressure(z)) / 1000.0
    return run


def _ft(nps: float) -> Callable[[], float]:
    def run() -> float:
        from .losses import fully_turbulent_friction_factor

        bore = _sch40_bore(nps)
        return float(fully_turbulent_friction_factor(bore))
    return run


def _sch40_bore(nps: float) -> float:
    """The bore of ASME B36.10M Schedule 40 pipe of a nominal size [m] (bundled catalog)."""
    from .catalog import list_sizes

    sizes = list_sizes("steel", classes="Sch 40")
    whole, frac = int(nps), nps - int(nps)
    label = {0.0: "", 0.25: "1/4", 0.5: "1/2", 0.75: "3/4"}[frac]
    name = (f"NPS {label}" if whole == 0 else f"NPS {whole}-{label}" if label
            else f"NPS {whole}") + " Sch 40"
    return float(sizes.loc[sizes["designation"] == name, "inner_diameter_m"].iloc[0])


def _fitting(name: str, nps: float) -> Callable[[], float]:
    def run() -> float:
        from .losses import fitting_k

        return float(fitting_k(name, _sch40_bore(nps)))
    return run


def _affinity(i: int) -> Callable[[], float]:
    def run() -> float:
        from .pumps import affinity_laws

        return float(affinity_laws(*AFFINITY_CASE[0])[i])
    return run


def _n_recorded(materials: tuple[str, ...]) -> int:
    return int(catalog_reference_values()["material"].isin(materials).sum())


_HALF = "half a unit of the last printed digit"

CHECKS: list[Check] = [
    *[Check("friction", f"Colebrook-White f at Re {re:g}, eps/D {rr:g}", COLEBROOK_SOURCE,
            float(f_ref), _colebrook(re, rr), half_unit(f_ref), relative=False, why=_HALF)
      for re, rr, f_ref in COLEBROOK_ROOTS],
    Check("friction", "laminar f at Re 1000", "Hagen-Poiseuille, 64/Re "
          "(docs/references.md#friction)", 0.064, _colebrook(1000.0, 1e-3), 1e-15,
          why="exact formula; one rounding of 64/Re"),
    Check("friction", "Hazen-Williams SI form against the US form (3 ft3/s, 1.5 ft, C 120, "
          "5000 ft) [ft]", "US customary form h = 4.727 L Q^1.852/(C^1.852 D^4.8704) "
          "(docs/references.md#friction)", _hw_us_form(3.0, 1.5, 5000.0, 120.0),
          _hw_code(3.0 * 0.3048**3, 1.5 * 0.3048, 5000.0 * 0.3048, 120.0, to_ft=True),
          HAZEN_WILLIAMS["us_tolerance"], why="roundings of 10.67 and 4.727"),
    Check("friction", "Hazen-Williams SI form against the SI velocity form (0.1 m3/s, 0.3 m, "
          "C 130, 1 km) [m]", "V = 0.849 C R^0.63 S^0.54 (Williams & Hazen 1920 in SI units; "
          "docs/references.md#friction)", _hw_si_velocity_form(0.1, 0.3, 1000.0, 130.0),
          _hw_code(0.1, 0.3, 1000.0, 130.0), HAZEN_WILLIAMS["si_tolerance"],
          why="roundings of 0.849, 10.67 and the exponents"),
    *[Check("water", f"density at {t:g} degC, 1 atm [kg/m3]", WATER_SOURCE, float(rho),
            _water(t, "density"), half_unit(rho), relative=False, why=_HALF)
      for t, rho, _ in WATER_AMBIENT],
    *[Check("water", f"viscosity at {t:g} degC, 1 atm [Pa s]", WATER_SOURCE, float(mu),
            _water(t, "viscosity"), half_unit(mu), relative=False, why=_HALF)
      for t, _, mu in WATER_AMBIENT],
    *[Check("water", f"viscosity at {t:g} K, {rho:g} kg/m3 [uPa s]", R12_08_SOURCE, float(mu),
            _r12(t, rho), half_unit(mu), relative=False, why=_HALF)
      for t, rho, mu in R12_08_VERIFICATION],
    *[Check("surge", f"Korteweg wave speed, {case}, D/e {de:g}, {theory} wall [m/s]",
            WAVE_SOURCE, float(a), _wave(de, e, nu, theory), half_unit(a), relative=False,
            why=_HALF)
      for case, de, e, nu, a_thin, a_thick in WAVE_SPEED_CASES
      for theory, a in (("thin", a_thin), ("thick", a_thick))],
    Check("catalog", "PE 100 / PE 80 walls and ratings: largest |catalog - table| [mm, bar]",
          "ISO 4065 / EN 12201-2 / ISO 4427 tables, recorded in pipeopt/data/standard_tables.csv "
          "(docs/references.md#pipe-dimensions)", 0.0, _catalog_max_error(("pe100", "pe80")),
          1e-9, relative=False, why="table values are exact to 0.1 mm"),
    Check("catalog", "PVC-U walls: largest |catalog - table| [mm]",
          "ISO 4065 / ISO 1452-2 tables (docs/references.md#pipe-dimensions)", 0.0,
          _catalog_max_error(("pvc-u",)), 1e-9, relative=False,
          why="table values are exact to 0.1 mm"),
    Check("catalog", "ductile iron DE, walls, linings: largest |catalog - table| [mm]",
          "EN 545:2010 / ISO 2531 tables (docs/references.md#pipe-dimensions)", 0.0,
          _catalog_max_error(("ductile-iron", "ductile-iron-k")), 1e-9, relative=False,
          why="table values are exact to 0.1 mm"),
    Check("catalog", "steel OD and walls: largest |catalog - table| [mm]",
          "ASME B36.10M / B36.19M Table 1 (docs/references.md#pipe-dimensions)", 0.0,
          _catalog_max_error(("steel", "stainless-steel")), 1e-9, relative=False,
          why="table values are exact to 0.01 mm"),
    *[Check("economics", f"CRF {i * 100:g} %, {n} years", CRF_SOURCE, float(crf), _crf(i, n),
            half_unit(crf), relative=False, why=_HALF)
      for i, n, crf in CRF_VALUES],
    Check("economics", "CRF at zero rate, 25 years", "straight line, 1/n "
          "(docs/references.md#economics)", 0.04, _crf(0.0, 25), 1e-15,
          why="exact; one rounding"),
    *[Check("renewal", f"best replacement year, N0 {p[0]:g}, A {p[1]:g}",
            "Shamir & Howard (1979), J. AWWA 71(5): t* = ln(ln(1+R) Cr/(Cb N0))/A (from memory"
            ", re-derived; docs/references.md#renewal)", _shamir_howard_expected(*p),
            _shamir_howard(*p), 1.0, relative=False,
            why="the study scans whole years of action: within one year")
      for p in [(2.0, 0.08, 1e4, 1.5e6, 0.05), (5.0, 0.05, 8e3, 2e6, 0.04)]],
    Check("sizing", "continuous optimum, constant f [m]",
          "closed form D* = (5B/(mA))^(1/(m+5)) (Genereaux 1937, from memory; "
          "docs/references.md#economics)", _closed_form_diameter(), _closed_form("diameter"),
          1e-6, relative=False, why="the optimizer's stated tolerance, about 1e-6 m"),
    Check("sizing", "energy over capital charge at D*", "m/5 at the closed-form optimum "
          "(docs/references.md#economics)", 1.4 / 5, _closed_form("ratio"), 1e-6,
          why="follows from the 1e-6 m optimum"),
    *[Check("long lines", f"standard atmosphere at {z:g} m [kPa]", ATMOSPHERE_SOURCE, float(p),
            _atmosphere(z), half_unit(p), relative=False, why=_HALF)
      for z, p in STANDARD_ATMOSPHERE],
    *[Check("long lines", f"f_T of NPS {nps:g} Schedule 40", CRANE_SOURCE, float(ft), _ft(nps),
            1e-12, relative=False, why="the table's value at its own size")
      for nps, ft in CRANE_FT.items() if nps in (0.5, 2.0, 4.0, 12.0, 24.0)],
    Check("long lines", "K of a gate valve, NPS 4", CRANE_SOURCE,
          CRANE_K_MULTIPLES["gate-valve"] * float(CRANE_FT[4.0]), _fitting("gate-valve", 4.0),
          1e-12, relative=False, why="8 f_T at the table's f_T"),
    Check("long lines", "K of a long-radius 90 degree bend, NPS 12", CRANE_SOURCE,
          CRANE_K_MULTIPLES["bend-90-long-radius"] * float(CRANE_FT[12.0]),
          _fitting("bend-90-long-radius", 12.0), 1e-12, relative=False,
          why="14 f_T at the table's f_T"),
    *[Check("long lines", f"affinity laws: {what} at 0.8 of the speed", AFFINITY_SOURCE,
            float(AFFINITY_CASE[1][i]), _affinity(i), 1e-12, why="exact powers of 0.8")
      for i, what in enumerate(("flow [m3/s]", "head [m]", "power [W]"))],
]


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
        why = f" ({c.why})" if c.why else ""
        rows.append({"area": c.area, "check": c.name, "source": c.source,
                     "expected": c.expected, "computed": value,
                     "tolerance": f"{c.tolerance:g} {'relative' if c.relative else 'absolute'}"
                                  f"{why}",
                     "error": error, "passed": passed, "note": note})
    return pd.DataFrame(rows)
