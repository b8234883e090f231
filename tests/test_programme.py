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
import math
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from pipeopt import plots
from pipeopt.cli import main
from pipeopt.programme import STATUS, ProgrammeStudy, evaluate_rows
from pipeopt.register import INVENTED_MATERIALS, invented_register
from pipeopt.results import CAUTION
from pipeopt.studyfile import StudyFileError, read_toml

from .conftest import upgrade_study_for_main

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


def test_demo_programme_is_consistent(demo_result):
    r = demo_result
    s = r.study
    assert r.success
    assert len(r.mains) + len(r.rejected) == 5000
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


def test_growth_fitted_from_the_register_pooled_by_class():
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


def test_reasons_when_the_best_year_is_after_the_programme():
    # one cast-iron main of 300 m, breaks growing 8 % a year (8 in the last 5 years: about 2 a
    # year now), 2,000 a metre to replace: breaks alone make its best year about a decade
    # away (Shamir & Howard 1979 give 8.4 years; the residual credit at the horizon adds a
    # little); a programme of two years renews it in its second year, before its best year
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
