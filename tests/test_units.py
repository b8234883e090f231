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


# ------------------------------------------------------------------------------------------
# bounded parsing: what pint never sees
# ------------------------------------------------------------------------------------------
@pytest.mark.parametrize(("text", "kind", "expected"), [   # exact unit definitions (common)
    ("10 m^(3)/h", "flow", 10 / 3600), ("10 m³/h", "flow", 10 / 3600),
    ("998 kg*m^-3", "density", 998.0), ("998 kg/m**3", "density", 998.0),
    ("1.0 mPa s", "viscosity", 1e-3), ("1.0 mPa·s", "viscosity", 1e-3),
    ("5 °C", "temperature", 278.15), ("1 (m/s)^2/(m/s)", "velocity", 1.0),
    ("3 1/yr * m", "aging_rate", 3.0),
])
def test_ordinary_units_still_parse(text, kind, expected):
    assert to_si(text, kind, "f") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("text", "match"), [     # none of these can make pint work for long
    ("1 m^2^2", "never another exponent"),
    ("1 m**2**3", "never another exponent"),
    ("1 m^(2^9)", "is not a number with a unit"),
    ("1 m^999", "numbers in a unit only as exponents"),
    ("2 km/0", "numbers in a unit only as exponents"),
    ("3 m/(2)", "numbers in a unit only as exponents"),
    ("1 m * 1000", "numbers in a unit only as exponents"),
    ("1 ((((m))))", "parentheses nested deeper than 3"),
    ("1 (m", "unbalanced parentheses"),
    ("1 m)", "unbalanced parentheses"),
    ("1 m; import os", "is not a number with a unit"),
    ("1 " + "m*" * 60 + "m", "a text of 123 characters"),
])
def test_unit_texts_outside_the_grammar_are_refused(text, match):
    with pytest.raises(InputError, match=match):
        to_si(text, "length", "f")


def test_towers_of_powers_are_refused_instantly():
    # pint would evaluate 2**2**2**... as an exact integer: minutes and gigabytes; so the
    # check runs in its own process with a deadline
    import subprocess
    import sys

    code = ("import time\nfrom pipeopt.errors import InputError\nfrom pipeopt.units import to_si\n"
            "t0 = time.perf_counter()\nfor k in range(2, 200):\n    try:\n"
            "        to_si('1 m' + '**2' * k, 'length', 'f')\n    except InputError as e:\n"
            "        assert 'another exponent' in str(e) or 'at most 100' in str(e), e\n"
            "    else:\n"
            "        raise SystemExit('accepted')\nprint(time.perf_counter() - t0)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert float(proc.stdout) < 2.0


def test_magnitudes_are_bounded():
    with pytest.raises(InputError, match=r"f: 1e13 m is beyond the accepted magnitude"):
        to_si("1e13 m", "length", "f")
    with pytest.raises(InputError, match="beyond the accepted magnitude"):
        to_si("-2e12 Pa", "pressure", "f")
    assert to_si("1e13 m", "length", "f", limit=None) == 1e13


@pytest.mark.parametrize(("text", "right"), [("15 C", "degC"), ("15 deg C", "degC"),
                                             ("59 F", "degF"), ("15 c", "degC")])
def test_a_letter_for_a_temperature_unit_says_how_to_write_it(text, right):
    # pint reads C as the coulomb and F as the farad; the message says what to write instead
    with pytest.raises(InputError, match=rf"fluid\.temperature: '{text}': write {right}"):
        to_si(text, "temperature", "fluid.temperature")
    assert to_si("15 degC", "temperature", "fluid.temperature") == pytest.approx(288.15)


def test_emission_factor_kind():
    assert to_si("250 g/kWh", "emission_factor", "carbon.grid_factor") == pytest.approx(0.25)
    with pytest.raises(InputError, match="expected an emission factor"):
        to_si("0.25 kg", "emission_factor", "carbon.grid_factor")
