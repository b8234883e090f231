"""Tests of pipeopt.profile: the ground profile and the hydraulic grade line along a line.

Sources, named beside each check:
- Darcy–Weisbach with a constant friction factor, h = f L / D × V² / (2 g), summed section by
  section from the delivery back to the pump: the grade line of a line of three sections in
  series worked by hand in this file (the delivery head plus the losses downstream of each
  point);
- the standard atmosphere of ISO 2533 (from memory: 1013.25 hPa at sea level, 898.76 hPa at
  1000 m), for the least pressure allowed;
- the control rule of the contributor guide (DEVELOPERS.md, "Long lines").
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from pipeopt import SizingStudy, catalog
from pipeopt.errors import InputError
from pipeopt.profile import GroundProfile, least_heads, stretches_below

G = 9.80665


def three_sections(**changes) -> SizingStudy:
    """An invented 12 km line of DN 400, DN 350 and DN 300 ductile iron (class C40 each) over
    a rising profile, one duty point, a constant friction factor, no booster."""
    d = {
        "study": {"name": "three sections (invented)", "illustrative": True},
        "fluid": {"kind": "custom", "density": "1000 kg/m^3", "viscosity": "1 mPa*s",
                  "vapour_pressure": "2.3 kPa"},
        "hydraulics": {"friction_method": "constant", "friction_factor": 0.02},
        "line": {"static_head": "60 m", "cover": "1 m", "source_level": "100 m"},
        "profile": [{"chainage": "0 km", "elevation": "100 m"},
                    {"chainage": "2 km", "elevation": "110 m"},
                    {"chainage": "5 km", "elevation": "120 m"},
                    {"chainage": "9 km", "elevation": "150 m"},
                    {"chainage": "12 km", "elevation": "155 m"}],
        "section": [{"end": "3 km", "sizes": ["DN 400"]},
                    {"end": "7 km", "sizes": ["DN 350"]},
                    {"sizes": ["DN 300"]}],
        "duty": [{"flow": "0.15 m^3/s", "hours": 8000}],
        "pumping": {"efficiency": 0.8},
        "energy": {"price": 0.1},
        "economics": {"discount_rate": 0.05, "horizon": 20, "pipe_life": 60},
        "material": [{"name": "ductile-iron", "classes": ["C40"],
                      "cost": {"price_per_kg": 1.9, "laying_coefficient": 500.0,
                               "laying_exponent": 1.1}}],
    }
    d.update(changes)
    return SizingStudy.from_dict(d)


@pytest.mark.reference
def test_grade_line_of_three_sections_equals_hand_calculation():
    res = three_sections().run()
    prof = res.profile
    q, f = 0.15, 0.02
    pipes = [catalog.lookup("ductile-iron", f"DN {n} C40") for n in (400, 350, 300)]
    bore = [float(p["inner_diameter_m"]) for p in pipes]
    od = [float(p["outside_diameter_m"]) for p in pipes]

    def gradient(d):  # friction head per metre, Darcy–Weisbach with constant f
        v = q / (math.pi * d * d / 4)
        return f / d * v * v / (2 * G)

    # points: the profile's, with the section ends at 3 and 7 km added
    x = np.array([0, 2000, 3000, 5000, 7000, 9000, 12000.0])
    ground = np.interp(x, [0, 2000, 5000, 9000, 12000], [100, 110, 120, 150, 155])
    section = [0, 0, 1, 1, 2, 2]                       # of each stretch
    loss = [gradient(bore[s]) * (x[i + 1] - x[i]) for i, s in enumerate(section)]
    delivery = 100.0 + 60.0                            # source level + static head
    head = delivery + np.concatenate([np.cumsum(loss[::-1])[::-1], [0.0]])
    rows = prof[prof["station"] != "head station suction"]
    np.testing.assert_allclose(rows["chainage_m"], x)
    np.testing.assert_allclose(rows["head_max_m"], head, rtol=1e-12)
    np.testing.assert_allclose(rows["head_min_m"], head, rtol=1e-12)  # one duty, one year
    # the pipe axis: ground less cover less half the outside diameter, of the stretch starting
    # at the point (the last point: the last stretch's)
    od_pt = [od[s] for s in section] + [od[2]]
    axis = ground - 1.0 - 0.5 * np.array(od_pt)
    np.testing.assert_allclose(rows["pipe_m"], axis, rtol=1e-12)
    np.testing.assert_allclose(rows["pressure_max_bar"], 1000 * G * (head - axis) / 1e5,
                               rtol=1e-12)
    # the pump head and power of the head station, by hand
    b = res.best
    assert b["pump_head_m"] == pytest.approx(head[0] - 100.0, rel=1e-12)
    assert b["head_loss_m"] == pytest.approx(sum(loss), rel=1e-12)
    assert b["electrical_power_kw"] == pytest.approx(1000 * G * q * (head[0] - 100.0) / 0.8 / 1000,
                                               rel=1e-12)
    st = res.stations
    assert list(st["station"]) == ["head station"]
    assert st["head_max_m"].iloc[0] == pytest.approx(head[0] - 100.0, rel=1e-12)


@pytest.mark.reference
def test_a_ridge_governs_when_the_delivery_alone_would_leave_it_short():
    # raise the 9 km point to 215 m: the grade line from the delivery (160 m plus the 40.6 m
    # lost downstream) passes below it, so the head station must hold the least head there (the
    # vapour pressure + 3 m, absolute, with the standard atmosphere at 215 m) and the delivery
    # receives more than it needs (by hand, from that requirement)
    prof = three_sections(profile=[{"chainage": "0 km", "elevation": "100 m"},
                                   {"chainage": "2 km", "elevation": "110 m"},
                                   {"chainage": "5 km", "elevation": "120 m"},
                                   {"chainage": "9 km", "elevation": "215 m"},
                                   {"chainage": "12 km", "elevation": "155 m"}]).run().profile
    at9 = prof[prof["chainage_m"] == 9000.0].iloc[0]
    p_atm = 101325.0 * (1 - 0.0065 * 215.0 / 288.15) ** 5.25588   # ISO 2533 (from memory)
    least = (2300.0 + 1000 * G * 3.0 - p_atm) / (1000 * G)
    assert at9["head_max_m"] == pytest.approx(at9["pipe_m"] + least, rel=1e-6)
    assert at9["pressure_min_bar"] < 0                            # sub-atmospheric
    end = prof.iloc[-1]
    assert end["head_max_m"] > 160.0 + 1.0                        # above the delivery head


@pytest.mark.reference
def test_least_heads_with_the_standard_atmosphere():
    # ISO 2533 (from memory): 101 325 Pa at sea level, 89 876 Pa at 1000 m
    h = least_heads([0.0, 1000.0], 1000.0, 2300.0, None, 3.0)
    np.testing.assert_allclose(h, (2300.0 + 1000 * G * 3.0 - np.array([101325.0, 89876.0]))
                               / (1000 * G), atol=2e-3)
    np.testing.assert_allclose(least_heads([0.0, 1000.0], 1000.0, 2300.0, 5e4, 3.0),
                               5e4 / (1000 * G))


def test_profile_points_and_csv(tmp_path):
    p = GroundProfile(["0 km", "1 km", "3 km"], ["10 m", "30 m", "20 m"])
    x, z = p.with_points([500.0, 2000.0, 5000.0])
    assert x.tolist() == [0.0, 500.0, 1000.0, 2000.0, 3000.0]
    assert z.tolist() == [10.0, 20.0, 30.0, 25.0, 20.0]
    csv = tmp_path / "ground.csv"
    csv.write_text("chainage_km,elevation_m\n0,10\n1,30\n3,20\n")
    q = GroundProfile.read_csv(csv)
    assert q.x.tolist() == [0.0, 1000.0, 3000.0] and q.ground.tolist() == [10.0, 30.0, 20.0]
    csv.write_text("chainage,elevation\n0 km,10 m\n1 km,30 m\n3 km,20 m\n")
    assert GroundProfile.read_csv(csv).x.tolist() == [0.0, 1000.0, 3000.0]
    csv.write_text("chainage,elevation\n0,10 m\n")
    with pytest.raises(InputError, match=r"row 1, column chainage.*no unit|row 1, column "
                                         r"chainage"):
        GroundProfile.read_csv(csv)
    with pytest.raises(InputError, match=r"missing column 'elevation'"):
        GroundProfile.read_csv("chainage_m,height_m\n0,1\n10,2\n")
    with pytest.raises(InputError, match=r"profile\[1\]\.elevation: expected"):
        GroundProfile(["0 km", "1 km"], ["10 m", 30])


def test_study_with_profile_from_a_csv_file(tmp_path):
    (tmp_path / "ground.csv").write_text(
        "chainage_km,elevation_m\n0,100\n2,110\n5,120\n9,150\n12,155\n")
    m = {
        "study": {"name": "x"},
        "fluid": {"kind": "custom", "density": "1000 kg/m^3", "viscosity": "1 mPa*s",
                  "vapour_pressure": "2.3 kPa"},
        "line": {"static_head": "60 m", "cover": "1 m"}, "profile": "ground.csv",
        "duty": [{"flow": "0.15 m^3/s", "hours": 8000}], "pumping": {"efficiency": 0.8},
        "energy": {"price": 0.1},
        "economics": {"discount_rate": 0.05, "horizon": 20, "pipe_life": 60},
        "material": [{"name": "ductile-iron", "classes": ["C40"], "sizes": ["DN 300 C40"],
                      "cost": {"coefficient": 900.0, "exponent": 1.2}}]}
    res = SizingStudy.from_dict(m, base_dir=tmp_path).run()
    assert res.profile["chainage_m"].iloc[-1] == 12000.0
    assert res.study.layout.model.ground.tolist() == [100.0, 110.0, 120.0, 150.0, 155.0]


def test_stretches_below():
    x = np.array([0.0, 10.0, 20.0, 30.0, 40.0])
    assert stretches_below(x, np.array([-1.0, 1.0, 1.0, -1.0, -1.0])) == [(0.0, 5.0),
                                                                         (25.0, 40.0)]
    assert stretches_below(x, np.ones(5)) == []


@pytest.mark.parametrize(
    ("changes", "match"),
    [
        ({"line": {"static_head": "60 m"}}, r"line\.cover: required with a ground profile"),
        ({"line": {"static_head": "60 m", "cover": "1 m", "length": "11 km"}},
         r"line\.length \(11 km\) differs from the profile's \(12 km"),
        ({"section": [{"end": "3 km", "length": "3 km"}]},
         r"section\[0\]\.end: give length or end, not both"),
        ({"section": [{"end": "3 km"}, {"end": "2 km"}]},
         r"section\[1\]\.end: must be beyond the section's start \(3 km\)"),
        ({"section": [{"end": "3 km"}, {"length": "2 km"}]},
         r"section: the sections end at 5 km, before the end of the line \(12 km\)"),
        ({"section": [{"sizes": ["DN 999"]}]},
         r"section\[0\]\.sizes: no nominal size 'DN999'"),
        ({"section": [{"materials": ["pe100"]}]},
         r"section\[0\]\.materials: 'pe100' is not a \[\[material\]\] of the study"),
        ({"profile": [{"chainage": "0 km", "elevation": "100 m"},
                      {"chainage": "0 km", "elevation": "110 m"}]},
         r"profile\[1\]\.chainage: chainages must increase"),
        ({"profile": [{"chainage": "0 km"}, {"chainage": "1 km", "elevation": "1 m"}]},
         r"profile\[0\]\.elevation: required key is missing"),
        ({"profile": [{"chainage": 0, "elevation": "100 m"},
                      {"chainage": "1 km", "elevation": "1 m"}]},
         r"profile\[0\]\.chainage: expected a length such as '3\.2 km', got 0 with no unit"),
        ({"equipment": [{"pressure_drop": "35 kPa", "at_flow": "400 m^3/h", "at": "13 km"}]},
         r"equipment\[0\]\.at: 13 km is not within the line"),
    ],
)
def test_long_line_errors(changes, match):
    from pipeopt.studyfile import StudyFileError

    with pytest.raises(StudyFileError, match=match):
        three_sections(**changes)
