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
from pipeopt.report import CAUTIONS
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
            data[section].pop(key, None)
        else:
            data[section][key] = value
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
    study = ProgrammeStudy.from_dict(demo_dict(**{"pumping.flow_growth": 0.006,
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
        ({"programme.budget": [1e6, "lots", 1e6]}, r"programme\.budget\[1\]: expected a capital"),
        ({"programme.budget": [1e6, 1e6], "programme.years": 3},
         "programme.years: 3 years but the budget list gives 2"),
        ({"programme.budgets": 1e6}, "did you mean 'programme.budget'"),
        ({"programme.first_year": None}, "programme.first_year: required key is missing"),
        ({"economics.horizon": 20, "programme.years": 30},
         "programme.years must be a whole number from 1 to the horizon"),
        ({"replacement.roughness": 0.03}, "replacement.roughness: expected a roughness"),
        ({"breaks.growth_from": "fitted"}, "breaks.growth_from: must be one of material, "
                                           "history"),
        ({"breaks.repair_cost": "7500 EUR"}, "breaks.repair_cost: expected a number"),
        ({"solver.method": "greedy"}, "solver.method: must be one of auto, milp, heuristic"),
        ({"pumping.efficiency": 1.5}, "pumping.efficiency: must be <= 1"),
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
    for caution in CAUTIONS:
        assert caution in html.replace("&#x27;", "'")
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
