"""Write the worked notebooks in notebooks/ (outputs cleared). Run from the repository root.

Every scenario in them is invented; their numbers are illustrative and say so.
"""

from __future__ import annotations

from pathlib import Path

import nbformat
from nbformat.v4 import new_code_cell, new_markdown_cell, new_notebook

OUT = Path(__file__).resolve().parents[1] / "notebooks"
CAUTION = ("**Caution.** pipeopt supports studies; it does not produce a design. Pressure "
           "ratings and the Joukowsky surge screen do not replace a transient analysis; pressure, "
           "surge and structural questions need a qualified engineer, and local codes and "
           "licensed engineering practice govern.")


def nb(cells: list) -> nbformat.NotebookNode:
    for k, cell in enumerate(cells):  # stable ids: regenerating changes only what changed
        cell["id"] = f"cell-{k:02d}"
    book = new_notebook(cells=cells)
    book.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3",
                                   "language": "python"}
    book.metadata["language_info"] = {"name": "python"}
    return book


def md(text: str):
    return new_markdown_cell(text.strip())


def code(text: str):
    return new_code_cell(text.strip())


SIZING = nb([
    md("""
# 1. Sizing a new pumped line from scratch

**Scenario (invented, illustrative):** the fictional Ostrevale water company must pump raw
water from a river intake to its treatment works: 2.9 km of line, 31 m of static head, two
seasons of demand growing 1.5 % a year. Every number below is invented to show the method.

We go step by step: the water, the friction of one candidate by hand, the catalog, the study,
its result, the figures, and finally the interactive explorer.
"""),
    md(CAUTION),
    code("""
import matplotlib.pyplot as plt
import numpy as np
import pipeopt
from pipeopt import Fluid, SizingStudy, catalog, friction, plots

water = Fluid.water("11 degC")
water
"""),
    md("""
## One candidate by hand

A DN 400 ductile-iron pipe of class C40 carrying the summer flow of 560 m³/h. The catalog gives
the real bore after the cement-mortar lining; Colebrook–White is solved exactly.
"""),
    code("""
pipe = catalog.lookup("ductile-iron", "DN 400 C40")
d = float(pipe["inner_diameter_m"])
q = pipeopt.units.to_si("560 m^3/h", "flow", "flow")
re = friction.reynolds_number_from_flow(q, d, water.density, water.viscosity)
f = friction.friction_factor(re, 0.1e-3 / d)
h = friction.line_head_loss(q, d, 2900.0, 0.1e-3, water.density, water.viscosity, k_sum=7.0)
print(f"bore {d * 1000:.1f} mm, Re {re:,.0f}, f {f:.6f}, head loss {h:.2f} m")
"""),
    md("## The candidates: three materials from the catalog"),
    code("""
catalog.list_sizes("pe100", min_diameter="0.25 m", max_diameter="0.6 m",
                   classes="SDR 17")[["designation", "inner_diameter_m", "pressure_rating_pa"]]
"""),
    md("""
## The study

Prices follow the pipe: each size costs its mass per metre (wall and lining, from the catalog)
times a price per kilogram, plus a laying cost that grows with the outside diameter
(a · OD^n, OD in m). So a heavier class of one size costs more than a lighter one, and a class
wins for its hydraulics or its rating, never for a cheaper price of more pipe. Every price here
is invented.
"""),
    code("""
study = SizingStudy.from_dict({
    "study": {"name": "Ostrevale raw-water line (fictional, illustrative)", "currency": "EUR",
              "illustrative": True},
    "fluid": {"kind": "water", "temperature": "11 degC"},
    "line": {"length": "2.9 km", "static_head": "31 m", "minor_loss_k": 7.0},
    "duty": [{"name": "winter", "flow": "330 m^3/h", "hours": 5000},
             {"name": "summer", "flow": "560 m^3/h", "hours": 2600}],
    "growth": {"flow_per_year": 0.015},
    "pumping": {"efficiency": 0.71},
    "energy": {"price": 0.13, "escalation": 0.01, "demand_charge": 50.0},
    "pump_station": {"cost_coefficient": 8500.0, "cost_exponent": 0.7,
                     "standby_fraction": 0.5, "life": 20, "maintenance": 0.015},
    "economics": {"discount_rate": 0.05, "horizon": 40, "pipe_life": 80,
                  "pipe_maintenance": 0.003},
    "material": [
        {"name": "ductile-iron", "min_diameter": "0.2 m", "max_diameter": "0.7 m",
         "classes": ["C40", "C30"],
         "cost": {"price_per_kg": 1.9, "laying_coefficient": 520.0, "laying_exponent": 1.1}},
        {"name": "pe100", "min_diameter": "0.2 m", "max_diameter": "0.7 m",
         "classes": ["SDR 17", "SDR 11"],
         "cost": {"price_per_kg": 2.6, "laying_coefficient": 380.0, "laying_exponent": 1.05}},
        {"name": "steel", "min_diameter": "0.2 m", "max_diameter": "0.7 m",
         "classes": ["STD"], "aging": "typical",
         "cost": {"price_per_kg": 2.3, "laying_coefficient": 560.0, "laying_exponent": 1.1}},
    ],
    "constraints": {"velocity_min": "0.5 m/s", "velocity_max": "2.5 m/s"},
})
result = study.run()
result
"""),
    md("## Why this size: the cost curves and the breakdown"),
    code("""
fig, axes = plt.subplots(1, 2, figsize=(13, 4.5), layout="constrained")
plots.cost_curves(result, ax=axes[0])
plots.cost_breakdown(result, ax=axes[1])
plt.show()
"""),
    code("""
fig, axes = plt.subplots(1, 2, figsize=(13, 4.5), layout="constrained")
plots.velocity_head(result, ax=axes[0])
plots.friction_chart(result, ax=axes[1])
plt.show()
"""),
    md("## Year by year for the chosen design"),
    code("result.yearly().head(8)"),
    md("""
## Explore

Move the energy price or the discount rate and watch the optimum move.
"""),
    code("pipeopt.explore(study)"),
])

MATERIALS = nb([
    md("""
# 2. Comparing materials for one line: pressure class, surge and carbon

**Scenario (invented, illustrative):** the fictional Zenthall Point district-cooling scheme needs a
1.4 km header carrying 30 % ethylene-glycol brine at 6 °C against 55 m of static head (a hill
between plant and load). Which material and which pressure class, once surge and carbon are
counted? All figures are invented.
"""),
    md(CAUTION),
    code("""
import matplotlib.pyplot as plt
from pipeopt import Fluid, SizingStudy, catalog, plots, surge

brine = Fluid.coolprop("INCOMP::MEG-30%", "6 degC")
brine
"""),
    md("""
## Wave speed and surge of one size in each material

Korteweg's wave speed for the mean diameter and the wall of each catalog pipe, with the
Joukowsky head rise of stopping 1.5 m/s at once (a screening value).
"""),
    code("""
rows = []
for mat, size in [("steel", "NPS 14 STD"), ("stainless-steel", "NPS 14 Sch 10S"),
                  ("ductile-iron", "DN 350 C40"), ("pe100", "400 SDR 17")]:
    p = catalog.lookup(mat, size)
    m = catalog.get_material(mat)
    a = surge.wave_speed(2.3e9, brine.density, p["outside_diameter_m"] - p["wall_m"],
                         p["wall_m"], m.elastic_modulus, m.poisson_ratio, "anchored-throughout")
    rows.append((mat, size, round(a), round(surge.joukowsky_head(a, 1.5), 1),
                 p["pressure_rating_pa"] / 1e5))
import pandas as pd
pd.DataFrame(rows, columns=["material", "size", "wave speed [m/s]", "surge head [m]",
                            "rating [bar]"])
"""),
    md("## The study, with carbon priced"),
    code("""
study = SizingStudy.from_dict({
    "study": {"name": "Zenthall Point chilled-brine header (fictional, illustrative)",
              "currency": "GBP",
              "illustrative": True},
    "fluid": {"kind": "coolprop", "name": "INCOMP::MEG-30%", "temperature": "6 degC"},
    "line": {"length": "1.4 km", "static_head": "55 m", "minor_loss_k": 12.0},
    "duty": [{"flow": "420 m^3/h", "hours": 3200}, {"flow": "250 m^3/h", "hours": 3000}],
    "pumping": {"efficiency": 0.74},
    "energy": {"price": 0.19, "escalation": 0.015},
    "economics": {"discount_rate": 0.035, "horizon": 30, "pipe_life": 50},
    "carbon": {"grid_factor": "0.2 kg/kWh", "price": 90.0},
    "material": [
        {"name": "steel", "min_diameter": "0.2 m", "max_diameter": "0.5 m",
         "classes": ["STD", "Sch 40"],
         "cost": {"price_per_kg": 2.4, "laying_coefficient": 600.0, "laying_exponent": 1.1}},
        {"name": "stainless-steel", "min_diameter": "0.2 m", "max_diameter": "0.5 m",
         "classes": ["Sch 10S"],
         "cost": {"price_per_kg": 7.5, "laying_coefficient": 650.0, "laying_exponent": 1.1}},
        {"name": "ductile-iron", "min_diameter": "0.2 m", "max_diameter": "0.5 m",
         "cost": {"price_per_kg": 2.0, "laying_coefficient": 540.0, "laying_exponent": 1.1}},
        {"name": "pe100", "min_diameter": "0.2 m", "max_diameter": "0.5 m",
         "classes": ["SDR 17", "SDR 11", "SDR 9"],
         "cost": {"price_per_kg": 2.8, "laying_coefficient": 400.0, "laying_exponent": 1.05}},
    ],
    "constraints": {"velocity_max": "3 m/s"},
})
result = study.run()
result
"""),
    md("""
## Which classes fail the pressure check, and why

In the terms of EN 805: the operating pressure (the highest pump head, plus any suction
pressure of a closed loop) must stay within PFA, the allowable operating pressure of the class
at the service temperature; the maximum design pressure MDP (the operating pressure plus the
Joukowsky rise with each candidate's own wave speed) within PMA, the allowable maximum with
surge. Plastics are derated by temperature (here 6 °C: no derating).
"""),
    code("""
c = result.candidates
c[c["reasons"].str.contains("PFA|PMA")][["material", "size", "operating_pressure_bar",
                                         "mdp_bar", "pfa_bar", "pma_bar", "reasons"]].head(10)
"""),
    md("## The best of each material, and what carbon adds"),
    code("""
result.runner_up()[["material", "size", "inner_diameter_m", "eac", "pv_carbon"]]
"""),
    code("""
fig, axes = plt.subplots(1, 2, figsize=(13, 4.5), layout="constrained")
plots.cost_curves(result, ax=axes[0])
plots.cost_breakdown(result, n=6, ax=axes[1])
plt.show()
"""),
])

UPGRADE = nb([
    md("""
# 3. Justifying the upgrade of an aged main

**Scenario (invented, illustrative):** the fictional Crowlark Street trunk main is unlined cast
iron laid decades ago. A field test measured its losses; breaks are rising. Keep it, reline it,
replace it, or lay a second pipe beside it? And when? Every figure is invented.
"""),
    md(CAUTION),
    code("""
import matplotlib.pyplot as plt
import pipeopt
from pipeopt import UpgradeStudy, plots
from pipeopt.uncertainty import LogNormal, Triangular, Uniform
"""),
    md("""
## Calibrating the existing line from a field test

A flow and two gauge pressures 900 m apart give the friction loss; the roughness that reproduces
it is found by root finding on Colebrook–White, and its equivalent Hazen–Williams C reported.
"""),
    code("""
study = UpgradeStudy.from_dict({
    "study": {"name": "Crowlark Street trunk main (fictional, illustrative)", "currency": "EUR",
              "illustrative": True},
    "fluid": {"kind": "water", "temperature": "9 degC"},
    "existing": {"material": "cast-iron-aged", "inner_diameter": "0.235 m",
                 "bore_as_laid": "0.25 m",
                 "length": "2.7 km", "static_head": "16 m", "minor_loss_k": 5.0,
                 "aging": "0.04 mm/yr", "breaks_per_year": 2.5, "break_growth": 0.07,
                 "break_cost": 8500.0, "leakage_cost": 9000.0, "leakage_growth": 0.03,
                 "field_test": {"flow": "190 m^3/h", "length": "900 m",
                                "upstream_pressure": "3.8 bar", "upstream_elevation": "27 m",
                                "downstream_pressure": "3.35 bar",
                                "downstream_elevation": "24 m"}},
    "duty": [{"flow": "150 m^3/h", "hours": 6500}, {"flow": "210 m^3/h", "hours": 1500}],
    "growth": {"flow_per_year": 0.006},
    "pumping": {"efficiency": 0.69},
    "energy": {"price": 0.16, "escalation": 0.01},
    "economics": {"discount_rate": 0.04, "horizon": 40, "pipe_life": 80},
    "option": [
        {"kind": "reline", "liner_thickness": "5 mm", "cost_per_metre": 230.0,
         "cleaning_cost_per_metre": 30.0, "leakage_factor": 0.7, "life": 50},
        {"kind": "replace", "name": "replace DN 250", "material": "ductile-iron",
         "size": "DN 250 C40", "cost_per_metre": 470.0},
        {"kind": "duplicate", "name": "duplicate PE 200", "material": "pe100",
         "size": "200 SDR 17", "cost_per_metre": 190.0},
    ],
})
study.condition
"""),
    md("## Options, NPV, IRR and payback"),
    code("""
result = study.run()
result
"""),
    code("""
plots.cumulative_cash_flow(result)
plt.show()
"""),
    md("## When to act: every year of action scanned"),
    code("""
for option in ["reline", "replace DN 250", "duplicate PE 200"]:
    print(study.best_year(option))
"""),
    md("## How sure is the answer?"),
    code("""
mc = study.monte_carlo({"energy_price": Triangular(0.10, 0.16, 0.26),
                        "discount_rate": Uniform(0.025, 0.07),
                        "break_cost_factor": LogNormal(1.0, 0.3),
                        "capital_factor": Triangular(0.85, 1.0, 1.4)}, n=3000, seed=42)
mc
"""),
    code("pipeopt.explore(study)"),
])

NETWORK = nb([
    md("""
# 4. Designing a ring main by least life-cycle cost

**Scenario (invented, illustrative):** the fictional town of Quillmere is fed from its works by
a pumped rising main into a ring of streets with one cross-connection, a spur to Sorvantle Quay and
one old cast-iron main that stays. Which size should each new pipe be, and how high must the
pumps lift, so that every street keeps its pressure at the least cost over forty years? Every
figure is invented to show the method (the bundled demo network).
"""),
    md(CAUTION),
    code("""
import matplotlib.pyplot as plt
import numpy as np
from pipeopt import plots
from pipeopt.network import NetworkStudy
from pipeopt.network.design import design_looped, evaluate
from pipeopt.network.published import two_loop

study = NetworkStudy.demo()
study
"""),
    md("""
## One design by hand: every new pipe DN 200

`evaluate` solves the network by the global gradient method (Todini & Pilati 1988) at both duty
points, lifts the pumped source just enough to keep every node's pressure, and prices the design
over the horizon.
"""),
    code("""
pr = study.problem
dn200 = [o.name for o in study.options].index("DN 200")
allowed = pr.allowed[np.arange(pr.n_design), dn200]
choice = np.where(allowed, dn200, pr.allowed.argmax(axis=1))
ev = evaluate(pr, choice)
print(f"pump head {ev.pump_head[0].round(1)} m, life-cycle cost {ev.cost[0]:,.0f} EUR")
print(f"mass balance {ev.mass_residual[0]:.1e} m3/s, energy balance {ev.energy_residual[0]:.1e} m")
"""),
    md("## The least life-cycle-cost design"),
    code("""
result = study.run(progress=False)
result
"""),
    code("""
plots.network(result)
plt.show()
"""),
    code("result.nodes"),
    code("result.cases"),
    md("""
## How the search got there

The search keeps the best design found so far; its history shows how quickly it settles.
"""),
    code("""
evals, cost = zip(*result.outcome.history)
fig, ax = plt.subplots(figsize=(6, 3.5), layout="constrained")
ax.step(evals, np.array(cost) / 1e6, where="post")
ax.set_xlabel("designs evaluated [-]")
ax.set_ylabel("best life-cycle cost [million EUR]")
plt.show()
"""),
    md("""
## What the loop costs: the same town as a tree

Without the cross-connection and the ring pipe from Tarkwane Row to Glimmerhythe the network
is branched: the flows follow from the demands and the least-cost design is found exactly by
mixed-integer programming, with its optimality gap.
"""),
    code("""
import tomllib
from importlib import resources

spec = tomllib.loads(resources.files("pipeopt").joinpath("data", "demo_network.toml")
                     .read_text("utf-8"))
spec["pipe"] = [p for p in spec["pipe"] if p["name"] not in ("cross link", "ring 4")]
tree = NetworkStudy.from_dict(spec).run()
print(tree.message)
print(f"ring {result.total_cost:,.0f} EUR, tree {tree.total_cost:,.0f} EUR")
"""),
    md("""
## A published check: the two-loop network

The two-loop network of Alperovits & Shamir (1977) with the Hazen–Williams constants of Savic &
Walters (1997): the best cost known in the literature is 419,000.
"""),
    code("""
out = design_looped(two_loop(), seed=1, evaluations=200_000, target=419_000, progress=False)
print(f"{out.cost:,.0f} after {out.evaluations:,} designs in {out.seconds:.1f} s")
"""),
])

PROGRAMME = nb([
    md("""
# 5. A renewal programme over a register of mains

**Scenario (invented, illustrative):** Oxtervale Water, a fictional utility, holds a register of
5,000 distribution mains (cast iron, asbestos cement, steel, ductile iron, PVC and PE, laid from
the 1890s on), with the breaks of each over the last ten years, and 2 million a year to renew
mains over the next ten years. Every name and number is invented to show the method.

We read and check the register, value replacing every main in every year against keeping it,
choose the programme within the budget, look at why each main is or is not in it, and run the
same valuation on Dask.
"""),
    md(CAUTION),
    code("""
import tomllib
from importlib import resources

import matplotlib.pyplot as plt
import pandas as pd
from pipeopt import ProgrammeStudy, plots
from pipeopt.register import INVENTED_MATERIALS, read_register

register = ProgrammeStudy.demo_register()
register.head()
"""),
    md("""
## Checking the register

Each row is checked with vectorized rules; a bad row is reported with its row number, its id
and every reason, and left out. The invented register has a few rows broken on purpose.
"""),
    code("""
checked = read_register(register, materials=INVENTED_MATERIALS, first_year=2027)
checked.rejected
"""),
    md("## The study and the programme"),
    code("""
study = ProgrammeStudy.demo()
result = study.run(register)
result
"""),
    code("""
plots.yearly_capital(result)
plt.show()
"""),
    md("""
## Why each main is, or is not, in the programme

The ranked list orders the mains whose renewal pays by NPV per unit of capital at their best
year; the status and the reason say what the budget did with each.
"""),
    code("""
result.ranked(12)
"""),
    code("""
result.mains["status"].value_counts()
"""),
    md("""
## One main: the NPV of renewing it in each year

The best year balances the breaks avoided (growing every year) against the cost of spending the
capital sooner.
"""),
    code("""
main = result.ranked(40).iloc[-1]["main_id"]
by_year = result.npv_by_year.set_index("main_id").loc[main]
ax = by_year.plot(marker="o")
ax.set_xlabel("year of renewal [calendar year]")
ax.set_ylabel("NPV of renewing against keeping [EUR]")
ax.set_title(main)
plt.show()
"""),
    md("## What would a larger budget buy?"),
    code("""
text = resources.files("pipeopt").joinpath("data", "demo_programme.toml").read_text("utf-8")
data = tomllib.loads(text)
data["programme"]["budget"] = [3.0e6] * 5 + [2.0e6] * 5
larger = ProgrammeStudy.from_dict(data).run(register)
pd.DataFrame({"budget 2.0 M a year": result.schedule.set_index("calendar_year")["npv"],
              "3.0 M for five years": larger.schedule.set_index("calendar_year")["npv"]})
"""),
    md("""
## The same valuation on Dask

For registers that outgrow one process the mains are valued partition by partition on a Dask
cluster (here a small one inside this process); every main's numbers depend on that main alone,
so the results are the same, bit for bit.
"""),
    code("""
from distributed import Client, LocalCluster

with LocalCluster(processes=False, n_workers=1, threads_per_worker=2,
                  dashboard_address=None) as cluster, Client(cluster) as client:
    on_dask = study.run(register, dask=client, partition_rows=1000)
pd.testing.assert_frame_equal(result.mains, on_dask.mains, check_exact=True)
print(f"identical over {len(on_dask.mains):,} mains in {on_dask.partitions} partitions")
"""),
])

BROWSER = nb([
    md("Explorer of the bundled demo study (used by the browser test; illustrative numbers)."),
    code("""
import pipeopt

explorer = pipeopt.explore(pipeopt.SizingStudy.demo(), debounce=0)
explorer
"""),
])


def main() -> None:
    OUT.mkdir(exist_ok=True)
    for name, book in (("01_sizing_a_new_line.ipynb", SIZING),
                       ("02_comparing_materials.ipynb", MATERIALS),
                       ("03_upgrading_an_aged_main.ipynb", UPGRADE),
                       ("04_designing_a_ring_main.ipynb", NETWORK),
                       ("05_renewal_programme.ipynb", PROGRAMME)):
        nbformat.write(book, OUT / name)
    data = Path(__file__).resolve().parents[1] / "tests" / "data"
    nbformat.write(BROWSER, data / "explorer_browser.ipynb")


if __name__ == "__main__":
    main()
