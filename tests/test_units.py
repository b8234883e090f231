"""Tests of pipeopt.units: parsing user input to SI at the edge."""

import numpy as np
import pint
import pytest

from pipeopt.errors import InputError
from pipeopt.units import Quantity, format_si, to_si, ureg


@pytest.mark.reference
@pytest.mark.parametrize(
    ("text", "kind", "expected"),
    [  # exact unit definitions (SI brochure / NIST SP 811; common practice)
        ("450 m^3/h", "flow", 0.125),
        ("2.5 km", "length", 2500.0),
        ("15 degC", "temperature", 288.15),
        ("59 degF", "temperature", 288.15),
        ("0.02 mm/yr", "aging_rate", 2e-5),
        ("10 bar", "pressure", 1e6),
        ("1 atm", "pressure", 101325.0),
        ("1.0 mPa*s", "viscosity", 1e-3),
        ("75 kW", "power", 75e3),
        ("12 in", "diameter", 0.3048),
        ("1000 gal/min", "flow", 0.0630901964),
    ],
)
def test_strings_convert_to_si(text, kind, expected):
    assert to_si(text, kind, "field") == pytest.approx(expected, rel=1e-9)


@pytest.mark.reference
def test_quantity_and_foreign_registry():  # 0 degC = 273.15 K exactly (SI brochure)
    assert to_si(Quantity(3.2, "km"), "length", "line.length") == pytest.approx(3200.0)
    other = pint.UnitRegistry()
    assert to_si(other.Quantity(15, "degC"), "temperature", "t") == pytest.approx(288.15)


@pytest.mark.reference
def test_array_quantities_and_lists():  # 1 km = 1000 m exactly (SI brochure)
    out = to_si(Quantity(np.array([1.0, 2.0]), "km"), "length", "x")
    np.testing.assert_allclose(out, [1000.0, 2000.0])
    out = to_si(["1 km", "2 m"], "length", "x")
    np.testing.assert_allclose(out, [1000.0, 2.0])


@pytest.mark.parametrize("value", [3200, 3200.0, "3200", [1.0, 2.0], np.float64(3.0)])
def test_bare_numbers_are_refused_with_an_example(value):
    with pytest.raises(InputError, match=r"line\.length: expected a length such as '3\.2 km'"
                                         r".*with no unit"):
        to_si(value, "length", "line.length")


def test_wrong_dimension_names_field_and_dimension():
    with pytest.raises(InputError, match=r"duty\.flow: expected a volumetric flow .*\[length\]"):
        to_si("3 m", "flow", "duty.flow")


def test_unknown_unit_and_garbage():
    with pytest.raises(InputError, match="unknown unit 'furlongz'"):
        to_si("3 furlongz", "length", "x")
    with pytest.raises(InputError, match="expected a number with a unit"):
        to_si("long", "length", "x")
    with pytest.raises(InputError, match=r"x: expected a number with a unit .*\(dict\)"):
        to_si({"a": 1}, "length", "x")


def test_unknown_kind():
    with pytest.raises(InputError, match="unknown kind"):
        to_si("1 m", "lengthiness", "x")


def test_one_registry():
    assert Quantity(1, "m")._REGISTRY is ureg


@pytest.mark.reference
def test_format_si():  # 0.125 m3/s x 3600 s/h = 450 m3/h exactly
    assert format_si(0.125, "flow", "m^3/h") == "450 m³/h"
