"""Tests of pipeopt.units: parsing user input to SI at the edge."""

import numpy as np
import pint
import pytest

from pipeopt.errors import InputError
from pipeopt.units import Quantity, display, format_si, to_si, ureg


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
@pytest.mark.reference
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


@pytest.mark.reference
def test_emission_factor_kind():
    # 1 g = 1e-3 kg, 1 t = 1000 kg, 1 MWh = 1000 kWh (SI brochure); 1 lb = 0.45359237 kg
    # exactly (international yard and pound, 1959; NIST SP 811 Appendix B.8)
    assert to_si("250 g/kWh", "emission_factor", "carbon.grid_factor") == pytest.approx(
        0.25, rel=1e-12)
    assert to_si("0.4 t/MWh", "emission_factor", "f") == pytest.approx(0.4, rel=1e-12)
    assert to_si("1 lb/kWh", "emission_factor", "f") == pytest.approx(0.45359237, rel=1e-12)
    with pytest.raises(InputError, match="expected an emission factor"):
        to_si("0.25 kg", "emission_factor", "carbon.grid_factor")


# ------------------------------------------------------------------------------------------
# customary units against their exact definitions, written out here (NIST SP 811 (2008),
# Appendix B.8 and B.9; the international yard and pound agreement of 1959: 1 yd = 0.9144 m,
# 1 lb = 0.45359237 kg; standard gravity 9.80665 m/s^2 (3rd CGPM, 1901); the US gallon is
# 231 in^3; the imperial gallon is 4.54609 L (UK Weights and Measures Act 1985))
# ------------------------------------------------------------------------------------------
INCH = 0.0254                 # m, exact
FOOT = 12 * INCH              # 0.3048 m
POUND = 0.45359237            # kg, exact
G_N = 9.80665                 # m/s^2, exact
POUND_FORCE = POUND * G_N     # N
US_GALLON = 231 * INCH ** 3   # 3.785411784e-3 m^3


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kind", "expected"), [
    ("1 in", "roughness", INCH), ("1 ft", "length", FOOT), ("1 yd", "length", 3 * FOOT),
    ("1 mi", "length", 5280 * FOOT), ("1 mi", "length", 1609.344),  # SP 811 B.9 (exact)
    ("100 ft", "head", 30.48), ("48 in", "diameter", 1.2192),
])
def test_customary_lengths_are_the_1959_definitions(text, kind, expected):
    assert to_si(text, kind, "f") == pytest.approx(expected, rel=1e-14)


@pytest.mark.reference
def test_customary_flows_from_the_gallon_and_foot():
    assert US_GALLON == pytest.approx(3.785411784e-3, rel=1e-15)  # SP 811 B.8, exact
    for text, expected in [
        ("1 gal/min", US_GALLON / 60),                  # 6.309020e-05 m^3/s (SP 811 B.9)
        ("1 Mgal/d", 1e6 * US_GALLON / 86400),          # 4.381264e-02 m^3/s (SP 811 B.9)
        ("1 ft^3/s", FOOT ** 3),                        # 2.831685e-02 m^3/s (SP 811 B.9)
        ("1 imperial_gallon/min", 4.54609e-3 / 60),
        ("1 L/s", 1e-3),
    ]:
        assert to_si(text, "flow", "f") == pytest.approx(expected, rel=1e-14), text


@pytest.mark.reference
def test_pressures_and_stresses_from_the_pound_force():
    psi = POUND_FORCE / INCH ** 2                   # 6.894757e3 Pa (SP 811 B.8)
    assert psi == pytest.approx(6894.757, abs=5e-4)
    assert to_si("1 psi", "pressure", "f") == pytest.approx(psi, rel=1e-14)
    assert to_si("150 psi", "pressure", "f") == pytest.approx(150 * psi, rel=1e-14)
    assert to_si("20 ksi", "stress", "f") == pytest.approx(20e3 * psi, rel=1e-14)
    assert to_si("29000 ksi", "modulus", "f") == pytest.approx(29e6 * psi, rel=1e-14)
    # the technical atmosphere, 1 kgf/cm^2 = 9.80665e4 Pa exactly (SP 811 B.8)
    assert to_si("1 kgf/cm^2", "pressure", "f") == pytest.approx(98066.5, rel=1e-14)
    assert to_si("250 kPa", "pressure", "f") == pytest.approx(2.5e5, rel=1e-14)


@pytest.mark.reference
def test_horsepower_is_550_foot_pounds_force_per_second():
    hp = 550 * FOOT * POUND_FORCE                   # 7.456999e2 W (SP 811 B.8)
    assert hp == pytest.approx(745.6999, abs=5e-5)
    assert to_si("1 hp", "power", "f") == pytest.approx(hp, rel=1e-14)
    assert to_si("250 hp", "power", "f") == pytest.approx(250 * hp, rel=1e-14)


@pytest.mark.reference
def test_densities_and_viscosities_in_customary_units():
    assert to_si("62.4 lb/ft^3", "density", "f") == pytest.approx(
        62.4 * POUND / FOOT ** 3, rel=1e-14)        # 1 lb/ft^3 = 1.601846e1 kg/m^3 (SP 811)
    assert POUND / FOOT ** 3 == pytest.approx(16.01846, abs=5e-6)
    # 1 P = 0.1 Pa s (CGS), so 1 cP = 1 mPa s; 1 lbf s/ft^2 = 4.788026e1 Pa s (SP 811 B.8)
    assert to_si("1.3 cP", "viscosity", "f") == pytest.approx(1.3e-3, rel=1e-14)
    assert to_si("1 P", "viscosity", "f") == pytest.approx(0.1, rel=1e-14)
    assert to_si("1 lbf*s/ft^2", "viscosity", "f") == pytest.approx(POUND_FORCE / FOOT ** 2,
                                                                     rel=1e-14)
    assert POUND_FORCE / FOOT ** 2 == pytest.approx(47.88026, abs=5e-6)
    assert to_si("20 lb/ft", "mass_per_length", "f") == pytest.approx(20 * POUND / FOOT,
                                                                      rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kelvin"), [
    # T/K = (t/degF + 459.67) * 5/9 and T/K = t/degC + 273.15 (SP 811 B.8, exact)
    ("32 degF", 273.15), ("212 degF", 373.15), ("-40 degF", 233.15), ("68 degF", 293.15),
    ("0 degC", 273.15), ("-40 degC", 233.15), ("491.67 degR", 273.15), ("300 K", 300.0),
])
def test_temperatures_from_fahrenheit_rankine_and_celsius(text, kelvin):
    assert to_si(text, "temperature", "f") == pytest.approx(kelvin, rel=1e-14)


@pytest.mark.reference
def test_times_and_yearly_rates_use_the_julian_year():
    # the Julian year is 365.25 d of 86 400 s (IAU; SP 811 B.8 "year (365 days)" differs);
    # the package stores roughness growth per year: 1 mm/yr is 1e-3 m per year
    assert to_si("1 yr", "time", "f") == pytest.approx(365.25 * 86400, rel=1e-14)
    assert to_si("2 h", "time", "f") == pytest.approx(7200.0, rel=1e-14)
    assert to_si("3 d", "time", "f") == pytest.approx(3 * 86400.0, rel=1e-14)
    assert to_si("0.05 mm/yr", "aging_rate", "f") == pytest.approx(5e-5, rel=1e-12)
    assert to_si("0.001 in/yr", "aging_rate", "f") == pytest.approx(1e-3 * INCH, rel=1e-12)
    assert to_si("1 mm/d", "aging_rate", "f") == pytest.approx(365.25e-3, rel=1e-12)


@pytest.mark.reference
def test_velocities_in_customary_units():
    assert to_si("5 ft/s", "velocity", "f") == pytest.approx(5 * FOOT, rel=1e-14)
    assert to_si("1 mph", "velocity", "f") == pytest.approx(5280 * FOOT / 3600, rel=1e-14)
    assert to_si("3.6 km/h", "velocity", "f") == pytest.approx(1.0, rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("value", "kind", "shown"), [
    # SI prefixes (SI brochure), 1 bar = 1e5 Pa and 1 h = 3600 s (accepted non-SI units)
    (0.125, "flow", (450.0, "m³/h")), (4600.0, "length", (4.6, "km")),
    (0.05, "length", (50.0, "mm")), (12.5, "length", (12.5, "m")),
    (1.6e6, "pressure", (16.0, "bar")), (1.0e-3, "viscosity", (1.0, "mPa·s")),
    (2e-5, "aging_rate", (0.02, "mm/yr")), (1.7e11, "modulus", (170.0, "GPa")),
    (7200.0, "time", (2.0, "h")), (0.3, "diameter", (300.0, "mm")),
    (75e3, "power", (75.0, "kW")), (288.15, "temperature", (15.0, "°C")),
])
def test_display_units_are_the_prefixed_units(value, kind, shown):
    got, label = display(value, kind)
    assert label == shown[1]
    assert got == pytest.approx(shown[0], rel=1e-12)
