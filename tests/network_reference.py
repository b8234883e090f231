"""Independent reference solutions for the network tests (no pipeopt code inside).

Written from the published equations only, in a different formulation from the package's
solver (node heads as the unknowns, flows from the head drops), so that agreement between the
two is evidence, not an echo.
"""

from __future__ import annotations

import numpy as np
from scipy import optimize

G = 9.80665  # standard gravity (CGPM 1901)


def hw_flow_from_drop(drop, length, diameter, c, omega, n=1.852, beta=4.87):
    """Hazen-Williams solved for the flow: Q = sign(dH) (|dH| C^n D^beta / (omega L))^(1/n)."""
    k = omega * length / (c**n * diameter**beta)
    return np.sign(drop) * (np.abs(drop) / k) ** (1.0 / n)


def hw_head_loss(q, length, diameter, c, omega, n=1.852, beta=4.87):
    """Hazen-Williams head loss h = omega L |Q|^(n-1) Q / (C^n D^beta)."""
    return omega * length * np.abs(q) ** (n - 1.0) * q / (c**n * diameter**beta)


def colebrook(re, rr, iterations=60):
    """Colebrook-White (Colebrook 1939, 3.7/2.51 form) by fixed-point iteration on 1/sqrt(f)."""
    x = np.full(np.broadcast(re, rr).shape, 8.0)
    for _ in range(iterations):
        x = -2.0 * np.log10(rr / 3.7 + 2.51 * x / re)
    return 1.0 / x**2


def dw_head_loss(q, length, diameter, roughness, nu, k_minor=0.0):
    """Darcy-Weisbach with Colebrook-White (turbulent flow), plus minor losses K V^2/2g."""
    area = np.pi * diameter**2 / 4.0
    v = np.abs(q) / area
    re = v * diameter / nu
    f = colebrook(re, roughness / diameter)
    return np.sign(q) * (f * length / diameter + k_minor) * v**2 / (2.0 * G)


def node_heads(n_junctions, start, end, flow_of_drop, demand, fixed_head, guess):
    """Junction heads that balance mass when each pipe's flow follows from its head drop.

    ``flow_of_drop(drop)`` gives the flow of every pipe from H_start - H_end. Solved with
    MINPACK's hybrid Powell method (scipy.optimize.root) from ``guess``.
    """
    start = np.asarray(start)
    end = np.asarray(end)
    fixed = np.asarray(fixed_head, dtype=float)

    def residual(h):
        full = np.concatenate([h, fixed])
        q = flow_of_drop(full[start] - full[end])
        bal = np.zeros(full.size)
        np.add.at(bal, end, q)
        np.add.at(bal, start, -q)
        return bal[:n_junctions] - demand

    sol = optimize.root(residual, guess, method="hybr", options={"xtol": 1e-13})
    assert sol.success, sol.message
    return sol.x


def pipe_flows_and_heads(n_junctions, start, end, head_loss, demand, source_head, guess_flow,
                         guess_head):
    """Every pipe flow and junction head of a network fed by fixed heads.

    Unknowns are the flows and the heads together (mass balance at every junction, energy
    balance H_start - H_end = h(Q) along every pipe); ``head_loss(q)`` gives every pipe's loss
    with the sign of its flow. Solved with MINPACK's hybrid Powell method (scipy.optimize.root).
    Returns (flows, junction heads).
    """
    start = np.asarray(start)
    end = np.asarray(end)
    fixed = np.atleast_1d(np.asarray(source_head, dtype=float))
    p = start.size

    def residual(x):
        q, h = x[:p], x[p:]
        full = np.concatenate([h, fixed])
        bal = np.zeros(n_junctions + fixed.size)
        np.add.at(bal, end, q)
        np.add.at(bal, start, -q)
        energy = full[start] - full[end] - head_loss(q)
        return np.concatenate([bal[:n_junctions] - demand, energy])

    guess = np.concatenate([np.broadcast_to(guess_flow, (p,)),
                            np.broadcast_to(guess_head, (n_junctions,))])
    sol = optimize.root(residual, guess, method="hybr", options={"xtol": 1e-13})
    assert sol.success, sol.message
    return sol.x[:p], sol.x[p:]
