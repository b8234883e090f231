"""Tests of pipeopt.register: reading a register of mains, row checks, the invented register.

The rules checked here are the documented column rules of the module (common practice for an
asset register: positive lengths and bores, whole years and counts, a flow of 0 for a main that
is not pumped); every expected reason is the rule's own wording, written out in the test.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt.errors import InputError
from pipeopt.register import (
    INVENTED_MATERIALS,
    REQUIRED_COLUMNS,
    check_columns,
    invented_register,
    read_register,
    validate,
)

GOOD = ("main_id,material,inner_diameter_mm,length_m,year_laid,breaks_last_5y,"
        "pumped_flow_m3_h,hours_per_year,static_head_m,replacement_cost_per_m\n"
        "A1,cast-iron,150,120,1950,3,0,,,420\n"
        "A2,pvc,100,80.5,1990,0,0,,,310\n"
        "A3,ductile-iron,300,900,1975,1,250,6000,22,610\n")


def csv_file(tmp_path, text: str, name: str = "register.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_a_clean_register_reads_typed(tmp_path):
    reg = read_register(csv_file(tmp_path, GOOD), materials=["cast-iron", "pvc", "ductile-iron"],
                        first_year=2027)
    assert reg.rejected.empty
    m = reg.mains
    assert m["main_id"].tolist() == ["A1", "A2", "A3"]
    assert m["row"].tolist() == [1, 2, 3]
    assert m["length_m"].tolist() == [120.0, 80.5, 900.0]
    assert m["year_laid"].dtype == np.int64
    # blank hours and head are 0 where the main is not pumped; the new bore defaults to the bore
    assert m["hours_per_year"].tolist() == [0.0, 0.0, 6000.0]
    assert m["replacement_inner_diameter_mm"].tolist() == [150.0, 100.0, 300.0]
    assert np.isnan(m["breaks_prior_5y"]).all()


BAD_ROWS = [
    ("B1,cast-iron,150,-5,1950,3,0,,,420", "length_m must be in (0, 100000] m, got -5"),
    ("B2,cast-iron,0,100,1950,3,0,,,420", "inner_diameter_mm must be in (0, 5000] mm, got 0"),
    ("B3,clay,150,100,1950,3,0,,,420", "material 'clay' is not one of the study's materials"),
    ("B4,cast-iron,150,100,2031,3,0,,,420",
     "year_laid must be a whole year from 1800 to the first year 2027, got 2031"),
    ("B5,cast-iron,150,100,1950.5,3,0,,,420", "year_laid must be a whole year"),
    ("B6,cast-iron,150,100,1950,2.5,0,,,420", "breaks_last_5y must be a whole number >= 0"),
    ("B7,cast-iron,150,100,1950,3,,,,420",
     "pumped_flow_m3_h is missing"),
    ("B8,cast-iron,150,100,1950,3,40,,12,420", "hours_per_year is missing"),
    ("B9,cast-iron,150,100,1950,3,40,9000,12,420",
     "hours_per_year must be in (0, 8760] hours a year for a pumped main, got 9000"),
    ("B10,cast-iron,150,100,1950,3,0,,,abc", "replacement_cost_per_m is not a number: abc"),
    ("B11,cast-iron,150,100,1950,3,0,,,", "replacement_cost_per_m is missing"),
    (",cast-iron,150,100,1950,3,0,,,420", "main_id is missing"),
    # 400 m3/h in a 150 mm bore is 6.3 m/s (Q / (pi D^2 / 4), by hand)
    ("B13,cast-iron,150,100,1950,3,400,5000,12,420", "gives 6.3 m/s in the bore, above 5 m/s"),
    ("B14,cast-iron,150,100,1950,3,40,5000,-3,420",
     "static_head_m must be in [0, 1000] m for a pumped main, got -3"),
]


@pytest.mark.parametrize(("line", "reason"), BAD_ROWS, ids=[r[0].split(",")[0] or "no-id"
                                                             for r in BAD_ROWS])
def test_a_bad_row_is_reported_with_its_reason_and_the_rest_proceeds(tmp_path, line, reason):
    header, *rows = GOOD.strip().splitlines()
    text = "\n".join([header, rows[0], line, *rows[1:]]) + "\n"
    reg = read_register(csv_file(tmp_path, text), materials=["cast-iron", "pvc", "ductile-iron"],
                        first_year=2027)
    assert reg.mains["main_id"].tolist() == ["A1", "A2", "A3"]
    assert len(reg.rejected) == 1
    bad = reg.rejected.iloc[0]
    assert bad["row"] == 2                       # the second row under the header
    assert bad["main_id"] == line.split(",")[0]
    assert reason in bad["reason"]


def test_every_reason_of_a_row_is_given():
    frame = pd.DataFrame({"main_id": ["X"], "material": ["pvc"], "inner_diameter_mm": [-1.0],
                          "length_m": [-2.0], "year_laid": [1990], "breaks_last_5y": [0],
                          "pumped_flow_m3_h": [0.0], "hours_per_year": [np.nan],
                          "static_head_m": [np.nan], "replacement_cost_per_m": [0.0]})
    _, rejected = validate(frame)
    reason = rejected["reason"].iloc[0]
    assert reason.count("; ") == 2
    for text in ("inner_diameter_mm must be", "length_m must be",
                 "replacement_cost_per_m must be positive"):
        assert text in reason


def test_every_row_with_a_repeated_id_is_rejected(tmp_path):
    text = GOOD + "A2,pvc,100,10,1990,0,0,,,310\n"
    reg = read_register(csv_file(tmp_path, text))
    assert reg.mains["main_id"].tolist() == ["A1", "A3"]
    assert reg.rejected["row"].tolist() == [2, 4]
    assert (reg.rejected["reason"] == "main_id 'A2' appears on more than one row").all()


def test_missing_column_is_refused_with_a_suggestion():
    cols = [c if c != "length_m" else "length" for c in REQUIRED_COLUMNS]
    with pytest.raises(InputError, match=r"missing column\(s\) length_m \(found 'length'\?\)"):
        check_columns(cols)


def test_ignored_columns_are_listed(tmp_path):
    text = GOOD.replace("replacement_cost_per_m\n", "replacement_cost_per_m,street\n")
    text = "\n".join(line + (",Mill Lane" if k else "") for k, line in
                     enumerate(text.strip().splitlines())) + "\n"
    reg = read_register(csv_file(tmp_path, text))
    assert reg.ignored_columns == ["street"]
    assert len(reg.mains) == 3


def test_parquet_reads_like_csv(tmp_path):
    frame = invented_register(300, seed=4)
    frame.to_csv(tmp_path / "r.csv", index=False)
    frame.to_parquet(tmp_path / "r.parquet")
    a = read_register(tmp_path / "r.csv", materials=list(INVENTED_MATERIALS), first_year=2027)
    b = read_register(tmp_path / "r.parquet", materials=list(INVENTED_MATERIALS),
                      first_year=2027)
    pd.testing.assert_frame_equal(a.mains, b.mains, check_exact=True)
    pd.testing.assert_frame_equal(a.rejected, b.rejected, check_exact=True)


def test_file_errors(tmp_path):
    with pytest.raises(InputError, match="not found"):
        read_register(tmp_path / "nope.csv")
    with pytest.raises(InputError, match="must be a .csv or .parquet file"):
        read_register(tmp_path / "register.xlsx")


def test_the_invented_register_is_seeded_and_its_defects_are_found():
    a = invented_register(2000, seed=11)
    b = invented_register(2000, seed=11)
    c = invented_register(2000, seed=12)
    pd.testing.assert_frame_equal(a, b)
    assert not a["length_m"].equals(c["length_m"])
    assert a["main_id"].str.startswith("OXV-").all()
    reg = read_register(a, materials=list(INVENTED_MATERIALS), first_year=2027)
    # six broken rows, one of them a repeated id, which rejects both of its rows
    assert len(reg.rejected) == 7
    words = " ".join(reg.rejected["reason"])
    for text in ("length_m must be", "material 'vitrified-clay'", "appears on more than one row",
                 "year_laid must be", "replacement_cost_per_m is missing",
                 "pumped_flow_m3_h must be >= 0"):
        assert text in words
    clean = read_register(invented_register(2000, seed=11, defects=False),
                          materials=list(INVENTED_MATERIALS), first_year=2027)
    assert clean.rejected.empty and len(clean.mains) == 2000
    # about one main in ten is pumped; every class of the invented utility appears
    share = (clean.mains["pumped_flow_m3_h"] > 0).mean()
    assert 0.03 < share < 0.12
    assert set(clean.mains["material"]) == set(INVENTED_MATERIALS)


def test_invented_register_refuses_too_few_rows():
    with pytest.raises(InputError, match="n must be a whole number of rows >= 20"):
        invented_register(5)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.integers(0, 59), unique=True, max_size=12),
       st.sampled_from(["length_m", "inner_diameter_mm", "replacement_cost_per_m"]),
       st.sampled_from([-1.0, 0.0, np.nan]))
def test_exactly_the_broken_rows_are_rejected(broken, column, value):
    # property: valid + rejected = every row; the rejected rows are the ones broken
    frame = invented_register(60, seed=7, defects=False)
    frame.loc[broken, column] = value
    mains, rejected = validate(frame, INVENTED_MATERIALS, 2027)
    assert len(mains) + len(rejected) == 60
    assert sorted(rejected["row"].tolist()) == sorted(k + 1 for k in broken)
    assert set(mains["row"]).isdisjoint(rejected["row"])


def test_row_numbers_of_a_partition_continue_the_register():
    frame = invented_register(50, seed=2, defects=False)
    frame.loc[45, "length_m"] = -1.0
    part = frame.iloc[40:].reset_index(drop=True)
    mains, rejected = validate(part, row_offset=40)
    assert mains["row"].iloc[0] == 41
    assert rejected["row"].tolist() == [46]


def test_csv_text_cells_with_spaces_and_numbers_as_text():
    text = GOOD.replace("A1,cast-iron,150,120", " A1 , cast-iron ,150, 120")
    frame = pd.read_csv(io.StringIO(text), dtype=str, skipinitialspace=True)
    mains, rejected = validate(frame)
    assert rejected.empty
    assert mains["main_id"].iloc[0] == "A1" and mains["material"].iloc[0] == "cast-iron"
    assert mains["length_m"].iloc[0] == 120.0
