"""Tests of pipeopt.network.hydraulics: the global gradient solver and the head-loss laws."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import optimize

from pipeopt.errors import InputError
from pipeopt.network.hydraulics import (
    DarcyWeisbach,
    HazenWilliams,
    NetworkGraph,
    darcy_weisbach_resistance,
    hazen_williams_resistance,
    solve_network,
)
from tests.network_reference import (
    G,
    colebrook,
    dw_head_loss,
    hw_flow_from_drop,
    hw_head_loss,
    node_heads,
)

INCH = 0.0254

# The two-loop network of Alperovits & Shamir (1977), Water Resour. Res. 13(6):885-900:
# reservoir (node 1) at 210 m; nodes 2-7 with elevations [m] and demands [m3/h]; eight pipes of
# 1000 m, Hazen-Williams C 130. Junctions 2..7 are indices 0..5 here, the reservoir index 6.
TWO_LOOP_START = [6, 0, 0, 2, 2, 4, 1, 3]
TWO_LOOP_END = [0, 1, 2, 3, 4, 5, 3, 5]
TWO_LOOP_ELEVATION = np.array([150.0, 160.0, 155.0, 150.0, 165.0, 160.0])
TWO_LOOP_DEMAND = np.array([100.0, 100.0, 120.0, 270.0, 330.0, 200.0]) / 3600.0
# the least-cost design of Savic & Walters (1997), J. Water Resour. Plann. Manage.
# 123(2):67-77, cost 419,000, in inches
TWO_LOOP_BEST = np.array([18, 10, 16, 4, 16, 10, 10, 1]) * INCH
# Savic & Walters (1997) constants: omega 10.5088, flow exponent 1.85, diameter exponent 4.87
SW = {"omega": 10.5088, "n": 1.85, "beta": 4.87}


def two_loop_graph():
    return NetworkGraph(6, 1, TWO_LOOP_START, TWO_LOOP_END, node_names=tuple("2345671"))


def two_loop_law(diameter):
    return HazenWilliams(np.full(8, 1000.0), diameter, 130.0, coefficient=SW["omega"],
                         flow_exponent=SW["n"], diameter_exponent=SW["beta"])


@pytest.mark.reference
def test_two_loop_heads_agree_with_an_independent_node_head_solution():
    # Alperovits & Shamir (1977) network, Savic & Walters (1997) constants; reference heads from
    # MINPACK's hybrid method (scipy.optimize.root) on the node equations of
    # tests/network_reference.py
    st_ = solve_network(two_loop_graph(), two_loop_law(TWO_LOOP_BEST), TWO_LOOP_DEMAND, [210.0])
    assert st_.converged[0]

    def flows(drop):
        return hw_flow_from_drop(drop, 1000.0, TWO_LOOP_BEST, 130.0, SW["omega"], SW["n"],
                                 SW["beta"])

    ref = node_heads(6, TWO_LOOP_START, TWO_LOOP_END, flows, TWO_LOOP_DEMAND, [210.0],
                     guess=np.full(6, 190.0))
    np.testing.assert_allclose(st_.head[0], ref, atol=1e-8)


@pytest.mark.reference
def test_two_loop_pressures_match_the_published_table():
    # Savic & Walters (1997), table of nodal pressure heads of their 419,000 design, from
    # memory: 53.25, 30.46, 43.45, 33.81, 30.44, 30.55 m (nodes 2-7). From memory, so a loose
    # tolerance: the published figures are rounded from a GA's own hydraulic solver.
    st_ = solve_network(two_loop_graph(), two_loop_law(TWO_LOOP_BEST), TWO_LOOP_DEMAND, [210.0])
    published = np.array([53.25, 30.46, 43.45, 33.81, 30.44, 30.55])
    np.testing.assert_allclose(st_.head[0] - TWO_LOOP_ELEVATION, published, atol=0.1)


@pytest.mark.reference
def test_parallel_pipes_share_flow_by_the_equivalent_pipe_rule():
    # Two pipes in parallel carry equal head loss, so with h = k Q^n each carries
    # Q_i = Q k_i^(-1/n) / sum(k^(-1/n)) (the equivalent-pipe rule of every hydraulics text;
    # common practice). A loop of two pipes between a reservoir and one junction.
    g = NetworkGraph(1, 1, [1, 1], [0, 0])
    length = np.array([800.0, 1200.0])
    d = np.array([0.3, 0.25])
    c = np.array([120.0, 140.0])
    q = 0.15
    st_ = solve_network(g, HazenWilliams(length, d, c), [q], [60.0])
    k = 10.5088 * length / (c**1.852 * d**4.87)
    w = k ** (-1 / 1.852)
    np.testing.assert_allclose(st_.flow[0], q * w / w.sum(), rtol=1e-10)
    np.testing.assert_allclose(60.0 - st_.head[0, 0], k[0] * (q * w[0] / w.sum()) ** 1.852,
                               rtol=1e-10)


@pytest.mark.reference
def test_parallel_pipes_darcy_weisbach_against_bisection():
    # The same loop with Darcy-Weisbach and Colebrook-White (Colebrook 1939): the split that
    # equalizes the two head losses, found by Brent's method on the test's own Colebrook.
    g = NetworkGraph(1, 1, [1, 1], [0, 0])
    length = np.array([800.0, 1200.0])
    d = np.array([0.3, 0.25])
    eps = np.array([1e-4, 5e-4])
    rho, mu = 999.1, 1.138e-3
    q = 0.15
    st_ = solve_network(g, DarcyWeisbach(length, d, eps, rho, mu), [q], [60.0])
    nu = mu / rho

    def mismatch(q1):
        return (dw_head_loss(q1, length[0], d[0], eps[0], nu)
                - dw_head_loss(q - q1, length[1], d[1], eps[1], nu))

    q1 = optimize.brentq(mismatch, 0.02, q - 0.02, xtol=1e-15, rtol=1e-15)  # both turbulent
    np.testing.assert_allclose(st_.flow[0], [q1, q - q1], rtol=1e-9)


@pytest.mark.reference
def test_three_reservoir_junction_against_bisection():
    # The three-reservoir problem (a classic of hydraulics texts; common practice): the head
    # of the junction at which the three pipe flows balance, found here by bisection.
    g = NetworkGraph(1, 3, [1, 0, 0], [0, 2, 3])
    length = np.array([1500.0, 900.0, 2100.0])
    d = np.array([0.35, 0.25, 0.3])
    heads = np.array([100.0, 80.0, 50.0])
    st_ = solve_network(g, HazenWilliams(length, d, 130.0), [0.0], heads)

    def net_inflow(h):
        return (hw_flow_from_drop(heads[0] - h, length[0], d[0], 130.0, 10.5088)
                - hw_flow_from_drop(h - heads[1], length[1], d[1], 130.0, 10.5088)
                - hw_flow_from_drop(h - heads[2], length[2], d[2], 130.0, 10.5088))

    ref = optimize.brentq(net_inflow, 50.0, 100.0, xtol=1e-13)
    assert st_.head[0, 0] == pytest.approx(ref, abs=1e-8)


def test_batch_equals_one_by_one():
    g = two_loop_graph()
    rng = np.random.default_rng(3)
    d = rng.choice(np.array([6, 8, 10, 12, 14, 16, 18, 20]) * INCH, size=(5, 8))
    batch = solve_network(g, two_loop_law(d), TWO_LOOP_DEMAND, [210.0])
    for b in range(5):
        one = solve_network(g, two_loop_law(d[b]), TWO_LOOP_DEMAND, [210.0])
        np.testing.assert_allclose(batch.head[b], one.head[0], atol=1e-9)
        np.testing.assert_allclose(batch.flow[b], one.flow[0], atol=1e-12)


@pytest.mark.reference
def test_sparse_and_dense_paths_agree(monkeypatch):
    # a 12 x 12 grid has 144 junctions: above the dense limit, so the sparse LU path runs;
    # forcing the dense path must give the same heads, and both must balance: conservation of
    # mass at every junction and of energy round every pipe, summed in the test with its own
    # Hazen-Williams (Hazen & Williams 1920, SI coefficient 10.5088)
    import pipeopt.network.hydraulics as hy

    rows = cols = 12
    idx = np.arange(rows * cols).reshape(rows, cols)
    s = np.concatenate([[rows * cols], idx[:, :-1].ravel(), idx[:-1, :].ravel()])
    e = np.concatenate([[0], idx[:, 1:].ravel(), idx[1:, :].ravel()])
    g = NetworkGraph(rows * cols, 1, s, e)
    rng = np.random.default_rng(1)
    d = rng.uniform(0.1, 0.3, s.size)
    length = rng.uniform(100, 300, s.size)
    dem = rng.uniform(0.0, 0.002, rows * cols)
    law = HazenWilliams(length, np.vstack([d, d * 1.1]), 120.0)
    sparse_st = solve_network(g, law, dem, [120.0])
    monkeypatch.setattr(hy, "_DENSE_LIMIT", 10_000)
    dense_st = solve_network(g, law, dem, [120.0])
    assert sparse_st.converged.all() and dense_st.converged.all()
    np.testing.assert_allclose(sparse_st.head, dense_st.head, atol=1e-9)
    for b, dd in enumerate((d, d * 1.1)):
        q = sparse_st.flow[b]
        h = hw_head_loss(q, length, dd, 120.0, 10.5088)
        mass, energy = _balances(g, q, sparse_st.head[b], np.array([120.0]), dem, h)
        assert mass <= 1e-9 and energy <= 1e-9


# ----- random networks: the balances hold ---------------------------------------------------
@st.composite
def random_networks(draw):
    n_j = draw(st.integers(2, 25))
    n_f = draw(st.integers(1, 3))
    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    n = n_j + n_f
    order = rng.permutation(n)
    # a spanning tree over every node, then extra pipes making loops
    s = [order[k] for k in range(1, n)]
    e = [order[rng.integers(0, k)] for k in range(1, n)]
    for _ in range(draw(st.integers(0, n_j))):
        a, b = rng.choice(n, 2, replace=False)
        s.append(a)
        e.append(b)
    p = len(s)
    return {"g": NetworkGraph(n_j, n_f, s, e), "length": rng.uniform(20, 1500, p),
            "d": rng.uniform(0.1, 0.6, p), "c": rng.uniform(80, 150, p),
            "eps": rng.uniform(0.0, 1e-3, p), "k": rng.uniform(0.0, 5.0, p) * (rng.random(p) < 0.3),
            "demand": rng.uniform(-0.005, 0.02, n_j), "heads": rng.uniform(40, 150, n_f)}


def _balances(g, flow, head, fixed, demand, head_loss):
    """Mass and energy imbalance recomputed in the test from the solver's flows and heads."""
    full = np.concatenate([head, fixed])
    bal = np.zeros(g.n_nodes)
    np.add.at(bal, g.end, flow)
    np.add.at(bal, g.start, -flow)
    mass = np.abs(bal[: g.n_junctions] - demand).max()
    energy = np.abs(full[g.start] - full[g.end] - head_loss).max()
    return mass, energy


@pytest.mark.reference
@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(random_networks())
def test_random_networks_balance_mass_and_energy_hazen_williams(net):
    g = net["g"]
    st_ = solve_network(g, HazenWilliams(net["length"], net["d"], net["c"], net["k"]),
                        net["demand"], net["heads"])
    assert st_.converged[0]
    q = st_.flow[0]
    # the test's own Hazen-Williams (Hazen & Williams 1920, SI coefficient 10.5088) plus the
    # minor losses K V^2 / (2 g)
    area = np.pi * net["d"] ** 2 / 4.0
    h = (hw_head_loss(q, net["length"], net["d"], net["c"], 10.5088)
         + net["k"] * np.abs(q) * q / (2 * G * area**2))
    mass, energy = _balances(g, q, st_.head[0], net["heads"], net["demand"], h)
    assert mass <= 1e-9
    assert energy <= 1e-9


@pytest.mark.reference
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(random_networks())
def test_random_networks_balance_mass_and_energy_darcy_weisbach(net):
    g = net["g"]
    rho, mu = 999.1, 1.138e-3
    st_ = solve_network(g, DarcyWeisbach(net["length"], net["d"], net["eps"], rho, mu,
                                         net["k"]), net["demand"], net["heads"])
    assert st_.converged[0]
    q = st_.flow[0]
    d = net["d"]
    area = np.pi * d**2 / 4.0
    re = rho * np.abs(q) / area * d / mu
    rr = net["eps"] / d
    # the test's own friction factor: 64/Re laminar, Colebrook-White from Re 4000, and the
    # documented straight line in Re between 64/2000 and the Colebrook value at 4000
    f4000 = colebrook(4000.0, rr)
    f = np.where(re < 2000, 64 / np.maximum(re, 1e-300),
                 np.where(re < 4000, 0.032 + (f4000 - 0.032) * (re - 2000) / 2000,
                          colebrook(np.maximum(re, 4000.0), rr)))
    h = (f * net["length"] / d + net["k"]) * np.abs(q) * q / (2 * G * area**2)
    mass, energy = _balances(g, q, st_.head[0], net["heads"], net["demand"], h)
    assert mass <= 1e-9
    assert energy <= 1e-8  # the test's fixed-point Colebrook is good to about 1e-13 relative


@pytest.mark.reference
def test_darcy_weisbach_head_loss_and_derivative_against_an_mpmath_reference():
    # The law's head loss and analytic dh/dQ against the test's own: Darcy-Weisbach
    # h = (f L/D + K) V^2/(2g) with f = 64/Re (Hagen-Poiseuille) below Re 2000, Colebrook-White
    # (Colebrook 1939, solved by mpmath.findroot to 30 digits) from Re 4000, and the straight
    # line in Re between 64/2000 and the Colebrook value at 4000 across the band (the bridge
    # documented in pipeopt's model section). dh/dQ by mpmath.diff of that reference.
    import mpmath

    mpmath.mp.dps = 30
    length, d, eps, rho, mu, k = 500.0, 0.1, 2e-4, 999.1, 1.138e-3, 2.0
    law = DarcyWeisbach([length], [d], [eps], rho, mu, [k])
    area = mpmath.pi * mpmath.mpf(d) ** 2 / 4

    def colebrook_mp(re):
        x = mpmath.findroot(lambda x: x + 2 * mpmath.log10(eps / d / 3.7 + 2.51 * x / re), 8)
        return 1 / x**2

    f4000 = colebrook_mp(mpmath.mpf(4000))

    def head(q):
        v = q / area
        re = mpmath.mpf(rho) * v * d / mu
        if re < 2000:
            f = 64 / re
        elif re < 4000:
            f = mpmath.mpf("0.032") + (f4000 - mpmath.mpf("0.032")) * (re - 2000) / 2000
        else:
            f = colebrook_mp(re)
        return (f * length / d + k) * v**2 / (2 * mpmath.mpf(G))

    q = np.geomspace(1e-6, 0.2, 60)
    re_q = law.re_per_flow[0, 0] * q
    q = q[(np.abs(re_q - 2000) > 20) & (np.abs(re_q - 4000) > 20)]     # keep off the kinks
    h, g = law(q[:, None], np.zeros(q.size, dtype=int))
    ref_h = np.array([float(head(mpmath.mpf(x))) for x in q])
    ref_g = np.array([float(mpmath.diff(head, mpmath.mpf(x))) for x in q])
    np.testing.assert_allclose(h[:, 0], ref_h, rtol=1e-11)
    np.testing.assert_allclose(g[:, 0], ref_g, rtol=1e-9)
    assert np.all(np.diff(h[:, 0]) > 0)  # increasing with the flow


def test_darcy_weisbach_head_loss_is_continuous_across_the_band():
    law = DarcyWeisbach([500.0], [0.1], [2e-4], 999.1, 1.138e-3)
    for re in (2000.0, 4000.0):
        q0 = re / law.re_per_flow[0, 0]
        h, _ = law(np.array([[q0 * (1 - 1e-9)], [q0 * (1 + 1e-9)]]), np.zeros(2, dtype=int))
        assert h[1, 0] == pytest.approx(h[0, 0], rel=1e-6)


@pytest.mark.reference
def test_resistances_against_hand_values():
    # Hazen-Williams: 10.5088 * 1000 / (130^1.852 * 0.3^4.87), computed by hand with the
    # published formula (Hazen & Williams 1920; coefficient of Savic & Walters 1997)
    assert float(hazen_williams_resistance(1000.0, 0.3, 130.0)) == pytest.approx(
        10.5088 * 1000.0 / (130.0**1.852 * 0.3**4.87), rel=1e-14)
    # Darcy-Weisbach: h = f (L/D) V^2/(2g) = f 8 L Q^2 / (g pi^2 D^5) (common practice)
    assert float(darcy_weisbach_resistance(1000.0, 0.3)) == pytest.approx(
        8 * 1000.0 / (G * np.pi**2 * 0.3**5), rel=1e-14)


@pytest.mark.reference
def test_tree_flows_equal_the_solved_flows():
    # conservation of mass on a tree (common practice): each pipe carries the demand beyond it
    g = NetworkGraph(4, 1, [4, 0, 0, 2], [0, 1, 2, 3])
    dem = np.array([0.01, 0.02, 0.015, 0.025])
    st_ = solve_network(g, HazenWilliams([800, 500, 600, 400], 0.2, 120.0), dem, [60.0])
    # by hand: each pipe carries the demand downstream of it
    np.testing.assert_allclose(g.tree_flows(dem), [0.07, 0.02, 0.04, 0.025], rtol=1e-12)
    np.testing.assert_allclose(st_.flow[0], [0.07, 0.02, 0.04, 0.025], rtol=1e-10)
    assert g.is_forest()
    assert not two_loop_graph().is_forest()


# ----- topology errors ------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("args", "match"),
    [
        ((2, 0, [0], [1]), "no source"),
        ((3, 1, [3, 0], [0, 1]), "node 2: is disconnected"),
        ((4, 1, [4, 0, 2], [0, 1, 3]), "node 2: has no path to any source"),
        ((2, 1, [2, 1], [0, 1]), "starts and ends at the same node"),
        ((2, 1, [2, 0], [0, 7]), "refers to node index 7"),
    ],
)
def test_topology_errors_are_clear(args, match):
    with pytest.raises(InputError, match=match):
        NetworkGraph(*args)


def test_solver_refuses_a_law_of_another_size():
    with pytest.raises(InputError, match="the network has 8"):
        solve_network(two_loop_graph(), HazenWilliams([1000.0], [0.3], 130.0),
                      TWO_LOOP_DEMAND, [210.0])


def test_zero_demand_network_has_no_flow_and_level_heads():
    # nothing drawn: every head equals the reservoir's, every flow is zero (common practice)
    st_ = solve_network(two_loop_graph(), two_loop_law(TWO_LOOP_BEST), np.zeros(6), [210.0])
    assert st_.converged[0]
    np.testing.assert_allclose(st_.head[0], 210.0, atol=1e-9)
    # a flow circulating round a loop is fixed only through its head loss, which is of order
    # Q^1.85: a micro-litre per second is within the 1e-9 m energy tolerance
    np.testing.assert_allclose(st_.flow[0], 0.0, atol=1e-6)
