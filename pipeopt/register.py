"""A utility's register of mains (edge layer): read, check row by row, or invent one.

A register is a table with one row per main, in CSV or Parquet, whose column names carry their
units:

=============================== ========================================================= ======
column                          meaning                                                   unit
=============================== ========================================================= ======
``main_id``                     the main's identifier, unique                             text
``material``                    material class, one of the study's ``[[material]]`` names text
``inner_diameter_mm``           inner diameter (bore) now                                 mm
``length_m``                    length                                                    m
``year_laid``                   calendar year the main was laid                           year
``breaks_last_5y``              breaks repaired over the last 5 years                     count
``pumped_flow_m3_h``            flow pumped through the main; 0 if it is not pumped       m³/h
``hours_per_year``              hours a year that flow is pumped (blank if not pumped)    h/yr
``static_head_m``               static head of the pumping (blank if not pumped)          m
``replacement_cost_per_m``      capital of replacing the main, per metre                  cur./m
``breaks_prior_5y`` (optional)  breaks of the 5 years before those                        count
``replacement_inner_diameter_mm`` (optional) bore of the new main (blank: the same bore)   mm
=============================== ========================================================= ======

Every row is checked with vectorized rules (:func:`validate`). A row that breaks a rule is
excluded and reported with its row number, its ``main_id`` and every reason; nothing is
dropped silently, and the other rows go on. Rows whose ``main_id`` appears more than once are
all excluded (which one is right cannot be told). Other columns are carried nowhere: they are
listed as ignored. Rows are numbered from 1, the first row under the header.

:func:`invented_register` makes the register of a fictional utility (seeded, 5,000 mains by
default) for the demonstration and the tests: every name and number in it is invented and
illustrative.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .errors import InputError
from .feasibility import join_clauses

__all__ = ["REQUIRED_COLUMNS", "OPTIONAL_COLUMNS", "BREAK_WINDOW", "Register", "read_frame",
           "check_columns", "normalise_ids", "duplicate_ids", "validate", "read_register",
           "invented_register", "INVENTED_UTILITY", "INVENTED_MATERIALS"]

#: Columns every register must have (hours and static head may be blank where not pumped).
REQUIRED_COLUMNS = ("main_id", "material", "inner_diameter_mm", "length_m", "year_laid",
                    "breaks_last_5y", "pumped_flow_m3_h", "hours_per_year", "static_head_m",
                    "replacement_cost_per_m")
#: Columns a register may have.
OPTIONAL_COLUMNS = ("breaks_prior_5y", "replacement_inner_diameter_mm")
#: Length of each break-count window [yr].
BREAK_WINDOW = 5.0
#: Bounds of the plausibility checks (inclusive upper bounds).
LIMITS = {"inner_diameter_mm": 5000.0, "length_m": 100_000.0, "static_head_m": 1000.0,
          "velocity_m_s": 5.0, "year_laid_min": 1800}

_NUMERIC = ("inner_diameter_mm", "length_m", "year_laid", "breaks_last_5y", "pumped_flow_m3_h",
            "hours_per_year", "static_head_m", "replacement_cost_per_m", "breaks_prior_5y",
            "replacement_inner_diameter_mm")


@dataclass
class Register:
    """A checked register: the valid mains, the rejected rows and where they came from.

    Attributes
    ----------
    mains : pandas.DataFrame
        The valid rows, in the register's order, typed: ``row`` (1-based), the columns of the
        module table (blank optional values filled: ``breaks_prior_5y`` NaN when not given,
        ``replacement_inner_diameter_mm`` the bore when blank, hours and static head 0 where
        not pumped).
    rejected : pandas.DataFrame
        ``row``, ``main_id`` (as written, may be empty) and ``reason`` of every excluded row.
    source : str
        Where the register came from.
    ignored_columns : list of str
        Columns of the file that pipeopt does not use.
    """

    mains: pd.DataFrame
    rejected: pd.DataFrame
    source: str
    ignored_columns: list[str] = field(default_factory=list)

    @property
    def rows(self) -> int:
        """Rows read (valid and rejected)."""
        return len(self.mains) + len(self.rejected)

    def __repr__(self) -> str:
        return (f"Register({self.source!r}: {len(self.mains):,} mains, {len(self.rejected):,} "
                f"row(s) rejected)")


# --------------------------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------------------------
def read_frame(source: Any) -> tuple[pd.DataFrame, str]:
    """Read a register file (``.csv``, ``.parquet`` or ``.pq``) or take a DataFrame.

    CSV cells are read as text (checked and converted by :func:`validate`), so that a file
    reads the same whole or in partitions. Returns the raw frame and a label for reports.
    """
    if isinstance(source, pd.DataFrame):
        return source, "a table given in Python"
    path = Path(source)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".parquet", ".pq"):
        raise InputError(f"register: {str(path)!r} must be a .csv or .parquet file")
    if not path.is_file():
        raise InputError(f"register: file {str(path)!r} not found")
    try:
        if suffix == ".csv":
            frame = pd.read_csv(path, dtype=str, skipinitialspace=True)
        else:
            frame = pd.read_parquet(path)
    except (ValueError, OSError, pd.errors.ParserError) as exc:
        raise InputError(f"register: {path.name} cannot be read: {exc}") from None
    return frame, str(path)


def check_columns(columns: Any) -> list[str]:
    """Refuse a register without a required column; return the columns that are ignored."""
    cols = [str(c) for c in columns]
    missing = [c for c in REQUIRED_COLUMNS if c not in cols]
    if missing:
        hints = []
        for c in missing:
            near = difflib.get_close_matches(c, cols, n=1, cutoff=0.6)
            hints.append(f"{c} (found {near[0]!r}?)" if near else c)
        raise InputError(f"register: missing column(s) {', '.join(hints)}; the columns are "
                         f"{', '.join(REQUIRED_COLUMNS)} and optionally "
                         f"{', '.join(OPTIONAL_COLUMNS)}, units in the names")
    return [c for c in cols if c not in REQUIRED_COLUMNS + OPTIONAL_COLUMNS]


def normalise_ids(ids: pd.Series) -> pd.Series:
    """``main_id`` (or ``material``) values as stripped text, missing (NA) where blank."""
    text = ids.astype("string").str.strip()
    return text.mask(text == "")


def duplicate_ids(ids: pd.Series) -> np.ndarray:
    """The ``main_id`` values that appear on more than one row (after :func:`normalise_ids`)."""
    counts = normalise_ids(ids).value_counts(dropna=True)
    return np.sort(counts.index[counts.to_numpy() > 1].to_numpy(dtype=object))


# --------------------------------------------------------------------------------------------
# checking
# --------------------------------------------------------------------------------------------
def _cells(raw: pd.Series) -> np.ndarray:
    return raw.astype(object).to_numpy()


def validate(frame: pd.DataFrame, materials: Any = None, first_year: int | None = None,
             duplicates: Any = None, row_offset: int = 0) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Check every row of a raw register; return the valid mains and the rejected rows.

    Parameters
    ----------
    frame : pandas.DataFrame
        Raw register rows (text or numbers), with the columns of the module table.
    materials : collection of str, optional
        The material classes the study knows; other materials are rejected.
    first_year : int, optional
        The calendar year of year 0 (now): a main laid after it is rejected.
    duplicates : array of str, optional
        ``main_id`` values known to appear more than once in the whole register (default:
        those appearing more than once in ``frame``); their rows are rejected.
    row_offset : int
        Rows before ``frame`` in the register (for row numbers of a partition).

    Returns
    -------
    mains : pandas.DataFrame
        Valid rows, typed (see :class:`Register`).
    rejected : pandas.DataFrame
        ``row``, ``main_id``, ``reason``.
    """
    check_columns(frame.columns)
    n = len(frame)
    row = np.arange(row_offset + 1, row_offset + n + 1, dtype=np.int64)
    ids = normalise_ids(frame["main_id"]).reset_index(drop=True)
    dup = duplicate_ids(frame["main_id"]) if duplicates is None else np.asarray(
        duplicates, dtype=object)
    raw = {c: frame[c].reset_index(drop=True) for c in _NUMERIC if c in frame.columns}
    num = {c: pd.to_numeric(v, errors="coerce").to_numpy(dtype=float) for c, v in raw.items()}
    given = {c: (v.notna().to_numpy() if pd.api.types.is_numeric_dtype(v.dtype)
                 else (normalise_ids(v).notna().to_numpy())) for c, v in raw.items()}
    mat = normalise_ids(frame["material"]).reset_index(drop=True)
    clauses: list[tuple[np.ndarray, Any]] = []

    def number_rule(col: str, ok: np.ndarray, rule: str, optional: bool = False,
                    applies: np.ndarray | None = None) -> np.ndarray:
        """Flag rows of ``col`` that are missing, not a number, or break ``ok``."""
        x = num[col]
        has = given[col]
        where = np.ones(n, dtype=bool) if applies is None else applies
        missing = where & ~has & (not optional)
        nan = where & has & ~np.isfinite(x)
        bad = where & has & np.isfinite(x) & ~ok
        cells = _cells(raw[col])
        clauses.append((missing, lambda ix: np.full(ix.size, f"{col} is missing")))
        clauses.append((nan, lambda ix: f"{col} is not a number: " + cells[ix].astype(str)))
        clauses.append((bad, lambda ix: f"{col} must be {rule}, got " + cells[ix].astype(str)))
        return missing | nan | bad

    bad = np.zeros(n, dtype=bool)
    no_id = ids.isna().to_numpy()
    id_text = ids.fillna("").to_numpy(dtype=object)
    dup_row = ~no_id & ids.isin(dup).fillna(False).to_numpy(dtype=bool)
    clauses.append((no_id, lambda ix: np.full(ix.size, "main_id is missing")))
    clauses.append((dup_row, lambda ix: "main_id '" + id_text[ix].astype(str)
                    + "' appears on more than one row"))
    bad |= no_id | dup_row
    mat_text = mat.fillna("").to_numpy(dtype=object)
    no_mat = mat.isna().to_numpy()
    clauses.append((no_mat, lambda ix: np.full(ix.size, "material is missing")))
    bad |= no_mat
    if materials is not None:
        known = sorted(str(m) for m in materials)
        unknown = ~no_mat & ~mat.isin(known).fillna(False).to_numpy(dtype=bool)
        listed = ", ".join(known)
        clauses.append((unknown, lambda ix: "material '" + mat_text[ix].astype(str)
                        + f"' is not one of the study's materials ({listed})"))
        bad |= unknown

    d = num["inner_diameter_mm"]
    bad |= number_rule("inner_diameter_mm", (d > 0) & (d <= LIMITS["inner_diameter_mm"]),
                       f"in (0, {LIMITS['inner_diameter_mm']:g}] mm")
    length = num["length_m"]
    bad |= number_rule("length_m", (length > 0) & (length <= LIMITS["length_m"]),
                       f"in (0, {LIMITS['length_m']:g}] m")
    y = num["year_laid"]
    top = np.inf if first_year is None else first_year
    bad |= number_rule("year_laid", (y == np.round(y)) & (y >= LIMITS["year_laid_min"])
                       & (y <= top), f"a whole year from {LIMITS['year_laid_min']} to "
                       + ("now" if first_year is None else f"the first year {first_year}"))
    b = num["breaks_last_5y"]
    bad |= number_rule("breaks_last_5y", (b >= 0) & (b == np.round(b)), "a whole number >= 0")
    if "breaks_prior_5y" in num:
        p = num["breaks_prior_5y"]
        bad |= number_rule("breaks_prior_5y", (p >= 0) & (p == np.round(p)),
                           "a whole number >= 0 (or blank)", optional=True)
    q = num["pumped_flow_m3_h"]
    flow_bad = number_rule("pumped_flow_m3_h", q >= 0, ">= 0 (0 for a main that is not pumped)")
    bad |= flow_bad
    pumped = ~flow_bad & (q > 0)
    h = num["hours_per_year"]
    bad |= number_rule("hours_per_year", (h > 0) & (h <= 8760),
                       "in (0, 8760] hours a year for a pumped main", applies=pumped)
    z = num["static_head_m"]
    bad |= number_rule("static_head_m", (z >= 0) & (z <= LIMITS["static_head_m"]),
                       f"in [0, {LIMITS['static_head_m']:g}] m for a pumped main",
                       applies=pumped)
    c = num["replacement_cost_per_m"]
    bad |= number_rule("replacement_cost_per_m", c > 0, "positive (currency per metre)")
    if "replacement_inner_diameter_mm" in num:
        dn = num["replacement_inner_diameter_mm"]
        bad |= number_rule("replacement_inner_diameter_mm",
                           (dn > 0) & (dn <= LIMITS["inner_diameter_mm"]),
                           f"in (0, {LIMITS['inner_diameter_mm']:g}] mm (or blank)",
                           optional=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        velocity = (q / 3600.0) / (np.pi * (d / 1000.0) ** 2 / 4.0)
    fast = pumped & np.isfinite(velocity) & (velocity > LIMITS["velocity_m_s"]) & (d > 0)
    clauses.append((fast, lambda ix: "pumped_flow_m3_h gives " + np.char.mod(
        "%.1f", velocity[ix]).astype(object) + f" m/s in the bore, above "
        f"{LIMITS['velocity_m_s']:g} m/s: check the flow and the diameter"))
    bad |= fast

    reasons = join_clauses(n, clauses)
    rejected = pd.DataFrame({"row": row[bad], "main_id": id_text[bad].astype(str),
                             "reason": reasons[bad].astype(str)})
    ok = ~bad
    pumped_ok = pumped[ok]
    prior = (num["breaks_prior_5y"][ok] if "breaks_prior_5y" in num
             else np.full(int(ok.sum()), np.nan))
    new_bore = d[ok].copy()
    if "replacement_inner_diameter_mm" in num:
        given_new = given["replacement_inner_diameter_mm"][ok]
        new_bore[given_new] = num["replacement_inner_diameter_mm"][ok][given_new]
    mains = pd.DataFrame({
        "row": row[ok],
        "main_id": id_text[ok].astype(str),
        "material": mat_text[ok].astype(str),
        "inner_diameter_mm": d[ok],
        "length_m": length[ok],
        "year_laid": y[ok].astype(np.int64),
        "breaks_last_5y": b[ok],
        "breaks_prior_5y": prior,
        "pumped_flow_m3_h": q[ok],
        "hours_per_year": np.where(pumped_ok, h[ok], 0.0),
        "static_head_m": np.where(pumped_ok, z[ok], 0.0),
        "replacement_cost_per_m": c[ok],
        "replacement_inner_diameter_mm": new_bore,
    })
    return mains, rejected


def read_register(source: Any, materials: Any = None, first_year: int | None = None) -> Register:
    """Read and check a register: a CSV or Parquet file, or a DataFrame.

    Parameters
    ----------
    source : path or pandas.DataFrame
        The register.
    materials : collection of str, optional
        Material classes the study knows.
    first_year : int, optional
        Calendar year of year 0 (now).

    Returns
    -------
    Register

    Examples
    --------
    >>> reg = read_register(invented_register(200, seed=3))
    >>> len(reg.mains) + len(reg.rejected)
    200
    >>> reg.rejected["reason"].str.contains("length_m must be").any()
    np.True_
    """
    frame, label = read_frame(source)
    ignored = check_columns(frame.columns)
    mains, rejected = validate(frame, materials, first_year)
    return Register(mains, rejected, label, ignored)


# --------------------------------------------------------------------------------------------
# an invented register
# --------------------------------------------------------------------------------------------
#: The fictional utility of the invented register.
INVENTED_UTILITY = "Oxtervale Water (an invented utility; illustrative)"
_ZONES = ("Vordhallow", "Quillhaven", "Tarnwick Heights", "Emberfold", "Saltmarrow",
          "Quennimar Rise")
#: Material classes of the invented register: share of mains, years laid, nominal bores [mm],
#: breaks per km and year now at age 50, and the growth of breaks [1/yr] (all invented).
INVENTED_MATERIALS = {
    "cast-iron": (0.26, 1895, 1968, (100, 150, 200, 250, 300, 400), 0.25, 0.05),
    "asbestos-cement": (0.14, 1950, 1985, (100, 150, 200, 250, 300), 0.15, 0.04),
    "steel": (0.06, 1930, 1980, (150, 200, 300, 400, 500), 0.20, 0.04),
    "ductile-iron": (0.24, 1968, 2015, (100, 150, 200, 250, 300, 400, 500), 0.06, 0.03),
    "pvc": (0.18, 1972, 2012, (100, 150, 200, 250), 0.08, 0.02),
    "pe": (0.12, 1988, 2024, (90, 125, 160, 200, 250, 315), 0.03, 0.01),
}


def invented_register(n: int = 5000, seed: int = 2027, first_year: int = 2027,
                      defects: bool = True) -> pd.DataFrame:
    """The register of mains of a fictional utility: every name and number is invented.

    Seeded, vectorized and illustrative: material classes by era, bores, lengths, break
    counts drawn from an exponential break law with scatter between mains, about one main in
    ten pumped (a rising main) with a flow, hours and static head, a replacement cost per
    metre growing with the bore. With ``defects`` a few rows are deliberately broken (negative
    length, unknown material, a duplicated id, a main laid in the future, no cost, a negative
    flow) to show how bad rows are reported.

    Parameters
    ----------
    n : int
        Rows, >= 20 when ``defects``.
    seed : int
        Seed of the random generator.
    first_year : int
        The calendar year of "now".
    defects : bool
        Break a few rows on purpose.

    Returns
    -------
    pandas.DataFrame
        The register columns, plus ``zone`` (an invented district; ignored by the study).

    Examples
    --------
    >>> reg = invented_register(1000, seed=1, defects=False)
    >>> len(reg), reg["main_id"].is_unique
    (1000, True)
    """
    if int(n) != n or n < (20 if defects else 1):
        raise InputError(f"n must be a whole number of rows >= {20 if defects else 1}; got {n!r}")
    rng = np.random.default_rng(seed)
    names = list(INVENTED_MATERIALS)
    spec = [INVENTED_MATERIALS[m] for m in names]
    share = np.array([s[0] for s in spec])
    k = rng.choice(len(names), size=n, p=share / share.sum())
    lo = np.array([s[1] for s in spec])[k]
    hi = np.array([s[2] for s in spec])[k]
    year = np.minimum(lo + np.floor(rng.random(n) * (hi - lo + 1)), first_year).astype(np.int64)
    age = first_year - year
    # nominal bore: one of the material's sizes, smaller sizes more common
    bores = np.zeros(n)
    for j, s in enumerate(spec):           # a loop over the six material classes
        idx = np.flatnonzero(k == j)
        sizes = np.asarray(s[3], dtype=float)
        w = 1.0 / np.arange(1, sizes.size + 1)
        bores[idx] = rng.choice(sizes, size=idx.size, p=w / w.sum())
    old_metal = np.isin(np.asarray(names)[k], ("cast-iron", "steel"))
    # tuberculation narrows old unlined metal mains by up to 8 %
    inner = np.round(bores * np.where(old_metal, 1.0 - 0.08 * rng.random(n), 1.0), 1)
    length = np.round(np.clip(rng.lognormal(np.log(120.0), 0.7, n), 10.0, 2500.0), 1)
    pumped = (rng.random(n) < 0.10) & (bores >= 150)
    length = np.where(pumped, np.round(np.minimum(length * 4.0, 6000.0), 1), length)
    velocity = rng.uniform(0.5, 1.4, n)
    flow = np.where(pumped, np.round(velocity * np.pi * (inner / 1000.0) ** 2 / 4.0 * 3600.0,
                                     1), 0.0)
    hours = np.where(pumped, np.round(rng.uniform(2500.0, 8000.0, n)), np.nan)
    head = np.where(pumped, np.round(rng.uniform(6.0, 55.0, n), 1), np.nan)
    base = np.array([s[4] for s in spec])[k]
    growth = np.array([s[5] for s in spec])[k] * rng.lognormal(0.0, 0.3, n)
    # breaks per year now: the class rate at age 50, older mains more, scatter between mains
    rate = (length / 1000.0) * base * np.exp(0.03 * (age - 50)) * rng.lognormal(0.0, 0.8, n)
    window = -np.expm1(-growth * BREAK_WINDOW) / growth
    recent = rng.poisson(rate * window)
    prior = rng.poisson(rate * np.exp(-growth * BREAK_WINDOW) * window)
    new_bore = np.where(old_metal, bores, np.nan)            # old metal: restore the bore
    cost = np.round((250.0 + 1400.0 * (bores / 1000.0) ** 1.2) * rng.lognormal(0.0, 0.15, n))
    frame = pd.DataFrame({
        "main_id": "OXV-" + pd.Series(np.arange(1, n + 1)).astype(str).str.zfill(6),
        "material": np.asarray(names, dtype=object)[k],
        "inner_diameter_mm": inner,
        "length_m": length,
        "year_laid": year,
        "breaks_last_5y": recent.astype(np.int64),
        "breaks_prior_5y": prior.astype(np.int64),
        "pumped_flow_m3_h": flow,
        "hours_per_year": hours,
        "static_head_m": head,
        "replacement_cost_per_m": cost,
        "replacement_inner_diameter_mm": new_bore,
        "zone": np.asarray(_ZONES, dtype=object)[rng.integers(0, len(_ZONES), n)],
    })
    if defects:
        at = [n * j // 7 for j in range(1, 7)]
        frame = frame.astype({"year_laid": float})
        frame.loc[at[0], "length_m"] = -35.0
        frame.loc[at[1], "material"] = "vitrified-clay"
        frame.loc[at[2], "main_id"] = frame.loc[at[2] - 1, "main_id"]
        frame.loc[at[3], "year_laid"] = float(first_year + 4)
        frame.loc[at[4], "replacement_cost_per_m"] = np.nan
        frame.loc[at[5], "pumped_flow_m3_h"] = -12.0
    return frame
