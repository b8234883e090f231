"""Tests of pipeopt.surge: Korteweg wave speed and the Joukowsky head rise.

Sources (docs/references.md#surge; values held in pipeopt.verification.WAVE_SPEED_CASES):
Korteweg's thin-wall formula and Wylie & Streeter's (1993) thick-wall factor c1 (from memory),
each evaluated here independently in mpmath; typical ranges of wave speed (steel and ductile
iron 1000-1400, PVC 300-500, PE 200-400 m/s, from memory); the speed of sound of water from the
independent iapws package (IAPWS-95) for the rigid-pipe limit.
"""

import iapws
import mpmath as mp
import pytest

from pipeopt import Fluid, catalog
from pipeopt import verification as ref
from pipeopt.errors import InputError
from pipeopt.surge import joukowsky_head, wave_speed

K_WATER = ref.K_WATER
RHO = ref.RHO_WAVE


def _mp_korteweg(d_mean_over_e, e_mod, nu, theory, psi=1):
    """Korteweg / Wylie & Streeter, written here from the formulas, 30 digits, e = 1."""
    with mp.workdps(30):
        k, rho, e, nu = mp.mpf(K_WATER), mp.mpf(RHO), mp.mpf(e_mod), mp.mpf(nu)
        if theory == "thin":
            d, c1 = mp.mpf(d_mean_over_e), psi
        else:
            d = mp.mpf(d_mean_over_e) - 1  # inner diameter over e
            c1 = 2 / d * (1 + nu) + psi * d / (d + 1)
        return float(mp.sqrt(k / rho) / mp.sqrt(1 + c1 * k * d / e))


@pytest.mark.reference
@pytest.mark.parametrize(("case", "d_over_e", "e_mod", "nu", "thin", "thick"),
                         ref.WAVE_SPEED_CASES)
def test_wave_speed_reference_values(case, d_over_e, e_mod, nu, thin, thick):
    # the formula's own value (1290.49 m/s for steel D/e 30, thin wall), not a rounding of it:
    # the printed values are the mpmath evaluations, to half a unit of their last digit
    for theory, printed in (("thin", thin), ("thick", thick)):
        a = wave_speed(K_WATER, RHO, d_over_e, 1.0, e_mod, nu, wall_theory=theory)
        assert abs(a - float(printed)) <= ref.half_unit(printed), (case, theory)
        assert a == pytest.approx(_mp_korteweg(d_over_e, e_mod, nu, theory), rel=1e-13)


@pytest.mark.reference
@pytest.mark.parametrize("restraint", ["expansion-joints", "anchored-one-end",
                                       "anchored-throughout"])
def test_thick_wall_restraint_factors(restraint):
    # Wylie & Streeter (1993): psi = 1, 1 - nu/2, 1 - nu^2 in both forms (from memory)
    nu = 0.45
    psi = {"expansion-joints": 1, "anchored-one-end": 1 - nu / 2,
           "anchored-throughout": 1 - nu * nu}[restraint]
    for theory in ("thin", "thick"):
        a = wave_speed(K_WATER, RHO, 10.0, 1.0, 1.1e9, nu, restraint, theory)
        assert a == pytest.approx(_mp_korteweg(10.0, 1.1e9, nu, theory, psi), rel=1e-13)


@pytest.mark.reference
def test_thick_wall_tends_to_thin_wall():
    # the thick-wall factor tends to the thin one as e/D -> 0 (Wylie & Streeter 1993): at
    # D/e = 10^4 the two differ by about e/D (mean versus inner diameter)
    thin = wave_speed(K_WATER, RHO, 1e4, 1.0, 207e9, 0.3, wall_theory="thin")
    thick = wave_speed(K_WATER, RHO, 1e4, 1.0, 207e9, 0.3, wall_theory="thick")
    assert thick == pytest.approx(thin, rel=3e-4)
    assert thick != thin


@pytest.mark.reference
def test_rigid_pipe_limit_is_speed_of_sound():
    # For E -> infinity Korteweg's a -> sqrt(K/rho), the speed of sound of the liquid. Check with
    # K_s = rho w^2 from the independent iapws package (IAPWS-95) at 20 degC, 1 atm.
    w = Fluid.water("20 degC")
    ref = iapws.IAPWS95(T=293.15, P=0.101325)
    a = wave_speed(w.bulk_modulus, w.density, 0.3, 0.01, 1e30)
    assert a == pytest.approx(ref.w, rel=1e-5)


@pytest.mark.reference
@pytest.mark.parametrize(
    ("material", "designation", "lo", "hi"),
    [  # typical ranges (docs/references.md#surge, from memory)
        ("steel", "NPS 12 STD", 1000, 1400),
        ("ductile-iron", "DN 300 C40", 1000, 1400),
        ("pvc-u", "200 PN 10", 300, 500),
        ("pe100", "315 SDR 11", 200, 400),
        ("pe100", "315 SDR 17", 200, 400),
    ],
)
def test_catalog_pipes_fall_in_typical_ranges(material, designation, lo, hi):
    row = catalog.lookup(material, designation)
    m = catalog.get_material(material)
    d_mean = row["outside_diameter_m"] - row["wall_m"]
    a = wave_speed(K_WATER, RHO, d_mean, row["wall_m"], m.elastic_modulus, m.poisson_ratio)
    assert lo <= a <= hi


@pytest.mark.reference
def test_restraint_cases_order():
    # c1 = 1 (joints) > 1 - nu^2 = 0.91 (anchored throughout) > 1 - nu/2 = 0.85 (one end) for
    # nu = 0.3; a smaller c1 gives a faster wave
    a = [wave_speed(K_WATER, RHO, 30.0, 1.0, 207e9, 0.3, r)
         for r in ("expansion-joints", "anchored-throughout", "anchored-one-end")]
    assert a[0] < a[1] < a[2]
    # the thin-wall form with those three factors written out by hand (Korteweg 1878)
    for r, c1 in (("expansion-joints", 1.0), ("anchored-throughout", 0.91),
                  ("anchored-one-end", 0.85)):
        hand = (K_WATER / RHO) ** 0.5 / (1 + c1 * K_WATER * 30.0 / 207e9) ** 0.5
        assert wave_speed(K_WATER, RHO, 30.0, 1.0, 207e9, 0.3, r, "thin") == pytest.approx(
            hand, rel=1e-14)
    with pytest.raises(InputError, match="restraint must be one of"):
        wave_speed(K_WATER, RHO, 30.0, 1.0, 207e9, restraint="welded")
    with pytest.raises(InputError, match="wall_theory must be one of"):
        wave_speed(K_WATER, RHO, 30.0, 1.0, 207e9, wall_theory="medium")


@pytest.mark.reference
def test_joukowsky_by_hand():
    # Joukowsky (1900): dH = a dV / g; 1200 m/s and 1.5 m/s -> 183.55 m (by hand, g = 9.80665)
    assert joukowsky_head(1200.0, 1.5) == pytest.approx(1200 * 1.5 / 9.80665, rel=1e-15)
    assert joukowsky_head(1200.0, -1.5) == joukowsky_head(1200.0, 1.5)
