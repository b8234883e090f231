"""Tests of pipeopt.programme: a renewal programme over a register, in process and on Dask.

Checks, each with its source:
- 50 random pumped mains of the invented register, valued by the programme, against the
  single-main upgrade study built for each through UpgradeStudy.from_dict with a "replace"
  option: the same best year, PV to 1e-9; the break rate now and the roughness now are worked
  out here from the register row (N0 = n A / (1 - e^{-5A}): the count of the last 5 years as
  the integral of Shamir & Howard's (1979) exponential rate; roughness = new + aging x age);
- the pooled growth fit A = ln(sum of recent / sum of prior) / 5, summed here with pandas;
- the Dask path against the in-process path on the demo register, bit for bit (a subprocess
  with a hard timeout, a LocalCluster with processes=False, closed on exit);
- the programme never spends more than a year's budget.
"""

from __future__ import annotations

import copy
import itertools
import math
import subprocess
import sys
import textwrap
from pathlib import Path
from types import SimpleNamespace

import iapws
import numpy as np
import pandas as pd
import pytest

from pipeopt import plots
from pipeopt.cli import main
from pipeopt.programme import STATUS, ProgrammeStudy, evaluate_rows, pooled_breaks
from pipeopt.register import INVENTED_MATERIALS, invented_register
from pipeopt.results import CAUTION
from pipeopt.studyfile import StudyFileError, read_toml

from .conftest import upgrade_study_for_main
from .test_replacement import hand_economics

ROOT = Path(__file__).resolve().parents[1]
DEMO = read_toml(ROOT / "pipeopt" / "data" / "demo_programme.toml")


def demo_dict(**changes) -> dict:
    """The demo study as a dict, with ``{"section.key": value}`` changes (None deletes)."""
    data = {k: (dict(v) if isinstance(v, dict) else [dict(x) for x in v])
            for k, v in DEMO.items()}
    for path, value in changes.items():
        section, key = path.split(".")
        if value is None:
            data.get(section, {}).pop(key, None)
        else:
            data.setdefault(section, {})[key] = value
    return data


@pytest.fixture(scope="module")
def demo_result():
    study = ProgrammeStudy.demo()
    return study.run(study.demo_register())


@pytest.mark.reference
def test_demo_programme_is_consistent(demo_result):
    # conservation of the money, checked by summing: every year's capital is the sum of the
    # raw register's cost x length of the mains renewed in it (pandas, on the register itself)
    r = demo_result
    s = r.study
    assert r.success
    assert len(r.mains) + len(r.rejected) == 5000
    raw = s.demo_register()
    raw = raw[~raw["main_id"].duplicated(keep=False)].set_index("main_id")
    renew = r.mains.loc[r.mains["status"] == "renew", ["main_id", "scheduled_year"]]
    spent = (raw.loc[renew["main_id"], "replacement_cost_per_m"].astype(float).to_numpy()
             * raw.loc[renew["main_id"], "length_m"].astype(float).to_numpy())
    by_year_raw = pd.Series(spent).groupby(renew["scheduled_year"].to_numpy(dtype=int)).sum()
    np.testing.assert_allclose(r.schedule["capital"].to_numpy()[by_year_raw.index.to_numpy()],
                               by_year_raw.to_numpy(), rtol=1e-12)
    assert r.schedule["capital"].to_numpy()[
        np.setdiff1d(np.arange(s.years), by_year_raw.index.to_numpy())].sum() == 0.0
    assert set(r.mains["status"]) <= set(STATUS)
    # every year within its budget, and the schedule table adds up from the mains table
    assert np.all(r.schedule["capital"].to_numpy() <= s.budget)
    renewed = r.mains[r.mains["status"] == "renew"]
    by_year = renewed.groupby("scheduled_year")["capital"].sum()
    np.testing.assert_allclose(r.schedule.set_index("year")["capital"].reindex(by_year.index),
                               by_year, rtol=1e-12)
    assert r.schedule["mains"].sum() == len(renewed)
    assert r.plan.objective == pytest.approx(renewed["npv_scheduled"].sum(), rel=1e-12)
    assert r.plan.bound >= r.plan.objective
    # a main is renewed only where its NPV is positive; one whose renewal never pays is kept
    assert (renewed["npv_scheduled"] > 0).all()
    assert (r.mains.loc[~r.mains["renewal_pays"], "status"] == "keep").all()
    assert r.mains["rank"].notna().sum() == r.mains["renewal_pays"].sum()
    assert "ILLUSTRATIVE" in r.text() and "Caution" in r.text()
    assert repr(r).count("\n") == 0


def test_fifty_register_mains_agree_with_the_upgrade_study():
    # the whole chain: register row -> break rate, growth, roughness -> economics; with flow
    # growth and an aging new main, so that the new main's energy is formed year by age
    study = ProgrammeStudy.from_dict(demo_dict(**{"growth.flow_per_year": 0.006,
                                                  "replacement.aging": "0.01 mm/yr",
                                                  "breaks.growth_from": "material",
                                                  "programme.years": 40}))
    frame = invented_register(3000, seed=21, defects=False)
    pumped = frame[frame["pumped_flow_m3_h"] > 0]
    rows = pumped.sample(50, random_state=3).sort_index()
    table, npv, rejected = evaluate_rows(rows.reset_index(drop=True), study)
    assert rejected.empty and len(table) == 50
    s = study.scenario
    for k, (_, r) in enumerate(rows.iterrows()):
        mat = study.materials[r["material"]]
        a = mat.break_growth
        n0 = r["breaks_last_5y"] * a / (1.0 - math.exp(-5.0 * a))
        age = 2027 - r["year_laid"]
        bore = r["inner_diameter_mm"] / 1000.0
        new_bore = (r["replacement_inner_diameter_mm"] / 1000.0
                    if not pd.isna(r["replacement_inner_diameter_mm"]) else bore)
        main = {"diameter": bore, "length": r["length_m"], "static_head": r["static_head_m"],
                "roughness": mat.roughness + mat.aging * age, "aging": mat.aging,
                "flow": r["pumped_flow_m3_h"] / 3600.0, "hours": r["hours_per_year"],
                "breaks_now": n0, "break_growth": a,
                "capital": r["replacement_cost_per_m"] * r["length_m"], "new_diameter": new_bore}
        upgrade = upgrade_study_for_main(main, s)
        best = upgrade.best_year("replace")
        assert table["best_year"].iloc[k] == best.year
        assert table["pv_keep"].iloc[k] == pytest.approx(best.keep_pv_cost, rel=1e-9)
        pv = table["pv_keep"].iloc[k] - npv[k]
        np.testing.assert_allclose(pv, best.table["pv_cost"].to_numpy(), rtol=1e-9)


@pytest.mark.reference
def test_growth_fitted_from_the_register_pooled_by_class():
    # the two 5-year windows pooled by class with pandas here, and A = ln(recent / prior) / 5
    # (the ratio of Shamir & Howard's (1979) exponential rate integrated over the windows,
    # docs/references.md#renewal-programmes)
    study = ProgrammeStudy.demo()
    frame = invented_register(5000, seed=2027, defects=False)
    ev = study.evaluate(frame)
    g = ev.growth
    sums = frame.groupby("material")[["breaks_last_5y", "breaks_prior_5y"]].sum()
    for mat, row in sums.iterrows():
        fitted = math.log(row["breaks_last_5y"] / row["breaks_prior_5y"]) / 5.0
        if min(row) >= study.min_fit_breaks:
            assert g.loc[mat, "break_growth_per_year"] == pytest.approx(fitted, rel=1e-12)
            assert g.loc[mat, "source"] == "register history"
        else:
            assert g.loc[mat, "break_growth_per_year"] == study.materials[mat].break_growth
    used = ev.table.set_index("material")["break_growth_per_year"].groupby(level=0).first()
    np.testing.assert_allclose(used.to_numpy(), g.loc[used.index, "break_growth_per_year"])


DASK_SCRIPT = textwrap.dedent("""
    import numpy as np, pandas as pd
    from distributed import Client, LocalCluster
    from pipeopt.programme import ProgrammeStudy

    study = ProgrammeStudy.demo()
    register = study.demo_register()
    a = study.run(register)
    register.to_csv("{csv}", index=False)
    with LocalCluster(processes=False, n_workers=1, threads_per_worker=2,
                      dashboard_address=None) as cluster, Client(cluster) as client:
        b = study.run(register, dask=client, partition_rows=900)
        c = study.run("{csv}", dask=client, partition_rows=700)
    assert b.partitions > 1 and c.partitions > 1, (b.partitions, c.partitions)
    for other in (b, c):
        pd.testing.assert_frame_equal(a.mains, other.mains, check_exact=True)
        pd.testing.assert_frame_equal(a.schedule, other.schedule, check_exact=True)
        pd.testing.assert_frame_equal(a.rejected, other.rejected, check_exact=True)
        pd.testing.assert_frame_equal(a.npv_by_year, other.npv_by_year, check_exact=True)
        pd.testing.assert_frame_equal(a.growth, other.growth, check_exact=True)
    print("IDENTICAL", len(a.mains), b.partitions, c.partitions)
""")


def test_dask_equals_in_process_on_the_demo_register(tmp_path):
    script = DASK_SCRIPT.format(csv=(tmp_path / "register.csv").as_posix())
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          timeout=420, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr[-3000:]
    assert "IDENTICAL 4993" in proc.stdout


@pytest.mark.parametrize(
    ("changes", "match"),
    [
        ({"programme.budget": [1e6, "lots", 1e6]}, r"programme\.budget\[1\]: expected a number"),
        ({"programme.budget": [1e6, -1.0]}, r"programme\.budget\[1\]: must not be negative; "
                                             r"got -1\.0"),
        ({"programme.budget": None}, r"programme\.budget: required key is missing"),
        ({"programme.budget": [1e6] * 41, "programme.years": None},
         r"programme\.budget: a list of 41 budgets for a horizon of 40 years"),
        ({"programme.budget": [1e6, 1e6], "programme.years": 3},
         "programme.years: 3 years but the budget list gives 2"),
        ({"programme.budgets": 1e6}, "did you mean 'programme.budget'"),
        ({"programme.first_year": None}, "programme.first_year: required key is missing"),
        ({"economics.horizon": 20, "programme.years": 30},
         r"programme\.years: 30 years for a horizon of 20 years \(economics\.horizon\)"),
        ({"programme.first_year": 1850}, r"programme\.first_year: must be >= 1900; got 1850"),
        ({"replacement.roughness": 0.03}, "replacement.roughness: expected a roughness"),
        ({"breaks.growth_from": "fitted"}, "breaks.growth_from: must be one of material, "
                                           "history"),
        ({"breaks.repair_cost": "7500 EUR"}, "breaks.repair_cost: expected a number"),
        ({"solver.method": "greedy"}, "solver.method: must be one of auto, milp, heuristic"),
        ({"pumping.efficiency": 1.5}, "pumping.efficiency: must be <= 1"),
        ({"breaks.min_fit_breaks": 2.5}, r"breaks\.min_fit_breaks: expected a whole number"),
        ({"replacement.break_factor": 1.5}, r"replacement\.break_factor: must be <= 1"),
        ({"pumped_mains.minor_loss_k": "4"}, r"pumped_mains\.minor_loss_k: expected a number "
                                             r"\(write it without a unit"),
        ({"growth.flow_cap": "100 m^3/h"}, r"growth\.flow_cap: a cap on one line's flow does "
                                           r"not apply to the mains of a register"),
        ({"growth.flow_pr_year": 0.01}, r"growth\.flow_pr_year: unknown key; did you mean "
                                        r"'growth\.flow_per_year'\? \(valid keys in growth: "
                                        r"flow_per_year, design_year\)"),
        # keys of earlier programme files say where they are now
        ({"pumping.flow_growth": 0.01}, r"pumping\.flow_growth: this key has moved; write it "
                                        r"as growth\.flow_per_year"),
        ({"pumping.minor_loss_k": 4.0}, r"write it as pumped_mains\.minor_loss_k"),
        ({"replacement.life": 80}, r"write it as economics\.pipe_life"),
        ({"replacement.maintenance": 0.0}, r"write it as economics\.pipe_maintenance"),
    ],
)
def test_study_file_errors_name_the_key(changes, match):
    with pytest.raises(StudyFileError, match=match):
        ProgrammeStudy.from_dict(demo_dict(**changes))


def test_material_errors():
    data = demo_dict()
    data["material"][0]["aging"] = "0.04 mm"
    with pytest.raises(StudyFileError, match=r"material\[0\]\.aging: expected a roughness "
                                             r"growth rate"):
        ProgrammeStudy.from_dict(data)
    data = demo_dict()
    data["material"][1]["name"] = data["material"][0]["name"]
    with pytest.raises(StudyFileError, match="every material class needs its own name"):
        ProgrammeStudy.from_dict(data)


def test_budget_list_by_year_sets_the_programme_years():
    study = ProgrammeStudy.from_dict(demo_dict(**{"programme.budget": [3e6, 2e6, 0.0, 1e6],
                                                  "programme.years": None}))
    assert study.years == 4
    r = study.run(invented_register(800, seed=8, defects=False))
    assert r.schedule["calendar_year"].tolist() == [2027, 2028, 2029, 2030]
    assert np.all(r.schedule["capital"].to_numpy() <= [3e6, 2e6, 0.0, 1e6])
    assert r.schedule["mains"].iloc[2] == 0


def test_a_register_with_no_valid_main():
    frame = invented_register(30, seed=1, defects=False)
    frame["length_m"] = -1.0
    r = ProgrammeStudy.demo().run(frame)
    assert not r.success and "no valid main" in r.message
    assert len(r.rejected) == 30


def test_yearly_capital_figure(demo_result):
    ax = plots.yearly_capital(demo_result)
    heights = [p.get_height() for p in ax.patches]
    np.testing.assert_allclose(heights, demo_result.schedule["capital"].to_numpy())
    assert "[EUR]" in ax.get_ylabel() and "[calendar year]" in ax.get_xlabel()
    import matplotlib.pyplot as plt

    plt.close(ax.figure)


def test_cli_demo_writes_tables_and_report(tmp_path, capsys):
    out = tmp_path / "res"
    assert main(["programme", "--demo", "--out", str(out), "--quiet"]) == 0
    printed = capsys.readouterr().out
    assert "invented for illustration" in printed and "programme 2027-2036" in printed
    for name in ("mains", "schedule", "rejected", "growth", "npv_by_year", "inputs"):
        csv = pd.read_csv(out / f"{name}.csv")
        par = pd.read_parquet(out / f"{name}.parquet")
        assert list(csv.columns) == list(par.columns) and len(csv) == len(par)
    html = (out / "report.html").read_text()
    assert CAUTION in html.replace("&#x27;", "'")
    assert "data:image/png;base64," in html and "Ranked list" in html
    md = (out / "report.md").read_text()
    assert "![yearly capital](figures/yearly_capital.png)" in md
    assert (out / "figures" / "yearly_capital.png").stat().st_size > 1000
    # the templates written beside: the register reads back to the same programme
    assert main(["programme", str(out / "register.csv"), "--study", str(out / "study.toml"),
                 "--quiet"]) == 0
    again = capsys.readouterr().out
    start = printed.index("economics:")
    assert again[again.index("economics:"):] == printed[start:printed.index("wrote ")]
    assert not list(out.glob("*.tmp"))


def test_cli_errors_are_one_line(tmp_path):
    bad = tmp_path / "mains.csv"
    bad.write_text("main_id,material\nA,pvc\n")
    proc = subprocess.run([sys.executable, "-m", "pipeopt.cli", "programme", str(bad),
                           "--study", str(ROOT / "pipeopt" / "data" / "demo_programme.toml")],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert "missing column(s)" in proc.stderr and "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1
    assert main(["programme", str(bad)]) == 2               # no --study
    assert main(["programme", str(bad), "--demo"]) == 2     # both


def test_demo_prints_its_programme(capsys):
    # the README shows this output through a generated block (tests/test_readme.py)
    assert main(["programme", "--demo", "--quiet"]) == 0
    printed = capsys.readouterr().out
    assert "programme 2027-" in printed and "solver:" in printed and "Caution" in printed


def test_materials_of_the_demo_cover_the_invented_register():
    assert set(ProgrammeStudy.demo().material_names) == set(INVENTED_MATERIALS)


@pytest.mark.reference
def test_reasons_when_the_best_year_is_after_the_programme():
    # one cast-iron main of 300 m, breaks growing 8 % a year (8 in the last 5 years: 1.94 a
    # year now), 2,000 a metre to replace: breaks alone make its best year about a decade
    # away (Shamir & Howard 1979 give 8.8 years; yearly steps and the residual credit at the
    # horizon add a little); a programme of two years renews it in its second year, before its
    # best year
    data = demo_dict(**{"breaks.growth_from": "material", "programme.years": 2,
                        "programme.budget": 1e7, "breaks.repair_cost": 6000.0,
                        "economics.discount_rate": 0.04})
    data["material"] = [{"name": "cast-iron", "roughness": "0.26 mm", "aging": "0 mm/yr",
                         "break_growth": 0.08}]
    row = {"main_id": "M1", "material": "cast-iron", "inner_diameter_mm": 200.0,
           "length_m": 300.0, "year_laid": 1930, "breaks_last_5y": 8, "pumped_flow_m3_h": 0.0,
           "hours_per_year": np.nan, "static_head_m": np.nan, "replacement_cost_per_m": 2000.0}
    r = ProgrammeStudy.from_dict(data).run(pd.DataFrame([row]))
    m = r.mains.iloc[0]
    assert 8 <= m["best_year"] <= 12
    # by hand: the best year of the explicit discounted sums, by exhaustive search, and
    # Shamir & Howard's continuous optimum t* = ln(ln(1+R) C_r / (C_b N0)) / A just before it
    main = hand_main(pd.Series(row), {"cast-iron": (0.26e-3, 0.0, 0.08)})
    hand = hand_economics(hand_scenario(break_cost=6000.0, discount_rate=0.04), main)
    assert m["best_year"] == min(range(40), key=lambda a: hand["pv_replace"][a])
    t_star = math.log(math.log(1.04) * 600000.0 / (6000.0 * main["breaks_now"])) / 0.08
    assert t_star == pytest.approx(8.79, abs=0.01)           # N0 = 8 x 0.08 / (1 - e^-0.4)
    assert t_star <= m["best_year"] <= t_star + 3
    assert m["status"] == "renew" and m["scheduled_year"] == 1
    assert m["reason"].startswith("renewed before its best year, which is after the "
                                  "programme's years")
    assert m["reason"].endswith("saving mostly from fewer breaks")


# ----- the sections a programme shares with a sizing study ------------------------------------
SIZING = read_toml(ROOT / "pipeopt" / "data" / "demo_sizing.toml")


@pytest.mark.parametrize(
    ("section", "key", "value"),
    [
        ("energy", "price", -0.1),
        ("energy", "escalation", 0.9),
        ("energy", "demand_chrge", 10.0),
        ("economics", "horizon", 300),
        ("economics", "discount_rat", 0.05),
        ("economics", "pipe_life", 0.5),
        ("economics", "pipe_maintenance", "1 %"),
        ("pumping", "efficiency", 1.2),
        ("pumping", "efficiency", "70 %"),
        ("growth", "flow_per_year", 0.9),
        ("growth", "design_year", 0),
        ("fluid", "temperature", 15),
        ("fluid", "kind", "oil"),
        ("study", "illustrative", "yes"),
        ("study", "currency", 3),
    ],
)
def test_shared_sections_answer_as_in_a_sizing_study(section, key, value):
    # the same key, rule and message from a programme file as from a sizing file
    from pipeopt import SizingStudy

    messages = []
    for data, study in ((copy.deepcopy(SIZING), SizingStudy), (demo_dict(), ProgrammeStudy)):
        data.setdefault(section, {})[key] = value
        with pytest.raises(StudyFileError) as err:
            study.from_dict(data)
        messages.append(str(err.value))
    assert messages[0] == messages[1]
    assert messages[1].startswith(f"{section}.")


def test_missing_shared_sections_and_keys_answer_as_in_a_sizing_study():
    from pipeopt import SizingStudy

    for section, key in (("economics", "pipe_life"), ("energy", "price"),
                         ("pumping", None), ("economics", None)):
        messages = []
        for data, study in ((copy.deepcopy(SIZING), SizingStudy),
                            (demo_dict(), ProgrammeStudy)):
            if key is None:
                data.pop(section)
            else:
                data[section].pop(key)
            with pytest.raises(StudyFileError) as err:
                study.from_dict(data)
            messages.append(str(err.value))
        assert messages[0] == messages[1], (section, key)


# ----- a frozen study, built from sections in Python ---------------------------------------------
def test_study_from_python_sections_equals_the_study_file():
    from pipeopt import Fluid
    from pipeopt.costs import EnergyTariff
    from pipeopt.inputs import Economics, Pumping
    from pipeopt.programme import (
        BreakSettings,
        MaterialClass,
        NewMain,
        ProgrammeSettings,
        PumpedMains,
        SolverOptions,
    )

    demo = ProgrammeStudy.demo()
    mats = [MaterialClass(m["name"], m["roughness"], m["aging"], m["break_growth"])
            for m in DEMO["material"]]
    study = ProgrammeStudy(
        fluid=Fluid.water("10 degC"), materials=mats, tariff=EnergyTariff(0.16, 0.01),
        pumping=Pumping(0.68), economics=Economics(0.035, 40, 80.0),
        breaks=BreakSettings(7500.0, "history"), replacement=NewMain("0.03 mm"),
        programme=ProgrammeSettings(2027, 2.0e6, 10), solver=SolverOptions(time_limit=60.0),
        pumped_mains=PumpedMains(4.0), growth=0.0,
        name="Oxtervale Water distribution mains (illustrative)", currency="EUR",
        illustrative=True)
    assert study.scenario == demo.scenario
    np.testing.assert_array_equal(study.budget, demo.budget)
    assert study.materials == demo.materials and study.solver == demo.solver
    frame = invented_register(400, seed=12)
    a, b = study.run(frame), demo.run(frame)
    pd.testing.assert_frame_equal(a.mains, b.mains, check_exact=True)


def test_a_study_is_frozen_and_replace_builds_another():
    from pipeopt.programme import ProgrammeSettings

    study = ProgrammeStudy.demo()
    with pytest.raises(AttributeError, match=r"cannot be changed .*study\.replace"):
        study.budget = np.full(10, 1e6)
    with pytest.raises(ValueError, match="read-only"):
        study.budget[0] = 0.0
    with pytest.raises(AttributeError):
        study.economics.horizon = 30
    with pytest.raises(TypeError):
        study.materials["pe"] = study.materials["pvc"]
    other = study.replace(programme=ProgrammeSettings(2030, [1e6, 2e6, 3e6]))
    assert other.years == 3 and other.first_year == 2030
    assert other.budget.tolist() == [1e6, 2e6, 3e6]
    assert study.years == 10 and study.first_year == 2027          # the original is unchanged
    with pytest.raises(ValueError, match="replace: unknown argument 'budget'"):
        study.replace(budget=1e6)
    with pytest.raises(ValueError, match="economics must be a Economics; got float"):
        study.replace(economics=0.035)


def test_the_result_follows_the_result_protocol(demo_result):
    from pipeopt.results import StudyResult

    r = demo_result
    assert isinstance(r, StudyResult)
    assert str(r) == r.text()
    renewed = int((r.mains["status"] == "renew").sum())
    assert repr(r) == (f"<ProgrammeResult: {r.study.name}: {renewed:,} of {len(r.mains):,} "
                       f"mains renewed in 10 years, NPV {r.plan.objective:,.0f} EUR>")
    assert set(r.tables()) == {"Programme by year", "Ranked mains",
                               "Break growth by material class", "Rejected register rows"}
    page = r._repr_html_()
    assert page.count("<table") == 4 and "Programme by year" in page
    assert r.text().endswith("Caution: " + CAUTION)


def test_growth_keys_reach_the_model():
    study = ProgrammeStudy.from_dict(demo_dict(**{"growth.flow_per_year": 0.02,
                                                  "growth.design_year": 5}))
    assert (study.scenario.flow_growth, study.scenario.design_year) == (0.02, 5)
    # without [growth] the flows stay
    data = demo_dict()
    del data["growth"]
    assert ProgrammeStudy.from_dict(data).scenario.flow_growth == 0.0


def test_hostile_register_text_is_inert_in_the_report_files():
    # a register comes from a utility's export: an id a spreadsheet would run as a formula, or
    # Markdown would take for HTML, must reach the files inert (common practice: OWASP's
    # advice on CSV injection, a leading apostrophe)
    from pipeopt.programme_report import programme_report_files

    frame = invented_register(60, seed=3, defects=False)
    frame["main_id"] = frame["main_id"].astype(object)
    frame.loc[0, "main_id"] = "=HYPERLINK(\"http://example.invalid\")"
    frame.loc[2, "length_m"] = -1.0                      # a rejected row: in the report
    frame.loc[2, "main_id"] = "@SUM(1+1) <b>x</b> [l](javascript:1) ```"
    files = programme_report_files(ProgrammeStudy.demo().run(frame))
    for name in ("mains.csv", "rejected.csv"):
        text = files[name]
        assert "\n=HYPERLINK" not in text and ",=HYPERLINK" not in text
        assert "\n@SUM" not in text and ",@SUM" not in text
    assert "'=HYPERLINK" in files["mains.csv"] and "'@SUM" in files["rejected.csv"]
    md = files["report.md"]
    fence = [line for line in md.splitlines() if line and set(line) == {"`"}]
    start, stop = md.index(fence[0]), md.rindex(fence[-1])
    outside = md[:start] + md[stop:]
    assert "<b>" not in outside and "&lt;b&gt;x&lt;/b&gt; \\[l\\](javascript:1)" in outside


# ----- register rows valued by hand ------------------------------------------------------------
# The demo's shared inputs as printed in pipeopt/data/demo_programme.toml (illustrative), the
# water at 10 degC and 1 atm from the iapws package (IAPWS-95 density, IAPWS 2008 viscosity),
# and every present value summed year by year in tests/test_replacement.py::hand_economics
# (Colebrook-White roots by mpmath, Darcy-Weisbach, Shamir & Howard's breaks, explicit
# discounting; docs/references.md#renewal-programmes, #economics).
def hand_scenario(**changes) -> SimpleNamespace:
    water = iapws.IAPWS95(T=283.15, P=0.101325)
    base = {"density": water.rho, "viscosity": water.mu, "efficiency": 0.68,
            "tariff": SimpleNamespace(price=0.16, escalation=0.01, demand_charge=0.0),
            "discount_rate": 0.035, "horizon": 40, "break_cost": 7500.0,
            "new_roughness": 0.03e-3, "new_aging": 0.0, "life": 80.0, "maintenance": 0.0,
            "break_factor": 0.0, "minor_loss_k": 4.0, "flow_growth": 0.0, "design_year": None}
    return SimpleNamespace(**{**base, **changes})


#: The demo's material classes in SI, from the demo file: new roughness [m], aging [m/yr],
#: break growth [1/yr].
DEMO_MATERIALS = {"cast-iron": (0.26e-3, 0.04e-3, 0.05), "asbestos-cement": (0.1e-3, 0.01e-3, 0.04),
                  "steel": (0.05e-3, 0.03e-3, 0.04), "ductile-iron": (0.1e-3, 0.005e-3, 0.03),
                  "pvc": (0.007e-3, 0.0, 0.02), "pe": (0.007e-3, 0.0, 0.01)}


def hand_main(row, materials: dict, first_year: int = 2027) -> dict:
    """A register row as the model's SI inputs, by hand: the rate now N0 from the breaks of the
    last 5 years, n = int_{-5}^{0} N0 e^{A s} ds (Shamir & Howard 1979's law), so
    N0 = n A / (1 - e^{-5 A}) (n / 5 when A = 0); the roughness now, new + aging x age;
    capital = cost x length."""
    rough, aging, a = materials[row["material"]]
    age = first_year - int(row["year_laid"])
    bore = row["inner_diameter_mm"] / 1000.0
    new = row.get("replacement_inner_diameter_mm", np.nan)
    flow = row["pumped_flow_m3_h"] / 3600.0
    return {"length": row["length_m"], "diameter": bore, "roughness": rough + aging * age,
            "aging": aging, "flow": flow,
            "hours": row["hours_per_year"] if flow > 0 else 0.0,
            "static_head": row["static_head_m"] if flow > 0 else 0.0,
            "breaks_now": (row["breaks_last_5y"] * a / (1.0 - math.exp(-5.0 * a)) if a
                           else row["breaks_last_5y"] / 5.0),
            "break_growth": a, "capital": row["replacement_cost_per_m"] * row["length_m"],
            "new_diameter": bore if pd.isna(new) else new / 1000.0}


@pytest.mark.reference
def test_register_rows_become_the_model_inputs_by_hand():
    # age, capital, the break rate now (its window integral by scipy's quad gives back the
    # count), the roughness now and the year-1 velocity Q / (pi D^2 / 4), row by row
    from scipy.integrate import quad

    study = ProgrammeStudy.from_dict(demo_dict(**{"breaks.growth_from": "material"}))
    frame = invented_register(300, seed=44, defects=False)
    table, _, rejected = evaluate_rows(frame, study)
    assert rejected.empty and len(table) == 300
    for k, row in frame.iterrows():
        t = table.iloc[k]
        rough, aging, a = DEMO_MATERIALS[row["material"]]
        assert t["main_id"] == row["main_id"] and t["age_yr"] == 2027 - row["year_laid"]
        assert t["capital"] == pytest.approx(row["replacement_cost_per_m"] * row["length_m"],
                                             rel=1e-15)
        assert t["break_growth_per_year"] == a
        n0 = t["breaks_per_year_now"]
        count = quad(lambda s, n0=n0, a=a: n0 * math.exp(a * s), -5.0, 0.0)[0]
        assert count == pytest.approx(row["breaks_last_5y"], rel=1e-12, abs=1e-12)
        assert t["roughness_now_mm"] == pytest.approx((rough + aging * t["age_yr"]) * 1e3,
                                                      rel=1e-12)
        q = row["pumped_flow_m3_h"] / 3600.0
        assert t["pumped"] == (q > 0)
        if q > 0:
            d = row["inner_diameter_mm"] / 1000.0
            assert t["velocity_year1_m_s"] == pytest.approx(q / (math.pi * d * d / 4.0),
                                                            rel=1e-14)


@pytest.mark.reference
def test_unpumped_register_mains_valued_by_hand():
    # 12 mains that are not pumped: PV of keeping, the NPV of renewing in each programme year,
    # the best year by exhaustive search over the horizon, and the benefit-cost ratio there
    study = ProgrammeStudy.from_dict(demo_dict(**{"breaks.growth_from": "material"}))
    frame = invented_register(400, seed=45, defects=False)
    rows = frame[(frame["pumped_flow_m3_h"] == 0) & (frame["breaks_last_5y"] > 0)].head(12)
    r = study.run(rows.reset_index(drop=True))
    s = hand_scenario()
    for k, (_, row) in enumerate(rows.iterrows()):
        hand = hand_economics(s, hand_main(row, DEMO_MATERIALS))
        m = r.mains.iloc[k]
        best = min(range(40), key=lambda a: hand["pv_replace"][a])
        assert m["pv_keep"] == pytest.approx(hand["pv_keep"], rel=1e-11)
        npv = [hand["pv_keep"] - pv for pv in hand["pv_replace"][:10]]
        np.testing.assert_allclose(r.npv_by_year.iloc[k, 1:].to_numpy(dtype=float), npv,
                                   rtol=1e-9, atol=1e-9 * hand["pv_keep"])
        assert m["best_year"] == best and m["best_calendar_year"] == 2027 + best
        p = hand["parts"][best]
        ratio = (p["breaks_saved"] + p["energy_saved"] - p["upkeep"]) / p["net_capital"]
        assert m["benefit_cost_ratio"] == pytest.approx(ratio, rel=1e-10)
        assert m["renewal_pays"] == (hand["pv_keep"] > hand["pv_replace"][best])


PUMPED_ROW = {"main_id": "P1", "material": "cast-iron", "inner_diameter_mm": 262.0,
              "length_m": 2300.0, "year_laid": 1958, "breaks_last_5y": 7,
              "pumped_flow_m3_h": 210.0, "hours_per_year": 5600.0, "static_head_m": 31.0,
              "replacement_cost_per_m": 640.0, "replacement_inner_diameter_mm": 300.0}


@pytest.mark.reference
@pytest.mark.parametrize(("changes", "hand_changes"), [
    ({}, {}),
    ({"growth.flow_per_year": 0.015, "growth.design_year": 6, "replacement.break_factor": 0.2,
      "economics.pipe_maintenance": 0.002},
     {"flow_growth": 0.015, "design_year": 6, "break_factor": 0.2, "maintenance": 0.002}),
])
def test_a_pumped_register_main_by_hand(changes, hand_changes):
    # a rising main of the register, restored to a 300 mm bore: year-1 head loss and energy,
    # the PV of keeping it and of renewing it in each programme year, and its best year
    study = ProgrammeStudy.from_dict(demo_dict(**{"breaks.growth_from": "material", **changes}))
    r = study.run(pd.DataFrame([PUMPED_ROW]))
    hand = hand_economics(hand_scenario(**hand_changes), hand_main(PUMPED_ROW, DEMO_MATERIALS))
    m = r.mains.iloc[0]
    assert m["head_loss_year1_m"] == pytest.approx(hand["head_loss1"], rel=1e-11)
    assert m["energy_kwh_year1"] == pytest.approx(hand["energy1"], rel=1e-11)
    assert m["pv_keep"] == pytest.approx(hand["pv_keep"], rel=1e-11)
    npv = [hand["pv_keep"] - pv for pv in hand["pv_replace"][:10]]
    np.testing.assert_allclose(r.npv_by_year.iloc[0, 1:].to_numpy(dtype=float), npv, rtol=1e-9,
                               atol=1e-9 * hand["pv_keep"])
    best = min(range(40), key=lambda a: hand["pv_replace"][a])
    assert m["best_year"] == best
    p = hand["parts"][best]
    assert m["pv_saving_energy"] == pytest.approx(p["energy_saved"], rel=1e-9)
    ratio = (p["breaks_saved"] + p["energy_saved"] - p["upkeep"]) / p["net_capital"]
    assert m["benefit_cost_ratio"] == pytest.approx(ratio, rel=1e-9)


# ----- a tiny register, its programme by exhaustive enumeration ---------------------------------
TINY_MATERIALS = {"cast-iron": (0.26e-3, 0.04e-3, 0.06), "pvc": (0.007e-3, 0.0, 0.02)}


def tiny_row(main_id, material, bore, length, laid, breaks, cost, flow=0.0, hours=np.nan,
             head=np.nan):
    return {"main_id": main_id, "material": material, "inner_diameter_mm": bore,
            "length_m": length, "year_laid": laid, "breaks_last_5y": breaks,
            "pumped_flow_m3_h": flow, "hours_per_year": hours, "static_head_m": head,
            "replacement_cost_per_m": cost}


#: Invented mains (illustrative): four that pay now, one too dear for any year's budget, one
#: whose renewal pays only decades ahead, one that never pays, a rising main, two more.
TINY = pd.DataFrame([
    tiny_row("T1", "cast-iron", 150, 400, 1935, 22, 900),
    tiny_row("T2", "cast-iron", 200, 450, 1940, 25, 950),
    tiny_row("T3", "cast-iron", 150, 350, 1950, 18, 1000),
    tiny_row("T4", "pvc", 100, 500, 1975, 30, 800),
    tiny_row("T5", "cast-iron", 300, 1500, 1930, 30, 1500),
    tiny_row("T6", "cast-iron", 150, 400, 1975, 1, 900),
    tiny_row("T7", "pvc", 100, 300, 1990, 0, 700),
    tiny_row("T8", "cast-iron", 250, 1200, 1955, 6, 500, 300.0, 6000.0, 25.0),
    tiny_row("T9", "cast-iron", 200, 380, 1945, 14, 950),
    tiny_row("T10", "pvc", 150, 420, 1980, 12, 820),
])
TINY_BUDGET = 7.0e5


@pytest.fixture(scope="module")
def tiny():
    """The tiny register's programme (3 years, 700,000 a year) and its hand valuation."""
    data = demo_dict(**{"breaks.growth_from": "material", "programme.budget": TINY_BUDGET,
                        "programme.years": 3})
    data["material"] = [{"name": "cast-iron", "roughness": "0.26 mm", "aging": "0.04 mm/yr",
                         "break_growth": 0.06},
                        {"name": "pvc", "roughness": "0.007 mm", "aging": "0 mm/yr",
                         "break_growth": 0.02}]
    result = ProgrammeStudy.from_dict(data).run(TINY)
    hand = [hand_economics(hand_scenario(), hand_main(row, TINY_MATERIALS))
            for _, row in TINY.iterrows()]
    npv = np.array([[h["pv_keep"] - h["pv_replace"][a] for a in range(3)] for h in hand])
    capital = (TINY["replacement_cost_per_m"] * TINY["length_m"]).to_numpy()
    return result, hand, npv, capital


def enumerate_programmes(npv: np.ndarray, capital: np.ndarray, budget: float):
    """Every choice of 'not renewed' or a year for each main, within every year's budget,
    with its total NPV: brute force over (W + 1)^M choices, vectorized."""
    m, w = npv.shape
    choice = np.array(list(itertools.product(range(-1, w), repeat=m)))
    spent = np.stack([(capital[None, :] * (choice == a)).sum(axis=1) for a in range(w)], axis=1)
    ok = np.all(spent <= budget, axis=1)
    value = np.where(choice >= 0, npv[np.arange(m)[None, :], np.maximum(choice, 0)], 0.0)
    return choice[ok], value[ok].sum(axis=1)


@pytest.mark.reference
def test_tiny_register_programme_is_the_enumerated_best(tiny):
    # mains whose capital is above every year's budget cannot be in any programme; every choice
    # of the others is tried, with the NPVs summed by hand
    r, _, npv, capital = tiny
    fits = np.flatnonzero(capital <= TINY_BUDGET)
    choices, totals = enumerate_programmes(npv[fits], capital[fits], TINY_BUDGET)
    order = np.argsort(-totals)
    assert totals[order[0]] > totals[order[1]] + 1.0            # a unique optimum
    best = np.full(len(TINY), -1)
    best[fits] = choices[order[0]]
    scheduled = r.mains["scheduled_year"].fillna(-1).to_numpy(dtype=int)
    np.testing.assert_array_equal(scheduled, best)
    assert r.plan.objective == pytest.approx(totals[order[0]], rel=1e-9)
    # the programme by year, summed here from the enumerated programme
    for a in range(3):
        on = best == a
        row = r.schedule.iloc[a]
        assert row["mains"] == on.sum()
        assert row["capital"] == pytest.approx(capital[on].sum(), rel=1e-12)
        assert row["npv"] == pytest.approx(npv[on, a].sum(), rel=1e-9)
        assert row["budget_used"] == pytest.approx(capital[on].sum() / TINY_BUDGET, rel=1e-12)


@pytest.mark.reference
def test_statuses_of_the_tiny_register_by_hand(tiny):
    # each main's status follows from its hand-summed NPVs: renewed; deferred (pays in the
    # programme's years and fits a year's budget, but not renewed); over budget (pays there,
    # fits no year); later (pays only at a year after the programme's); keep (never pays)
    r, hand, npv, capital = tiny
    expected = []
    for k, h in enumerate(hand):
        window = bool((npv[k] > 0).any())
        ever = any(h["pv_keep"] > pv for pv in h["pv_replace"])
        if pd.notna(r.mains["scheduled_year"].iloc[k]):
            expected.append("renew")
        elif window and capital[k] <= TINY_BUDGET:
            expected.append("defer")
        elif window:
            expected.append("over budget")
        else:
            expected.append("later" if ever else "keep")
    assert r.mains["status"].tolist() == expected
    # the register was invented so that every status appears
    assert set(expected) == set(STATUS)


@pytest.mark.reference
def test_rank_is_npv_per_unit_of_capital_by_hand(tiny):
    # rank 1 is the main of the highest NPV per unit of capital at its best year (NPV from the
    # hand sums), among mains whose renewal pays; the others have no rank
    r, hand, _, capital = tiny
    ratio = {}
    for k, h in enumerate(hand):
        best = min(range(40), key=lambda a: h["pv_replace"][a])
        npv_best = h["pv_keep"] - h["pv_replace"][best]
        if npv_best > 0:
            ratio[TINY["main_id"].iloc[k]] = npv_best / capital[k]
    order = sorted(ratio, key=lambda main_id: -ratio[main_id])
    ranked = r.mains.dropna(subset=["rank"]).sort_values("rank")
    assert ranked["main_id"].tolist() == order
    assert ranked["rank"].tolist() == list(range(1, len(order) + 1))


@pytest.mark.reference
def test_pooled_growth_fit_is_limited_and_needs_enough_breaks():
    # pooled windows written here: cast-iron 300 then 100 breaks, A = ln(3)/5 = 0.2197, held at
    # the study's limit 0.2; pvc 150 then 120, A = ln(1.25)/5 = 0.04463; pe 60 then 40, fewer
    # than min_fit_breaks = 100: the study's rate (A = ln(r/p)/w, Shamir & Howard 1979's law
    # over two windows, docs/references.md#renewal-programmes)
    rows = []
    for k, (mat, recent, prior) in enumerate([("cast-iron", 300, 100), ("pvc", 150, 120),
                                              ("pe", 60, 40)]):
        for j in range(10):
            rows.append(dict(tiny_row(f"G{k}{j}", mat, 150, 200, 1970, recent // 10, 600),
                             breaks_prior_5y=prior // 10))
    study = ProgrammeStudy.demo()
    ev = study.evaluate(pd.DataFrame(rows))
    g = ev.growth
    assert g.loc["cast-iron", "fitted_rate"] == pytest.approx(math.log(3.0) / 5.0, rel=1e-14)
    assert g.loc["cast-iron", "break_growth_per_year"] == 0.2
    assert g.loc["pvc", "break_growth_per_year"] == pytest.approx(math.log(1.25) / 5.0,
                                                                  rel=1e-14)
    assert g.loc["pe", "break_growth_per_year"] == 0.01            # the demo file's pe rate
    assert np.isnan(g.loc["pe", "fitted_rate"])
    # the held rate is the one the mains use: N0 = n A / (1 - e^{-5 A}) with A = 0.2
    first = ev.table.iloc[0]
    assert first["breaks_per_year_now"] == pytest.approx(30 * 0.2 / (1 - math.exp(-1.0)),
                                                         rel=1e-14)


@pytest.mark.reference
def test_pooled_growth_fit_lies_in_the_binomial_interval_of_poisson_counts():
    # 400 mains of one class with breaks drawn as Poisson counts of the exponential law
    # (A = 0.06) over two 5-year windows. Given the pooled total n, the recent count is
    # binomial with p = 1 / (1 + e^{-5 A}) (sum of independent Poisson counts with means in a
    # fixed ratio: common practice); scipy.stats gives the maximum-likelihood p and its exact
    # Clopper-Pearson interval, which must hold the fitted and the true rates, through
    # A = logit(p) / 5
    from scipy import stats

    a, w = 0.06, 5.0
    rng = np.random.default_rng(2027)
    n0 = rng.lognormal(np.log(0.6), 0.7, 400)
    window = (1.0 - math.exp(-a * w)) / a
    recent = rng.poisson(n0 * window)
    prior = rng.poisson(n0 * math.exp(-a * w) * window)
    rows = [dict(tiny_row(f"B{k}", "ductile-iron", 150, 300, 1990, int(recent[k]), 600),
                 breaks_prior_5y=int(prior[k])) for k in range(400)]
    fitted = ProgrammeStudy.demo().evaluate(pd.DataFrame(rows)).growth.loc[
        "ductile-iron", "fitted_rate"]
    test = stats.binomtest(int(recent.sum()), int(recent.sum() + prior.sum()))
    def logit(p):
        return math.log(p / (1.0 - p)) / w
    assert fitted == pytest.approx(logit(test.statistic), rel=1e-12)
    low, high = test.proportion_ci(0.999)
    assert logit(low) < a < logit(high)


def tiny_study_data(**changes) -> dict:
    data = demo_dict(**{"breaks.growth_from": "material", "programme.budget": TINY_BUDGET,
                        "programme.years": 3, **changes})
    data["material"] = [{"name": "cast-iron", "roughness": "0.26 mm", "aging": "0.04 mm/yr",
                         "break_growth": 0.06},
                        {"name": "pvc", "roughness": "0.007 mm", "aging": "0 mm/yr",
                         "break_growth": 0.02}]
    return data


@pytest.mark.reference
def test_a_budget_list_by_year_against_enumeration(tiny):
    # budgets of 900,000, nothing, then 400,000: the programme is the best of every choice
    # tried by brute force, with the hand-summed NPVs of the tiny register
    _, _, npv, capital = tiny
    budget = np.array([9.0e5, 0.0, 4.0e5])
    data = tiny_study_data(**{"programme.budget": budget.tolist(), "programme.years": None})
    r = ProgrammeStudy.from_dict(data).run(TINY)
    fits = np.flatnonzero(capital <= budget.max())
    choices, totals = enumerate_programmes(npv[fits], capital[fits], budget)
    order = np.argsort(-totals)
    assert totals[order[0]] > totals[order[1]] + 1.0            # a unique optimum
    best = np.full(len(TINY), -1)
    best[fits] = choices[order[0]]
    np.testing.assert_array_equal(r.mains["scheduled_year"].fillna(-1).to_numpy(dtype=int),
                                  best)
    assert r.schedule["mains"].iloc[1] == 0 and r.schedule["capital"].iloc[1] == 0.0
    assert r.plan.objective == pytest.approx(totals[order[0]], rel=1e-9)


@pytest.mark.reference
def test_the_heuristic_on_the_tiny_register_is_bounded_by_enumeration(tiny):
    # the Lagrangian heuristic: within every budget, no better than the enumerated optimum,
    # and its bound no lower than it (Fisher 1981: the Lagrangian dual bounds the optimum)
    _, _, npv, capital = tiny
    r = ProgrammeStudy.from_dict(tiny_study_data(**{"solver.method": "heuristic"})).run(TINY)
    fits = np.flatnonzero(capital <= TINY_BUDGET)
    _, totals = enumerate_programmes(npv[fits], capital[fits], TINY_BUDGET)
    year = r.mains["scheduled_year"].fillna(-1).to_numpy(dtype=int)
    for a in range(3):
        assert capital[year == a].sum() <= TINY_BUDGET
    value = sum(npv[k, year[k]] for k in range(len(TINY)) if year[k] >= 0)
    assert r.plan.method == "heuristic"
    assert r.plan.objective == pytest.approx(value, rel=1e-9)
    assert value <= totals.max() * (1 + 1e-12)
    assert r.plan.bound >= totals.max() * (1 - 1e-9)


@pytest.mark.reference
def test_scheduled_npv_and_running_totals_by_hand(tiny):
    # each renewed main's NPV at its scheduled year from the hand sums, and the programme's
    # running totals of capital and NPV added up year by year here
    r, _, npv, capital = tiny
    year = r.mains["scheduled_year"].fillna(-1).to_numpy(dtype=int)
    for k in range(len(TINY)):
        expected = npv[k, year[k]] if year[k] >= 0 else 0.0
        assert r.mains["npv_scheduled"].iloc[k] == pytest.approx(expected, rel=1e-9, abs=1e-6)
    capital_run, npv_run = 0.0, 0.0
    for a in range(3):
        capital_run += capital[year == a].sum()
        npv_run += npv[year == a, a].sum()
        assert r.schedule["cumulative_capital"].iloc[a] == pytest.approx(capital_run, rel=1e-12)
        assert r.schedule["cumulative_npv"].iloc[a] == pytest.approx(npv_run, rel=1e-9)


@pytest.mark.reference
def test_reasons_of_the_tiny_register_by_hand(tiny):
    # the reason of each renewed main compares its scheduled year with its best year found by
    # exhaustive search of the hand sums; its saving's driver is the share of the breaks in the
    # PV saved there (at least 2/3: mostly from fewer breaks)
    r, hand, _, _ = tiny
    for k, h in enumerate(hand):
        m = r.mains.iloc[k]
        best = min(range(40), key=lambda a: h["pv_replace"][a])
        p = h["parts"][best]
        saved = p["breaks_saved"] + max(p["energy_saved"], 0.0)
        if m["status"] == "renew":
            year = int(m["scheduled_year"])
            start = ("renewed in its best year" if year == best else
                     "renewed after its best year (budget)" if year > best else
                     "renewed before its best year")
            assert m["reason"].startswith(start), m["main_id"]
        if m["status"] != "keep" and saved > 0:
            share = p["breaks_saved"] / saved
            driver = ("saving mostly from fewer breaks" if share >= 2 / 3 else
                      "saving mostly from energy" if share <= 1 / 3 else
                      "saving from fewer breaks and energy")
            assert m["reason"].endswith(driver), m["main_id"]


@pytest.mark.reference
def test_pooled_breaks_are_the_sums_of_the_raw_register():
    # the two windows summed by class with pandas on the raw register, over the rows that give
    # both counts (a few prior counts blanked here)
    frame = invented_register(2000, seed=31, defects=False)
    frame.loc[::7, "breaks_prior_5y"] = np.nan
    study = ProgrammeStudy.demo()
    got = pooled_breaks(frame, study)
    both = frame[frame["breaks_prior_5y"].notna()]
    sums = both.groupby("material").agg(breaks_last_5y=("breaks_last_5y", "sum"),
                                        breaks_prior_5y=("breaks_prior_5y", "sum"),
                                        mains=("main_id", "count"))
    for name in study.material_names:
        for column in ("breaks_last_5y", "breaks_prior_5y", "mains"):
            assert got.loc[name, column] == sums.loc[name, column], (name, column)


@pytest.mark.reference
def test_history_rates_reach_every_main_by_hand():
    # growth_from = "history": each class's rate is ln(recent / prior) / 5 of its pooled counts
    # (pandas here), held within +-0.2, or the study's rate under 100 breaks a window; every
    # main's rate now is then N0 = n A / (1 - e^{-5 A}) with its class's rate
    study = ProgrammeStudy.demo()
    frame = invented_register(2500, seed=32, defects=False)
    table, _, _ = evaluate_rows(frame, study, pooled=pooled_breaks(frame, study))
    sums = frame.groupby("material")[["breaks_last_5y", "breaks_prior_5y"]].sum()
    rate = {}
    for name, (recent, prior) in sums.iterrows():
        if min(recent, prior) >= 100:
            rate[name] = max(-0.2, min(0.2, math.log(recent / prior) / 5.0))
        else:
            rate[name] = DEMO_MATERIALS[name][2]
    for k, row in frame.iterrows():
        a = rate[row["material"]]
        assert table["break_growth_per_year"].iloc[k] == pytest.approx(a, rel=1e-13)
        n0 = row["breaks_last_5y"] * a / (1.0 - math.exp(-5.0 * a))
        assert table["breaks_per_year_now"].iloc[k] == pytest.approx(n0, rel=1e-12, abs=1e-15)


@pytest.mark.reference
@pytest.mark.parametrize(("changes", "hand_changes"), [
    ({"energy.price": 0.12, "energy.escalation": 0.02, "energy.demand_charge": 40.0,
      "pumping.efficiency": 0.74},
     {"tariff": SimpleNamespace(price=0.12, escalation=0.02, demand_charge=40.0),
      "efficiency": 0.74}),
    ({"fluid.temperature": "25 degC"}, {"water_celsius": 25.0}),
    ({"replacement.aging": "0.01 mm/yr", "replacement.roughness": "0.05 mm",
      "economics.horizon": 16},
     {"new_aging": 0.01e-3, "new_roughness": 0.05e-3, "horizon": 16}),
])
def test_shared_sections_reach_a_pumped_main_by_hand(changes, hand_changes):
    # the tariff and pumping, the water's temperature, and the new main's roughness and aging,
    # from the study file to the PV of keeping the rising main and of renewing it, by hand
    celsius = hand_changes.pop("water_celsius", 10.0)
    water = iapws.IAPWS95(T=273.15 + celsius, P=0.101325)
    s = hand_scenario(density=water.rho, viscosity=water.mu, **hand_changes)
    study = ProgrammeStudy.from_dict(demo_dict(**{"breaks.growth_from": "material", **changes}))
    r = study.run(pd.DataFrame([PUMPED_ROW]))
    hand = hand_economics(s, hand_main(PUMPED_ROW, DEMO_MATERIALS))
    assert r.mains["energy_kwh_year1"].iloc[0] == pytest.approx(hand["energy1"], rel=1e-11)
    assert r.mains["pv_keep"].iloc[0] == pytest.approx(hand["pv_keep"], rel=1e-11)
    npv = [hand["pv_keep"] - pv for pv in hand["pv_replace"][:10]]
    np.testing.assert_allclose(r.npv_by_year.iloc[0, 1:].to_numpy(dtype=float), npv, rtol=1e-9,
                               atol=1e-9 * hand["pv_keep"])


@pytest.mark.reference
def test_transitional_flow_is_flagged_by_its_reynolds_number():
    # Re = rho v D / mu by hand with the iapws water: 1.1 m3/h in a 100 mm bore is Re ~ 3,000,
    # between 2,000 and 4,000 (the laminar and turbulent limits, common practice), flagged, and
    # its head loss is Colebrook-White's turbulent value (mpmath root in hand_economics);
    # 5 m3/h is turbulent and not flagged
    water = iapws.IAPWS95(T=283.15, P=0.101325)
    rows = [tiny_row(f"R{k}", "pvc", 100, 900, 2000, 0, 300, flow, 4000.0, 15.0)
            for k, flow in enumerate((1.1, 5.0))]
    study = ProgrammeStudy.from_dict(tiny_study_data())
    r = study.run(pd.DataFrame(rows))
    for k, row in enumerate(rows):
        q = row["pumped_flow_m3_h"] / 3600.0
        re = water.rho * (q / (math.pi * 0.1 ** 2 / 4)) * 0.1 / water.mu
        assert r.mains["transitional_flow"].iloc[k] == (2000 <= re < 4000)
        hand = hand_economics(hand_scenario(horizon=4), hand_main(pd.Series(row),
                                                                  TINY_MATERIALS))
        assert r.mains["head_loss_year1_m"].iloc[k] == pytest.approx(hand["head_loss1"],
                                                                     rel=1e-11)
    assert r.mains["transitional_flow"].tolist() == [True, False]


@pytest.mark.reference
def test_roughness_capped_at_the_edge_of_the_moody_chart_by_hand():
    # a 100 mm cast-iron main laid in 1927 is 4.26 mm rough now (0.26 mm + 0.04 mm/yr x 100
    # years) and passes eps/D = 0.05, the largest relative roughness of Moody's chart (L. F.
    # Moody, Trans. ASME 66, 671-684, 1944), in year 20 of 40; a 300 mm main laid in 1990
    # never does. The PV of keeping each, with the friction held at 0.05, by hand.
    rows = [tiny_row("C1", "cast-iron", 100, 700, 1927, 2, 400, 20.0, 3000.0, 12.0),
            tiny_row("C2", "cast-iron", 300, 700, 1990, 2, 700, 150.0, 3000.0, 12.0)]
    r = ProgrammeStudy.from_dict(tiny_study_data()).run(pd.DataFrame(rows))
    for k, row in enumerate(rows):
        main = hand_main(pd.Series(row), TINY_MATERIALS)
        capped = any((main["roughness"] + main["aging"] * (t - 1)) / main["diameter"] > 0.05
                     for t in range(1, 41))
        assert r.mains["roughness_capped"].iloc[k] == capped
        hand = hand_economics(hand_scenario(), main)
        assert r.mains["pv_keep"].iloc[k] == pytest.approx(hand["pv_keep"], rel=1e-11)
    assert r.mains["roughness_capped"].tolist() == [True, False]


@pytest.mark.reference
@pytest.mark.parametrize(("recent", "prior"), [(120, 150), (130, 130)])
def test_falling_and_steady_break_rates_by_hand(recent, prior):
    # pooled windows of 120 then 150 breaks give A = ln(0.8)/5 < 0 (fewer breaks each year),
    # 130 and 130 give A = 0, where the rate now is the mean count n / 5 (the limit of
    # n A / (1 - e^{-5A})); the mains' rates now and PVs of keeping by hand
    rows = [dict(tiny_row(f"F{j}", "pvc", 150, 300, 1980, recent // 10, 500),
                 breaks_prior_5y=prior // 10) for j in range(10)]
    r = ProgrammeStudy.from_dict(tiny_study_data(**{"breaks.growth_from": "history"})).run(
        pd.DataFrame(rows))
    a = math.log(recent / prior) / 5.0
    assert r.growth.loc["pvc", "break_growth_per_year"] == pytest.approx(a, abs=1e-15)
    n0 = recent // 10 / 5.0 if a == 0 else recent // 10 * a / (1.0 - math.exp(-5.0 * a))
    main = hand_main(pd.Series(rows[0]), {"pvc": (0.007e-3, 0.0, a)})
    hand = hand_economics(hand_scenario(), main)
    m = r.mains.iloc[0]
    assert m["breaks_per_year_now"] == pytest.approx(n0, rel=1e-12)
    assert m["pv_keep"] == pytest.approx(hand["pv_keep"], rel=1e-11)
    np.testing.assert_allclose(r.npv_by_year.iloc[0, 1:].to_numpy(dtype=float),
                               [hand["pv_keep"] - pv for pv in hand["pv_replace"][:3]],
                               rtol=1e-9, atol=1e-9 * hand["pv_keep"])


def test_pump_and_motor_efficiencies_are_taken_or_refused_by_name():
    # the wire-to-water product pump x motor x drive (common practice: efficiencies of a pump
    # train in series multiply); one station's pump curve or NPSH is refused by name, never an
    # internal error
    data = demo_dict(**{"pumping.efficiency": None, "pumping.pump_efficiency": 0.8,
                        "pumping.motor_efficiency": 0.93})
    study = ProgrammeStudy.from_dict(data)
    assert study.scenario.efficiency == pytest.approx(0.8 * 0.93, rel=1e-12)
    for key, value in (("bep_efficiency", 0.8), ("npsh_required", "3 m")):
        bad = demo_dict(**{"pumping.efficiency": None, f"pumping.{key}": value})
        with pytest.raises(StudyFileError, match=rf"^pumping\.{key}: a renewal programme"):
            ProgrammeStudy.from_dict(bad)
    with pytest.raises(StudyFileError, match=r"^pumping\.efficiency: required key is missing"):
        ProgrammeStudy.from_dict(demo_dict(**{"pumping.efficiency": None}))


@pytest.mark.reference
def test_a_heuristic_programme_is_near_the_lp_relaxation_of_scipy():
    # 1,000 invented mains under the Lagrangian heuristic: within each year's budget, and
    # within half a per cent of the linear-programming relaxation of the same choice, solved
    # independently by scipy.optimize.linprog (the relaxation bounds every programme: common
    # practice in integer programming)
    from scipy import optimize, sparse

    study = ProgrammeStudy.from_dict(demo_dict(**{"solver.method": "heuristic"}))
    r = study.run(invented_register(1000, seed=9, defects=False))
    npv = r.npv_by_year.iloc[:, 1:].to_numpy(dtype=float)
    capital = r.mains["capital"].to_numpy()
    budget = r.schedule["budget"].to_numpy()
    m, w = npv.shape
    mains, years = np.nonzero((npv > 0) & (capital[:, None] <= budget[None, :]))
    k = mains.size
    rows = sparse.vstack([sparse.csr_array((np.ones(k), (mains, np.arange(k))), shape=(m, k)),
                          sparse.csr_array((capital[mains], (years, np.arange(k))),
                                           shape=(w, k))])
    lp = optimize.linprog(-npv[mains, years], A_ub=rows, b_ub=np.r_[np.ones(m), budget],
                          bounds=(0, 1), method="highs")
    assert lp.status == 0 and r.plan.method == "heuristic"
    year = r.mains["scheduled_year"].fillna(-1).to_numpy(dtype=int)
    value = sum(npv[i, year[i]] for i in range(m) if year[i] >= 0)
    assert value == pytest.approx(r.plan.objective, rel=1e-12)
    assert 0.995 * -lp.fun <= value <= -lp.fun
    for a in range(w):
        assert capital[year == a].sum() <= budget[a]
