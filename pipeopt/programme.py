"""Renewal programme (study layer): every main of a register, valued, ranked and scheduled.

A :class:`ProgrammeStudy` holds what is common to a utility's mains (water, tariff, discount
rate, horizon, cost of a repair, the new main, material classes, yearly budgets). Its
:meth:`~ProgrammeStudy.run` reads and checks a register (:mod:`pipeopt.register`), values
replacing every main in every year against keeping it (:func:`pipeopt.replacement.evaluate_mains`,
the conventions of a single-main upgrade study), and chooses the year of renewal of each main
within the budgets (:func:`pipeopt.schedule.schedule_renewals`). It returns a
:class:`ProgrammeResult`.

Per main, from the register: the break rate now N0 from ``breaks_last_5y`` under exponential
growth (Shamir & Howard 1979, :func:`pipeopt.renewal.break_rate_from_count`); the growth rate A
of the main's material class: the study's rate, or (``breaks.growth_from = "history"``) the rate
fitted from the register itself, pooling the ``breaks_last_5y`` and ``breaks_prior_5y`` of the
class's mains (:func:`pipeopt.renewal.break_growth_from_counts`) where both pooled windows hold
at least ``breaks.min_fit_breaks`` breaks, limited to ± ``breaks.max_fitted_growth``, else the
study's rate (Shamir & Howard fitted their growth rates on groups of pipes in the same way: a
single main's few breaks give a very noisy rate, which 40 years of exponential growth would
amplify); the roughness now, the class roughness of new pipe plus its aging over the main's
age; the capital, cost per metre times length.

The study file (read by :func:`pipeopt.programme_inputs.read_programme`; ``[study]``,
``[fluid]``, ``[pumping]``, ``[energy]``, ``[economics]`` and ``[growth]`` as in a sizing study,
by the same sections; ``economics.pipe_life`` and ``economics.pipe_maintenance`` are the new
main's)::

    [growth]          flow_per_year, design_year (of every pumped main's flow; optional)
    [pumped_mains]    minor_loss_k (optional)
    [breaks]          repair_cost, growth_from ("material" | "history"), min_fit_breaks,
                      max_fitted_growth
    [replacement]     roughness, aging, break_factor (the new main, like for like)
    [[material]]      name (as in the register's material column), roughness, aging,
                      break_growth
    [programme]       first_year, budget (one for every year, or a list by year), years
    [solver]          method ("auto" | "milp" | "heuristic"), time_limit, mip_gap, max_pairs,
                      node_limit (optional)

The evaluation runs in process, in chunks of mains, or on Dask (``dask=True`` for a
``distributed.LocalCluster``, a scheduler address, or a ``distributed.Client``): the register
is split into partitions evaluated by the same function, and since every main's numbers
depend on that main alone the two give the same results, bit for bit (same machine, same
library versions). The schedule is then chosen in process.

Examples
--------
>>> from pipeopt.programme import ProgrammeStudy
>>> from pipeopt.register import invented_register
>>> study = ProgrammeStudy.demo()
>>> result = study.run(invented_register(300, seed=5))
>>> result.success, len(result.mains) + len(result.rejected)
(True, 300)
"""

from __future__ import annotations

import html
import sys
import time
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import pandas as pd

from .costs import EnergyTariff
from .errors import InputError
from .fluid import Fluid
from .inputs import Economics, Pumping, StudyInfo
from .programme_inputs import (
    GROWTH_FROM,
    BreakSettings,
    MaterialClass,
    NewMain,
    ProgrammeSettings,
    PumpedMains,
    SolverOptions,
    flow_growth,
    read_programme,
    wire_to_water,
)
from .register import (
    BREAK_WINDOW,
    check_columns,
    duplicate_ids,
    invented_register,
    normalise_ids,
    read_frame,
    validate,
)
from .renewal import break_growth_from_counts, break_rate_from_count
from .replacement import Mains, RenewalScenario, evaluate_mains
from .results import CAUTION, StudyResult
from .schedule import Schedule, schedule_renewals
from .studyfile import FrozenStudy, StudyFileMixin

__all__ = ["MaterialClass", "NewMain", "SolverOptions", "BreakSettings", "ProgrammeSettings",
           "PumpedMains", "ProgrammeStudy", "ProgrammeResult", "RegisterEvaluation",
           "evaluate_rows", "pooled_breaks", "GROWTH_FROM", "STATUS"]

#: Status of a main in a programme, with its meaning.
STATUS = {
    "renew": "renewed in the programme",
    "defer": "renewal pays within the programme's years, but the budget went to mains of "
             "higher NPV per unit of capital",
    "over budget": "renewal pays, but its capital exceeds every year's budget",
    "later": "renewal pays only after the programme's years",
    "keep": "no year of renewal within the horizon pays (NPV <= 0)",
}
#: Mains evaluated together in process: about 16,000 mains keep every per-main array small.
CHUNK_ROWS = 16_384


# --------------------------------------------------------------------------------------------
# evaluation of rows (the same function in process and on every Dask partition)
# --------------------------------------------------------------------------------------------
_TABLE_COLUMNS = {
    "row": np.int64, "main_id": object, "material": object, "length_m": float,
    "inner_diameter_mm": float, "year_laid": np.int64, "age_yr": np.int64, "pumped": bool,
    "roughness_now_mm": float, "breaks_last_5y": float, "breaks_per_year_now": float,
    "break_growth_per_year": float, "break_growth_source": object, "capital": float,
    "pv_keep": float, "best_year": np.int64, "best_calendar_year": np.int64,
    "npv_best": float, "renewal_pays": bool, "benefit_cost_ratio": float,
    "pv_saving_breaks": float, "pv_saving_energy": float, "pv_maintenance_new": float,
    "energy_kwh_year1": float, "head_loss_year1_m": float, "velocity_year1_m_s": float,
    "roughness_capped": bool, "transitional_flow": bool,
}


def pooled_breaks(frame: pd.DataFrame, study: ProgrammeStudy, duplicates: Any = None,
                  row_offset: int = 0) -> pd.DataFrame:
    """Breaks of the valid rows pooled by material class: the two 5-year windows.

    Only mains with both counts given are pooled. Returns a table indexed by the study's
    material names with ``breaks_last_5y``, ``breaks_prior_5y`` and ``mains`` (sums of whole
    numbers: the same in any order, so partitions add up to the whole register exactly).
    """
    mains, _ = validate(frame, study.material_names, study.first_year, duplicates, row_offset)
    both = mains[mains["breaks_prior_5y"].notna()]
    sums = both.groupby("material")[["breaks_last_5y", "breaks_prior_5y"]].sum()
    sums["mains"] = both.groupby("material").size().astype(float)
    return sums.reindex(study.material_names, fill_value=0.0).astype(float)


def evaluate_rows(frame: pd.DataFrame, study: ProgrammeStudy, duplicates: Any = None,
                  row_offset: int = 0, pooled: pd.DataFrame | None = None,
                  progress: Any = None) -> tuple[pd.DataFrame, np.ndarray, pd.DataFrame]:
    """Check and value the rows of a register (or of one partition of it).

    Parameters
    ----------
    frame : pandas.DataFrame
        Raw register rows.
    study : ProgrammeStudy
        The study.
    duplicates : array of str, optional
        ``main_id`` values repeated anywhere in the register (default: within ``frame``).
    row_offset : int
        Rows of the register before ``frame``.
    pooled : pandas.DataFrame, optional
        The whole register's :func:`pooled_breaks` (needed when ``breaks.growth_from`` is
        ``"history"``).
    progress : callable, optional
        Called with the number of mains finished after each chunk.

    Returns
    -------
    table : pandas.DataFrame
        One row per valid main (columns as :attr:`ProgrammeResult.mains` before scheduling).
    npv : ndarray (M, W)
        NPV of renewing each main in each year of the programme [currency].
    rejected : pandas.DataFrame
        ``row``, ``main_id``, ``reason``.
    """
    mains, rejected = validate(frame, study.material_names, study.first_year, duplicates,
                               row_offset)
    count = len(mains)
    w = study.years
    names = study.material_names
    code = pd.Categorical(mains["material"], categories=names).codes
    rough = np.array([study.materials[k].roughness for k in names])[code]
    aging = np.array([study.materials[k].aging for k in names])[code]
    rates = study.growth_rates(pooled)
    growth = rates["break_growth_per_year"].to_numpy()[code]
    source = rates["source"].to_numpy(dtype=object)[code]
    age = (study.first_year - mains["year_laid"].to_numpy()).astype(np.int64)
    recent = mains["breaks_last_5y"].to_numpy()
    breaks_now = np.asarray(break_rate_from_count(recent, BREAK_WINDOW, growth), dtype=float)
    length = mains["length_m"].to_numpy()
    capital = mains["replacement_cost_per_m"].to_numpy() * length
    flow = mains["pumped_flow_m3_h"].to_numpy() / 3600.0
    inputs = {
        "length": length, "diameter": mains["inner_diameter_mm"].to_numpy() / 1000.0,
        "roughness": rough + aging * age, "aging": aging, "flow": flow,
        "hours": mains["hours_per_year"].to_numpy(),
        "static_head": mains["static_head_m"].to_numpy(), "breaks_now": breaks_now,
        "break_growth": growth, "capital": capital,
        "new_diameter": mains["replacement_inner_diameter_mm"].to_numpy() / 1000.0,
    }
    keys = ("pv_keep", "best_year", "npv_best", "benefit_cost_ratio", "pv_saving_breaks",
            "pv_saving_energy", "pv_maintenance_new", "energy_kwh_year1", "head_loss_year1",
            "velocity_year1", "roughness_capped", "transitional")
    out: dict[str, np.ndarray] = {}
    npv = np.empty((count, w))
    for start in range(0, count, CHUNK_ROWS):        # chunks bound the memory, not a loop per main
        part = slice(start, min(start + CHUNK_ROWS, count))
        econ = evaluate_mains(study.scenario, Mains(**{k: v[part] for k, v in inputs.items()}))
        for key in keys:
            value = getattr(econ, key)
            if key not in out:
                out[key] = np.empty(count, dtype=value.dtype)
            out[key][part] = value
        npv[part] = econ.npv[:, :w]
        if progress is not None:
            progress(part.stop - part.start)
    if count == 0:
        out = {key: np.empty(0, dtype=bool if key in ("roughness_capped", "transitional")
                             else np.int64 if key == "best_year" else float) for key in keys}
    table = pd.DataFrame({
        "row": mains["row"].to_numpy(), "main_id": mains["main_id"].to_numpy(dtype=object),
        "material": mains["material"].to_numpy(dtype=object), "length_m": length,
        "inner_diameter_mm": mains["inner_diameter_mm"].to_numpy(),
        "year_laid": mains["year_laid"].to_numpy(), "age_yr": age, "pumped": flow > 0,
        "roughness_now_mm": inputs["roughness"] * 1000.0, "breaks_last_5y": recent,
        "breaks_per_year_now": breaks_now, "break_growth_per_year": growth,
        "break_growth_source": source, "capital": capital, "pv_keep": out["pv_keep"],
        "best_year": out["best_year"].astype(np.int64),
        "best_calendar_year": study.first_year + out["best_year"].astype(np.int64),
        "npv_best": out["npv_best"], "renewal_pays": out["npv_best"] > 0,
        "benefit_cost_ratio": out["benefit_cost_ratio"],
        "pv_saving_breaks": out["pv_saving_breaks"],
        "pv_saving_energy": out["pv_saving_energy"],
        "pv_maintenance_new": out["pv_maintenance_new"],
        "energy_kwh_year1": out["energy_kwh_year1"], "head_loss_year1_m": out["head_loss_year1"],
        "velocity_year1_m_s": out["velocity_year1"], "roughness_capped": out["roughness_capped"],
        "transitional_flow": out["transitional"],
    })
    return table.astype(_TABLE_COLUMNS), npv, rejected


@dataclass
class RegisterEvaluation:
    """Every main of a register valued, before scheduling.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per valid main (see :attr:`ProgrammeResult.mains`, without the schedule).
    npv : ndarray (M, W)
        NPV of renewing each main in each year of the programme [currency].
    rejected : pandas.DataFrame
        ``row``, ``main_id``, ``reason`` of every excluded row.
    source : str
        Where the register came from.
    ignored_columns : list of str
        Register columns pipeopt does not use.
    growth : pandas.DataFrame
        The break growth rate of each material class and its source
        (:meth:`ProgrammeStudy.growth_rates`).
    partitions : int
        Partitions evaluated (1 in process).
    seconds : float
        Wall time of reading and valuing [s].
    """

    table: pd.DataFrame
    npv: np.ndarray
    rejected: pd.DataFrame
    source: str
    ignored_columns: list[str]
    growth: pd.DataFrame
    partitions: int = 1
    seconds: float = 0.0


def _progress_bar(total: int, progress: bool | None, what: str):
    """A tqdm bar on stderr when asked, or by default when stderr is a terminal; else None."""
    show = sys.stderr.isatty() if progress is None else bool(progress)
    if not show:
        return None
    from tqdm.auto import tqdm

    return tqdm(total=total, desc=what, unit="main", file=sys.stderr, leave=False)


# --------------------------------------------------------------------------------------------
# the study
# --------------------------------------------------------------------------------------------
class ProgrammeStudy(FrozenStudy, StudyFileMixin):
    """A renewal programme over a register of mains under yearly capital budgets.

    Every argument is a keyword. The sections are frozen, and so is the study: assigning to it
    raises; :meth:`replace` builds another (``study.replace(programme=ProgrammeSettings(2027,
    3e6))``).

    Parameters
    ----------
    fluid : Fluid
        The water (its density and viscosity).
    materials : sequence of MaterialClass
        The material classes of the register.
    tariff : EnergyTariff
        Energy price, real escalation, demand charge.
    pumping : Pumping or float
        Wire-to-water efficiency of pumping [-].
    economics : Economics
        Real discount rate, horizon N [yr], and the new main's life (for its straight-line
        residual value at the horizon) and yearly maintenance (``pipe_life``,
        ``pipe_maintenance``).
    breaks : BreakSettings
        Cost of a repair, and where the growth rate of breaks comes from.
    replacement : NewMain
        The new main: roughness, aging, share of breaks that goes on.
    programme : ProgrammeSettings
        First calendar year, the yearly budgets, the years planned (at most the horizon).
    solver : SolverOptions, optional
        How the schedule is chosen.
    pumped_mains : PumpedMains, optional
        ΣK of every pumped main (default 0).
    growth : float or mapping, optional
        Compound growth of every pumped main's flow [1/yr], or the
        :class:`~pipeopt.duty.DutyProfile` arguments ``growth`` and ``design_year``.
    name, currency, description : str
        Labels.
    illustrative : bool
        Marks every output as using invented numbers.
    """

    _DEMO_FILE = "demo_programme.toml"

    def __init__(self, *, fluid: Fluid, materials: Any, tariff: EnergyTariff, pumping: Any,
                 economics: Economics, breaks: BreakSettings, replacement: NewMain,
                 programme: ProgrammeSettings, solver: SolverOptions | None = None,
                 pumped_mains: PumpedMains | None = None, growth: Any = None,
                 name: str = "renewal programme", currency: str = "",
                 illustrative: bool = False, description: str = "") -> None:
        self._args = {k: v for k, v in locals().items() if k not in ("self", "__class__")}
        if not isinstance(fluid, Fluid):
            raise InputError("fluid must be a pipeopt.Fluid")
        for value, cls, what in ((tariff, EnergyTariff, "tariff"),
                                 (economics, Economics, "economics"),
                                 (breaks, BreakSettings, "breaks"),
                                 (replacement, NewMain, "replacement"),
                                 (programme, ProgrammeSettings, "programme"),
                                 (solver or SolverOptions(), SolverOptions, "solver"),
                                 (pumped_mains or PumpedMains(), PumpedMains, "pumped_mains")):
            if not isinstance(value, cls):
                raise InputError(f"{what} must be a {cls.__name__}; got {type(value).__name__}")
        mats = tuple(m if isinstance(m, MaterialClass) else MaterialClass(**m)
                     for m in (materials or ()))
        if not mats:
            raise InputError("material: at least one material class is needed")
        if len({m.name for m in mats}) != len(mats):
            raise InputError("material: every material class needs its own name")
        self.fluid = fluid
        self.material_classes = mats
        self.material_names = sorted(m.name for m in mats)
        self.tariff = tariff
        self.pumping = pumping if isinstance(pumping, Pumping) else Pumping(pumping)
        self.economics = economics
        self.breaks = breaks
        self.replacement = replacement
        self.programme = programme
        self.solver = solver or SolverOptions()
        self.pumped_mains = pumped_mains or PumpedMains()
        self.flow_growth = flow_growth(growth)
        self.info = StudyInfo(name, currency, illustrative, description)
        self.budget = programme.budgets(economics.horizon)
        self.years = int(self.budget.size)
        self.scenario = RenewalScenario(
            density=fluid.density, viscosity=fluid.viscosity,
            efficiency=wire_to_water(self.pumping), tariff=tariff,
            discount_rate=economics.discount_rate, horizon=economics.horizon,
            break_cost=breaks.repair_cost, new_roughness=replacement.roughness,
            new_aging=replacement.aging, life=economics.pipe_life,
            maintenance=economics.pipe_maintenance, break_factor=replacement.break_factor,
            minor_loss_k=self.pumped_mains.minor_loss_k,
            flow_growth=self.flow_growth.growth, design_year=self.flow_growth.design_year)
        self._frozen = True

    def replace(self, **changes: Any) -> ProgrammeStudy:
        """A new study with some constructor arguments changed, e.g.
        ``study.replace(breaks=BreakSettings(9000.0))``."""
        return super().replace(**changes)

    # ----- settings -------------------------------------------------------------------------
    @property
    def materials(self) -> MappingProxyType:
        """The material classes by name (read-only)."""
        return MappingProxyType({m.name: m for m in self.material_classes})

    @property
    def first_year(self) -> int:
        """Calendar year of year of action 0 (now)."""
        return int(self.programme.first_year)

    @property
    def growth_from(self) -> str:
        """Where the break growth rates come from (:data:`GROWTH_FROM`)."""
        return self.breaks.growth_from

    @property
    def min_fit_breaks(self) -> int:
        return int(self.breaks.min_fit_breaks)

    @property
    def max_fitted_growth(self) -> float:
        return float(self.breaks.max_fitted_growth)

    @property
    def horizon(self) -> int:
        """Study years N [yr]."""
        return int(self.scenario.horizon)

    @property
    def calendar_years(self) -> np.ndarray:
        """Calendar years of the programme's years of action."""
        return self.first_year + np.arange(self.years)

    def growth_rates(self, pooled: pd.DataFrame | None = None) -> pd.DataFrame:
        """The break growth rate of each material class, and where it comes from.

        Parameters
        ----------
        pooled : pandas.DataFrame, optional
            The register's :func:`pooled_breaks`; needed with ``growth_from = "history"``.

        Returns
        -------
        pandas.DataFrame
            Indexed by material: ``study_rate``, ``breaks_last_5y``, ``breaks_prior_5y``,
            ``mains`` (pooled), ``fitted_rate`` (NaN when not fitted),
            ``break_growth_per_year`` (the rate used) and ``source``.
        """
        names = self.material_names
        table = pd.DataFrame({"study_rate": [self.materials[k].break_growth for k in names]},
                             index=pd.Index(names, name="material"))
        if pooled is None:
            pooled = pd.DataFrame(0.0, index=table.index,
                                  columns=["breaks_last_5y", "breaks_prior_5y", "mains"])
        table = table.join(pooled.reindex(names, fill_value=0.0))
        table["fitted_rate"] = np.nan
        table["break_growth_per_year"] = table["study_rate"]
        table["source"] = "study (material class)"
        if self.growth_from == "history":
            k = self.min_fit_breaks
            r = table["breaks_last_5y"].to_numpy()
            p = table["breaks_prior_5y"].to_numpy()
            fit = (r >= k) & (p >= k)
            if fit.any():
                rate = np.asarray(break_growth_from_counts(r[fit], p[fit], BREAK_WINDOW))
                limit = self.max_fitted_growth
                fitted = np.full(len(table), np.nan)
                fitted[fit] = rate
                table["fitted_rate"] = fitted
                used = table["break_growth_per_year"].to_numpy().copy()
                used[fit] = np.clip(rate, -limit, limit)
                table["break_growth_per_year"] = used
                src = table["source"].to_numpy(dtype=object).copy()
                src[fit] = np.where(np.abs(rate) > limit, "register history (limited)",
                                    "register history")
                table["source"] = src
        return table

    @staticmethod
    def demo_register(n: int = 5000, seed: int = 2027) -> pd.DataFrame:
        """The invented register of the demo (a fictional utility; illustrative)."""
        return invented_register(n, seed=seed, first_year=2027)

    # ----- study files ----------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> ProgrammeStudy:
        sec = read_programme(mapping, base)
        info = sec["info"]
        return cls(fluid=sec["fluid"].build(), materials=sec["materials"],
                   tariff=sec["energy"], pumping=sec["pumping"], economics=sec["economics"],
                   breaks=sec["breaks"], replacement=sec["replacement"],
                   programme=sec["programme"], solver=sec["solver"],
                   pumped_mains=sec["pumped_mains"], growth=sec["growth"], name=info.name,
                   currency=info.currency, illustrative=info.illustrative,
                   description=info.description)

    # ----- running --------------------------------------------------------------------------
    def evaluate(self, register: Any, dask: Any = None, partition_rows: int = 50_000,
                 progress: bool | None = None, source: str | None = None) -> RegisterEvaluation:
        """Read, check and value every main of a register (no schedule yet).

        Parameters
        ----------
        register : path or pandas.DataFrame
            A CSV or Parquet register, or its rows.
        dask : None, True, str or distributed.Client
            None or False: in this process. True: a ``distributed.LocalCluster`` on this
            machine (one worker process per core), closed afterwards. A scheduler address
            (``"tcp://host:8786"``): that cluster. A ``distributed.Client``: that client.
        partition_rows : int
            Rows per Dask partition (bounds each worker's memory).
        progress : bool, optional
            A progress bar (tqdm) on stderr: True, False, or None for one only when stderr
            is a terminal.
        source : str, optional
            How to name the register in reports (default: its path).

        Returns
        -------
        RegisterEvaluation
        """
        t0 = time.perf_counter()
        label = source
        if dask is None or dask is False:
            frame, source = read_frame(register)
            ignored = check_columns(frame.columns)
            pooled = pooled_breaks(frame, self) if self.growth_from == "history" else None
            bar = _progress_bar(len(frame), progress, "valuing mains")
            try:
                table, npv, rejected = evaluate_rows(frame, self, None, 0, pooled,
                                                     None if bar is None else bar.update)
            finally:
                if bar is not None:
                    bar.close()
            return RegisterEvaluation(table, npv, rejected, label or source, ignored,
                                      self.growth_rates(pooled), 1, time.perf_counter() - t0)
        out = _evaluate_on_dask(self, register, dask, partition_rows, progress)
        out.seconds = time.perf_counter() - t0
        out.source = label or out.source
        return out

    def schedule(self, evaluation: RegisterEvaluation) -> ProgrammeResult:
        """Choose the year of renewal of every valued main within the budgets."""
        t0 = time.perf_counter()
        table = evaluation.table
        so = self.solver
        if len(table):
            plan = schedule_renewals(evaluation.npv, table["capital"].to_numpy(), self.budget,
                                     so.method, so.time_limit, so.mip_gap, so.max_pairs,
                                     so.node_limit)
        else:
            plan = Schedule(np.zeros(0, dtype=np.int64), 0.0, 0.0, 0.0, "milp", True,
                            "no valid main in the register", 0, np.zeros(self.years))
        return _result(self, evaluation, plan, time.perf_counter() - t0)

    def run(self, register: Any, dask: Any = None, partition_rows: int = 50_000,
            progress: bool | None = None, source: str | None = None) -> ProgrammeResult:
        """Value every main of ``register`` and schedule the programme (see :meth:`evaluate`).

        Returns
        -------
        ProgrammeResult
        """
        return self.schedule(self.evaluate(register, dask, partition_rows, progress, source))

    def __repr__(self) -> str:
        return (f"ProgrammeStudy({self.name!r}: {len(self.materials)} material class(es), "
                f"{self.years} years from {self.first_year}, horizon {self.horizon})")

    def _repr_html_(self) -> str:
        mats = pd.DataFrame({"material": self.material_names,
                             "roughness_mm": [self.materials[k].roughness * 1e3
                                              for k in self.material_names],
                             "aging_mm_yr": [self.materials[k].aging * 1e3
                                             for k in self.material_names],
                             "break_growth": [self.materials[k].break_growth
                                              for k in self.material_names]})
        note = "<p><i>Illustrative numbers.</i></p>" if self.illustrative else ""
        return (f"<div><p><b>Renewal programme: {html.escape(self.name)}</b></p>{note}"
                f"<p>{self.years} years from {self.first_year}; horizon {self.horizon} years at "
                f"{self.scenario.discount_rate * 100:g} %; repair "
                f"{self.scenario.break_cost:,.0f} {html.escape(self.currency)}</p>"
                + mats.to_html(index=False, border=0) + "</div>")


# --------------------------------------------------------------------------------------------
# Dask
# --------------------------------------------------------------------------------------------
def _dask_frame(register: Any, partition_rows: int):
    """The register as a dask DataFrame, read the way :func:`read_frame` reads it."""
    import dask.dataframe as dd

    if isinstance(register, pd.DataFrame):
        return dd.from_pandas(register, chunksize=partition_rows, sort=False), \
            "a table given in Python"
    path = Path(register)
    if not path.is_file():
        raise InputError(f"register: file {str(path)!r} not found")
    suffix = path.suffix.lower()
    if suffix == ".csv":
        with path.open("rb") as fh:
            head = fh.read(1 << 20)
        lines = max(1, head.count(b"\n") - 1)
        per_row = max(1, len(head) // lines)
        return dd.read_csv(path, dtype=str, skipinitialspace=True,
                           blocksize=max(1 << 16, per_row * partition_rows)), str(path)
    if suffix in (".parquet", ".pq"):
        # partitions of whole row groups, as many of them as make about partition_rows rows
        import pyarrow.parquet as pq

        meta = pq.ParquetFile(path).metadata
        per_group = max(1, meta.num_rows // max(1, meta.num_row_groups))
        return dd.read_parquet(path, split_row_groups=max(1, partition_rows // per_group)), \
            str(path)
    raise InputError(f"register: {str(path)!r} must be a .csv or .parquet file")


def _evaluate_on_dask(study: ProgrammeStudy, register: Any, scheduler: Any,
                      partition_rows: int, progress: bool | None) -> RegisterEvaluation:
    try:
        import dask
        from distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise InputError("dask: Dask is not installed; install it with "
                         "python -m pip install \"pipeopt[dask]\"") from None

    if int(partition_rows) != partition_rows or partition_rows < 1:
        raise InputError(f"partition_rows must be a whole number >= 1; got {partition_rows!r}")
    ddf, source = _dask_frame(register, int(partition_rows))
    ignored = check_columns(ddf.columns)
    cluster = None
    if isinstance(scheduler, Client):
        client, own = scheduler, False
    elif scheduler is True or scheduler == "local":
        cluster = LocalCluster(processes=True, threads_per_worker=1, dashboard_address=None)
        client, own = Client(cluster), True
    elif isinstance(scheduler, str):
        client, own = Client(scheduler), True
    else:
        raise InputError(f"dask must be True, a scheduler address or a distributed.Client; got "
                         f"{scheduler!r}")
    try:
        if isinstance(register, pd.DataFrame):
            # rows already in memory: place them on the workers once for the passes below (a
            # file is read again by each pass instead, so that a worker holds one partition);
            # sending them is the point, so distributed's advice against it is not shown
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message="Sending large graph")
                ddf = client.persist(ddf)
        parts = ddf.to_delayed()
        # every partition's ids come back (small beside the rows) and are counted here, so
        # that an id repeated across partitions is found as in a whole register
        ids = dask.compute(*[dask.delayed(normalise_ids)(part["main_id"]) for part in parts])
        lengths = np.array([len(x) for x in ids], dtype=np.int64)
        repeated = duplicate_ids(pd.concat(ids, ignore_index=True))
        del ids
        offsets = np.concatenate([[0], np.cumsum(lengths)[:-1]])
        pooled = None
        if study.growth_from == "history":
            sums = dask.compute(*[dask.delayed(pooled_breaks)(part, study, repeated, int(off))
                                  for part, off in zip(parts, offsets, strict=True)])
            pooled = sum(sums[1:], sums[0])
        tasks = [dask.delayed(evaluate_rows)(part, study, repeated, int(off), pooled)
                 for part, off in zip(parts, offsets, strict=True)]
        futures = client.compute(tasks)
        bar = _progress_bar(int(lengths.sum()), progress, "valuing mains (Dask)")
        if bar is not None:
            size = {f.key: int(n) for f, n in zip(futures, lengths, strict=True)}
            for done in as_completed(futures):
                bar.update(size[done.key])
            bar.close()
        results = client.gather(futures)
    finally:
        if own:
            client.close()
        if cluster is not None:
            cluster.close()
    table = pd.concat([r[0] for r in results], ignore_index=True)
    npv = np.concatenate([r[1] for r in results], axis=0)
    rejected = pd.concat([r[2] for r in results], ignore_index=True)
    del results
    if len(parts) and table.dtypes.to_dict() != pd.Series(_TABLE_COLUMNS).to_dict():
        table = table.astype(_TABLE_COLUMNS)       # every part is typed; this is a safeguard
    return RegisterEvaluation(table, npv, rejected, source, ignored,
                              study.growth_rates(pooled), len(parts))


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
def _result(study: ProgrammeStudy, ev: RegisterEvaluation, plan: Schedule,
            seconds: float) -> ProgrammeResult:
    table = ev.table.copy(deep=False)              # new columns only: the evaluation keeps its own
    w = study.years
    year = plan.year
    count = len(table)
    rows = np.arange(count)
    scheduled = year >= 0
    npv = ev.npv
    capital = table["capital"].to_numpy()
    pays = table["renewal_pays"].to_numpy()
    window_pays = (npv > 0).any(axis=1) if count else np.zeros(0, dtype=bool)
    affordable = (capital[:, None] <= study.budget[None, :]) & (npv > 0)
    status = np.select(
        [scheduled, window_pays & affordable.any(axis=1), window_pays, pays],
        ["renew", "defer", "over budget", "later"], "keep").astype(object)
    best = table["best_year"].to_numpy()
    reason = np.select(
        [scheduled & (year == best), scheduled & (year > best),
         scheduled & (year < best) & (best >= w), scheduled & (year < best),
         status == "defer", status == "over budget", status == "later"],
        ["renewed in its best year", "renewed after its best year (budget)",
         "renewed before its best year, which is after the programme's years",
         "renewed before its best year (budget)",
         "deferred: the budget went to mains of higher NPV per unit of capital",
         "its capital exceeds every year's budget",
         "renewal pays only after the programme's years"],
        "keep: no year of renewal within the horizon pays").astype(object)
    saving = (table["pv_saving_breaks"].to_numpy()
              + np.maximum(table["pv_saving_energy"].to_numpy(), 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(saving > 0, table["pv_saving_breaks"].to_numpy() / saving, 0.0)
    driver = np.select([saving <= 0, share >= 2 / 3, share <= 1 / 3],
                       ["", "; saving mostly from fewer breaks",
                        "; saving mostly from energy"],
                       "; saving from fewer breaks and energy").astype(object)
    reason = reason + np.where(status == "keep", "", driver)
    ratio = np.where(pays, table["npv_best"].to_numpy() / capital, -np.inf)
    order = np.lexsort((rows, -ratio))
    rank = np.zeros(count, dtype=np.int64)
    rank[order] = np.arange(1, count + 1)
    table["scheduled_year"] = pd.array(np.where(scheduled, year, 0), dtype="Int64")
    table.loc[~scheduled, "scheduled_year"] = pd.NA
    table["scheduled_calendar_year"] = table["scheduled_year"] + study.first_year
    table["npv_scheduled"] = np.where(scheduled, npv[rows, np.maximum(year, 0)] if count
                                      else 0.0, 0.0)
    table["rank"] = pd.array(rank, dtype="Int64")
    table.loc[~pays, "rank"] = pd.NA
    table["status"] = status
    table["reason"] = reason
    table = table.astype({"status": object, "reason": object})
    spent = plan.capital_by_year
    yearly_npv = np.bincount(year[scheduled], weights=npv[rows[scheduled], year[scheduled]],
                             minlength=w) if count else np.zeros(w)
    schedule = pd.DataFrame({
        "year": np.arange(w), "calendar_year": study.calendar_years,
        "budget": study.budget, "mains": np.bincount(year[scheduled], minlength=w),
        "capital": spent, "budget_used": np.where(study.budget > 0, spent / np.where(
            study.budget > 0, study.budget, 1.0), 0.0),
        "cumulative_capital": np.cumsum(spent), "npv": yearly_npv,
        "cumulative_npv": np.cumsum(yearly_npv)})
    by_year = pd.DataFrame(npv, columns=[f"npv_{y}" for y in study.calendar_years])
    by_year.insert(0, "main_id", table["main_id"].to_numpy())
    success = count > 0
    over = bool(np.any(spent > study.budget))
    if over:                                        # cannot happen: the schedule fits by design
        success = False
    message = (f"{int(scheduled.sum()):,} of {count:,} mains renewed in {w} years; "
               f"{plan.message}" if count else "no valid main in the register: "
               "nothing to schedule")
    return ProgrammeResult(study=study, mains=table, schedule=schedule, rejected=ev.rejected,
                           npv_by_year=by_year, growth=ev.growth, plan=plan, source=ev.source,
                           ignored_columns=ev.ignored_columns, success=success, message=message,
                           partitions=ev.partitions, evaluation_seconds=ev.seconds,
                           scheduling_seconds=seconds)


@dataclass(repr=False)
class ProgrammeResult(StudyResult):
    """A budgeted renewal programme over a register of mains.

    It follows the result protocol (:class:`~pipeopt.results.StudyResult`): ``success``,
    ``message``, the tables as attributes, :meth:`text` (also ``str(result)``), a one-line
    ``repr`` and an HTML form for notebooks.

    Attributes
    ----------
    study : ProgrammeStudy
        The study.
    mains : pandas.DataFrame
        One row per valid main, in the register's order: ``row``, ``main_id``, ``material``,
        ``length_m``, ``inner_diameter_mm``, ``year_laid``, ``age_yr``, ``pumped``,
        ``roughness_now_mm``, ``breaks_last_5y``, ``breaks_per_year_now`` [1/yr],
        ``break_growth_per_year`` [1/yr], ``break_growth_source``, ``capital``, ``pv_keep``,
        ``best_year`` (year of action of the least PV, 0 = now), ``best_calendar_year``,
        ``npv_best``, ``renewal_pays`` (NPV at the best year > 0), ``benefit_cost_ratio``,
        ``pv_saving_breaks``, ``pv_saving_energy``, ``pv_maintenance_new``,
        ``energy_kwh_year1``, ``head_loss_year1_m``, ``velocity_year1_m_s``,
        ``roughness_capped``, ``transitional_flow``, then the programme: ``scheduled_year``
        and ``scheduled_calendar_year`` (empty when not renewed), ``npv_scheduled``, ``rank``
        (by NPV per unit of capital at the best year, among mains whose renewal pays),
        ``status`` (a key of :data:`STATUS`) and ``reason``. Money in the study currency,
        present values at the first year.
    schedule : pandas.DataFrame
        Per programme year: ``year``, ``calendar_year``, ``budget``, ``mains``, ``capital``,
        ``budget_used`` (fraction), ``cumulative_capital``, ``npv``, ``cumulative_npv``.
    rejected : pandas.DataFrame
        ``row``, ``main_id``, ``reason`` of every register row excluded.
    npv_by_year : pandas.DataFrame
        ``main_id`` and the NPV of renewing each main in each programme year.
    growth : pandas.DataFrame
        Break growth rate of each material class and its source.
    plan : Schedule
        The solver's answer: method, objective, bound, gap, message.
    source : str
        Where the register came from.
    ignored_columns : list of str
        Register columns not used.
    success : bool
        True when there were mains to schedule and every year is within its budget.
    message : str
        One line on what was found.
    partitions : int
        Partitions the register was valued in (1 in process).
    evaluation_seconds, scheduling_seconds : float
        Wall times [s].
    """

    study: ProgrammeStudy
    mains: pd.DataFrame
    schedule: pd.DataFrame
    rejected: pd.DataFrame
    npv_by_year: pd.DataFrame
    growth: pd.DataFrame
    plan: Schedule
    source: str
    ignored_columns: list[str] = field(default_factory=list)
    success: bool = True
    message: str = ""
    partitions: int = 1
    evaluation_seconds: float = 0.0
    scheduling_seconds: float = 0.0

    @property
    def currency(self) -> str:
        """The study currency (a label)."""
        return self.study.currency

    def ranked(self, n: int | None = None) -> pd.DataFrame:
        """Mains whose renewal pays, by rank (NPV per unit of capital at the best year)."""
        m = self.mains[self.mains["renewal_pays"]].sort_values("rank", kind="stable")
        cols = ["rank", "main_id", "material", "length_m", "inner_diameter_mm", "age_yr",
                "breaks_per_year_now", "capital", "best_calendar_year", "npv_best",
                "benefit_cost_ratio", "scheduled_calendar_year", "status", "reason"]
        return m[cols].head(n) if n is not None else m[cols]

    def text(self, top: int = 10) -> str:
        """A plain-text summary, with the ``top`` mains of the ranked list."""
        s = self.study
        m = self.mains
        cur = f" {s.currency}" if s.currency else ""
        lines = [f"pipeopt renewal programme: {s.name}"]
        if s.illustrative:
            lines.append("ILLUSTRATIVE: the utility, its register and every cost figure are "
                         "invented.")
        lines.append(f"register: {self.source}: {len(m) + len(self.rejected):,} rows, "
                     f"{len(m):,} mains valued, {len(self.rejected):,} rejected")
        for _, r in self.rejected.head(5).iterrows():
            lines.append(f"  rejected row {r['row']} ({r['main_id'] or 'no id'}): {r['reason']}")
        if len(self.rejected) > 5:
            lines.append(f"  ... and {len(self.rejected) - 5:,} more (see rejected.csv)")
        g = self.growth
        fitted = g[g["source"].str.startswith("register")]
        grown = ("the study's rates" if s.growth_from == "material" else
                 f"* fitted from the register, pooled: {len(fitted)} of {len(g)} classes had "
                 f"{s.min_fit_breaks} breaks or more in each 5-year window")
        lines += [
            f"economics: {s.horizon} years at {s.scenario.discount_rate * 100:g} % real; a "
            f"repair costs {s.scenario.break_cost:,.0f}{cur}",
            f"break growth per year by material ({grown}):",
            "  " + ", ".join(f"{k} {v * 100:.1f} %" + ("*" if src.startswith("register") else "")
                             for k, v, src in zip(g.index, g["break_growth_per_year"],
                                                  g["source"], strict=True)),
            f"renewal pays within the horizon for {int(m['renewal_pays'].sum()):,} of "
            f"{len(m):,} mains (NPV {m.loc[m['renewal_pays'], 'npv_best'].sum():,.0f}{cur} if "
            f"each were renewed in its best year)", "",
            f"programme {s.first_year}-{s.first_year + s.years - 1}:",
            f"{'year':>6}{'mains':>7}{'capital':>14}{'budget':>14}{'used':>8}{'NPV':>14}",
        ]
        for _, r in self.schedule.iterrows():
            lines.append(f"{int(r['calendar_year']):>6}{int(r['mains']):>7}{r['capital']:>14,.0f}"
                         f"{r['budget']:>14,.0f}{r['budget_used'] * 100:>7.1f}%"
                         f"{r['npv']:>14,.0f}")
        sc = self.schedule
        lines.append(f"{'total':>6}{int(sc['mains'].sum()):>7}{sc['capital'].sum():>14,.0f}"
                     f"{sc['budget'].sum():>14,.0f}{'':>8}{sc['npv'].sum():>14,.0f}")
        p = self.plan
        how = ("MILP (HiGHS)" if p.method == "milp" else
               "Lagrangian heuristic")
        proof = ("optimal" if p.optimal else "best found")
        lines.append(f"solver: {how}, {proof}; total NPV {p.objective:,.0f}{cur}, bound "
                     f"{p.bound:,.0f}, gap {p.gap * 100:.3g} % ({p.pairs:,} candidate "
                     f"main-years)")
        capped = int((m["roughness_capped"]).sum())
        transitional = int((m["transitional_flow"]).sum())
        if capped:
            lines.append(f"note: {capped:,} pumped main(s) reach a relative roughness of 0.05, "
                         f"the edge of the Moody chart, and are computed there "
                         f"(roughness_capped)")
        if transitional:
            lines.append(f"note: {transitional:,} pumped main(s) have 2000 <= Re < 4000 in some "
                         f"year; the turbulent friction factor is used there, conservative "
                         f"(transitional_flow)")
        counts = m["status"].value_counts()
        rest = [f"{int(counts.get(k, 0)):,} {k}" for k in ("defer", "over budget", "later",
                                                             "keep")]
        lines.append(f"not renewed: {', '.join(rest)} (see the status column)")
        ranked = self.ranked(top)
        if len(ranked):
            lines += ["", f"highest-ranked mains (NPV per unit of capital at the best year; "
                          f"money in{cur or ' the study currency'}):",
                      f"{'rank':>5}  {'main':<12}{'material':<17}{'length m':>9}{'best':>6}"
                      f"{'renew':>7}{'NPV':>12}{'B/C':>7}"]
            for _, r in ranked.iterrows():
                renew = r["scheduled_calendar_year"]
                renew = "" if pd.isna(renew) else f"{int(renew)}"
                lines.append(f"{int(r['rank']):>5}  {r['main_id']:<12}{r['material']:<17}"
                             f"{r['length_m']:>9,.0f}{int(r['best_calendar_year']):>6}"
                             f"{renew:>7}{r['npv_best']:>12,.0f}"
                             f"{r['benefit_cost_ratio']:>7.2f}")
        lines += ["", "Caution: " + CAUTION]
        return "\n".join(lines)

    def headline(self) -> str:
        """The outcome in one line."""
        cur = f" {self.currency}" if self.currency else ""
        if not len(self.mains):
            return f"{self.study.name}: {self.message}"
        renewed = int(self.schedule["mains"].sum())
        return (f"{self.study.name}: {renewed:,} of {len(self.mains):,} mains renewed in "
                f"{self.study.years} years, NPV {self.plan.objective:,.0f}{cur}")

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Programme by year": self.schedule, "Ranked mains": self.ranked(),
                "Break growth by material class": self.growth.reset_index(),
                "Rejected register rows": self.rejected}
