"""Candidate building (study layer): catalog sizes of each material choice, with their costs.

:func:`build_candidates` turns the study's material choices into one table of candidates
(material, size, nominal size, class, geometry, mass per metre, roughness, aging, pressure
basis at the service temperature, wave speed, cost per metre, embodied carbon, provenance). It
reads the catalog and calls the physics (mass per metre, wave speed, derating) and the cost
models; it holds no formula of its own.

Prices follow the pipe: each material's cost model prices every size by its designation,
outside diameter and mass per metre (:class:`~pipeopt.costs.PipeCostModel`), never by its bore,
so a heavier class of one nominal size never costs less than a lighter one.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .catalog import Catalog, mass_per_metre
from .errors import InputError
from .inputs import MaterialChoice
from .surge import wave_speed

__all__ = ["CANDIDATE_COLUMNS", "Candidates", "build_candidates", "MAX_CANDIDATES",
           "DEFAULT_BULK_MODULUS", "REFERENCE_TEMPERATURE"]

#: Bulk modulus used when the fluid gives none [Pa]: water near 20 degC (common practice).
DEFAULT_BULK_MODULUS = 2.19e9
#: Temperature taken for the ratings when the fluid gives none [K] (20 degC).
REFERENCE_TEMPERATURE = 293.15
#: The most candidates a study may hold (a user catalog with many sizes and classes).
MAX_CANDIDATES = 20_000

CANDIDATE_COLUMNS = ["material", "size", "nominal", "class", "outside_diameter_m",
                     "wall_m", "lining_m", "inner_diameter_m", "mass_kg_per_m", "roughness_m",
                     "aging_m_per_year", "pressure_rating_pa", "temperature_factor", "pfa_pa",
                     "pma_pa", "max_temperature_k", "wave_speed_m_s", "cost_per_metre",
                     "embodied_co2_kg_per_m", "provenance"]


@dataclass(frozen=True)
class Candidates:
    """The candidate table and each material's pipe cost model.

    Attributes
    ----------
    table : pandas.DataFrame
        Columns :data:`CANDIDATE_COLUMNS`, one row per (material, size, class), SI:
        ``pressure_rating_pa`` is the class's rating at its reference temperature (PN or PFA),
        ``temperature_factor`` its derating at the service temperature (NaN above the
        material's service limit), ``pfa_pa`` and ``pma_pa`` the allowable operating pressure
        and the allowable maximum operating pressure with surge at that temperature.
    costs : dict of str to PipeCostModel
        Per material, the model its costs come from.
    notes : tuple of str
        Words on assumptions made (e.g. a bulk modulus taken for water).
    """

    table: pd.DataFrame
    costs: dict
    notes: tuple


def _sizes_of(choice: MaterialChoice, catalog: Catalog) -> pd.DataFrame:
    where = f"material {choice.name!r}"
    try:
        sizes = catalog.sizes(choice.name, classes=list(choice.classes)
                              if choice.classes else None)
        if choice.sizes is not None:
            sizes = catalog.sizes(choice.name, designations=list(choice.sizes))
    except InputError as exc:
        raise InputError(f"{where}: {exc}") from None
    # the same size named twice ("400 SDR 17", "400 sdr17") is one candidate
    sizes = sizes.drop_duplicates("designation")
    if choice.min_diameter is not None:
        sizes = sizes[sizes["inner_diameter_m"] >= choice.min_diameter - 1e-12]
    if choice.max_diameter is not None:
        sizes = sizes[sizes["inner_diameter_m"] <= choice.max_diameter + 1e-12]
    if sizes.empty:
        raise InputError(f"{where}: no catalog size matches the diameter range and classes "
                         f"given")
    return sizes.reset_index(drop=True)


def build_candidates(materials: tuple[MaterialChoice, ...], catalog: Catalog,
                     bulk_modulus: float | None, density: float, restraint: str,
                     temperature: float | None = None) -> Candidates:
    """The candidate table of a sizing study.

    Parameters
    ----------
    materials : tuple of MaterialChoice
    catalog : Catalog
    bulk_modulus : float or None
        The liquid's bulk modulus [Pa] for the wave speed (None: water's, with a note).
    density : float
        Liquid density [kg/m³].
    restraint : str
        Axial restraint of the pipe (:data:`pipeopt.surge.RESTRAINTS`).
    temperature : float, optional
        Service temperature [K] for the ratings (None: 20 °C, with a note).
    """
    frames = []
    costs = {}
    notes = []
    k = bulk_modulus or DEFAULT_BULK_MODULUS
    t_service = REFERENCE_TEMPERATURE if temperature is None else float(temperature)
    for choice in materials:
        mat = catalog.material(choice.name)
        service = catalog.service(choice.name)
        sizes = _sizes_of(choice, catalog)
        od = sizes["outside_diameter_m"].to_numpy()
        wall = sizes["wall_m"].to_numpy()
        lining = sizes["lining_m"].to_numpy()
        mass = np.asarray(mass_per_metre(od, wall, lining, mat.density, service.lining_density))
        try:
            cost_m = np.asarray(choice.cost.price(sizes["designation"].to_numpy(),
                                                  sizes["nominal"].to_numpy(), od, mass),
                                dtype=float)
        except InputError as exc:
            raise InputError(f"material {choice.name!r}: {exc}") from None
        costs[choice.name] = choice.cost
        roughness = mat.roughness if choice.roughness is None else choice.roughness
        aging = (0.0 if choice.aging is None else
                 mat.aging_rate if choice.aging == "typical" else float(choice.aging))
        a = wave_speed(k, density, od - wall, wall, mat.elastic_modulus, mat.poisson_ratio,
                       restraint)
        rating = sizes["pressure_rating_pa"].to_numpy(dtype=float)
        factor = float(service.factor(t_service))
        wall_mass = np.asarray(mass_per_metre(od, wall, 0.0, mat.density))
        frames.append(pd.DataFrame({
            "material": choice.name, "size": sizes["designation"], "nominal": sizes["nominal"],
            "class": sizes["class"], "outside_diameter_m": od,
            "wall_m": wall, "lining_m": lining, "inner_diameter_m": sizes["inner_diameter_m"],
            "mass_kg_per_m": mass, "roughness_m": roughness, "aging_m_per_year": aging,
            "pressure_rating_pa": rating, "temperature_factor": factor,
            "pfa_pa": rating * factor, "pma_pa": rating * factor * service.pma_factor,
            "max_temperature_k": (np.nan if service.max_temperature is None
                                  else service.max_temperature),
            "wave_speed_m_s": a, "cost_per_metre": cost_m,
            "embodied_co2_kg_per_m": wall_mass * (mat.embodied_carbon or 0.0),
            "provenance": sizes["provenance"]}))
    table = pd.concat(frames, ignore_index=True)[CANDIDATE_COLUMNS]
    if len(table) > MAX_CANDIDATES:
        raise InputError(f"material: {len(table)} candidates, more than the {MAX_CANDIDATES} a "
                         f"study may hold; narrow the diameter range or the classes")
    if not np.all(np.isfinite(table["cost_per_metre"])):
        raise InputError("material: a cost per metre is not a finite number; check the cost "
                         "coefficients")
    if not bulk_modulus:
        notes.append("the fluid gives no bulk modulus: 2.19 GPa (water) is used for wave speeds")
    if temperature is None:
        notes.append("the fluid gives no temperature: pressure ratings are taken at 20 degC")
    return Candidates(table, costs, tuple(notes))
