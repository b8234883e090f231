"""Fluid properties (physics layer): density, dynamic viscosity, vapour pressure, bulk modulus.

Water comes from the IAPWS formulations (IAPWS-95 for the equation of state, IAPWS R12-08 for
viscosity), computed by :mod:`pipeopt.water` over the liquid range of pumped lines (0.01-200 degC,
up to 500 bar) and by CoolProp outside it; any other CoolProp fluid or incompressible mixture
(glycol brines such as ``"INCOMP::MEG-30%"``) through :meth:`Fluid.coolprop`; a fluid the user
characterises with :class:`Fluid` directly. CoolProp is imported only when one of its fluids is
asked for: loading its fluid library takes seconds.

References
----------
.. [1] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for the Thermodynamic
   Properties of Ordinary Water Substance for General and Scientific Use.
.. [2] IAPWS R12-08, Release on the IAPWS Formulation 2008 for the Viscosity of Ordinary Water
   Substance, 2008.
.. [3] I. H. Bell, J. Wronski, S. Quoilin, V. Lemort, "Pure and pseudo-pure fluid thermophysical
   property evaluation and the open-source thermophysical property library CoolProp",
   Ind. Eng. Chem. Res. 53(6), 2498–2508, 2014. doi:10.1021/ie4033999
"""

from __future__ import annotations

import math
from typing import Any

from . import water as iapws
from .errors import FluidStateError, InputError
from .units import to_si

__all__ = ["Fluid"]

# CoolProp phase indices accepted as liquid: phase_liquid and phase_supercritical_liquid.
_LIQUID_PHASES = {"phase_liquid", "phase_supercritical_liquid"}


def _coolprop():
    import CoolProp.CoolProp as CP  # imported on first use: it takes a while to load

    return CP


class Fluid:
    """A liquid of constant properties along the line.

    Parameters
    ----------
    density : str or pint.Quantity
        Density, e.g. ``"998 kg/m^3"``.
    viscosity : str or pint.Quantity
        Dynamic viscosity, e.g. ``"1.0 mPa*s"``.
    vapour_pressure : str or pint.Quantity, optional
        Vapour pressure at the operating temperature, e.g. ``"2.3 kPa"`` (for NPSH).
    bulk_modulus : str or pint.Quantity, optional
        Isentropic bulk modulus, e.g. ``"2.19 GPa"`` (for wave speed).
    name : str, optional
        A label for reports.

    Attributes
    ----------
    density : float
        Density [kg/m³].
    viscosity : float
        Dynamic viscosity [Pa·s].
    vapour_pressure : float or None
        Vapour pressure [Pa], None where unknown.
    bulk_modulus : float or None
        Isentropic bulk modulus [Pa], None where unknown.
    temperature, pressure : float or None
        State the properties were evaluated at [K], [Pa], where known.
    source : str
        Where the properties came from.

    Examples
    --------
    >>> oil = Fluid(density="860 kg/m^3", viscosity="12 mPa*s", name="light oil")
    >>> oil.density, oil.viscosity
    (860.0, 0.012)
    >>> from pipeopt.errors import InputError
    >>> try:
    ...     Fluid(density=860, viscosity="12 mPa*s")
    ... except InputError as err:
    ...     print(err)
    fluid.density: expected a density such as '998 kg/m^3', got 860 with no unit
    """

    def __init__(self, density: Any, viscosity: Any, vapour_pressure: Any = None,
                 bulk_modulus: Any = None, name: str = "custom fluid") -> None:
        rho = to_si(density, "density", "fluid.density")
        mu = to_si(viscosity, "viscosity", "fluid.viscosity")
        pv = None if vapour_pressure is None else to_si(vapour_pressure, "pressure",
                                                        "fluid.vapour_pressure")
        k = None if bulk_modulus is None else to_si(bulk_modulus, "pressure",
                                                    "fluid.bulk_modulus")
        self._set(name, rho, mu, pv, k, None, None, "given by the user")

    def _set(self, name: str, density: float, viscosity: float, vapour_pressure: float | None,
             bulk_modulus: float | None, temperature: float | None, pressure: float | None,
             source: str) -> None:
        for field, value in (("density", density), ("viscosity", viscosity)):
            if not (isinstance(value, float) and math.isfinite(value) and value > 0):
                raise InputError(f"fluid.{field} must be a positive finite value; got {value!r}")
        for field, value in (("vapour_pressure", vapour_pressure),
                             ("bulk_modulus", bulk_modulus)):
            if value is not None and not (math.isfinite(value) and value >= 0):
                raise InputError(f"fluid.{field} must be >= 0; got {value!r}")
        self.name = name
        self.density = density
        self.viscosity = viscosity
        self.vapour_pressure = vapour_pressure
        self.bulk_modulus = bulk_modulus
        self.temperature = temperature
        self.pressure = pressure
        self.source = source

    @property
    def kinematic_viscosity(self) -> float:
        """Kinematic viscosity ν = μ / ρ [m²/s]."""
        return self.viscosity / self.density

    # ----------------------------------------------------------------------------------------
    @classmethod
    def water(cls, temperature: Any, pressure: Any = "1 atm") -> Fluid:
        """Liquid water from IAPWS-95 and IAPWS R12-08.

        Within :data:`pipeopt.water.T_MIN` to :data:`~pipeopt.water.T_MAX` (0.01-200 degC) and
        up to :data:`~pipeopt.water.P_MAX` (500 bar) the properties come from
        :mod:`pipeopt.water`; outside that range from CoolProp's implementation of the same
        formulations (the two agree to about 1e-13 in density and viscosity where both apply).

        Parameters
        ----------
        temperature : str or pint.Quantity
            Temperature, e.g. ``"15 degC"``.
        pressure : str or pint.Quantity, optional
            Absolute pressure, default ``"1 atm"``.

        Returns
        -------
        Fluid
            With density, viscosity, vapour pressure and bulk modulus at that state.

        Raises
        ------
        FluidStateError
            When water is not liquid at that state (e.g. 150 °C at 1 atm).

        Examples
        --------
        >>> w = Fluid.water("20 degC")
        >>> round(w.density, 4), round(w.viscosity * 1e3, 5)
        (998.2072, 1.0016)
        """
        t, p = cls._state(temperature, pressure)
        if not (iapws.T_MIN <= t <= iapws.T_MAX and p <= iapws.P_MAX):
            return cls._from_coolprop("Water", t, p, "water",
                                      "IAPWS-95 and IAPWS R12-08 via CoolProp")
        try:
            props = iapws.liquid_water_properties(t, p)
        except FluidStateError as exc:
            raise FluidStateError(f"fluid: {exc}") from None
        fluid = cls.__new__(cls)
        fluid._set("water", props["density"], props["viscosity"], props["saturation_pressure"],
                   props["bulk_modulus"], t, p, "IAPWS-95 and IAPWS R12-08")
        return fluid

    @classmethod
    def coolprop(cls, name: str, temperature: Any, pressure: Any = "1 atm") -> Fluid:
        """Any liquid CoolProp knows: a pure fluid or an incompressible mixture.

        Parameters
        ----------
        name : str
            A CoolProp fluid name, e.g. ``"Ethanol"`` or ``"INCOMP::MEG-30%"`` (30 % by mass
            ethylene glycol in water).
        temperature : str or pint.Quantity
            Temperature, e.g. ``"5 degC"``.
        pressure : str or pint.Quantity, optional
            Absolute pressure, default ``"1 atm"``.

        Returns
        -------
        Fluid

        Raises
        ------
        FluidStateError
            For an unknown fluid name, a state outside the fluid's correlation, or a state that
            is not liquid.

        Examples
        --------
        >>> brine = Fluid.coolprop("INCOMP::MEG-30%", "15 degC")
        >>> 1030 < brine.density < 1050
        True
        """
        if not isinstance(name, str) or not name.strip():
            raise InputError(f"fluid.name must be a CoolProp fluid name such as 'Water' or "
                             f"'INCOMP::MEG-30%'; got {name!r}")
        t, p = cls._state(temperature, pressure)
        return cls._from_coolprop(name.strip(), t, p, name.strip(), "CoolProp " + name.strip())

    @staticmethod
    def _state(temperature: Any, pressure: Any) -> tuple[float, float]:
        t = to_si(temperature, "temperature", "fluid.temperature")
        p = to_si(pressure, "pressure", "fluid.pressure")
        if not (isinstance(t, float) and isinstance(p, float)):
            raise InputError("fluid.temperature and fluid.pressure must be single values")
        if t <= 0 or p <= 0:
            raise InputError(f"fluid: temperature and pressure must be positive absolute "
                             f"values; got T = {t} K, p = {p} Pa")
        return t, p

    @classmethod
    def _from_coolprop(cls, cp_name: str, t: float, p: float, label: str,
                       source: str) -> Fluid:
        CP = _coolprop()
        incompressible = cp_name.upper().startswith("INCOMP::")
        try:
            rho = CP.PropsSI("D", "T", t, "P", p, cp_name)
            mu = CP.PropsSI("V", "T", t, "P", p, cp_name)
        except ValueError as exc:
            text = str(exc)
            if "not found" in text or "Initialize failed" in text:
                raise FluidStateError(f"fluid.name: CoolProp does not know the fluid "
                                      f"{cp_name!r} (for brines write e.g. "
                                      f"'INCOMP::MEG-30%')") from None
            raise FluidStateError(f"fluid: {cp_name} has no properties at "
                                  f"{t - 273.15:.2f} degC, {p / 1e5:.4g} bar: {text}") from None
        pv = k = None
        if not incompressible:
            phase = CP.PhaseSI("T", t, "P", p, cp_name)
            if "phase_" + phase not in _LIQUID_PHASES and phase not in _LIQUID_PHASES:
                raise FluidStateError(
                    f"fluid: {label} is not liquid at {t - 273.15:.2f} degC and "
                    f"{p / 1e5:.4g} bar (CoolProp phase: {phase}); raise the pressure or lower "
                    f"the temperature")
            try:
                pv = CP.PropsSI("P", "T", t, "Q", 0, cp_name)
            except ValueError:
                pv = None  # above the critical temperature there is no vapour pressure
            k = rho * CP.PropsSI("A", "T", t, "P", p, cp_name) ** 2
        fluid = cls.__new__(cls)
        fluid._set(label, float(rho), float(mu), pv, k, t, p, source)
        return fluid

    # ----------------------------------------------------------------------------------------
    def __repr__(self) -> str:
        parts = [f"density={self.density:.6g} kg/m³", f"viscosity={self.viscosity:.6g} Pa·s"]
        if self.vapour_pressure is not None:
            parts.append(f"vapour_pressure={self.vapour_pressure:.5g} Pa")
        if self.bulk_modulus is not None:
            parts.append(f"bulk_modulus={self.bulk_modulus / 1e9:.4g} GPa")
        state = ""
        if self.temperature is not None:
            state = f" at {self.temperature - 273.15:.2f} °C, {self.pressure / 1e5:.5g} bar"
        return f"Fluid({self.name!r}{state}: {', '.join(parts)})"

    def to_dict(self) -> dict[str, Any]:
        """The properties as a plain dict of SI values (for reports)."""
        return {"name": self.name, "density_kg_m3": self.density,
                "viscosity_pa_s": self.viscosity, "vapour_pressure_pa": self.vapour_pressure,
                "bulk_modulus_pa": self.bulk_modulus, "temperature_k": self.temperature,
                "pressure_pa": self.pressure, "source": self.source}
