"""Networks: least life-cycle-cost design of branched and looped pipe networks.

Layers, as in the rest of pipeopt: :mod:`~pipeopt.network.hydraulics` (physics: the global
gradient solver, Hazen-Williams and Darcy-Weisbach), :mod:`~pipeopt.network.lifecycle`
(model: pipe capital, pump station in stages and energy over the horizon, on
:mod:`pipeopt.cashflow`), :mod:`~pipeopt.network.design` (model: batched evaluation of
designs, the exact programme for branched networks and the search for looped ones),
:mod:`~pipeopt.network.inputs` (study edge: the network file's sections, read with the sizing
study's shared sections), :mod:`~pipeopt.network.study` (study: :class:`NetworkStudy`,
:class:`NetworkResult`), :mod:`~pipeopt.network.uncertainty` (study: Monte Carlo of a design's
life-cycle cost), and presentation in :mod:`~pipeopt.network.plots` and
:mod:`~pipeopt.network.report`.
"""

from .study import NetworkResult, NetworkStudy

__all__ = ["NetworkStudy", "NetworkResult"]
