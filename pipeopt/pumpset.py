"""Pump sets (model layer): how the electrical power of a station follows its hydraulic duty.

Electrical power at a duty state (a flow Q and the head H the station must add) is

    P = ρ g Q H_E / (η φ)

with η the wire-to-water efficiency at the pump's best point (pump × motor × drive; the study's
``efficiency``, a named input), φ ≤ 1 the pump's relative efficiency at that state and H_E the
head the pump really makes:

- a constant efficiency (``pumping.efficiency`` or ``pump_efficiency``): φ = 1, H_E = H;
- an efficiency per duty point (``duty[k].efficiency``): φ_k = η_k / max η, H_E = H;
- an efficiency curve against flow (``pumping.bep_efficiency``, ``bep_flow``): the pump is
  selected for the largest flow Q_d of the states it serves, with a quadratic head curve
  H = H_d (r − (r − 1) (Q/Q_d)²) (r = shut-off head over design head) whose design head H_d is
  the least that reaches every state; then either
  - ``control = "throttle"`` (fixed speed): the pump runs on its curve, H_E = H_d (r − (r − 1)
    (Q/Q_d)²) ≥ H, the excess burnt in a control valve, φ = x (2 − x) with x = Q / Q_BEP; or
  - ``control = "variable-speed"``: the speed n is lowered until the curve meets the state
    (:func:`pipeopt.pumps.speed_for_head`), H_E = H, and by the affinity laws φ = x (2 − x) with
    x = Q / (n Q_BEP) (:func:`pipeopt.pumps.bep_efficiency_curve`).

A state where the station need add no head (H ≤ 0) takes no power: the pumps stand and a valve
holds the pressure.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import InputError
from .pumps import bep_efficiency_curve, speed_for_head

__all__ = ["PumpSet", "EFFICIENCY_FLOOR", "PREFERRED_REGION"]

#: The least relative efficiency used (far off the curve's best point the parabola falls to 0).
EFFICIENCY_FLOOR = 0.05
#: Preferred operating region of a centrifugal pump, as fractions of the best-efficiency flow
#: (ANSI/HI 9.6.3, from memory): states outside it are counted in the notes.
PREFERRED_REGION = (0.7, 1.2)


@dataclass(frozen=True)
class PumpSet:
    """The pump, motor and drive of every station of a study.

    Parameters
    ----------
    efficiency : float
        Wire-to-water efficiency at the best point, η [-], in (0, 1].
    duty_ratios : tuple of float, optional
        Pump efficiency of each duty point over the best of them, φ_k [-].
    bep_flow : float, optional
        Best-efficiency flow of the pump at full speed, Q_BEP [m³/s] (default: the design
        flow of each station, the largest flow it serves).
    curve : bool
        Whether the pump efficiency follows the curve against flow.
    control : {"throttle", "variable-speed"}
        Fixed speed with a control valve, or a variable-speed drive.
    shutoff_ratio : float
        Shut-off head over design head, r [-], > 1.

    Examples
    --------
    >>> import numpy as np
    >>> pump = PumpSet(0.8, curve=True, control="variable-speed")
    >>> q = np.array([[0.05, 0.1]])           # one year, two duty points [m^3/s]
    >>> h = 2000.0 * q**2                     # a system of friction only [m]
    >>> out = pump.power_terms(q, h)
    >>> out["factor"].round(12).tolist()      # similar points: the best efficiency at both
    [[1.0, 1.0]]
    """

    efficiency: float
    duty_ratios: tuple | None = None
    bep_flow: float | None = None
    curve: bool = False
    control: str = "throttle"
    shutoff_ratio: float = 1.2

    def __post_init__(self) -> None:
        if not 0 < self.efficiency <= 1:
            raise InputError(f"pumping efficiency must be in (0, 1]; got {self.efficiency!r}")
        if self.control not in ("throttle", "variable-speed"):
            raise InputError(f"pumping.control must be 'throttle' or 'variable-speed'; got "
                             f"{self.control!r}")
        if not self.shutoff_ratio > 1:
            raise InputError(f"pumping.shutoff_head_ratio must be > 1; got "
                             f"{self.shutoff_ratio!r}")

    @property
    def shaped(self) -> bool:
        """Whether power is anything but ρ g Q H / η (per-duty efficiencies or a curve)."""
        return self.curve or self.duty_ratios is not None

    def describe(self) -> str:
        if self.curve:
            bep = ("at the design flow" if self.bep_flow is None
                   else f"at {self.bep_flow * 3600:.0f} m^3/h")
            how = ("variable-speed drive (affinity laws)" if self.control == "variable-speed"
                   else "fixed speed, throttled")
            return (f"efficiency curve, best point {bep}, {how}; wire-to-water "
                    f"{self.efficiency:.3f} at the best point")
        if self.duty_ratios is not None:
            return f"efficiency by duty point; wire-to-water {self.efficiency:.3f} at the best"
        return f"wire-to-water efficiency {self.efficiency:.3f}"

    def power_terms(self, flow: Any, head: Any, axes: tuple[int, ...] = (-2, -1)
                    ) -> dict[str, np.ndarray]:
        """Energy head H_E and relative efficiency φ of every state.

        Parameters
        ----------
        flow : array_like, shape (..., T, K)
            Flow through the station [m³/s] at each state (years T, duty points K).
        head : array_like, shape (..., T, K)
            Head the station must add [m]; at most 0 where it stands.
        axes : tuple of int
            The axes of the states one pump serves (its design flow and head are over them).

        Returns
        -------
        dict of ndarray
            ``head`` H_E [m] (0 where the station stands), ``factor`` φ [-] (at least
            :data:`EFFICIENCY_FLOOR`), ``outside`` (a state outside the preferred operating
            region, curve only), ``speed`` n [-] (1 but with a variable-speed drive).
        """
        h = np.asarray(head, dtype=float)
        q = np.broadcast_to(np.asarray(flow, dtype=float), h.shape)
        running = h > 0
        if not self.curve:
            if self.duty_ratios is not None:
                factor = np.broadcast_to(np.asarray(self.duty_ratios, dtype=float), h.shape)
            else:
                factor = np.ones(h.shape)
            return {"head": np.where(running, h, 0.0), "factor": factor,
                    "outside": np.zeros(h.shape, dtype=bool), "speed": np.ones(h.shape)}
        r = self.shutoff_ratio
        q_d = q.max(axis=axes, keepdims=True)                       # design flow
        shape = r - (r - 1.0) * (q / q_d) ** 2                       # >= 1 for Q <= Q_d
        h_d = np.maximum(np.where(running, h / shape, 0.0).max(axis=axes, keepdims=True), 0.0)
        q_bep = q_d if self.bep_flow is None else self.bep_flow
        if self.control == "throttle":
            e_head = np.where(running, h_d * shape, 0.0)
            speed = np.ones(h.shape)
        else:
            h0 = r * h_d
            k = (r - 1.0) * h_d / q_d**2
            safe = h0 > 0
            speed = np.where(safe, speed_for_head(q, np.maximum(h, 0.0),
                                                  np.where(safe, h0, 1.0), k), 1.0)
            speed = np.where(running, np.clip(speed, 1e-6, 1.0), 1.0)
            e_head = np.where(running, h, 0.0)
        x = q / (speed * q_bep)
        factor = np.maximum(np.asarray(bep_efficiency_curve(q, q_bep, 1.0, speed)),
                            EFFICIENCY_FLOOR)
        lo, hi = PREFERRED_REGION
        return {"head": e_head, "factor": np.broadcast_to(factor, h.shape),
                "outside": running & ((x < lo) | (x > hi)), "speed": speed}
