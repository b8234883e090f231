"""Pipe catalog: standard sizes with real inner diameters, pressure classes and materials.

The bundled tables (CSV files in this package, one row per size and class, each with its
provenance) hold the standards' dimensions:

==========================  =============================================  ===================
material                    standard                                       designation example
==========================  =============================================  ===================
``steel``                   ASME B36.10M, NPS 1/2–48, Sch 10/STD/40/XS/80  ``"NPS 12 Sch 40"``
``steel-cement-lined``      ASME B36.10M NPS 4–48, AWWA C205 lining        ``"NPS 12 STD"``
``steel-epoxy-lined``       ASME B36.10M NPS 4–48, AWWA C210 lining        ``"NPS 12 STD"``
``stainless-steel``         ASME B36.19M, Sch 5S/10S/40S/80S               ``"NPS 4 Sch 10S"``
``ductile-iron``            EN 545:2010, DN 80–1200, C25–C100              ``"DN 300 C40"``
``ductile-iron-k``          ISO 2531:1998 K7–K12, DN 80–1200 (not rated)   ``"DN 300 K9"``
``pe100``, ``pe80``         ISO 4427 / EN 12201, 20–1200 mm, SDR 26–7.4    ``"315 SDR 17"``
``pvc-u``                   ISO 1452 / EN 1452, 63–630 mm                  ``"110 PN 10"``
``copper``                  EN 1057, 12–159 mm (not rated)                 ``"22 x 1.0"``
==========================  =============================================  ===================

Where a size has no pressure rating (copper, the ductile-iron K classes) a sizing study makes
no pressure check on it and its candidate table says so. Each row's ``provenance`` says whether
its values come from a standard's table or from a rule, and which.

and a materials table (roughness, aging rate, Hazen–Williams C, elastic modulus, Poisson's
ratio, density, embodied carbon, each with its source). No prices: pipe cost is a study input.

Everything in the tables returned here is SI (m, Pa); column names carry the unit.

Examples
--------
>>> from pipeopt import catalog
>>> row = catalog.lookup("pe100", "315 sdr17")
>>> row["designation"], round(float(row["inner_diameter_m"]), 4)
('315 SDR 17', 0.2776)
>>> catalog.list_sizes("ductile-iron", min_diameter="0.3 m", max_diameter="0.41 m",
...                    classes="C40")["designation"].tolist()
['DN 300 C40', 'DN 350 C40', 'DN 400 C40']
"""

from __future__ import annotations

import difflib
import functools
import io
import re
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .._arrays import as_float_arrays as _as_arrays
from .._arrays import restore as _restore
from ..errors import InputError
from ..pressure import STAINLESS_DEFAULTS, STEEL_DEFAULTS, barlow_pressure, derating_factor
from ..units import KINDS, MAX_MAGNITUDE, to_si

__all__ = [
    "Catalog",
    "Material",
    "SIZE_COLUMNS",
    "load_catalog",
    "default_catalog",
    "list_materials",
    "list_sizes",
    "lookup",
    "get_material",
    "read_sizes",
    "read_materials",
    "ServiceLimits",
    "mass_per_metre",
    "nearest_designations",
]

#: Columns of a size table, all SI.
SIZE_COLUMNS = ["material", "designation", "nominal", "class", "outside_diameter_m",
                "wall_m", "lining_m", "inner_diameter_m", "pressure_rating_pa", "rating_basis",
                "provenance"]

_BUNDLED_SIZE_FILES = ("steel", "steel-cement-lined", "steel-epoxy-lined", "stainless-steel",
                       "ductile-iron", "ductile-iron-k", "pe100", "pe80", "pvc-u", "copper")
#: Largest size or materials file read [bytes].
MAX_FILE_BYTES = 16 * 2**20
#: Largest magnitude of a number in a cell, in the unit it is written in.
MAX_CELL = MAX_MAGNITUDE

# unit suffixes a column name may carry in a size or materials file
_LENGTH_SUFFIX = {"mm": 1e-3, "m": 1.0, "in": 0.0254, "cm": 1e-2}
_PRESSURE_SUFFIX = {"bar": 1e5, "pa": 1.0, "kpa": 1e3, "mpa": 1e6, "psi": 6894.757293168}
_SIZE_QUANTITIES = {"outside_diameter": ("length", _LENGTH_SUFFIX),
                    "wall": ("length", _LENGTH_SUFFIX),
                    "lining": ("length", _LENGTH_SUFFIX),
                    "inner_diameter": ("length", _LENGTH_SUFFIX),
                    "pressure_rating": ("pressure", _PRESSURE_SUFFIX)}


@dataclass(frozen=True)
class Material:
    """Properties of one pipe material, SI.

    Attributes
    ----------
    key : str
        Name used in studies and in the catalog (``"ductile-iron"``).
    description : str
        Words for reports.
    catalog : str or None
        Key of the bundled size table, None when no sizes are bundled.
    roughness : float
        New-pipe absolute roughness [m].
    aging_rate : float
        Typical linear roughness growth [m/yr] (used only when a study asks for it).
    hazen_williams_c : float
        Typical Hazen–Williams C of new pipe [-].
    elastic_modulus : float
        Young's modulus of the wall [Pa].
    poisson_ratio : float
        Poisson's ratio of the wall [-].
    density : float
        Density of the wall material [kg/m³].
    embodied_carbon : float or None
        Cradle-to-gate emission factor [kg CO2e per kg of pipe], None where not known.
    sources : dict
        Source of each property (``{"roughness": "Moody 1944 chart, ..."}``).
    """

    key: str
    description: str
    catalog: str | None
    roughness: float
    aging_rate: float
    hazen_williams_c: float
    elastic_modulus: float
    poisson_ratio: float
    density: float
    embodied_carbon: float | None
    sources: dict


@dataclass(frozen=True)
class ServiceLimits:
    """Service limits and pressure basis of a material (``service.csv``), SI.

    Attributes
    ----------
    max_temperature : float or None
        Highest service temperature of the rating [K]; None where none is known (not checked).
    derating_temperature, derating_factor : tuple of float
        The published derating table (temperatures [K], factors f = PFA(T)/PN); empty: no
        derating up to ``max_temperature``.
    pma_factor : float
        PMA / PFA: allowable maximum operating pressure, surge included, over the allowable
        operating pressure (EN 805 vocabulary) [-].
    lining_density : float
        Density of the bore lining the size tables list [kg/m³].
    source : str
        Where the values come from.
    """

    max_temperature: float | None
    derating_temperature: tuple
    derating_factor: tuple
    pma_factor: float
    lining_density: float
    source: str

    def factor(self, temperature: Any) -> Any:
        """Derating factor of the rating at ``temperature`` [K]: 1 without a table, NaN above
        ``max_temperature`` (outside the service range)."""
        (t,), tpl = _as_arrays(temperature)
        if self.derating_temperature:
            f = np.asarray(derating_factor(t, self.derating_temperature, self.derating_factor))
        else:
            f = np.ones_like(t)
        if self.max_temperature is not None:
            f = np.where(t > self.max_temperature + 1e-9, np.nan, f)
        return _restore(f, tpl)


#: Service limits of a material the service table does not list.
UNLISTED_SERVICE = ServiceLimits(None, (), (), 1.0, 2100.0,
                                 "not listed: no temperature limit checked, PMA = PFA")


def mass_per_metre(outside_diameter: Any, wall: Any, lining: Any, wall_density: Any,
                   lining_density: Any = 0.0) -> Any:
    """Mass of one metre of pipe with its bore lining [kg/m].

    m = π/4 (D_o² − D_w²) ρ_wall + π/4 (D_w² − D_i²) ρ_lining, with D_w = D_o − 2 e the bore of
    the wall and D_i = D_w − 2 l the lined bore (plain-end pipe, no joints or coatings).

    Parameters
    ----------
    outside_diameter, wall, lining : float or array_like
        Outside diameter, wall and lining thickness [m].
    wall_density, lining_density : float or array_like
        Densities of the wall material and of the lining [kg/m³].

    Returns
    -------
    float, ndarray or Series
        Mass per metre [kg/m].

    Examples
    --------
    >>> round(mass_per_metre(0.3238, 0.00953, 0.0, 7850.0), 2)   # NPS 12 STD steel
    73.86
    """
    (od, e, lin, rho_w, rho_l), tpl = _as_arrays(outside_diameter, wall, lining, wall_density,
                                                 lining_density)
    bore_wall = od - 2.0 * e
    bore = bore_wall - 2.0 * lin
    return _restore(np.pi / 4.0 * ((od**2 - bore_wall**2) * rho_w
                                   + (bore_wall**2 - bore**2) * rho_l), tpl)


# --------------------------------------------------------------------------------------------
# reading files
# --------------------------------------------------------------------------------------------
def _is_path(source: Any) -> bool:
    """A path to a file, as opposed to CSV text or a DataFrame."""
    return (isinstance(source, (str, Path)) and "\n" not in str(source)
            and not str(source).lstrip().startswith("#"))


def _read_csv(source: Any, what: str) -> pd.DataFrame:
    """A CSV table as text cells; messages name the file and the rule, never its contents."""
    if isinstance(source, pd.DataFrame):
        return source.copy()
    if _is_path(source):
        path = Path(source)
        if not path.is_file():
            raise InputError(f"{what}: no such file {str(path)!r}")
        try:
            with open(path, "rb") as fh:
                data = fh.read(MAX_FILE_BYTES + 1)
        except OSError as exc:
            raise InputError(f"{what}: cannot be read ({exc.strerror})") from None
        if len(data) > MAX_FILE_BYTES:
            raise InputError(f"{what}: larger than {MAX_FILE_BYTES // 2**20} MB")
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise InputError(f"{what}: not UTF-8 text (byte {exc.start})") from None
    else:
        text = str(source)
    try:
        return pd.read_csv(io.StringIO(text), comment="#", dtype=str, keep_default_na=False,
                           skipinitialspace=True)
    except pd.errors.EmptyDataError:
        raise InputError(f"{what}: the file is empty; it needs a header line and one row per "
                         f"item") from None
    except (pd.errors.ParserError, ValueError) as exc:
        detail = re.sub(r"'[^']*'", "...", str(exc).splitlines()[0] if str(exc) else "")[:120]
        raise InputError(f"{what}: not a readable CSV file ({detail})") from None


def _column_unit(columns: list[str], base: str, suffixes: dict[str, float]) -> tuple[str, float]:
    """Find the column for quantity ``base``: ``base_<unit>`` (factor) or bare ``base`` (0)."""
    for col in columns:
        if col == base:
            return col, 0.0
        if col.startswith(base + "_"):
            unit = col[len(base) + 1:].lower()
            if unit in suffixes:
                return col, suffixes[unit]
    return "", 0.0


def _cell_number(text: str, where: str) -> float:
    """A plain number from a cell (never echoed in messages: the file may not be ours)."""
    try:
        value = float(text) if len(text) <= 40 else float("nan")
    except ValueError:
        raise InputError(f"{where}: expected a plain number (the unit is in the column "
                         f"name)") from None
    if not np.isfinite(value):
        raise InputError(f"{where}: expected a finite number of at most 40 characters")
    if abs(value) > MAX_CELL:
        raise InputError(f"{where}: the number is beyond {MAX_CELL:g} in magnitude")
    return value


def _cell_to_si(text: str, factor: float, kind: str, where: str) -> float:
    text = str(text).strip()
    if factor:  # the column name carries the unit: the cell is a bare number
        return _cell_number(text, where) * factor
    try:
        return float(to_si(text, kind, where))  # refuses a bare number: "missing unit"
    except InputError:
        k = KINDS[kind]
        try:
            float(text)
            found = "a number with no unit"
        except ValueError:
            found = "no number with a known unit of that dimension"
        raise InputError(f"{where}: expected {k.description} such as '{k.example}' (or the "
                         f"unit in the column name, e.g. outside_diameter_mm); the cell holds "
                         f"{found}") from None


def read_sizes(source: Any, material: str | None = None, name: str = "sizes file") -> pd.DataFrame:
    """Read and validate a size table (the bundled format, or a user's own file).

    Parameters
    ----------
    source : path, CSV text or DataFrame
        Columns ``designation``, ``outside_diameter``, ``wall`` and optionally ``material``,
        ``nominal``, ``class`` (the pressure class, SDR, PN or schedule; the old header
        ``pressure_class`` is read too), ``lining``, ``pressure_rating``, ``provenance``. A
        dimensional column either carries its unit in its name (``outside_diameter_mm``,
        ``pressure_rating_bar``) or every cell carries one (``"114.3 mm"``).
    material : str, optional
        Material key for every row, when the file has no ``material`` column.
    name : str
        How error messages refer to the file.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`SIZE_COLUMNS`, SI.

    Raises
    ------
    InputError
        Naming the row (1-based, data rows) and column of any bad value: a missing unit, a
        negative or zero dimension, a wall thicker than the radius, a duplicate designation.
    """
    raw = _read_csv(source, name)
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    cols = list(raw.columns)
    if "designation" not in cols:
        raise InputError(f"{name}: missing column 'designation' (a size file has the columns "
                         f"designation, outside_diameter_mm, wall_mm and optionally material, "
                         f"nominal, class, lining_mm, pressure_rating_bar, provenance)")
    if "material" not in cols and material is None:
        raise InputError(f"{name}: missing column 'material' (or pass material=...)")
    found = {}
    for base, (kind, suffixes) in _SIZE_QUANTITIES.items():
        col, factor = _column_unit(cols, base, suffixes)
        if not col and base in ("outside_diameter", "wall"):
            raise InputError(f"{name}: missing column {base!r} (write e.g. {base}_mm)")
        found[base] = (col, factor, kind)
    rows = []
    for i, rec in enumerate(raw.to_dict("records"), start=1):
        def value(base: str, default: float | None = None, rec=rec, i=i) -> float | None:
            col, factor, kind = found[base]
            if not col or str(rec[col]).strip() == "":
                return default
            return _cell_to_si(rec[col], factor, kind, f"{name}: row {i}, column {col}")

        od = value("outside_diameter")
        wall = value("wall")
        lining = value("lining", 0.0)
        rating = value("pressure_rating")
        where = f"{name}: row {i}"
        if od is None or od <= 0:
            raise InputError(f"{where}, column {found['outside_diameter'][0]}: outside diameter "
                             f"must be positive")
        if wall is None or wall <= 0:
            raise InputError(f"{where}, column {found['wall'][0]}: wall must be positive")
        if lining < 0:
            raise InputError(f"{where}, column {found['lining'][0]}: lining must be >= 0")
        if 2 * (wall + lining) >= od:
            raise InputError(f"{where}, column {found['wall'][0]}: wall plus lining "
                             f"({(wall + lining) * 1e3:.4g} mm) is not less than the radius "
                             f"({od / 2 * 1e3:.4g} mm)")
        if rating is not None and rating <= 0:
            raise InputError(f"{where}, column {found['pressure_rating'][0]}: pressure rating "
                             f"must be positive")
        inner = od - 2 * wall - 2 * lining
        given_inner = value("inner_diameter")
        if given_inner is not None and abs(given_inner - inner) > 0.051e-3:
            raise InputError(f"{where}, column {found['inner_diameter'][0]}: inner diameter "
                             f"{given_inner * 1e3:.4g} mm is not outside diameter - 2 x wall - "
                             f"2 x lining = {inner * 1e3:.4g} mm")
        designation = str(rec["designation"]).strip()
        if not designation:
            raise InputError(f"{where}, column designation: empty designation")
        mat = str(rec.get("material", "") or material or "").strip()
        if not mat:
            raise InputError(f"{where}, column material: empty material")
        rows.append({
            "material": mat, "designation": designation,
            "nominal": str(rec.get("nominal", "")).strip() or designation,
            "class": str(rec.get("class", rec.get("pressure_class", ""))).strip(),
            "outside_diameter_m": od, "wall_m": wall, "lining_m": lining,
            "inner_diameter_m": inner,
            "pressure_rating_pa": np.nan if rating is None else rating,
            "rating_basis": "" if rating is None else "class or PN of the standard",
            "provenance": str(rec.get("provenance", "")).strip() or f"user file ({name})",
        })
    out = pd.DataFrame(rows, columns=SIZE_COLUMNS)
    dup = out.duplicated(["material", "designation"], keep="first")
    if dup.any():
        i = int(np.flatnonzero(dup.to_numpy())[0]) + 1
        first = int(np.flatnonzero((out["designation"] == out["designation"].iloc[i - 1])
                                   .to_numpy())[0]) + 1
        raise InputError(f"{name}: row {i}, column designation: the same designation as row "
                         f"{first}")
    return out


_MATERIAL_NUMERIC = {
    # column: (attribute, factor to SI, rule, allow empty)
    "roughness_mm": ("roughness", 1e-3, "nonneg", False),
    "aging_mm_per_year": ("aging_rate", 1e-3, "nonneg", False),
    "hazen_williams_c": ("hazen_williams_c", 1.0, "pos", False),
    "elastic_modulus_gpa": ("elastic_modulus", 1e9, "pos", False),
    "poisson_ratio": ("poisson_ratio", 1.0, "poisson", False),
    "density_kg_m3": ("density", 1.0, "pos", False),
    "embodied_carbon_kg_per_kg": ("embodied_carbon", 1.0, "nonneg", True),
}


def read_materials(source: Any, name: str = "materials file") -> dict[str, Material]:
    """Read and validate a materials table (the bundled ``materials.csv`` columns).

    Raises
    ------
    InputError
        Naming the row and column of a bad value (negative roughness, Poisson's ratio outside
        [0, 0.5), a missing column).
    """
    raw = _read_csv(source, name)
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    required = ["material", *_MATERIAL_NUMERIC]
    missing = [c for c in required if c not in raw.columns]
    if missing:
        raise InputError(f"{name}: missing column(s) {missing}; the columns are those of the "
                         f"bundled materials.csv")
    out: dict[str, Material] = {}
    for i, rec in enumerate(raw.to_dict("records"), start=1):
        key = str(rec["material"]).strip()
        if not key:
            raise InputError(f"{name}: row {i}, column material: empty material name")
        values: dict[str, Any] = {}
        for col, (attr, factor, rule, optional) in _MATERIAL_NUMERIC.items():
            text = str(rec[col]).strip()
            where = f"{name}: row {i}, column {col}"
            if text == "" and optional:
                values[attr] = None
                continue
            v = _cell_number(text, where)
            bad = ((rule == "pos" and v <= 0) or (rule == "nonneg" and v < 0)
                   or (rule == "poisson" and not 0 <= v < 0.5))
            if bad:
                words = {"pos": "must be positive", "nonneg": "must be >= 0",
                         "poisson": "must be in [0, 0.5)"}[rule]
                raise InputError(f"{where}: {words}")
            values[attr] = v * factor
        sources = {k[:-len("_source")]: str(v) for k, v in rec.items()
                   if k.endswith("_source")}
        out[key] = Material(key=key, description=str(rec.get("description", key)),
                            catalog=str(rec.get("catalog", "")).strip() or None,
                            sources=sources, **values)
    return out


# --------------------------------------------------------------------------------------------
# designations
# --------------------------------------------------------------------------------------------
def _normalize(designation: str) -> str:
    s = str(designation).upper().replace("SCHEDULE", "SCH")
    return re.sub(r"[\s_]+", "", s)


_FIRST_NUMBER = re.compile(r"(\d+(?:[./-]\d+)*)")


def _size_number(norm: str) -> tuple[float, str]:
    """Split a normalized designation into its size number and the rest (the class)."""
    m = _FIRST_NUMBER.search(norm)
    if m is None:
        return np.nan, norm
    text = m.group(1)
    whole, _, frac = text.partition("-")
    try:
        if "/" in whole and not frac:
            a, b = whole.split("/")
            value = float(a) / float(b)
        else:
            value = float(whole) + (float(frac.split("/")[0]) / float(frac.split("/")[1])
                                    if "/" in frac else 0.0)
    except (ValueError, ZeroDivisionError):
        value = np.nan
    return value, norm[:m.start()] + "#" + norm[m.end():]


def nearest_designations(designation: str, names: list[str], n: int = 3) -> list[str]:
    """Nearest of ``names`` to ``designation``: same class and closest size first, then by
    spelling (for "did you mean" messages).

    >>> nearest_designations("DN 350 C40", ["DN 300 C40", "DN 300 C25", "DN 400 C40"])
    ['DN 300 C40', 'DN 400 C40']
    """
    target, rest = _size_number(_normalize(designation))
    scored = []
    for name in names:
        value, name_rest = _size_number(_normalize(name))
        if name_rest == rest and np.isfinite(target) and np.isfinite(value):
            scored.append((abs(value - target), name))
    if scored:
        return [name for _, name in sorted(scored)[:n]]
    norm = {_normalize(x): x for x in names}
    return [norm[k] for k in difflib.get_close_matches(_normalize(designation), list(norm), n=n,
                                                       cutoff=0.5)]


# --------------------------------------------------------------------------------------------
# the catalog
# --------------------------------------------------------------------------------------------
class Catalog:
    """Sizes and materials, with the query API.

    Use :func:`default_catalog` for the bundled data, :func:`load_catalog` to add a user's own
    sizes or materials.

    Parameters
    ----------
    sizes : pandas.DataFrame
        Columns :data:`SIZE_COLUMNS`, SI (from :func:`read_sizes`).
    materials : dict of str to Material
        From :func:`read_materials`.
    steel_rating : dict, optional
        Barlow parameters by material key for sizes without a rated class (steel):
        ``{"steel": {"allowable_stress": ..., "joint_factor": ..., "corrosion_allowance": ...,
        "mill_tolerance": ...}}`` in SI. Defaults: :data:`pipeopt.pressure.STEEL_DEFAULTS`
        for ``steel`` and the lined steels, :data:`~pipeopt.pressure.STAINLESS_DEFAULTS` for
        ``stainless-steel``.
    """

    def __init__(self, sizes: pd.DataFrame, materials: dict[str, Material],
                 steel_rating: dict[str, dict[str, float]] | None = None) -> None:
        self._materials = dict(materials)
        self._barlow = {"steel": dict(STEEL_DEFAULTS), "steel-cement-lined": dict(STEEL_DEFAULTS),
                        "steel-epoxy-lined": dict(STEEL_DEFAULTS),
                        "stainless-steel": dict(STAINLESS_DEFAULTS)}
        for key, params in (steel_rating or {}).items():
            self._barlow[key] = {**self._barlow.get(key, STEEL_DEFAULTS), **params}
        self._sizes = self._rate(sizes.reset_index(drop=True))
        self._index = {(m, _normalize(d)): i for i, (m, d) in
                       enumerate(zip(self._sizes["material"], self._sizes["designation"],
                                     strict=True))}

    def _rate(self, sizes: pd.DataFrame) -> pd.DataFrame:
        sizes = sizes.copy()
        unrated = sizes["pressure_rating_pa"].isna()
        for key, params in self._barlow.items():
            sel = unrated & (sizes["material"] == key)
            if sel.any():
                sizes.loc[sel, "pressure_rating_pa"] = barlow_pressure(
                    sizes.loc[sel, "outside_diameter_m"].to_numpy(),
                    sizes.loc[sel, "wall_m"].to_numpy(), **params)
                sizes.loc[sel, "rating_basis"] = (
                    f"Barlow: S = {params['allowable_stress'] / 1e6:g} MPa, E = "
                    f"{params['joint_factor']:g}, corrosion allowance "
                    f"{params['corrosion_allowance'] * 1e3:g} mm, mill tolerance "
                    f"{params['mill_tolerance'] * 100:g} %")
        return sizes

    # ----- materials ------------------------------------------------------------------------
    def list_materials(self) -> pd.DataFrame:
        """Materials and their properties, SI, one row each, with the number of bundled sizes."""
        counts = self._sizes["material"].value_counts()
        rows = []
        for m in self._materials.values():
            rows.append({"material": m.key, "description": m.description,
                         "sizes": int(counts.get(m.key, 0)), "roughness_m": m.roughness,
                         "aging_rate_m_per_year": m.aging_rate,
                         "hazen_williams_c": m.hazen_williams_c,
                         "elastic_modulus_pa": m.elastic_modulus,
                         "poisson_ratio": m.poisson_ratio, "density_kg_m3": m.density,
                         "embodied_carbon_kg_per_kg": m.embodied_carbon,
                         "roughness_source": m.sources.get("roughness", "")})
        return pd.DataFrame(rows)

    def material(self, key: str) -> Material:
        """The :class:`Material` of ``key``; an unknown key names the nearest known ones."""
        try:
            return self._materials[key]
        except KeyError:
            near = difflib.get_close_matches(str(key), list(self._materials), n=3, cutoff=0.4)
            hint = f"; did you mean {', '.join(repr(n) for n in near)}?" if near else ""
            raise InputError(f"material: unknown material {key!r}{hint} (known: "
                             f"{', '.join(self._materials)})") from None

    def service(self, key: str) -> ServiceLimits:
        """Service limits and pressure basis of material ``key`` (:class:`ServiceLimits`);
        a material the bundled service table does not list gets :data:`UNLISTED_SERVICE`."""
        self.material(key)
        return _bundled_service().get(key, UNLISTED_SERVICE)

    @property
    def material_keys(self) -> list[str]:
        """Keys of every material."""
        return list(self._materials)

    # ----- sizes ----------------------------------------------------------------------------
    def sizes(self, material: str, min_diameter: Any = None, max_diameter: Any = None,
              classes: str | list[str] | None = None,
              designations: list[str] | None = None) -> pd.DataFrame:
        """Sizes of one material, sorted by inner diameter, filtered.

        Parameters
        ----------
        material : str
            Material key.
        min_diameter, max_diameter : str or pint.Quantity, optional
            Inner-diameter range, e.g. ``"0.15 m"`` (inclusive).
        classes : str or list of str, optional
            Keep only these classes (the ``class`` column: pressure class, SDR, PN or
            schedule), e.g. ``"C40"``, ``"SDR 17"``, ``"Sch 40"``, ``"PN 10"``.
        designations : list of str, optional
            Keep only these designations (parsed forgivingly; an unknown one is an error).

        Returns
        -------
        pandas.DataFrame
            Columns :data:`SIZE_COLUMNS`, SI.
        """
        self.material(material)
        df = self._sizes[self._sizes["material"] == material]
        if df.empty:
            raise InputError(f"material: no sizes in the catalog for {material!r}; give sizes "
                             f"with load_catalog(sizes=...)")
        if min_diameter is not None:
            df = df[df["inner_diameter_m"] >= to_si(min_diameter, "diameter", "min_diameter")
                    - 1e-12]
        if max_diameter is not None:
            df = df[df["inner_diameter_m"] <= to_si(max_diameter, "diameter", "max_diameter")
                    + 1e-12]
        if classes is not None:
            wanted = [classes] if isinstance(classes, str) else list(classes)
            norm = {_normalize(c) for c in wanted}
            known = {_normalize(c) for c in self._sizes.loc[
                self._sizes["material"] == material, "class"]}
            unknown = norm - known
            if unknown:
                raise InputError(f"classes: {material} has no class "
                                 f"{sorted(unknown)[0]!r}; classes: {sorted(known)}")
            df = df[df["class"].map(_normalize).isin(norm)]
        if designations is not None:
            idx = [self._locate(material, d) for d in designations]
            df = self._sizes.loc[idx]
        return df.sort_values(["inner_diameter_m", "designation"], kind="stable") \
            .reset_index(drop=True)

    def _locate(self, material: str, designation: str) -> int:
        self.material(material)
        key = (material, _normalize(designation))
        if key in self._index:
            return self._index[key]
        names = self._sizes.loc[self._sizes["material"] == material, "designation"].tolist()
        near = nearest_designations(designation, names)
        hint = f"; nearest: {', '.join(repr(n) for n in near)}" if near else ""
        raise InputError(f"size: {material} has no size {designation!r}{hint}")

    def lookup(self, material: str, designation: str) -> pd.Series:
        """One size by designation, parsed forgivingly (``"dn300 c40"``, ``"NPS 12 sch40"``).

        An unknown designation raises :class:`~pipeopt.errors.InputError` naming the nearest
        valid ones.
        """
        return self._sizes.loc[self._locate(material, designation)].copy()

    @property
    def all_sizes(self) -> pd.DataFrame:
        """Every size of every material (a copy)."""
        return self._sizes.copy()

    # ----- extending ------------------------------------------------------------------------
    def with_sizes(self, source: Any, material: str | None = None,
                   name: str = "sizes file") -> Catalog:
        """A new catalog with a user's sizes added (rows of the same material and designation
        replace the bundled ones)."""
        if material is not None:
            self.material(material)  # the caller's own word: suggest the nearest known keys
        new = read_sizes(source, material=material, name=name)
        for m in new["material"].unique():
            if m not in self._materials:
                row = int(np.flatnonzero((new["material"] == m).to_numpy())[0]) + 1
                raise InputError(f"{name}: row {row}, column material: not a material of the "
                                 f"catalog (known: {', '.join(self._materials)})")
        keep = ~self._sizes.set_index(["material", "designation"]).index.isin(
            new.set_index(["material", "designation"]).index)
        merged = pd.concat([self._sizes[keep], new], ignore_index=True)
        return Catalog(merged, self._materials, self._barlow)

    def with_materials(self, source: Any, name: str = "materials file") -> Catalog:
        """A new catalog with a user's materials added or replacing bundled ones by key."""
        return Catalog(self._sizes, {**self._materials, **read_materials(source, name)},
                       self._barlow)

    def with_steel_rating(self, material: str = "steel", **params: float) -> Catalog:
        """A new catalog with other Barlow parameters (SI) for a steel material's ratings.

        Parameters are those of :func:`pipeopt.pressure.barlow_pressure`:
        ``allowable_stress`` [Pa], ``joint_factor`` [-], ``corrosion_allowance`` [m],
        ``mill_tolerance`` [-].
        """
        unknown = set(params) - set(STEEL_DEFAULTS)
        if unknown:
            raise InputError(f"with_steel_rating: unknown parameter(s) {sorted(unknown)}; "
                             f"known: {sorted(STEEL_DEFAULTS)}")
        sizes = self._sizes.copy()
        rated_by_barlow = sizes["rating_basis"].str.startswith("Barlow")
        sizes.loc[rated_by_barlow & (sizes["material"] == material), "pressure_rating_pa"] = np.nan
        barlow = {**self._barlow, material: {**self._barlow.get(material, STEEL_DEFAULTS),
                                             **params}}
        return Catalog(sizes, self._materials, barlow)

    def __repr__(self) -> str:
        counts = self._sizes["material"].value_counts()
        parts = [f"{k} ({int(counts.get(k, 0))} sizes)" for k in self._materials]
        return "Catalog(" + ", ".join(parts) + ")"


# --------------------------------------------------------------------------------------------
# module-level API on the bundled catalog
# --------------------------------------------------------------------------------------------
def _bundled_text(filename: str) -> str:
    return resources.files(__name__).joinpath(filename).read_text(encoding="utf-8")


def read_service(source: Any, name: str = "service file") -> dict[str, ServiceLimits]:
    """Read the service limits (``service.csv``) and the derating tables they name."""
    raw = _read_csv(source, name)
    der = _read_csv(_bundled_text("temperature_derating.csv"), "temperature_derating.csv")
    tables: dict[str, tuple[tuple, tuple]] = {}
    for key, rows in der.groupby("derating", sort=False):
        t = tuple(float(x) + 273.15 for x in rows["temperature_c"])
        tables[str(key)] = (t, tuple(float(x) for x in rows["factor"]))
    out = {}
    for i, rec in enumerate(raw.to_dict("records"), start=1):
        where = f"{name}: row {i}"
        group = str(rec["derating"]).strip()
        if group and group not in tables:
            raise InputError(f"{where}, column derating: no derating table {group!r}; tables: "
                             f"{', '.join(tables)}")
        t_max = str(rec["max_temperature_c"]).strip()
        lining = str(rec["lining_density_kg_m3"]).strip()
        dt, df = tables.get(group, ((), ()))
        out[str(rec["material"]).strip()] = ServiceLimits(
            float(t_max) + 273.15 if t_max else None, dt, df, float(rec["pma_factor"]),
            float(lining) if lining else 2100.0, str(rec["source"]))
    return out


@functools.lru_cache(maxsize=1)
def _bundled_service() -> dict[str, ServiceLimits]:
    return read_service(_bundled_text("service.csv"), "service.csv")


@functools.lru_cache(maxsize=1)
def default_catalog() -> Catalog:
    """The bundled catalog (read once from the installed package, then cached)."""
    sizes = pd.concat([read_sizes(_bundled_text(f"{m}.csv"), material=m, name=f"{m}.csv")
                       for m in _BUNDLED_SIZE_FILES], ignore_index=True)
    materials = read_materials(_bundled_text("materials.csv"), name="materials.csv")
    return Catalog(sizes, materials)


def load_catalog(sizes: Any = None, materials: Any = None, material: str | None = None) -> Catalog:
    """The bundled catalog extended with a user's materials and/or sizes file.

    Parameters
    ----------
    sizes : path, CSV text or DataFrame, optional
        A size table (see :func:`read_sizes`).
    materials : path, CSV text or DataFrame, optional
        A materials table in the columns of the bundled ``materials.csv``.
    material : str, optional
        Material key for every row of ``sizes`` when it has no ``material`` column.
    """
    cat = default_catalog()
    if materials is not None:
        cat = cat.with_materials(materials, name=str(materials) if _is_path(materials)
                                 else "materials file")
    if sizes is not None:
        cat = cat.with_sizes(sizes, material=material, name=str(sizes) if _is_path(sizes)
                             else "sizes file")
    return cat


def list_materials() -> pd.DataFrame:
    """Materials of the bundled catalog (see :meth:`Catalog.list_materials`)."""
    return default_catalog().list_materials()


def list_sizes(material: str, min_diameter: Any = None, max_diameter: Any = None,
               classes: str | list[str] | None = None) -> pd.DataFrame:
    """Sizes of a bundled material (see :meth:`Catalog.sizes`)."""
    return default_catalog().sizes(material, min_diameter, max_diameter, classes)


def lookup(material: str, designation: str) -> pd.Series:
    """One bundled size by designation (see :meth:`Catalog.lookup`)."""
    return default_catalog().lookup(material, designation)


def get_material(key: str) -> Material:
    """One bundled material (see :meth:`Catalog.material`)."""
    return default_catalog().material(key)
