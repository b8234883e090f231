"""Named inputs that a what-if, a sensitivity scan or a Monte Carlo may change (model layer).

One registry, :data:`INPUTS`, names every input that can vary from the study's own value, the
same names everywhere: ``study.run(inputs={...})``, the explorer's controls, tornado,
switching values and Monte Carlo of sizing and upgrade studies. Values that *replace* the
study's own (a price, a rate, a horizon) and *factors* that multiply it (a flow factor, a cost
factor) are told apart; every value is checked against the same rule as the study-file key it
stands for, with a message naming the input, the rule and the value.

:class:`Variations` carries arrays of such values over S samples; :meth:`Variations.resolved`
fills every input a study knows with its own value where none is given.
"""

from __future__ import annotations

import weakref
from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import Any

import numpy as np

from .duty import HOURS_PER_YEAR
from .errors import InputError

__all__ = ["InputSpec", "INPUTS", "SIZING_INPUTS", "UPGRADE_INPUTS", "Variations",
           "check_input_name", "NamedInputs"]


@dataclass(frozen=True)
class InputSpec:
    """What a named input means, its unit, the studies that take it and its rule."""

    name: str
    description: str
    unit: str
    studies: tuple[str, ...]
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    whole: bool = False
    factor: bool = False

    def rule(self) -> str:
        """The rule in words."""
        if self.whole:
            return f"a whole number from {self.low:g} to {self.high:g}"
        lo = "" if self.low is None else (f"{'>' if self.low_open else '>='} {self.low:g}")
        hi = "" if self.high is None else f"<= {self.high:g}"
        return " and ".join(x for x in (lo, hi) if x) or "finite"

    def check(self, values: np.ndarray, where: str = "") -> None:
        """Refuse values that break the rule, naming the input, the rule and a value."""
        v = np.asarray(values, dtype=float)
        bad = ~np.isfinite(v)
        if self.low is not None:
            bad |= (v <= self.low) if self.low_open else (v < self.low)
        if self.high is not None:
            bad |= v > self.high
        if self.whole:
            bad |= v != np.round(v)
        if np.any(bad):
            i = int(np.flatnonzero(bad.ravel())[0])
            at = f" (sample {i})" if v.size > 1 else ""
            raise InputError(f"{where}{self.name} must be {self.rule()}; got "
                             f"{float(v.ravel()[i])!r}{at}")


_BOTH = ("sizing", "upgrade")
#: Every named input: replaced values first, then factors.
INPUTS: dict[str, InputSpec] = {s.name: s for s in [
    InputSpec("energy_price", "energy price in year 1", "currency/kWh", _BOTH, 0.0, 100.0,
              low_open=True),
    InputSpec("escalation", "real escalation of the energy price", "1/yr", _BOTH, -0.5, 0.5),
    InputSpec("demand_charge", "charge on the peak demand", "currency/(kW yr)", _BOTH, 0.0,
              1e5),
    InputSpec("discount_rate", "real discount rate", "1/yr", _BOTH, 0.0, 1.0),
    InputSpec("horizon", "analysis horizon", "yr", _BOTH, 1.0, 200.0, whole=True),
    InputSpec("efficiency", "wire-to-water efficiency", "-", _BOTH, 0.0, 1.0, low_open=True),
    InputSpec("growth", "compound growth of the duty flows", "1/yr", _BOTH, -0.5, 0.5),
    InputSpec("break_growth", "exponential growth of the break rate", "1/yr", ("upgrade",),
              -0.5, 0.5),
    InputSpec("flow_factor", "factor on every duty flow", "-", _BOTH, 0.0, 100.0,
              low_open=True, factor=True),
    InputSpec("hours_factor", "factor on every duty's hours", "-", _BOTH, 0.0, 100.0,
              low_open=True, factor=True),
    InputSpec("aging_factor", "factor on every roughness aging rate", "-", _BOTH, 0.0, 100.0,
              factor=True),
    InputSpec("pipe_cost_factor", "factor on the pipe capital (of one material with "
              "pipe_cost_factor:<material>)", "-", ("sizing",), 0.0, 100.0, low_open=True,
              factor=True),
    InputSpec("station_cost_factor", "factor on the pump-station capital", "-", _BOTH, 0.0,
              100.0, low_open=True, factor=True),
    InputSpec("capital_factor", "factor on every option's capital", "-", ("upgrade",), 0.0,
              100.0, low_open=True, factor=True),
    InputSpec("break_cost_factor", "factor on the cost of a repair", "-", ("upgrade",), 0.0,
              100.0, factor=True),
    InputSpec("leakage_cost_factor", "factor on the cost of leakage", "-", ("upgrade",), 0.0,
              100.0, factor=True),
]}
#: Names a sizing study takes (plus ``pipe_cost_factor:<material>``).
SIZING_INPUTS = tuple(n for n, s in INPUTS.items() if "sizing" in s.studies)
#: Names an upgrade study takes.
UPGRADE_INPUTS = tuple(n for n, s in INPUTS.items() if "upgrade" in s.studies)


def check_input_name(name: Any, study: str, materials: tuple[str, ...] = ()) -> str:
    """Refuse a name that is no input of ``study`` ("sizing" or "upgrade"), naming the valid
    ones; ``pipe_cost_factor:<material>`` must name one of ``materials``."""
    if not isinstance(name, str):
        raise InputError(f"input names are text; got {name!r}")
    base, _, mat = name.partition(":")
    spec = INPUTS.get(base)
    if spec is not None and study in spec.studies and (not mat or base == "pipe_cost_factor"):
        if mat and mat not in materials:
            raise InputError(f"{name!r} names no material of the study "
                             f"({', '.join(materials)})")
        return name
    valid = ", ".join(n for n, s in INPUTS.items() if study in s.studies)
    extra = ", pipe_cost_factor:<material>" if study == "sizing" else ""
    what = "input" if study == "sizing" else "upgrade input"
    raise InputError(f"unknown {what} {name!r}; inputs: {valid}{extra}")


@dataclass(frozen=True)
class Variations:
    """Per-sample values of named inputs (see :data:`INPUTS`), each None or an array (S,).

    Factors multiply the study's value; the others replace it. ``pipe_cost_factor`` may also be
    an (S, C) array, one factor per candidate. ``n_years`` and ``m_range`` are not inputs but
    facts of the batch a chunk belongs to: the length of the year axis (see
    :class:`pipeopt.cashflow.Timeline`) and the smallest and largest flow multiplier of each
    year over the batch, (low (T,), high (T,)), which lets :func:`pipeopt.lifecycle.evaluate`
    use Chebyshev series of the friction factor (:mod:`pipeopt.surrogate`).
    """

    energy_price: np.ndarray | None = None
    escalation: np.ndarray | None = None
    demand_charge: np.ndarray | None = None
    discount_rate: np.ndarray | None = None
    horizon: np.ndarray | None = None
    efficiency: np.ndarray | None = None
    growth: np.ndarray | None = None
    break_growth: np.ndarray | None = None
    flow_factor: np.ndarray | None = None
    hours_factor: np.ndarray | None = None
    aging_factor: np.ndarray | None = None
    pipe_cost_factor: np.ndarray | None = None
    station_cost_factor: np.ndarray | None = None
    capital_factor: np.ndarray | None = None
    break_cost_factor: np.ndarray | None = None
    leakage_cost_factor: np.ndarray | None = None
    n_years: int | None = None
    m_range: tuple | None = None

    @classmethod
    def of(cls, values: Mapping[str, Any]) -> Variations:
        """From a mapping of input names to scalars or arrays (scalars: one sample)."""
        unknown = [k for k in values if k not in INPUTS]
        if unknown:
            raise InputError(f"unknown input {unknown[0]!r}; inputs: {', '.join(INPUTS)}")
        return cls(**{k: np.atleast_1d(np.asarray(v, dtype=float)) for k, v in values.items()})

    @property
    def given(self) -> dict[str, np.ndarray]:
        """The inputs that vary, by name."""
        return {f.name: getattr(self, f.name) for f in fields(self)
                if f.name in INPUTS and getattr(self, f.name) is not None}

    @property
    def size(self) -> int:
        """Number of samples S (1 when nothing varies)."""
        sizes = {np.shape(v)[0] for v in self.given.values()}
        if len(sizes) > 1:
            raise InputError(f"Variations: every input needs the same number of samples; got "
                             f"{sorted(sizes)}")
        return sizes.pop() if sizes else 1

    def resolved(self, base: Mapping[str, float], hours_total: float = 0.0,
                 where: str = "") -> dict[str, np.ndarray]:
        """Every input of ``base`` (the study's own values) as an (S,) array, the given values
        in place of the study's; every factor as well (1 where not given).

        ``pipe_cost_factor`` comes back (S, 1) or (S, C). Values are checked against the rule
        of their input; ``hours_total`` (the duty's hours per year) bounds ``hours_factor``
        so that a year never holds more than 8760 hours.
        """
        n = self.size
        out: dict[str, np.ndarray] = {}
        for name, spec in INPUTS.items():
            v = getattr(self, name)
            if v is not None:
                arr = np.asarray(v, dtype=float)
                spec.check(arr, where)
                if name == "pipe_cost_factor":
                    arr = arr.reshape(n, -1)
                out[name] = arr
            elif name in base:
                out[name] = np.full(n, float(base[name]))
            elif spec.factor:
                out[name] = np.ones((n, 1)) if name == "pipe_cost_factor" else np.ones(n)
        if self.horizon is not None:
            out["horizon"] = np.round(out["horizon"])
        if hours_total and self.hours_factor is not None:
            over = out["hours_factor"] * hours_total > HOURS_PER_YEAR * (1 + 1e-12)
            if np.any(over):
                i = int(np.flatnonzero(over)[0])
                raise InputError(f"{where}hours_factor must keep the hours of a year within "
                                 f"8760 (at most {HOURS_PER_YEAR / hours_total:.4g} here); "
                                 f"got {out['hours_factor'][i]!r}")
        return out


class NamedInputs:
    """The base values and resolution of the named inputs a priced study holds.

    For a class (a :class:`pipeopt.lifecycle.Scenario`, a network's economics) with
    ``tariff`` (:class:`pipeopt.costs.EnergyTariff`), ``discount_rate`` [1/yr], ``horizon``
    [yr], ``efficiency`` [-] and ``duty`` (:class:`pipeopt.duty.DutyProfile`).
    """

    def base_values(self) -> dict[str, float]:
        """The study's own values of the named inputs it holds (see :data:`INPUTS`)."""
        return {"energy_price": self.tariff.price, "escalation": self.tariff.escalation,
                "demand_charge": self.tariff.demand_charge,
                "discount_rate": self.discount_rate, "horizon": self.horizon,
                "efficiency": self.efficiency, "growth": self.duty.growth}

    def resolve(self, variations: Variations | None) -> dict[str, np.ndarray]:
        """Every named input as an (S,) array: the variations' values, else the study's.

        The study's own values (``variations`` None) are resolved once and kept (read-only
        arrays; the study is immutable), as a study is evaluated again and again."""
        if variations is None:
            kept = _RESOLVED_BASE.get(id(self))
            if kept is None:
                kept = Variations().resolved(self.base_values(), hours_total=sum(self.duty.hours))
                for value in kept.values():
                    value.flags.writeable = False
                try:  # kept while the study lives (not in its __dict__: copies use that)
                    weakref.finalize(self, _RESOLVED_BASE.pop, id(self), None)
                    _RESOLVED_BASE[id(self)] = kept
                except TypeError:  # a class without weak references: resolved every time
                    pass
            return dict(kept)
        return variations.resolved(self.base_values(), hours_total=sum(self.duty.hours))


#: The resolved own inputs of live studies, by id (see :meth:`NamedInputs.resolve`).
_RESOLVED_BASE: dict[int, dict[str, np.ndarray]] = {}
