"""Candidate building (study layer): catalog sizes of each material choice, with their costs.

:func:`build_candidates` turns the study's material choices into one table of candidates
(material, size, class, geometry, roughness, aging, rating, wave speed, cost per metre, embodied
carbon, provenance) and resolves each material's pipe cost model. It reads the catalog and calls
the physics (wave speed) and cost models; it holds no formula of its own.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from .catalog import Catalog
from .costs import PowerLawPipeCost, TablePipeCost
from .errors import InputError
from .inputs import CostTable, MaterialChoice
from .surge import wave_speed

__all__ = ["CANDIDATE_COLUMNS", "Candidates", "build_candidates", "MAX_CANDIDATES",
           "DEFAULT_BULK_MODULUS"]

#: Bulk modulus used when the fluid gives none [Pa]: water near 20 degC (common practice).
DEFAULT_BULK_MODULUS = 2.19e9
#: The most candidates a study may hold (a user catalog with many sizes and classes).
MAX_CANDIDATES = 20_000

CANDIDATE_COLUMNS = ["material", "size", "pressure_class", "outside_diameter_m", "wall_m",
                     "inner_diameter_m", "roughness_m", "aging_m_per_year",
                     "pressure_rating_pa", "wave_speed_m_s", "cost_per_metre",
                     "embodied_co2_kg_per_m", "provenance"]


@dataclass(frozen=True)
class Candidates:
    """The candidate table and each material's resolved pipe cost model.

    Attributes
    ----------
    table : pandas.DataFrame
        Columns :data:`CANDIDATE_COLUMNS`, one row per (material, size, class), SI.
    costs : dict of str to cost model
        Per material, the model its costs come from (a power law, or a table on the catalog's
        inner diameters when the study gave a table by designation).
    notes : tuple of str
        Words on assumptions made (e.g. a bulk modulus taken for water).
    """

    table: pd.DataFrame
    costs: dict
    notes: tuple


def _sizes_of(choice: MaterialChoice, catalog: Catalog) -> pd.DataFrame:
    where = f"material {choice.name!r}"
    try:
        sizes = catalog.sizes(choice.name, pressure_class=list(choice.classes)
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


def _cost_on_bores(choice: MaterialChoice, table: CostTable, catalog: Catalog) -> TablePipeCost:
    """A table by designation as a cost table on the catalog's inner diameters."""
    where = f"material {choice.name!r}: cost.table"
    if len(table.rows) < 2:
        raise InputError(f"{where} must list at least two [designation, cost] rows")
    pairs = []
    for label, value in table.rows:
        try:
            d = float(catalog.lookup(choice.name, label)["inner_diameter_m"])
        except InputError as exc:
            raise InputError(f"{where}: {exc}") from None
        pairs.append((d, value, label))
    pairs.sort()
    return TablePipeCost(tuple(p[0] for p in pairs), tuple(p[1] for p in pairs),
                         tuple(p[2] for p in pairs))


def build_candidates(materials: tuple[MaterialChoice, ...], catalog: Catalog,
                     bulk_modulus: float | None, density: float, restraint: str,
                     ) -> Candidates:
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
    """
    frames = []
    costs: dict[str, Any] = {}
    k = bulk_modulus or DEFAULT_BULK_MODULUS
    for choice in materials:
        mat = catalog.material(choice.name)
        sizes = _sizes_of(choice, catalog)
        cost = choice.cost
        if isinstance(cost, CostTable):
            cost = _cost_on_bores(choice, cost, catalog)
        if not isinstance(cost, PowerLawPipeCost | TablePipeCost):
            raise InputError(f"material {choice.name!r}: cost must be a power law "
                             f"{{coefficient, exponent}} or a table")
        d = sizes["inner_diameter_m"].to_numpy()
        try:
            cost_m = np.asarray(cost.per_metre(d), dtype=float)
        except InputError as exc:
            raise InputError(f"material {choice.name!r}: {exc}") from None
        costs[choice.name] = cost
        roughness = mat.roughness if choice.roughness is None else choice.roughness
        aging = (0.0 if choice.aging is None else
                 mat.aging_rate if choice.aging == "typical" else float(choice.aging))
        od = sizes["outside_diameter_m"].to_numpy()
        wall = sizes["wall_m"].to_numpy()
        a = wave_speed(k, density, od - wall, wall, mat.elastic_modulus, mat.poisson_ratio,
                       restraint)
        mass = np.pi / 4.0 * (od**2 - (od - 2 * wall) ** 2) * mat.density
        frames.append(pd.DataFrame({
            "material": choice.name, "size": sizes["designation"],
            "pressure_class": sizes["pressure_class"], "outside_diameter_m": od,
            "wall_m": wall, "inner_diameter_m": d, "roughness_m": roughness,
            "aging_m_per_year": aging, "pressure_rating_pa": sizes["pressure_rating_pa"],
            "wave_speed_m_s": a, "cost_per_metre": cost_m,
            "embodied_co2_kg_per_m": mass * (mat.embodied_carbon or 0.0),
            "provenance": sizes["provenance"]}))
    table = pd.concat(frames, ignore_index=True)[CANDIDATE_COLUMNS]
    if len(table) > MAX_CANDIDATES:
        raise InputError(f"material: {len(table)} candidates, more than the {MAX_CANDIDATES} a "
                         f"study may hold; narrow the diameter range or the classes")
    notes = () if bulk_modulus else ("the fluid gives no bulk modulus: 2.19 GPa (water) is "
                                     "used for wave speeds",)
    return Candidates(table, costs, notes)
