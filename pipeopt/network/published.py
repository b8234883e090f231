"""Published benchmark networks of least-cost design (model data), as design problems.

Two networks the literature uses to compare design methods, with the best costs known for them.
Each function returns a :class:`~pipeopt.network.design.DesignProblem` (Hazen–Williams, every
pipe to be sized). The published results depend on the Hazen–Williams constants; they are
parameters here, with the set under which each best-known cost was reported as the default.

References
----------
.. [1] E. Alperovits, U. Shamir, "Design of optimal water distribution systems", Water Resour.
   Res. 13(6):885-900, 1977, doi:10.1029/WR013i006p00885.
.. [2] D. A. Savic, G. A. Walters, "Genetic algorithms for least-cost design of water
   distribution networks", J. Water Resour. Plann. Manage. 123(2):67-77, 1997,
   doi:10.1061/(ASCE)0733-9496(1997)123:2(67).
.. [3] O. Fujiwara, D. B. Khang, "A two-phase decomposition method for optimal design of
   looped water distribution networks", Water Resour. Res. 26(4):539-549, 1990,
   doi:10.1029/WR026i004p00539.
"""

from __future__ import annotations

import numpy as np

from .design import DesignProblem
from .hydraulics import NetworkGraph

__all__ = ["two_loop", "hanoi", "TWO_LOOP_BEST_KNOWN", "HANOI_BEST_KNOWN", "INCH"]

#: One inch [m].
INCH = 0.0254
#: Best-known cost of the two-loop network (Savic & Walters 1997 and since), with the
#: constants of :func:`two_loop`.
TWO_LOOP_BEST_KNOWN = 419_000.0
#: Best-known cost of the Hanoi network with the constants of :func:`hanoi` (reported by
#: several authors since about 2006; from memory).
HANOI_BEST_KNOWN = 6_081_087.0


def two_loop(constants: tuple = (10.5088, 4.87, 1.85)) -> DesignProblem:
    """The two-loop network of Alperovits & Shamir (1977).

    One reservoir at 210 m feeds six nodes (elevations 150-165 m, demands 100-330 m³/h, each
    needing 30 m of pressure head) through eight pipes of 1,000 m with Hazen–Williams C 130;
    fourteen commercial sizes, 1 to 24 in, cost 2 to 550 per metre.

    Parameters
    ----------
    constants : tuple
        Hazen–Williams (coefficient, diameter exponent, flow exponent); by default the set of
        Savic & Walters (1997) under which 419,000 is the best-known cost.

    Returns
    -------
    DesignProblem
    """
    g = NetworkGraph(6, 1, [6, 0, 0, 2, 2, 4, 1, 3], [0, 1, 2, 3, 4, 5, 3, 5],
                     node_names=("2", "3", "4", "5", "6", "7", "1"),
                     pipe_names=tuple(f"pipe {k}" for k in range(1, 9)))
    sizes = np.array([1, 2, 3, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24]) * INCH
    costs = np.array([2, 5, 8, 11, 16, 23, 32, 50, 60, 90, 130, 170, 300, 550], dtype=float)
    demand = np.array([100, 100, 120, 270, 330, 200], dtype=float) / 3600.0
    return DesignProblem(graph=g, length=np.full(8, 1000.0), design=np.arange(8),
                         option_diameter=sizes, option_cost=costs,
                         allowed=np.ones((8, 14), bool), demand=demand,
                         elevation=[150.0, 160.0, 155.0, 150.0, 165.0, 160.0],
                         min_head=np.full(6, 30.0), source_head=[210.0],
                         suction_level=[np.nan], head_loss="hazen-williams",
                         option_c_factor=130.0, hazen_williams=constants)


_HANOI_DEMAND = [890, 850, 130, 725, 1005, 1350, 550, 525, 525, 500, 560, 940, 615, 280, 310,
                 865, 1345, 60, 1275, 930, 485, 1045, 820, 170, 900, 370, 290, 360, 360, 105,
                 805]
_HANOI_PIPES = [(1, 2, 100), (2, 3, 1350), (3, 4, 900), (4, 5, 1150), (5, 6, 1450),
                (6, 7, 450), (7, 8, 850), (8, 9, 850), (9, 10, 800), (10, 11, 950),
                (11, 12, 1200), (12, 13, 3500), (10, 14, 800), (14, 15, 500), (15, 16, 550),
                (16, 17, 2730), (17, 18, 1750), (18, 19, 800), (19, 3, 400), (3, 20, 2200),
                (20, 21, 1500), (21, 22, 500), (20, 23, 2650), (23, 24, 1230), (24, 25, 1300),
                (25, 26, 850), (26, 27, 300), (27, 16, 750), (23, 28, 1500), (28, 29, 2000),
                (29, 30, 1600), (30, 31, 150), (31, 32, 860), (32, 25, 950)]


def hanoi(constants: tuple = (10.667, 4.871, 1.852)) -> DesignProblem:
    """The Hanoi network of Fujiwara & Khang (1990) (data from memory).

    A reservoir at 100 m feeds 31 nodes at elevation 0, each needing 30 m of pressure head
    (demands 60-1,350 m³/h, 19,940 m³/h in all), through 34 pipes (100-3,500 m, C 130) forming
    three loops; six sizes of 12-40 in costing about 1.1 D^1.5 per metre (D in inches).

    Parameters
    ----------
    constants : tuple
        Hazen–Williams (coefficient, diameter exponent, flow exponent); by default the set
        under which 6,081,087 is the best-known cost (with Savic & Walters' 10.5088, 4.87,
        1.85 the network admits cheaper designs, about 6.056 million).

    Returns
    -------
    DesignProblem
    """
    def node(k: int) -> int:
        return 31 if k == 1 else k - 2

    g = NetworkGraph(31, 1, [node(a) for a, _, _ in _HANOI_PIPES],
                     [node(b) for _, b, _ in _HANOI_PIPES],
                     node_names=tuple(str(k) for k in range(2, 33)) + ("1",),
                     pipe_names=tuple(f"pipe {k}" for k in range(1, 35)))
    sizes = np.array([12, 16, 20, 24, 30, 40]) * INCH
    costs = np.array([45.726, 70.4, 98.378, 129.333, 180.748, 278.28])
    return DesignProblem(graph=g, length=[x for _, _, x in _HANOI_PIPES], design=np.arange(34),
                         option_diameter=sizes, option_cost=costs,
                         allowed=np.ones((34, 6), bool),
                         demand=np.array(_HANOI_DEMAND, dtype=float) / 3600.0,
                         elevation=np.zeros(31), min_head=np.full(31, 30.0),
                         source_head=[100.0], suction_level=[np.nan],
                         head_loss="hazen-williams", option_c_factor=130.0,
                         hazen_williams=constants)
