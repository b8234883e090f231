"""Tests of pipeopt.network.study: the network study file, the run and the result."""

from __future__ import annotations

import copy
import tomllib
from importlib import resources

import numpy as np
import pytest
from scipy import optimize

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


def gravity_dict() -> dict:
    d = demo_dict()
    for key in ("pumping", "energy", "pump_station", "economics"):
        d.pop(key)
    d["source"] = [{"name": "Quillmere works", "head": "120 m", "x": "-1500 m", "y": "-300 m"}]
    d["optimizer"]["evaluations"] = 8000
    return d


def test_gravity_network_costs_its_pipe_capital_only():
    r = NetworkStudy.from_dict(gravity_dict()).run(progress=False)
    assert r.success
    new = r.pipes[r.pipes["status"] == "new"]
    # the capital by hand: length x cost per metre of the chosen catalog size
    study = r.study
    per_metre = {o.name: o.cost_per_metre for o in study.options}
    by_hand = sum(row["length_m"] * per_metre[row["size"]] for _, row in new.iterrows())
    assert r.total_cost == pytest.approx(by_hand, rel=1e-12)
    assert set(r.costs) == {"capex_pipe"}
    assert "capital only" in r.text()


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


def test_hazen_williams_settings_are_read_and_used():
    d = gravity_dict()
    d["network"].update({"head_loss": "hazen-williams", "hazen_williams_coefficient": 10.667,
                         "hazen_williams_flow_exponent": 1.852,
                         "hazen_williams_diameter_exponent": 4.871, "hazen_williams_c": 120})
    d["pipe"][3].pop("roughness")
    d["pipe"][3]["hazen_williams_c"] = 90
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


def test_station_stages_in_a_network_file():
    d = demo_dict()
    d["pipe"] = [p for p in d["pipe"] if p["name"] not in ("cross link", "ring 4")]
    d["growth"] = {"flow_per_year": 0.02}
    d["pump_station"]["stages"] = [0, 15]
    r = NetworkStudy.from_dict(d).run()
    cash = r.cash_flows
    assert cash.loc[cash["capital_station"] > 0, "year"].tolist() == [0, 15]
    assert cash["discounted"].sum() == pytest.approx(r.total_cost, rel=1e-9)


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
