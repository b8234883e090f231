"""Tests of pipeopt.network.study: the network study file, the run and the result."""

from __future__ import annotations

import copy
import itertools
import tomllib
from importlib import resources

import numpy as np
import pytest
from scipy import optimize

from pipeopt import catalog
from pipeopt.network import NetworkResult, NetworkStudy
from pipeopt.studyfile import StudyFileError
from tests.network_reference import dw_head_loss, hw_head_loss


def demo_dict() -> dict:
    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    return tomllib.loads(text)


@pytest.fixture(scope="module")
def demo_result() -> NetworkResult:
    return NetworkStudy.demo().run(progress=False)


def test_demo_result_tables_and_success(demo_result):
    r = demo_result
    assert r.success
    for col in ("pipe", "size", "inner_diameter_m", "length_m", "flow_m3_s", "velocity_m_s",
                "head_loss_m", "cost"):
        assert col in r.pipes.columns
    for col in ("node", "elevation_m", "head_m", "pressure_head_m", "min_pressure_head_m",
                "feasible"):
        assert col in r.nodes.columns
    assert r.nodes["feasible"].all()
    new = r.pipes[r.pipes["status"] == "new"]
    assert r.costs["capex_pipe"] == pytest.approx(new["cost"].sum(), rel=1e-12)
    # pumped: the total is the present value of the life-cycle cost, more than the pipes
    assert r.total_cost == pytest.approx(r.costs["pv_total"])
    assert r.total_cost > r.costs["capex_pipe"]
    # the spur may only take the four sizes the file allows
    spur = r.pipes.set_index("pipe").loc["Sorvantle spur", "size"]
    assert spur in ("DN 100", "DN 125", "DN 150", "DN 200")


@pytest.mark.reference
def test_demo_pressures_hold_by_an_independent_solution(demo_result):
    # Re-solve the chosen design at each demand case with the test's own formulation
    # (unknowns: every pipe flow and junction head; Darcy-Weisbach with Colebrook-White, plus
    # the rising main's minor losses), the source held at the reported pump head, and check
    # every node's minimum pressure head.
    r = demo_result
    study = r.study
    d = demo_dict()
    names = [n["name"] for n in d["node"]] + [s["name"] for s in d["source"]]
    idx = {n: i for i, n in enumerate(names)}
    pipes = r.pipes
    start = np.array([idx[n] for n in pipes["from"]])
    end = np.array([idx[n] for n in pipes["to"]])
    length = pipes["length_m"].to_numpy()
    diam = pipes["inner_diameter_m"].to_numpy()
    rough = np.where(pipes["status"] == "new", 1e-4, 1.5e-3)   # catalog DI lining; the file
    k = np.where(pipes["pipe"] == "rising main", 6.0, 0.0)
    nu = study.fluid.viscosity / study.fluid.density
    elevation = np.array([n["elevation"].split()[0] for n in d["node"]], dtype=float)
    minimum = np.array([float(n.get("min_pressure_head", "25 m").split()[0]) for n in d["node"]])
    factors = [x["demand_factor"] for x in d["duty"]]
    base = np.array([float(n["demand"].split()[0]) / 1000.0 for n in d["node"]])
    j, p = len(d["node"]), len(pipes)
    for case, f in enumerate(factors):
        source = 31.0 + float(r.cases["pump_head_m"].iloc[case])
        demand = base * f

        def residual(x, demand=demand, source=source):
            q, h = x[:p], x[p:]
            full = np.concatenate([h, [source]])
            bal = np.zeros(j + 1)
            np.add.at(bal, end, q)
            np.add.at(bal, start, -q)
            energy = full[start] - full[end] - dw_head_loss(q, length, diam, rough, nu, k)
            return np.concatenate([bal[:j] - demand, energy])

        guess = np.concatenate([np.full(p, 0.01), np.full(j, source - 5.0)])
        sol = optimize.root(residual, guess, method="hybr", options={"xtol": 1e-13})
        assert sol.success
        pressure = sol.x[p:] - elevation
        assert np.all(pressure >= minimum - 1e-6)
        # the free pump lifts just enough: the most critical node sits at its minimum
        assert (pressure - minimum).min() == pytest.approx(0.0, abs=1e-6)


@pytest.mark.reference
def test_demo_pipe_table_balances_mass_and_follows_darcy_weisbach(demo_result):
    # the pipe table (the peak-hour case: 1.9 x every demand): conservation of mass summed at
    # every junction, V = 4 Q / (pi D^2), and each head loss by Darcy-Weisbach with f from
    # Colebrook-White (mpmath), water at 12 degC from iapws (IAPWS-95), new pipe 0.1 mm (the
    # bundled ductile-iron lining), the old main 1.5 mm, K 6 on the rising main
    import iapws

    pipes = demo_result.pipes
    d = demo_dict()
    demand = {n["name"]: 1.9 * float(n["demand"].split()[0]) / 1000.0 for n in d["node"]}
    q = pipes["flow_m3_s"].to_numpy()
    for node, need in demand.items():
        inflow = q[(pipes["to"] == node).to_numpy()].sum() - q[(pipes["from"] == node)
                                                              .to_numpy()].sum()
        assert inflow == pytest.approx(need, abs=1e-12)
    dia = pipes["inner_diameter_m"].to_numpy()
    np.testing.assert_allclose(pipes["velocity_m_s"], 4 * q / (np.pi * dia**2), rtol=1e-12)
    w = iapws.IAPWS95(T=285.15, P=0.101325)
    nu = w.mu / w.rho
    for _, row in pipes.iterrows():
        eps = 1e-4 if row["status"] == "new" else 1.5e-3
        k = 6.0 if row["pipe"] == "rising main" else 0.0
        v = abs(row["velocity_m_s"])
        f = _colebrook_mp(v * row["inner_diameter_m"] / nu, eps / row["inner_diameter_m"])
        h = (f * row["length_m"] / row["inner_diameter_m"] + k) * v * v / (2 * 9.80665)
        assert row["head_loss_m"] == pytest.approx(np.sign(row["flow_m3_s"]) * h, rel=1e-9)


@pytest.mark.reference
def test_demo_life_cycle_cost_by_an_explicit_discounted_sum(demo_result):
    # The demo's present value written out in mpmath from the file's inputs and the two cases'
    # pump heads (checked against an independent solution above): P_k = rho g Q_k H_k / eta
    # (rho from iapws at 12 degC), energy sum_k P_k h_k at 0.14 escalating 1 %, 60 per kW of
    # peak, station 9000 (1.5 P_max)^0.68 bought at 0 and 20 (life 20, nothing left at 40),
    # maintenance 0.3 % of the pipes and 1.5 % of the station, pipe residual 1 - 40/80 at 40,
    # all at 5 % (present value, common practice); pipe capital 2100 OD^1.3 per metre, EN 545
    # outside diameters. EAC = PV r(1+r)^n/((1+r)^n-1).
    import iapws
    import mpmath

    mpmath.mp.dps = 30
    r = demo_result
    rho = mpmath.mpf(iapws.IAPWS95(T=285.15, P=0.101325).rho)
    g = mpmath.mpf("9.80665")
    cases = r.cases
    power = [rho * g * mpmath.mpf(q) * mpmath.mpf(h) / mpmath.mpf("0.72") / 1000
             for q, h in zip(cases["total_demand_m3_s"], cases["pump_head_m"], strict=True)]
    energy = power[0] * 7300 + power[1] * 1460
    peak = max(power)
    new = r.pipes[r.pipes["status"] == "new"]
    pipe = sum(mpmath.mpf(row["length_m"]) * 2100
               * (mpmath.mpf(EN545_OD[int(row["size"][3:])]) / 1000) ** mpmath.mpf("1.3")
               for _, row in new.iterrows())
    station = 9000 * (mpmath.mpf("1.5") * peak) ** mpmath.mpf("0.68")
    i = mpmath.mpf("1.05")
    pv = pipe + station + station / i**20
    for t in range(1, 41):
        pv += (energy * mpmath.mpf("0.14") * mpmath.mpf("1.01") ** (t - 1) + 60 * peak
               + mpmath.mpf("0.003") * pipe + mpmath.mpf("0.015") * station) / i**t
    pv -= pipe * (1 - mpmath.mpf(40) / 80) / i**40
    assert r.costs["capex_pipe"] == pytest.approx(float(pipe), rel=1e-12)
    assert r.costs["capex_pump_station"] == pytest.approx(float(station), rel=1e-12)
    assert r.total_cost == pytest.approx(float(pv), rel=1e-12)
    crf = (i - 1) * i**40 / (i**40 - 1)
    assert r.costs["eac"] == pytest.approx(float(pv * crf), rel=1e-12)


def test_the_run_is_reproducible(demo_result):
    again = NetworkStudy.demo().run(progress=False)
    assert again.total_cost == demo_result.total_cost
    assert list(again.pipes["size"]) == list(demo_result.pipes["size"])


def test_text_repr_and_html(demo_result):
    text = demo_result.text()
    assert "ILLUSTRATIVE" in text
    assert "Caution:" in text and "licensed engineering practice" in text
    assert "Check: the design re-solved" in text
    assert "\n" not in repr(demo_result)
    html = demo_result._repr_html_()
    assert "<table" in html and "Pipes" in html


#: EN 545 ductile iron pipe outside diameters [mm] by DN (from memory)
EN545_OD = {100: 118.0, 125: 144.0, 150: 170.0, 200: 222.0, 250: 274.0, 300: 326.0, 350: 378.0,
            400: 429.0}


def gravity_dict() -> dict:
    d = demo_dict()
    for key in ("pumping", "energy", "pump_station", "economics"):
        d.pop(key)
    d["source"] = [{"name": "Quillmere works", "head": "120 m", "x": "-1500 m", "y": "-300 m"}]
    d["optimizer"]["evaluations"] = 8000
    return d


@pytest.mark.reference
def test_gravity_network_costs_its_pipe_capital_only():
    r = NetworkStudy.from_dict(gravity_dict()).run(progress=False)
    assert r.success
    new = r.pipes[r.pipes["status"] == "new"]
    # the capital by hand: length x 2100 OD^1.3 (the file's cost law), OD of ductile iron pipe
    # by EN 545 (table of dimensions; outside diameters in mm, from memory)
    per_metre = {f"DN {dn}": 2100.0 * (od / 1000.0) ** 1.3 for dn, od in EN545_OD.items()}
    by_hand = sum(row["length_m"] * per_metre[row["size"]] for _, row in new.iterrows())
    assert r.total_cost == pytest.approx(by_hand, rel=1e-12)
    assert set(r.costs) == {"capex_pipe"}
    assert "capital only" in r.text()


def _colebrook_mp(re: float, rr: float) -> float:
    """Colebrook-White (Colebrook 1939) friction factor, by mpmath.findroot on 1/sqrt(f)."""
    import mpmath

    x = mpmath.findroot(lambda x: x + 2 * mpmath.log10(rr / 3.7 + 2.51 * x / re), 8)
    return float(1 / x**2)


@pytest.mark.reference
def test_branched_gravity_design_equals_brute_force_enumeration():
    # The demo without the cross link and ring 4 is a tree fed by gravity from 120 m: every
    # pipe's flow is the demand beyond it, so each combination of sizes (8^5 x 4 = 131,072)
    # is checked here by path sums of Darcy-Weisbach losses, f from Colebrook-White by
    # mpmath (new pipe 0.1 mm as the bundled ductile-iron lining, the old main 1.5 mm as the
    # file says; the rising main's K 6), water at 12 degC from iapws (IAPWS-95), both demand
    # cases (x1.0, x1.9), the minimum heads and the 2.5 m/s limit; capital 2100 OD^1.3 per
    # metre with the EN 545 outside diameters. The cheapest that holds must be the design.
    import iapws

    d = gravity_dict()
    d["pipe"] = [p for p in d["pipe"] if p["name"] not in ("cross link", "ring 4")]
    r = NetworkStudy.from_dict(d).run()
    assert r.success and r.outcome.method == "milp"
    w = iapws.IAPWS95(T=285.15, P=0.101325)
    nu = w.mu / w.rho
    g = 9.80665
    names = ["Quillmere Cross", "Vexholt Square", "Ombrellin Green", "Tarkwane Row",
             "Glimmerhythe", "Pindlewick Lane", "Sorvantle Quay"]
    elevation = np.array([44.0, 47.0, 52.0, 49.0, 58.0, 46.0, 41.0])
    minimum = np.array([25.0, 25.0, 25.0, 25.0, 20.0, 25.0, 25.0])
    base = np.array([4.0, 9.0, 7.0, 6.0, 5.0, 8.0, 6.0]) / 1000.0
    # the tree: (pipe, parent node or -1 for the works, child node, length)
    tree = [("rising main", -1, 0, 1600.0), ("ring 1", 0, 1, 800.0), ("ring 2", 1, 2, 850.0),
            ("old Ombrellin main", 2, 3, 850.0), ("ring 6", 0, 5, 850.0),
            ("ring 5", 5, 4, 750.0), ("Sorvantle spur", 3, 6, 800.0)]
    below = {0: [0, 1, 2, 3, 4, 5, 6], 1: [1, 2, 3, 6], 2: [2, 3, 6], 3: [3, 6], 5: [5, 4],
             4: [4], 6: [6]}
    bores = {}
    for dn in EN545_OD:
        bores[f"DN {dn}"] = float(catalog.lookup("ductile-iron", f"DN {dn} C40")
                                  ["inner_diameter_m"])
    cost_m = {k: 2100.0 * (EN545_OD[int(k[3:])] / 1000.0) ** 1.3 for k in bores}
    sizes = list(bores)
    # loss[pipe][size] for both cases, and whether the size keeps 2.5 m/s
    losses, ok_v, options = {}, {}, {}
    for name, _, child, length in tree:
        allowed = (["DN 100", "DN 125", "DN 150", "DN 200"] if name == "Sorvantle spur"
                   else sizes)
        if name == "old Ombrellin main":
            allowed = ["old"]
        options[name] = allowed
        for size in allowed:
            dia, eps = (0.15, 1.5e-3) if size == "old" else (bores[size], 1e-4)
            k = 6.0 if name == "rising main" else 0.0
            for case, factor in enumerate((1.0, 1.9)):
                q = base[below[child]].sum() * factor
                v = q / (np.pi * dia**2 / 4)
                f = _colebrook_mp(v * dia / nu, eps / dia)
                losses[name, size, case] = (f * length / dia + k) * v * v / (2 * g)
                ok_v[name, size, case] = size == "old" or v <= 2.5 + 1e-12
    design = [t for t in tree if t[0] != "old Ombrellin main"]
    best, best_choice = np.inf, None
    for combo in itertools.product(*(options[t[0]] for t in design)):
        choice = dict(zip((t[0] for t in design), combo, strict=True))
        choice["old Ombrellin main"] = "old"
        if not all(ok_v[n, c, k] for n, c in choice.items() for k in (0, 1)):
            continue
        cost = sum(cost_m[choice[t[0]]] * t[3] for t in design)
        if cost >= best:
            continue
        fine = True
        for case in (0, 1):
            head = np.zeros(7)
            for name, parent, child, _ in tree:           # parents come first in the list
                start = 120.0 if parent < 0 else head[parent]
                head[child] = start - losses[name, choice[name], case]
            fine &= bool(np.all(head - elevation >= minimum - 1e-9))
        if fine:
            best, best_choice = cost, choice
    assert r.total_cost == pytest.approx(best, rel=1e-9)
    chosen = r.pipes.set_index("pipe")["size"]
    for name, size in best_choice.items():
        if size != "old":
            assert chosen[name] == size
    assert names == list(r.nodes["node"][:7])


def test_branched_study_uses_the_exact_method_and_split_pipes():
    d = gravity_dict()
    d["pipe"] = [p for p in d["pipe"] if p["name"] not in ("cross link", "ring 4")]
    r = NetworkStudy.from_dict(d).run()
    assert r.outcome.method == "milp" and "optimal within a gap" in r.message
    d["network"]["split_pipes"] = True
    s = NetworkStudy.from_dict(d).run()
    assert s.total_cost <= r.total_cost * (1 + 1e-9)
    lengths = s.pipes.groupby("pipe")["length_m"].sum()
    assert lengths["ring 1"] == pytest.approx(800.0)


def test_split_pipes_and_milp_are_refused_for_a_looped_network():
    d = gravity_dict()
    d["network"]["split_pipes"] = True
    with pytest.raises(ValueError, match="split pipes are designed only for branched"):
        NetworkStudy.from_dict(d).run()
    with pytest.raises(ValueError, match="needs a branched network"):
        NetworkStudy.from_dict(gravity_dict()).run(method="milp")


def hazen_williams_gravity_dict() -> dict:
    """The gravity network with Hazen-Williams: omega 10.667, exponents 1.852 and 4.871, C 120
    for pipes that give none, C 90 for the old main."""
    d = gravity_dict()
    d["network"].update({"head_loss": "hazen-williams", "hazen_williams_coefficient": 10.667,
                         "hazen_williams_flow_exponent": 1.852,
                         "hazen_williams_diameter_exponent": 4.871, "hazen_williams_c": 120})
    d["pipe"][3].pop("roughness")
    d["pipe"][3]["hazen_williams_c"] = 90
    return d


@pytest.mark.reference
def test_hazen_williams_settings_are_read_and_used():
    d = hazen_williams_gravity_dict()
    r = NetworkStudy.from_dict(d).run(progress=False)
    pr = r.study.problem
    assert pr.hazen_williams == (10.667, 4.871, 1.852)
    # the old main's head loss by the test's own Hazen-Williams at the reported flow
    row = r.pipes.set_index("pipe").loc["old Ombrellin main"]
    h = hw_head_loss(row["flow_m3_s"], 850.0, 0.15, 90.0, 10.667, 1.852, 4.871)
    assert row["head_loss_m"] == pytest.approx(h, rel=1e-9)


def test_from_toml_reads_the_same_study(tmp_path):
    src = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    f = tmp_path / "town.toml"
    f.write_text(src, encoding="utf-8")
    a = NetworkStudy.from_toml(f)
    b = NetworkStudy.demo()
    assert repr(a) == repr(b)
    np.testing.assert_array_equal(a.problem.option_diameter, b.problem.option_diameter)


def _set(d, path, value):
    *head, last = path
    for k in head:
        d = d[k]
    if value is _DELETE:
        del d[last]
    else:
        d[last] = value


_DELETE = object()


@pytest.mark.parametrize(
    ("path", "value", "match"),
    [
        (("node", 0, "elevation"), 44, r"node\[0\]\.elevation: expected a head .* with no unit"),
        (("network", "head_los"), "x", r"network\.head_los: unknown key; did you mean "
                                        r"'network\.head_loss'"),
        (("network", "head_loss"), "manning", r"network\.head_loss: must be one of"),
        (("pipe", 1, "to"), "Vexholt Sqare", r"pipe\[1\]\.to: no node or source is named "
                                            r"'Vexholt Sqare'; did you mean 'Vexholt Square'"),
        (("node", 1, "name"), "Quillmere Cross", r"'Quillmere Cross' is used twice"),
        (("economics",), _DELETE, r"economics: required section \[economics\] is missing"),
        (("diameter_option", 0, "cost_per_metre"), 90.0, r"diameter_option\[0\]: give "
                                                         r"cost_per_metre .* one of the two"),
        (("pipe", 8, "sizes"), ["DN 100", "DN 1250"], r"pipe\[8\]\.sizes: no diameter option "
                                                      r"is named 'DN 1250'"),
        (("node", 2, "demand"), ["7 L/s"], r"node\[2\]\.demand: 1 flows for 2 duty"),
        (("pipe", 3, "sizes"), ["DN 100"], r"pipe\[3\]\.sizes: an existing pipe"),
        (("source",), _DELETE, r"source: required; add at least one \[\[source\]\] table"),
        (("source", 0, "level"), _DELETE, r"source\[0\]\.level: a pumped source needs the level"),
        (("diameter_option", 2, "size"), "DN 150 C99", r"diameter_option\[2\]"),
        (("node", 0, "min_pressure_head"), "-3 m", r"node\[0\]\.min_pressure_head: must not "
                                                   r"be negative"),
        (("duty", 1, "hours"), _DELETE, r"duty\[1\]\.hours: required key is missing"),
        (("duty", 0, "demand_factor"), -1.0, r"duty\[0\]\.demand_factor: must not be negative"),
        (("optimizer", "chains"), 0, r"optimizer\.chains: must be >= 1; got 0"),
        (("optimizer", "seed"), 1.5, r"optimizer\.seed: expected a whole number"),
        (("network", "split_pipes"), "yes", r"network\.split_pipes: expected true or false"),
        (("node", 4, "demand"), _DELETE, r"node\[4\]\.demand: required key is missing"),
        (("source", 0, "pumped"), False, r"source\[0\]\.level: only a pumped source"),
        (("pipe", 2, "length"), "0 m", r"pipe\[2\]\.length: must be positive"),
        (("diameter_option", 1, "cost", "exponent"), 9.0,
         r"diameter_option\[1\]\.cost\.exponent: must be <= 4"),
    ],
)
def test_study_file_errors_name_the_key(path, value, match):
    d = demo_dict()
    _set(d, path, value)
    with pytest.raises(StudyFileError, match=match):
        NetworkStudy.from_dict(d)


def test_a_second_source_next_to_a_free_pump_is_refused():
    d = demo_dict()
    d["source"].append({"name": "Zelvadine tank", "head": "95 m"})
    d["pipe"].append({"name": "tank main", "from": "Zelvadine tank", "to": "Glimmerhythe",
                      "length": "600 m"})
    with pytest.raises(StudyFileError, match="a pumped source without a head may only feed"):
        NetworkStudy.from_dict(d)


def test_topology_errors_reach_the_user_with_names():
    d = gravity_dict()
    d["node"].append({"name": "Yarrowquin End", "elevation": "40 m", "demand": "1 L/s"})
    with pytest.raises(StudyFileError, match="Yarrowquin End: is disconnected"):
        NetworkStudy.from_dict(d)
    d = gravity_dict()
    d["node"] += [{"name": "Quistlemoor Row", "elevation": "40 m", "demand": "1 L/s"},
                  {"name": "Quistlemoor Lane", "elevation": "40 m", "demand": "1 L/s"}]
    d["pipe"].append({"name": "island", "from": "Quistlemoor Row", "to": "Quistlemoor Lane",
                      "length": "90 m"})
    with pytest.raises(StudyFileError, match="Quistlemoor Row: has no path to any source"):
        NetworkStudy.from_dict(d)


@pytest.mark.reference
def test_demand_growth_evaluates_every_year_of_a_pumped_network():
    d = demo_dict()
    d["pipe"] = [p for p in d["pipe"] if p["name"] not in ("cross link", "ring 4")]
    d["growth"] = {"flow_per_year": 0.01}
    r = NetworkStudy.from_dict(d).run()
    assert len(r.cases) == 2 * 40
    # year 40 demands are 1.01^39 times year 1's (compound growth, common practice)
    first, last = r.cases["total_demand_m3_s"].iloc[1], r.cases["total_demand_m3_s"].iloc[-1]
    assert last / first == pytest.approx(1.01**39, rel=1e-12)
    assert r.nodes["feasible"].all()


def test_copy_of_the_demo_dict_is_not_changed_by_reading():
    d = demo_dict()
    before = copy.deepcopy(d)
    NetworkStudy.from_dict(d)
    assert d == before


# ----- the sections a network shares with a sizing study ---------------------------------------
def sizing_dict() -> dict:
    text = resources.files("pipeopt").joinpath("data", "demo_sizing.toml").read_text("utf-8")
    return tomllib.loads(text)


@pytest.mark.parametrize(
    ("section", "key", "value"),
    [
        ("energy", "price", -0.1),
        ("energy", "escalation", 0.9),
        ("economics", "horizon", 300),
        ("economics", "discount_rat", 0.05),
        ("pumping", "efficiency", 1.2),
        ("pump_station", "life", 2.5),
        ("pump_station", "stages", [5, 10]),
        ("growth", "flow_per_year", 0.9),
        ("growth", "design_year", 0),
        ("fluid", "temperature", 15),
        ("fluid", "kind", "oil"),
        ("study", "illustrative", "yes"),
    ],
)
def test_shared_sections_answer_as_in_a_sizing_study(section, key, value):
    # the same key, rule and message from a network file as from a sizing file
    messages = []
    for d, study in ((sizing_dict(), None), (demo_dict(), NetworkStudy)):
        d.setdefault(section, {})[key] = value
        if study is None:
            from pipeopt import SizingStudy as study
        with pytest.raises(StudyFileError) as err:
            study.from_dict(d)
        messages.append(str(err.value))
    assert messages[0] == messages[1]
    assert f"{section}." in messages[1]


def test_a_gravity_network_needs_no_economics_but_a_pumped_one_does():
    r = NetworkStudy.from_dict(gravity_dict())
    assert r.problem.economics is None
    for name in ("pumping", "energy"):
        d = demo_dict()
        d.pop(name)
        with pytest.raises(StudyFileError, match=rf"{name}: required section \[{name}\] is "
                                                 rf"missing \(a pumped network needs"):
            NetworkStudy.from_dict(d)
    d = gravity_dict()
    d["pumping"] = {"efficiency": 0.7}
    assert "not used: [pumping]" in NetworkStudy.from_dict(d).notes[0]


@pytest.mark.reference
def test_cash_flows_reconcile_to_the_life_cycle_cost(demo_result):
    cash = demo_result.cash_flows
    assert cash["year"].tolist() == list(range(41))            # economics.horizon = 40
    rows = cash.drop(columns=["year", "total", "discount_factor", "discounted"])
    factor = 1.05 ** -cash["year"].to_numpy(dtype=float)       # economics.discount_rate 5 %
    assert (rows.sum(axis=1) * factor).sum() == pytest.approx(demo_result.total_cost,
                                                               rel=1e-9)
    assert cash["capital_pipe"].iloc[0] == pytest.approx(demo_result.costs["capex_pipe"])
    # the station (life 20) is bought at year 0 and again at year 20
    assert cash.loc[cash["station_renewal"] > 0, "year"].tolist() == [20]


def test_a_gravity_network_s_cash_flow_is_its_pipe_capital():
    r = NetworkStudy.from_dict(gravity_dict()).run(progress=False)
    assert r.cash_flows["year"].tolist() == [0]
    assert r.cash_flows["discounted"].sum() == pytest.approx(r.total_cost, rel=1e-15)


@pytest.mark.reference
def test_a_declining_gravity_network_is_checked_at_its_largest_demands():
    # demands that fall 2 % a year are largest in year 1: the check uses year 1's demands
    d = gravity_dict()
    d["growth"] = {"flow_per_year": -0.02}
    d["economics"] = {"discount_rate": 0.05, "horizon": 30, "pipe_life": 80}
    study = NetworkStudy.from_dict(d)
    base = NetworkStudy.from_dict(gravity_dict()).problem.demand
    np.testing.assert_allclose(study.problem.demand, base, rtol=1e-15)
    d["growth"] = {"flow_per_year": 0.02}
    grown = NetworkStudy.from_dict(d).problem.demand
    np.testing.assert_allclose(grown, base * 1.02**29, rtol=1e-12)   # year 30


@pytest.mark.reference
def test_growth_stops_at_the_design_year_and_the_cap():
    d = demo_dict()
    d["pipe"] = [p for p in d["pipe"] if p["name"] not in ("cross link", "ring 4")]
    d["growth"] = {"flow_per_year": 0.03, "design_year": 10}
    demand = NetworkStudy.from_dict(d).problem.demand.sum(axis=2)[:, 0]   # average day
    assert demand[9] / demand[0] == pytest.approx(1.03**9, rel=1e-12)
    assert demand[-1] == pytest.approx(demand[9], rel=1e-15)
    total = demand[0]                                     # 45 L/s on an average day
    d["growth"] = {"flow_per_year": 0.03, "flow_cap": f"{1.5 * 1.9 * total} m^3/s"}
    peak = NetworkStudy.from_dict(d).problem.demand.sum(axis=2)[:, 1]      # peak hour
    assert peak.max() == pytest.approx(1.5 * 1.9 * total, rel=1e-12)
    d["growth"] = {"flow_per_year": 0.03, "flow_cap": "10 L/s"}
    with pytest.raises(StudyFileError, match=r"growth\.flow_cap .* is below the largest"):
        NetworkStudy.from_dict(d)


@pytest.mark.reference
def test_station_stages_in_a_network_file():
    # The demo as a tree (no cross link, no ring 4), demands growing 2 % a year, the station in
    # stages at years 0 and 15. By hand: the pump head of a case from path sums of
    # Darcy-Weisbach losses (f from Colebrook-White by mpmath, water at 12 degC from iapws, new
    # pipe 0.1 mm, the old main 1.5 mm, K 6 on the rising main): the source at 31 m lifted to
    # the least head that keeps every node at its minimum; P = rho g Q H / 0.72; stage 0 is
    # sized on the largest peak of years 1-15 and stage 1 on the rest of the largest of all
    # 40 years, each 9000 (1.5 P)^0.68 (the file's station cost law)
    import iapws

    d = demo_dict()
    d["pipe"] = [p for p in d["pipe"] if p["name"] not in ("cross link", "ring 4")]
    d["growth"] = {"flow_per_year": 0.02}
    d["pump_station"]["stages"] = [0, 15]
    r = NetworkStudy.from_dict(d).run()
    cash = r.cash_flows
    assert cash.loc[cash["capital_station"] > 0, "year"].tolist() == [0, 15]
    assert cash["discounted"].sum() == pytest.approx(r.total_cost, rel=1e-9)
    w = iapws.IAPWS95(T=285.15, P=0.101325)
    nu, rho_g = w.mu / w.rho, w.rho * 9.80665
    size = r.pipes.set_index("pipe")["inner_diameter_m"]
    elevation = np.array([44.0, 47.0, 52.0, 49.0, 58.0, 46.0, 41.0])
    minimum = np.array([25.0, 25.0, 25.0, 25.0, 20.0, 25.0, 25.0])
    base = np.array([4.0, 9.0, 7.0, 6.0, 5.0, 8.0, 6.0]) / 1000.0
    tree = [("rising main", -1, 0, 1600.0), ("ring 1", 0, 1, 800.0), ("ring 2", 1, 2, 850.0),
            ("old Ombrellin main", 2, 3, 850.0), ("ring 6", 0, 5, 850.0),
            ("ring 5", 5, 4, 750.0), ("Sorvantle spur", 3, 6, 800.0)]
    below = {0: [0, 1, 2, 3, 4, 5, 6], 1: [1, 2, 3, 6], 2: [2, 3, 6], 3: [3, 6], 5: [5, 4],
             4: [4], 6: [6]}
    cases = r.cases
    for year in (1, 15, 40):
        for k, factor in enumerate((1.0, 1.9)):
            head = np.zeros(7)
            for name, parent, child, length in tree:
                dia = size[name]
                eps = 1.5e-3 if name == "old Ombrellin main" else 1e-4
                q = base[below[child]].sum() * factor * 1.02 ** (year - 1)
                v = q / (np.pi * dia**2 / 4)
                f = _colebrook_mp(v * dia / nu, eps / dia)
                k_minor = 6.0 if name == "rising main" else 0.0
                head[child] = (0.0 if parent < 0 else head[parent]) - (
                    (f * length / dia + k_minor) * v * v / (2 * 9.80665))
            lift = (minimum + elevation - head).max() - 31.0   # head relative to the source
            row = cases.iloc[2 * (year - 1) + k]
            assert row["pump_head_m"] == pytest.approx(lift, rel=1e-9)
    power = rho_g * cases["total_demand_m3_s"].to_numpy() * cases["pump_head_m"].to_numpy() \
        / 0.72 / 1000.0
    np.testing.assert_allclose(cases["power_kw"], power, rtol=1e-9)
    peak = power.reshape(40, 2).max(axis=1)
    p0, p1 = peak[:15].max(), peak.max()
    stages = cash.loc[cash["capital_station"] > 0, "capital_station"].to_numpy()
    np.testing.assert_allclose(stages, [9000.0 * (1.5 * p0) ** 0.68,
                                        9000.0 * (1.5 * (p1 - p0)) ** 0.68], rtol=1e-9)


def test_the_study_is_frozen_and_replace_builds_another():
    study = NetworkStudy.demo()
    with pytest.raises(AttributeError, match="cannot be changed"):
        study.settings = None
    from pipeopt.costs import EnergyTariff

    dearer = study.replace(tariff=EnergyTariff(0.28, 0.01, 60.0))
    assert dearer.problem.economics.tariff.price == 0.28
    assert study.problem.economics.tariff.price == 0.14
    with pytest.raises(ValueError, match="replace: unknown argument 'tarif'"):
        study.replace(tarif=None)


def test_the_result_follows_the_result_protocol(demo_result):
    from pipeopt.results import CAUTION, StudyResult

    assert isinstance(demo_result, StudyResult)
    text = demo_result.text()
    assert str(demo_result) == text
    assert CAUTION in text and "fire flows" in text
    assert "study aid" not in text.lower()
    assert repr(demo_result).startswith("<NetworkResult: Quillmere ring main")
    assert set(demo_result.tables()) == {"Pipes", "Nodes", "Demand cases", "Cash flows"}


# ----- node heads and the case table against an independent solution ------------------------
def _independent_heads(result, d, source_head, factor):
    """(pipe flows, junction heads) of the chosen design at one demand case, by
    tests.network_reference.pipe_flows_and_heads: flows and heads as unknowns, mass balance at
    every junction and Darcy-Weisbach with Colebrook-White (Colebrook 1939) along every pipe,
    K 6 on the rising main, new pipe 0.1 mm (the bundled ductile-iron lining), the old main
    1.5 mm as the file says, water at 12 degC from iapws (IAPWS-95), solved by MINPACK's
    hybrid Powell method (scipy.optimize.root)."""
    import iapws

    from tests.network_reference import pipe_flows_and_heads

    w = iapws.IAPWS95(T=285.15, P=0.101325)
    names = [n["name"] for n in d["node"]] + [s["name"] for s in d["source"]]
    idx = {n: i for i, n in enumerate(names)}
    pipes = result.pipes
    start = np.array([idx[n] for n in pipes["from"]])
    end = np.array([idx[n] for n in pipes["to"]])
    length = pipes["length_m"].to_numpy()
    diam = pipes["inner_diameter_m"].to_numpy()
    rough = np.where(pipes["status"] == "new", 1e-4, 1.5e-3)
    k = np.where(pipes["pipe"] == "rising main", 6.0, 0.0)
    demand = factor * np.array([float(n["demand"].split()[0]) / 1000.0 for n in d["node"]])
    return pipe_flows_and_heads(
        len(d["node"]), start, end,
        lambda q: dw_head_loss(q, length, diam, rough, w.mu / w.rho, k), demand,
        source_head, 0.01, source_head - 5.0)


@pytest.mark.reference
def test_demo_node_table_equals_an_independent_solution_of_its_case(demo_result):
    # each node's row reports its critical case: its head there equals the independent
    # solution of that case with the works at 31 m + the case's pump head; pressure head =
    # head - elevation and margin = pressure head - the node's minimum (25 m, 20 m at
    # Glimmerhythe, as the file says); the pipe table (the peak hour, x 1.9) has that case's
    # flows
    r, d = demo_result, demo_dict()
    nodes = r.nodes[r.nodes["kind"] == "junction"].set_index("node")
    elevation = {n["name"]: float(n["elevation"].split()[0]) for n in d["node"]}
    minimum = {n["name"]: float(n.get("min_pressure_head", "25 m").split()[0])
               for n in d["node"]}
    seen = set()
    for case, duty in enumerate(d["duty"]):
        source = 31.0 + float(r.cases["pump_head_m"].iloc[case])
        flows, heads = _independent_heads(r, d, source, duty["demand_factor"])
        for j, node in enumerate(n["name"] for n in d["node"]):
            if nodes.loc[node, "case"] != duty["name"]:
                continue
            seen.add(node)
            assert nodes.loc[node, "head_m"] == pytest.approx(heads[j], rel=1e-8)
            assert nodes.loc[node, "pressure_head_m"] == pytest.approx(
                heads[j] - elevation[node], rel=1e-7)
            assert nodes.loc[node, "margin_m"] == pytest.approx(
                heads[j] - elevation[node] - minimum[node], abs=1e-6)
        if duty["name"] == "peak hour":
            np.testing.assert_allclose(r.pipes["flow_m3_s"], flows, rtol=1e-7, atol=1e-10)
    assert seen == set(nodes.index)


@pytest.mark.reference
def test_gravity_network_node_heads_equal_an_independent_solution():
    # fed by gravity from 120 m: at the peak hour (x 1.9) every node's head, pressure head and
    # every pipe's flow equal the independent solution (_independent_heads); at the average
    # day every node's head is higher (less friction), so the peak hour is each node's case
    d = gravity_dict()
    r = NetworkStudy.from_dict(d).run(progress=False)
    nodes = r.nodes[r.nodes["kind"] == "junction"]
    flows, heads = _independent_heads(r, d, 120.0, 1.9)
    np.testing.assert_allclose(nodes["head_m"], heads, rtol=1e-8)
    elevation = np.array([float(n["elevation"].split()[0]) for n in d["node"]])
    np.testing.assert_allclose(nodes["pressure_head_m"], heads - elevation, rtol=1e-7)
    np.testing.assert_allclose(r.pipes["flow_m3_s"], flows, rtol=1e-7, atol=1e-10)
    assert (nodes["case"] == "peak hour").all()
    _, average = _independent_heads(r, d, 120.0, 1.0)
    assert np.all(average > heads)


@pytest.mark.reference
def test_demo_case_table_by_hand(demo_result):
    # total demand of a case = the factor x the sum of the nodes' demands (conservation of
    # mass); power = rho g Q H / eta with the file's wire-to-water efficiency 0.72 and rho of
    # water at 12 degC from iapws (IAPWS-95); the free pump lifts just enough, so the least
    # margin of every case is 0 (checked against an independent solution above)
    import iapws

    d = demo_dict()
    rho_g = iapws.IAPWS95(T=285.15, P=0.101325).rho * 9.80665
    base = sum(float(n["demand"].split()[0]) / 1000.0 for n in d["node"])
    assert base == pytest.approx(0.045, rel=1e-15)                      # 45 L/s
    cases = demo_result.cases
    for case, duty in enumerate(d["duty"]):
        row = cases.iloc[case]
        assert row["case"] == duty["name"]
        q = duty["demand_factor"] * base
        assert row["total_demand_m3_s"] == pytest.approx(q, rel=1e-14)
        assert row["power_kw"] == pytest.approx(rho_g * q * row["pump_head_m"] / 0.72 / 1e3,
                                                rel=1e-9)
        assert row["least_margin_m"] == pytest.approx(0.0, abs=1e-6)


@pytest.mark.reference
def test_hazen_williams_network_node_heads_equal_an_independent_solution():
    # the gravity network with Hazen-Williams, h = omega L Q^1.852 / (C^1.852 D^4.871) with
    # omega 10.667 (SI form of the Hazen-Williams formula, from memory), C 140 for new lined
    # ductile iron (common practice, docs/references.md#materials), 90 for the old main as the
    # file says ([network] C 120 is for pipes that give none), K 6 x V^2/2g on the rising
    # main: heads
    # and flows of the peak hour (x 1.9) by tests.network_reference.pipe_flows_and_heads
    # (MINPACK's hybrid Powell method, scipy.optimize.root)
    from tests.network_reference import pipe_flows_and_heads

    d = hazen_williams_gravity_dict()
    r = NetworkStudy.from_dict(d).run(progress=False)
    names = [n["name"] for n in d["node"]] + [s["name"] for s in d["source"]]
    idx = {n: i for i, n in enumerate(names)}
    pipes = r.pipes
    start = np.array([idx[n] for n in pipes["from"]])
    end = np.array([idx[n] for n in pipes["to"]])
    length = pipes["length_m"].to_numpy()
    diam = pipes["inner_diameter_m"].to_numpy()
    c = np.where(pipes["status"] == "new", 140.0, 90.0)
    k = np.where(pipes["pipe"] == "rising main", 6.0, 0.0)

    def loss(q):
        v = q / (np.pi * diam**2 / 4)
        return (hw_head_loss(q, length, diam, c, 10.667, 1.852, 4.871)
                + k * v * np.abs(v) / (2 * 9.80665))

    demand = 1.9 * np.array([float(n["demand"].split()[0]) / 1000.0 for n in d["node"]])
    flows, heads = pipe_flows_and_heads(len(d["node"]), start, end, loss, demand, 120.0, 0.01,
                                        115.0)
    nodes = r.nodes[r.nodes["kind"] == "junction"]
    assert (nodes["case"] == "peak hour").all()
    np.testing.assert_allclose(nodes["head_m"], heads, rtol=1e-8)
    np.testing.assert_allclose(pipes["flow_m3_s"], flows, rtol=1e-7, atol=1e-10)
    np.testing.assert_allclose(pipes["head_loss_m"], loss(flows), rtol=1e-7, atol=1e-9)
    assert nodes["feasible"].all()


def test_the_summary_line_lists_every_part_of_the_present_value():
    # the printed parts add up to the printed total (each rounded to a unit: within 3 units);
    # the line once left out maintenance, station renewals and the residual credit
    import re

    text = NetworkStudy.demo().run().text()
    line = next(x for x in text.splitlines() if x.startswith("Life-cycle cost"))
    total = float(re.search(r"Life-cycle cost ([\d,]+)", line).group(1).replace(",", ""))
    parts = [float(v.replace(",", "")) for v in
             re.findall(r"(?:pipes|station|energy|maintenance|renewals|value) (-?[\d,]+)", line)]
    assert len(parts) == 6 and abs(sum(parts) - total) <= 3.0, (parts, total)
