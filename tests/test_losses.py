"""Tests of pipeopt.losses: fittings by count and fixed equipment.

Sources (docs/references.md#long-lines; values held in pipeopt.verification): Crane Technical
Paper No. 410, representative resistance coefficients K (multiples of f_T, or fixed) and its
table of f_T by nominal pipe size, all from memory; the quadratic law of local losses in
fully turbulent flow (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from pipeopt import catalog
from pipeopt import verification as ref
from pipeopt.errors import InputError
from pipeopt.losses import (
    FITTING_NAMES,
    Equipment,
    Fittings,
    fitting_k,
    fittings_table,
    fully_turbulent_friction_factor,
)

G = 9.80665


def sch40_bore(nps: float) -> float:
    label = {0.5: "1/2", 0.75: "3/4", 1.25: "1-1/4", 1.5: "1-1/2", 2.5: "2-1/2"}
    name = f"NPS {label.get(nps, f'{nps:g}')} Sch 40"
    return float(catalog.lookup("steel", name)["inner_diameter_m"])


@pytest.mark.reference
@pytest.mark.parametrize(("nps", "ft"), sorted(ref.CRANE_FT.items()))
def test_ft_at_the_table_sizes(nps, ft):
    # Crane TP-410 f_T table (from memory), at the Schedule 40 bore of each size
    assert fully_turbulent_friction_factor(sch40_bore(nps)) == pytest.approx(float(ft),
                                                                              abs=1e-15)


@pytest.mark.reference
@pytest.mark.parametrize(("name", "multiple"), sorted(ref.CRANE_K_MULTIPLES.items()))
def test_fitting_coefficients_are_the_table_multiples(name, multiple):
    # Crane TP-410: K = multiple x f_T at the fitting's size (from memory), at three sizes
    for nps in (2.0, 6.0, 16.0):
        assert fitting_k(name, sch40_bore(nps)) == pytest.approx(
            multiple * float(ref.CRANE_FT[nps]), rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("nps", "multiple"), ref.CRANE_BUTTERFLY)
def test_butterfly_valves_by_size_band(nps, multiple):
    # Crane TP-410: 45 f_T (2-8 in), 35 f_T (10-14 in), 25 f_T (16-24 in), from memory
    assert fitting_k("butterfly-valve", sch40_bore(nps)) == pytest.approx(
        multiple * float(ref.CRANE_FT[nps]), rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("name", "k"), sorted(ref.CRANE_FIXED_K.items()))
def test_fixed_coefficients(name, k):
    # Crane TP-410 entrances and exit (from memory)
    np.testing.assert_allclose(fitting_k(name, [0.05, 0.3, 1.2]), k)


@pytest.mark.reference
def test_ft_between_and_beyond_the_table():
    # Crane TP-410 f_T table (from memory): 0.017 at NPS 4, 0.016 at NPS 5, 0.027 at NPS 1/2
    # (the smallest size), 0.012 at NPS 18-24 (the largest); linear in log(bore) between sizes,
    # so the geometric mean of the NPS 4 and 5 bores gives (0.017 + 0.016) / 2 = 0.0165 by hand;
    # the end values hold beyond the table
    d4, d5 = sch40_bore(4.0), sch40_bore(5.0)
    mid = np.sqrt(d4 * d5)
    assert fully_turbulent_friction_factor(mid) == pytest.approx(0.0165, rel=1e-12)
    assert fully_turbulent_friction_factor(1.5) == 0.012
    assert fully_turbulent_friction_factor(0.005) == 0.027


def test_every_table_row_has_a_source_and_a_known_kind():
    t = fittings_table()
    assert set(t["kind"]) == {"f_T", "fixed"}
    assert t["provenance"].str.contains("Crane TP-410").all()
    assert set(ref.CRANE_K_MULTIPLES) | set(ref.CRANE_FIXED_K) | {"butterfly-valve"} == set(
        FITTING_NAMES)


@pytest.mark.reference
def test_fittings_by_count():
    f = Fittings.parse({"gate-valve": 2, "bend-90-long-radius": 12, "exit": 1})
    d = sch40_bore(12.0)
    # Crane TP-410 (from memory): gate valve 8 f_T, 90-degree bend r/d = 1.5 14 f_T, exit
    # K = 1.0, f_T = 0.013 at NPS 12; summed by hand
    expected = 2 * 8 * 0.013 + 12 * 14 * 0.013 + 1.0
    assert f.k_sum(d) == pytest.approx(expected, rel=1e-14)
    np.testing.assert_allclose(f.k_sum(np.array([d, d])), expected, rtol=1e-14)
    assert "12 x bend-90-long-radius" in f.describe()
    with pytest.raises(InputError, match=r"fittings\.gate-valv: unknown fitting; did you mean "
                                         r"'gate-valve'\?"):
        Fittings.parse({"gate-valv": 1})
    with pytest.raises(InputError, match=r"fittings\.exit: expected a whole number"):
        Fittings.parse({"exit": 1.5})
    with pytest.raises(InputError, match=r"fittings: expected a table of fittings"):
        Fittings.parse([])


@pytest.mark.reference
def test_equipment_loss_grows_with_flow_squared():
    # h = dp / (rho g) (Q / Q_ref)^2: the quadratic law of fully turbulent local losses (common
    # practice), g = 9.80665 m/s^2 (standard gravity, 3rd CGPM 1901), by hand
    e = Equipment("35 kPa", "400 m^3/h")
    q = 400 / 3600
    assert e.head(q, 1000.0) == pytest.approx(35e3 / (1000 * G), rel=1e-14)
    assert e.head(2 * q, 1000.0) == pytest.approx(4 * 35e3 / (1000 * G), rel=1e-14)
    with pytest.raises(InputError, match=r"equipment\.pressure_drop: expected a pressure"):
        Equipment(35.0, "400 m^3/h")
