"""Tests of pipeopt.studyfile: bounded reading, standard input, byte-order mark, typed readers."""

from __future__ import annotations

import io
import sys
from fractions import Fraction
from pathlib import Path

import pytest

from pipeopt import studyfile
from pipeopt.studyfile import Section, StudyFileError, read_study, read_toml

DATA = Path(__file__).parent / "data"


def test_a_utf8_byte_order_mark_is_accepted(tmp_path):
    f = tmp_path / "bom.toml"
    f.write_bytes(b"\xef\xbb\xbf[study]\nname = \"x\"\n")    # what some editors write
    assert read_toml(f) == {"study": {"name": "x"}}


def test_dash_reads_standard_input(monkeypatch, tmp_path):
    text = (DATA / "marrowin_flats.toml").read_bytes()
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(text)))
    monkeypatch.chdir(tmp_path)
    mapping, base, inputs = read_study("-")
    assert mapping["study"]["name"].startswith("Marrowin")
    assert base == tmp_path and inputs == []


def test_read_study_lists_the_files_it_reads(tmp_path):
    f = tmp_path / "s.toml"
    f.write_text('[catalog]\nsizes = "my/sizes.csv"\nmaterials = "m.csv"\n')
    mapping, base, inputs = read_study(f)
    assert base == tmp_path
    assert inputs == [f, tmp_path / "my" / "sizes.csv", tmp_path / "m.csv"]


def test_a_huge_file_is_refused_unread(tmp_path, monkeypatch):
    monkeypatch.setattr(studyfile, "MAX_FILE_BYTES", 1000)
    f = tmp_path / "big.toml"
    f.write_text("# " + "x" * 2000 + "\n")
    with pytest.raises(StudyFileError, match="larger than 0 MB; a study file is a few kB"):
        read_toml(f)


@pytest.mark.parametrize(("text", "match"), [
    ("a = " + "[" * 4000 + "]" * 4000, r"line 1, key a: arrays or inline tables nested deeper "
                                       r"than 16 levels"),
    ("[t]\nb = " + "{c = " * 3000 + "1" + "}" * 3000, r"line 2, key t.b: arrays or inline"),
    ("[t]\nb = " + "[" * 17 + "]" * 17, r"t.b\[0\](\[0\]){14}: tables and arrays nested deeper"),
    ("a" + ".a" * 20 + " = 1", r"^a(\.a){16}: tables and arrays nested deeper than 16"),
    ("x = 9223372036854775808", r"^x: integers are 64-bit in TOML"),
    ("x = -9223372036854775809", r"^x: integers are 64-bit in TOML"),
    ("x = 1" + "0" * 400, r"^x: integers are 64-bit .*an integer of about 401 digits"),
    ("x = 1" + "0" * 6000, r"a number with thousands of digits"),
])
def test_nesting_and_integers_are_bounded(tmp_path, text, match):
    f = tmp_path / "s.toml"
    f.write_text(text)
    with pytest.raises(StudyFileError, match=match) as info:
        read_toml(f)
    assert len(str(info.value)) < 200


@pytest.mark.reference
def test_the_bounds_themselves_are_accepted(tmp_path):
    # TOML v1.0.0, section "Integer": 64-bit signed, -2^63 to 2^63 - 1
    # (docs/references.md#files-text-and-inputs-at-the-edge-outputs-report-studyfile-units)
    f = tmp_path / "s.toml"
    f.write_text("x = 9223372036854775807\ny = -9223372036854775808\n"
                 "z = " + "[" * 15 + "1" + "]" * 15 + "\n")
    data = read_toml(f)
    assert data["x"] == 2**63 - 1 and data["y"] == -(2**63)


def test_plain_numbers_are_bounded_unless_the_key_allows_more():
    sec = Section({"a": 1e13, "b": 10**30, "c": 5e11, "d": 1e15}, "s", ("a", "b", "c", "d"))
    with pytest.raises(StudyFileError, match=r"s\.a: must be at most 1e\+12 in magnitude"):
        sec.number("a")
    with pytest.raises(StudyFileError, match=r"s\.b: must be at most 1e\+12 in magnitude"):
        sec.number("b", integer=True)
    assert sec.number("c") == 5e11
    assert sec.number("d", limit=1e16) == 1e15


def test_quantities_are_bounded():
    sec = Section({"l": "2e12 m", "n": 10**30, "q": "3 km"}, "line", ("l", "n", "q"))
    with pytest.raises(StudyFileError, match=r"line\.l: 2e12 m is beyond the accepted "
                                             r"magnitude \(1e\+12 m\)"):
        sec.quantity("l", "length")
    with pytest.raises(StudyFileError, match=r"line\.n: expected a length .* with no unit"):
        sec.quantity("n", "length")
    assert sec.quantity("q", "length") == 3000.0


def test_texts_are_bounded_and_messages_short():
    long = "x" * 5000
    sec = Section({"name": long, "kind": long, "v": long}, "study", ("name", "kind", "v"))
    with pytest.raises(StudyFileError, match=r"study\.name: at most 1000 characters; got a "
                                             r"text of 5000"):
        sec.text("name")
    for call in (lambda: sec.text("kind", choices=("water", "custom")),
                 lambda: sec.number("v")):
        with pytest.raises(StudyFileError) as info:
            call()
        assert len(str(info.value)) < 200
    with pytest.raises(StudyFileError) as info:
        Section({long: 1}, "study", ("name",))
    assert len(str(info.value)) < 200


def test_keys_with_control_characters_are_shown_escaped():
    with pytest.raises(StudyFileError, match=r"study\.'\\x1b\[2J': unknown key"):
        Section({"\x1b[2J": 1}, "study", ("name",))


def test_a_frozen_study_refuses_changes_and_replace_builds_another():
    from pipeopt.inputs import StudyInfo

    class Toy(studyfile.FrozenStudy):
        def __init__(self, size: int, *, name: str = "toy") -> None:
            self._args = {"size": size, "name": name}
            self.size = size
            self.info = StudyInfo(name, "EUR")
            self._frozen = True

    toy = Toy(3)
    with pytest.raises(AttributeError, match=r"a Toy cannot be changed after it is built "
                                             r"\(size\); use study\.replace\(size=\.\.\.\)"):
        toy.size = 4
    other = toy.replace(name="other")
    assert (other.size, other.name, other.currency, other.illustrative) == (3, "other", "EUR",
                                                                           False)
    assert toy.name == "toy"
    with pytest.raises(ValueError, match=r"replace: unknown argument 'colour'; arguments: "
                                         r"name, size"):
        toy.replace(colour="red")


# ------------------------------------------------------------------------------------------
# units of study-file keys against their exact definitions (docs/references.md#units): NIST
# SP 811 (2008), Appendix B.8/B.9, and the BIPM SI Brochure, 9th ed. (2019). Every expected
# value is built here in exact rational arithmetic from the defining constants.
# ------------------------------------------------------------------------------------------
INCH = Fraction("0.0254")                    # 1 in = 0.0254 m exactly (NIST SP 811, B.9)
FOOT = 12 * INCH                             # 1 ft = 12 in = 0.3048 m
POUND = Fraction("0.45359237")               # 1 lb (avoirdupois) = 0.45359237 kg exactly
G_N = Fraction("9.80665")                    # standard acceleration of gravity (CGPM 1901)
US_GALLON = 231 * INCH**3                    # 1 US gal = 231 in^3 exactly (NIST SP 811, B.9)


def _si(value: str, kind: str) -> float:
    return Section({"k": value}, "s", ("k",)).quantity("k", kind, positive=False)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    ("12 in", 12 * INCH),                     # NIST SP 811: 0.3048 m
    ("1 ft", FOOT),
    ("1 yd", 3 * FOOT),                       # 0.9144 m
    ("1 mi", 5280 * FOOT),                    # statute mile, 1609.344 m
    ("2.5 km", Fraction(2500)),               # SI prefix kilo = 1e3 (SI Brochure)
])
def test_lengths_are_read_to_the_exact_definitions(text, exact):
    assert _si(text, "length") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    ("1 gal/min", US_GALLON / 60),            # US gal = 231 in^3 (NIST SP 811): 6.309e-5
    ("1 ft^3/s", FOOT**3),                    # 0.028316846592 m^3/s
    ("1 L/s", Fraction(1, 1000)),             # 1 L = 1 dm^3 (CGPM 1964)
    ("3600 m^3/h", Fraction(1)),              # 1 h = 3600 s
    ("1 Mgal/day", 10**6 * US_GALLON / 86400),
])
def test_flows_are_read_to_the_exact_definitions(text, exact):
    assert _si(text, "flow") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    ("15 degC", Fraction("288.15")),          # T/K = t/degC + 273.15 (SI Brochure)
    ("0 degC", Fraction("273.15")),
    ("59 degF", (59 - 32) * Fraction(5, 9) + Fraction("273.15")),   # NIST SP 811, B.9: 288.15
    ("100 degF", (100 - 32) * Fraction(5, 9) + Fraction("273.15")),
])
def test_temperatures_are_read_as_kelvin(text, exact):
    assert _si(text, "temperature") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kind", "exact"), [
    ("1 bar", "pressure", Fraction(10**5)),                      # 1 bar = 1e5 Pa exactly
    ("1 atm", "pressure", Fraction(101325)),                     # standard atmosphere
    ("1 psi", "pressure", POUND * G_N / INCH**2),                # lbf/in^2 = 6894.757... Pa
    ("1 kgf/cm^2", "pressure", G_N * 10**4),                     # 98066.5 Pa
    ("1 ksi", "stress", 1000 * POUND * G_N / INCH**2),
    ("170 GPa", "modulus", Fraction(170 * 10**9)),
])
def test_pressures_are_read_to_the_exact_definitions(text, kind, exact):
    # NIST SP 811 (2008), B.8: bar, atmosphere, pound-force per square inch, kilogram-force
    assert _si(text, kind) == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact", "rel"), [
    # conventional heads of liquid, NIST SP 811 (2008) B.8, printed to 7 figures there:
    ("1 inHg", Fraction("3386.389"), 5e-7),  # inch of mercury, conventional: 3.386 389 E+03 Pa
    ("1 ftH2O", Fraction("2989.067"), 5e-7),  # foot of water, conventional: 2.989 067 E+03 Pa
])
def test_conventional_heads_of_liquid_as_printed_by_nist(text, exact, rel):
    assert _si(text, "pressure") == pytest.approx(float(exact), rel=rel, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kind", "exact"), [
    ("1 cP", "viscosity", Fraction(1, 1000)),           # 1 P = 0.1 Pa s (NIST SP 811, B.8)
    ("1.002 mPa*s", "viscosity", Fraction("0.001002")),
    ("62.4 lb/ft^3", "density", Fraction("62.4") * POUND / FOOT**3),
    ("1 hp", "power", 550 * FOOT * POUND * G_N),        # 550 ft lbf/s = 745.69987... W
    ("75 kW", "power", Fraction(75000)),
    ("1 day", "time", Fraction(86400)),
    ("2 h", "time", Fraction(7200)),
])
def test_fluid_and_power_keys_are_read_to_the_exact_definitions(text, kind, exact):
    assert _si(text, kind) == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kind", "exact"), [
    ("0.045 mm", "roughness", Fraction("0.045") / 1000),
    ("0.001 in", "roughness", INCH / 1000),
    ("0.02 mm/yr", "aging_rate", Fraction("0.02") / 1000),   # in m per year
    ("0.001 in/yr", "aging_rate", INCH / 1000),
    ("250 g/kWh", "emission_factor", Fraction(1, 4)),        # in kg/kWh
    ("1 lb/MWh", "emission_factor", POUND / 1000),
])
def test_roughness_aging_and_emission_keys(text, kind, exact):
    # NIST SP 811 (2008), B.9 (inch, pound); SI prefixes milli and mega (SI Brochure)
    assert _si(text, kind) == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
def test_a_study_file_in_us_customary_units_reads_to_si(tmp_path):
    # a [line] and a [[duty]] of an invented line, read from a file as the CLI reads it;
    # 5250 ft = 1600.2 m, 1500 gal/min = 1500 x 231 in^3/min, 60 degF = 288.705... K
    # (NIST SP 811 (2008), B.9: 1 ft = 0.3048 m, 1 US gal = 231 in^3 exactly)
    f = tmp_path / "s.toml"
    f.write_text('[line]\nlength = "5250 ft"\nstatic_head = "40 ft"\n'
                 '[[duty]]\nflow = "1500 gal/min"\n[fluid]\ntemperature = "60 degF"\n',
                 encoding="utf-8")
    data = read_toml(f)
    line = Section(data["line"], "line", ("length", "static_head"))
    duty = Section(data["duty"][0], "duty[0]", ("flow",))
    fluid = Section(data["fluid"], "fluid", ("temperature",))
    assert line.quantity("length", "length") == pytest.approx(1600.2, rel=1e-15)
    assert line.quantity("static_head", "head") == pytest.approx(float(40 * FOOT), rel=1e-15)
    assert duty.quantity("flow", "flow") == pytest.approx(float(1500 * US_GALLON / 60),
                                                          rel=1e-15)
    assert fluid.quantity("temperature", "temperature") == pytest.approx(
        float(28 * Fraction(5, 9) + Fraction("273.15")), rel=1e-15)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    ("1 ft/s", FOOT),                                # 0.3048 m/s
    ("1 mph", 5280 * FOOT / 3600),                   # 0.44704 m/s exactly (NIST SP 811, B.9)
    ("3.6 km/h", Fraction(1)),
])
def test_velocities_are_read_to_the_exact_definitions(text, exact):
    assert _si(text, "velocity") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    ("1 survey_foot", Fraction(1200, 3937)),         # U.S. survey foot (NIST SP 811, B.6)
    ("1 nmi", Fraction(1852)),                       # nautical mile, 1852 m exactly
    ("10 ft", 10 * FOOT),                            # a head of 3.048 m
])
def test_survey_and_nautical_lengths(text, exact):
    assert _si(text, "length") == pytest.approx(float(exact), rel=1e-15, abs=0)
    assert _si(text, "head") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kind", "exact"), [
    ("1 lb/ft", "mass_per_length", POUND / FOOT),    # 1.488164 kg/m (NIST SP 811, B.8)
    ("45 kg/m", "mass_per_length", Fraction(45)),
    ("1 g/cm^3", "density", Fraction(1000)),
])
def test_masses_per_length_and_densities(text, kind, exact):
    assert _si(text, kind) == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    # Btu_IT = 4.1868 J/g x 453.59237 g x 5/9 = 1055.05585262 J exactly (the IT calorie;
    # NIST SP 811 (2008), B.8: Btu_IT per hour 2.930 711 E-01 W)
    ("1 Btu_it/h", Fraction("4.1868") * Fraction("453.59237") * Fraction(5, 9) / 3600),
    ("1 metric_horsepower", 75 * G_N),               # 75 kgf m/s = 735.49875 W (NIST SP 811)
])
def test_thermal_and_metric_power_units(text, exact):
    assert _si(text, "power") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact"), [
    ("1 P", Fraction(1, 10)),                         # poise: 0.1 Pa s (NIST SP 811, B.8)
    ("1 lb/(ft*s)", POUND / FOOT),                    # 1.488164 Pa s
])
def test_viscosity_in_poise_and_pound_units(text, exact):
    assert _si(text, "viscosity") == pytest.approx(float(exact), rel=1e-15, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "exact", "rel"), [
    ("1 torr", Fraction(101325, 760), 1e-15),         # 1/760 of the standard atmosphere
    ("1 mmHg", Fraction("133.3224"), 5e-7),           # conventional: 1.333 224 E+02 Pa, NIST
    ("25 mbar", Fraction(2500), 1e-15),               # SP 811 (2008), B.8, printed to 7 figures
])
def test_pressures_of_mercury_and_millibar(text, exact, rel):
    assert _si(text, "pressure") == pytest.approx(float(exact), rel=rel, abs=0)


@pytest.mark.reference
def test_imperial_gallons_per_minute():
    # 1 imperial gallon = 4.54609 L exactly (UK Weights and Measures Act 1985; NIST SP 811, B.9)
    assert _si("1 imperial_gallon/min", "flow") == pytest.approx(
        float(Fraction("4.54609") / 1000 / 60), rel=1e-15, abs=0)
    assert _si("1 gal/min", "flow") < _si("1 imperial_gallon/min", "flow")   # 231 in^3 < 4.546 L


@pytest.mark.parametrize("word", ["Typical", "terrible"])
def test_a_wrong_word_for_a_material_aging_names_the_choices(word):
    # a word that is not "typical" gets the two forms the key takes, not a length example
    import tomllib
    from importlib import resources

    from pipeopt import SizingStudy
    from pipeopt.errors import InputError

    data = tomllib.loads(resources.files("pipeopt").joinpath("data", "demo_sizing.toml")
                         .read_text("utf-8"))
    data["material"][0]["aging"] = word
    with pytest.raises(InputError, match=r"material\[0\]\.aging: expected \"typical\".*"
                                         r"'0\.02 mm/yr'; got '" + word + "'"):
        SizingStudy.from_dict(data)
    data["material"][0]["aging"] = "typical"
    SizingStudy.from_dict(data)  # the word itself is accepted
