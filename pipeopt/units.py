"""Units at the edge: one pint registry for the package, and parsers from user input to SI.

Everything below this module works on SI floats and arrays. User input (a string such as
``"450 m^3/h"``, ``"2.5 km"``, ``"15 degC"``, ``"0.02 mm/yr"``, or a :class:`pint.Quantity`) is
parsed once here, checked for its dimension and converted to the SI unit of its *kind*.

A bare number for a dimensional input is refused: it is the most common source of a silent
factor-of-1000 error in a study (metres versus millimetres). The message shows how to write it.

Parsing is bounded before pint sees the text: at most :data:`MAX_TEXT` characters; a unit is
names (``m``, ``degC``, ``mPa``), ``*``, ``/``, parentheses and exponents that are plain numbers
of at most two digits (``m^3``, ``m**-1``, ``m^(0.5)``), never an exponent of an exponent, and
numbers nowhere else but a leading ``1/``. A value whose SI magnitude exceeds
:data:`MAX_MAGNITUDE` is refused.

Examples
--------
>>> to_si("450 m^3/h", "flow", "duty.flow")
0.125
>>> to_si("15 degC", "temperature", "fluid.temperature")
288.15
>>> round(to_si("0.02 mm/yr", "aging_rate", "material.aging"), 9)
2e-05
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import InputError

if TYPE_CHECKING:
    import pint

# ureg and Quantity come from __getattr__ (created on first use)
__all__ = ["ureg", "Quantity", "KINDS", "DISPLAY_UNITS", "MAX_TEXT",  # noqa: F822
           "MAX_MAGNITUDE", "to_si", "parse_quantity", "format_si", "display"]

#: Longest text accepted for a quantity such as ``"450 m^3/h"`` [characters].
MAX_TEXT = 100
#: Largest magnitude accepted for a dimensional input, in its SI unit.
MAX_MAGNITUDE = 1e12



def _pint() -> Any:
    """The pint module, imported on first use without pint's optional dask support.

    When it is first imported, pint imports ``dask.base`` if dask is installed (0.2-0.4 s of
    every command on the development machine), for Quantities wrapping dask arrays, which this
    package never makes. So unless dask is imported already, pint's first import runs with
    dask marked absent in :data:`sys.modules`; the mark is removed at once, and dask itself
    stays importable (the Monte Carlo's dask back end imports it as usual).
    """
    import sys

    if "pint" in sys.modules:
        return sys.modules["pint"]
    hide = "dask" not in sys.modules
    if hide:
        sys.modules["dask"] = None  # type: ignore[assignment]  # find_spec then says: absent
    try:
        import pint
    finally:
        if hide and "dask" in sys.modules and sys.modules["dask"] is None:
            del sys.modules["dask"]
    return pint


@functools.lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """pint's default registry, parsed once and then read from pint's disk cache.

    Parsing pint's definition file takes about 0.2 s; pint keeps the parsed definitions in the
    user's cache folder (``cache_folder=":auto:"``) keyed by the file's content, so later
    starts read them back in a few milliseconds. Where the cache cannot be used (a read-only
    home, a damaged cache file) the definitions are parsed as usual.
    """
    pint = _pint()  # imported on first use: a study file with no unit to parse never loads it
    try:
        reg = pint.UnitRegistry(cache_folder=":auto:")
    except Exception:  # noqa: BLE001 - the cache is an optimisation, never a failure
        reg = pint.UnitRegistry()
    reg.formatter.default_format = "~P"
    # A year is a Julian year (365.25 d) in pint; rates per year in this package use it.
    return reg


def __getattr__(name: str) -> Any:
    """``ureg`` (the package's one unit registry: use it, not a registry of your own, when
    passing Quantities) and ``Quantity``, created on first use (PEP 562)."""
    if name == "ureg":
        return registry()
    if name == "Quantity":
        return registry().Quantity
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


@dataclass(frozen=True)
class Kind:
    """A physical kind of input: its pint dimensionality, the SI unit used inside, an example."""

    name: str
    si_unit: str
    example: str
    description: str


#: The kinds of dimensional input, the SI unit each is stored in, and an example for messages.
#: ``aging_rate`` (roughness growth) is stored per *year*, not per second: study years are the
#: time axis of every model below this layer; ``emission_factor`` is stored in kg per kWh, the
#: unit of the yearly energy it multiplies.
KINDS: dict[str, Kind] = {
    k.name: k
    for k in [
        Kind("length", "m", "3.2 km", "a length"),
        Kind("diameter", "m", "0.3 m", "a diameter"),
        Kind("roughness", "m", "0.045 mm", "a roughness height"),
        Kind("head", "m", "24 m", "a head (height of liquid)"),
        Kind("flow", "m**3/s", "380 m^3/h", "a volumetric flow"),
        Kind("velocity", "m/s", "1.5 m/s", "a velocity"),
        Kind("temperature", "K", "15 degC", "a temperature"),
        Kind("pressure", "Pa", "10 bar", "a pressure"),
        Kind("density", "kg/m**3", "998 kg/m^3", "a density"),
        Kind("viscosity", "Pa*s", "1.0 mPa*s", "a dynamic viscosity"),
        Kind("power", "W", "75 kW", "a power"),
        Kind("aging_rate", "m/year", "0.02 mm/yr", "a roughness growth rate"),
        Kind("modulus", "Pa", "170 GPa", "an elastic modulus"),
        Kind("stress", "Pa", "140 MPa", "a stress"),
        Kind("mass_per_length", "kg/m", "45 kg/m", "a mass per length"),
        Kind("time", "s", "2 h", "a time"),
        Kind("emission_factor", "kg/kWh", "0.25 kg/kWh",
             "an emission factor (mass of CO2e per energy)"),
    ]
}

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")

# the tokens of a unit: a name, an exponent (a plain number of at most two digits), superscript
# digits, an operator or parenthesis, a leading "1" of "1/h", spaces
_UNIT_TOKEN = re.compile(r"""
    (?P<space>\s+)
  | (?P<name>[°%]?[^\W\d]\w*|%|°)
  | (?P<power>(?:\^|\*\*)\s*(?:\(\s*[-+]?\d{1,2}(?:\.\d{1,3})?\s*\)|[-+]?\d{1,2}(?:\.\d{1,3})?))
  | (?P<sup>[⁻]?[⁰¹²³⁴⁵⁶⁷⁸⁹]{1,2})
  | (?P<op>[*/·⋅.])
  | (?P<open>\()
  | (?P<close>\))
  | (?P<one>1(?=\s*/))
""", re.VERBOSE)
_MAX_PARENS = 3


def _check_unit(unit: str, value: str, field: str) -> None:
    """Refuse a unit text that pint should not evaluate (towers of powers, numbers, junk)."""
    rule = ("a unit is names, '*', '/', parentheses and exponents that are plain numbers of at "
            "most two digits, such as 'm^3/h'")
    pos, depth, prev = 0, 0, ""
    while pos < len(unit):
        m = _UNIT_TOKEN.match(unit, pos)
        if m is None and unit[pos].isdigit():
            raise InputError(f"{field}: {value!r}: numbers in a unit only as exponents ({rule})")
        if m is None:
            raise InputError(f"{field}: {value!r} is not a number with a unit ({rule})")
        kind = m.lastgroup
        if kind == "one" and (pos > 0 or prev):
            raise InputError(f"{field}: {value!r}: numbers in a unit only as exponents ({rule})")
        if kind in ("power", "sup"):
            if prev not in ("name", "close"):
                raise InputError(f"{field}: {value!r}: an exponent must follow a unit name or a "
                                 f"parenthesis, never another exponent ({rule})")
        elif kind == "open":
            depth += 1
            if depth > _MAX_PARENS:
                raise InputError(f"{field}: {value!r}: parentheses nested deeper than "
                                 f"{_MAX_PARENS} levels")
        elif kind == "close":
            depth -= 1
            if depth < 0:
                raise InputError(f"{field}: {value!r}: unbalanced parentheses")
        if kind != "space":
            prev = kind
        pos = m.end()
    if depth:
        raise InputError(f"{field}: {value!r}: unbalanced parentheses")


def _pint_errors():
    return _pint().errors


def parse_quantity(value: Any, field: str) -> pint.Quantity:
    """Turn a string or Quantity into a :class:`pint.Quantity` of this package's registry.

    Strings are split into a leading number and a unit so that offset temperatures
    (``"15 degC"``) parse correctly. Quantities of another registry are re-created here.

    Raises
    ------
    InputError
        When the value is not a Quantity or a string with a number and a unit.
    """
    pint = _pint()
    ureg = registry()
    if isinstance(value, pint.Quantity):
        if value._REGISTRY is ureg:
            return value
        return ureg.Quantity(value.magnitude, str(value.units))
    if isinstance(value, str):
        if len(value) > MAX_TEXT:
            raise InputError(f"{field}: expected a number with a unit such as '3.2 km'; got a "
                             f"text of {len(value)} characters (at most {MAX_TEXT})")
        m = _NUMBER.match(value)
        if m is None:
            raise InputError(f"{field}: expected a number with a unit such as '3.2 km'; "
                             f"got {value!r}")
        number, unit = m.groups()
        _check_unit(unit, value, field)
        try:
            return ureg.Quantity(float(number), unit or "dimensionless")
        except Exception as exc:  # noqa: BLE001 - any failure of pint on a user's text
            raise InputError(f"{field}: unknown unit {unit!r} in {value!r}") from exc
    raise InputError(f"{field}: expected a number with a unit such as '3.2 km'; got "
                     f"{value!r} ({type(value).__name__})")


def _bare_number(value: Any) -> bool:
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float, np.integer, np.floating)):
        return True
    if isinstance(value, (list, tuple, np.ndarray)):
        arr = np.asarray(value, dtype=object).ravel()
        return arr.size > 0 and all(isinstance(v, (int, float, np.integer, np.floating))
                                    and not isinstance(v, bool) for v in arr)
    return False


#: Temperature units written as a letter alone (a coulomb, a farad to pint) or with a space.
_TEMPERATURE_LETTERS = {"c": "degC", "deg c": "degC", "f": "degF", "deg f": "degF"}


def _temperature_words(value: str, field: str) -> None:
    """Answer ``"15 C"`` (pint: 15 coulomb) with how to write degrees Celsius."""
    m = _NUMBER.match(value)
    unit = "" if m is None else " ".join(m.group(2).split()).lower()
    if unit in _TEMPERATURE_LETTERS:
        right = _TEMPERATURE_LETTERS[unit]
        scale = "Celsius" if right == "degC" else "Fahrenheit"
        raise InputError(f"{field}: {value!r}: write {right} for degrees {scale}, e.g. "
                         f"'{m.group(1)} {right}' ("
                         f"{'C is the coulomb' if right == 'degC' else 'F is the farad'})")


def to_si(value: Any, kind: str, field: str,
          limit: float | None = MAX_MAGNITUDE) -> float | np.ndarray:
    """Convert a user's dimensional input to an SI float (or array).

    Parameters
    ----------
    value : str, pint.Quantity, or list of those
        The user's input, e.g. ``"2.5 km"`` or ``Quantity(2.5, "km")``. A list or array
        Quantity gives an array.
    kind : str
        One of :data:`KINDS` (``"length"``, ``"flow"``, ``"temperature"``, ...).
    field : str
        The name of the input, used in error messages (``"line.length"``).
    limit : float or None
        Largest magnitude accepted, in the SI unit of ``kind`` (default :data:`MAX_MAGNITUDE`;
        None for no bound).

    Returns
    -------
    float or numpy.ndarray
        The value in the SI unit of ``kind`` (see :data:`KINDS`).

    Raises
    ------
    InputError
        For a bare number, an unknown unit, a unit of the wrong dimension, a text longer than
        :data:`MAX_TEXT`, or a magnitude beyond ``limit``.
    """
    try:
        k = KINDS[kind]
    except KeyError:
        raise InputError(f"unknown kind of quantity {kind!r}; known: {sorted(KINDS)}") from None
    if _bare_number(value):
        shown = value if not isinstance(value, np.ndarray) else value.tolist()
        raise InputError(f"{field}: expected {k.description} such as '{k.example}', got "
                         f"{shown!r} with no unit")
    if isinstance(value, (list, tuple)):
        return np.array([to_si(v, kind, f"{field}[{i}]", limit) for i, v in enumerate(value)])
    if isinstance(value, str) and (m := _NUMBER.match(value)) is not None and not m.group(2):
        raise InputError(f"{field}: expected {k.description} such as '{k.example}', got "
                         f"{value!r} with no unit")
    if kind == "temperature" and isinstance(value, str):
        _temperature_words(value, field)
    q = parse_quantity(value, field)
    try:
        out = q.to(k.si_unit).magnitude
    except _pint_errors().DimensionalityError:
        raise InputError(f"{field}: expected {k.description} such as '{k.example}', got "
                         f"{value!s} (dimension {q.dimensionality})") from None
    except (OverflowError, ZeroDivisionError, ValueError) as exc:
        raise InputError(f"{field}: {value!s} cannot be converted to {k.si_unit} "
                         f"({exc})") from None
    out = np.asarray(out, dtype=float)
    if not np.all(np.isfinite(out)):
        raise InputError(f"{field}: expected a finite value, got {value!s}")
    if limit is not None and np.any(np.abs(out) > limit):
        raise InputError(f"{field}: {value!s} is beyond the accepted magnitude ({limit:g} "
                         f"{k.si_unit})")
    return float(out) if out.ndim == 0 else out


def format_si(value: float, kind: str, unit: str, digits: int = 4) -> str:
    """Format an SI value of ``kind`` in a display unit, e.g. ``format_si(0.125, "flow", "m^3/h")``.

    >>> format_si(0.125, "flow", "m^3/h")
    '450 m³/h'
    """
    q = registry().Quantity(value, KINDS[kind].si_unit).to(unit)
    return f"{q.magnitude:.{digits}g} {q.units:~P}"


#: The unit reports show each kind in: (pint unit, label). Lengths are shown in km from 1 km
#: up and in mm below 0.1 m (a liner, a wall), in m between.
DISPLAY_UNITS: dict[str, tuple[str, str]] = {
    "length": ("m", "m"), "diameter": ("mm", "mm"), "roughness": ("mm", "mm"),
    "head": ("m", "m"), "flow": ("m**3/h", "m³/h"), "velocity": ("m/s", "m/s"),
    "temperature": ("degC", "°C"), "pressure": ("bar", "bar"),
    "density": ("kg/m**3", "kg/m³"), "viscosity": ("mPa*s", "mPa·s"), "power": ("kW", "kW"),
    "aging_rate": ("mm/year", "mm/yr"), "modulus": ("GPa", "GPa"), "stress": ("MPa", "MPa"),
    "mass_per_length": ("kg/m", "kg/m"), "time": ("h", "h"),
    "emission_factor": ("kg/kWh", "kg/kWh"),
}


def display(value: float, kind: str) -> tuple[float, str]:
    """An SI value of ``kind`` in the unit reports show it in (:data:`DISPLAY_UNITS`).

    >>> display(0.125, "flow")
    (450.0, 'm³/h')
    >>> display(4600.0, "length")
    (4.6, 'km')
    >>> display(288.15, "temperature")
    (15.0, '°C')
    """
    unit, label = DISPLAY_UNITS[kind]
    if kind == "length":
        size = abs(float(value))
        unit, label = (("km", "km") if size >= 1000.0 else ("mm", "mm") if 0 < size < 0.1
                       else ("m", "m"))
    q = registry().Quantity(float(value), KINDS[kind].si_unit).to(unit)
    return float(round(q.magnitude, 12)), label
