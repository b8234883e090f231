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


# ----- water and Colebrook-White: the grade line against an mpmath/iapws hand calculation -----
WATER = {"kind": "water", "temperature": "15 degC"}
DI_01MM = [{"name": "ductile-iron", "classes": ["C40"], "roughness": "0.1 mm",
            "cost": {"price_per_kg": 1.9, "laying_coefficient": 500.0, "laying_exponent": 1.1}}]
POINTS = np.array([0, 2000, 3000, 5000, 7000, 9000, 12000.0])
STRETCH_SECTION = [0, 0, 1, 1, 2, 2]


def water_losses(q: float) -> np.ndarray:
    """Friction loss of each stretch between POINTS [m]: Darcy-Weisbach, h = f L/D V^2/(2g),
    f from Colebrook-White (Colebrook 1939) solved by mpmath.findroot; water at 15 degC from
    the iapws package (IAPWS-95 density and viscosity, at 1 atm); roughness 0.1 mm."""
    import iapws
    import mpmath

    w = iapws.IAPWS95(T=288.15, P=0.101325)
    nu = w.mu / w.rho
    bores = [float(catalog.lookup("ductile-iron", f"DN {n} C40")["inner_diameter_m"])
             for n in (400, 350, 300)]
    out = []
    for k, sec in enumerate(STRETCH_SECTION):
        d = bores[sec]
        v = q / (math.pi * d * d / 4)
        re = v * d / nu
        x = mpmath.findroot(lambda x, d=d, re=re: x + 2 * mpmath.log10(1e-4 / d / 3.7
                                                                       + 2.51 * x / re), 8)
        f = float(1 / x**2)
        out.append(f * (POINTS[k + 1] - POINTS[k]) / d * v * v / (2 * G))
    return np.array(out)


@pytest.mark.reference
def test_grade_line_with_colebrook_and_two_duties_by_hand():
    # two duty points, 0.15 and 0.08 m3/s: the highest grade line carries the larger flow, the
    # lowest the smaller, each the delivery head (source level + static head, 160 m) plus the
    # friction downstream of the point (water_losses above)
    res = three_sections(fluid=WATER, hydraulics={"friction_method": "colebrook"},
                         material=DI_01MM,
                         duty=[{"flow": "0.15 m^3/s", "hours": 5000},
                               {"flow": "0.08 m^3/s", "hours": 3000}]).run()
    rows = res.profile[res.profile["station"] != "head station suction"]
    np.testing.assert_allclose(rows["chainage_m"], POINTS)
    for col, q in (("head_max_m", 0.15), ("head_min_m", 0.08)):
        loss = water_losses(q)
        head = 160.0 + np.concatenate([np.cumsum(loss[::-1])[::-1], [0.0]])
        np.testing.assert_allclose(rows[col], head, rtol=1e-10)
    # the operating pressure at each point: rho g (H - z_axis), density from iapws
    import iapws

    rho = iapws.IAPWS95(T=288.15, P=0.101325).rho
    np.testing.assert_allclose(rows["pressure_max_bar"],
                               rho * G * (rows["head_max_m"] - rows["pipe_m"]) / 1e5,
                               rtol=1e-10)


@pytest.mark.reference
def test_a_ridge_with_water_and_colebrook_by_hand():
    # the 9 km point raised to 215 m (as in the ridge test above), water at 15 degC: the head
    # station holds the least head at the ridge, (p_v + rho g 3 m - p_atm(215 m)) / (rho g)
    # above the pipe there (p_v and rho from iapws, IAPWS-95; p_atm by the ISO 2533 formula,
    # from memory), plus the friction from the head station to the ridge; the delivery
    # receives that less the friction beyond (water_losses, Colebrook-White by mpmath)
    import iapws

    res = three_sections(fluid=WATER, hydraulics={"friction_method": "colebrook"},
                         material=DI_01MM,
                         profile=[{"chainage": "0 km", "elevation": "100 m"},
                                  {"chainage": "2 km", "elevation": "110 m"},
                                  {"chainage": "5 km", "elevation": "120 m"},
                                  {"chainage": "9 km", "elevation": "215 m"},
                                  {"chainage": "12 km", "elevation": "155 m"}]).run()
    rows = res.profile[res.profile["station"] != "head station suction"]
    rho = iapws.IAPWS95(T=288.15, P=0.101325).rho
    pv = iapws.IAPWS95(T=288.15, x=0).P * 1e6
    p_atm = 101325.0 * (1 - 0.0065 * 215.0 / 288.15) ** (G * 0.0289644 / (8.3144598 * 0.0065))
    at9 = rows[rows["chainage_m"] == 9000.0].iloc[0]
    h9 = at9["pipe_m"] + (pv + rho * G * 3.0 - p_atm) / (rho * G)
    loss = water_losses(0.15)
    head = np.concatenate([h9 + np.cumsum(loss[:5][::-1])[::-1], [h9],
                           [h9 - loss[5]]])
    np.testing.assert_allclose(rows["head_max_m"], head, rtol=1e-9)
    assert res.best["pump_head_m"] == pytest.approx(head[0] - 100.0, rel=1e-9)


@pytest.mark.reference
def test_line_minor_losses_spread_along_the_line_by_hand():
    # a line K of 6 spread along the line in proportion to length, each share at its
    # stretch's velocity (the rule of the contributor guide, "Long lines"): the loss of a
    # stretch is (f L/D + K L/L_total) V^2/(2g) (Darcy-Weisbach and the K method; common
    # practice), constant f 0.02
    res = three_sections(line={"static_head": "60 m", "cover": "1 m", "source_level": "100 m",
                               "minor_loss_k": 6.0}).run()
    bores = [float(catalog.lookup("ductile-iron", f"DN {n} C40")["inner_diameter_m"])
             for n in (400, 350, 300)]
    loss = []
    for k, sec in enumerate(STRETCH_SECTION):
        d, length = bores[sec], POINTS[k + 1] - POINTS[k]
        v = 0.15 / (math.pi * d * d / 4)
        loss.append((0.02 * length / d + 6.0 * length / 12000.0) * v * v / (2 * G))
    head = 160.0 + np.concatenate([np.cumsum(loss[::-1])[::-1], [0.0]])
    rows = res.profile[res.profile["station"] != "head station suction"]
    np.testing.assert_allclose(rows["head_max_m"], head, rtol=1e-12)
    assert res.best["head_loss_m"] == pytest.approx(sum(loss), rel=1e-12)


@pytest.mark.reference
def test_sub_atmospheric_stretch_named_by_hand():
    # the ridge of the test above (9 km at 215 m, constant f 0.02): the grade line by hand
    # (the least head at the ridge, the friction upstream and downstream of it), the pressure
    # rho g (H - z_axis) linear along each stretch, and its zero crossings by linear
    # interpolation: the note names them to 0.1 km with the lowest pressure
    res = three_sections(profile=[{"chainage": "0 km", "elevation": "100 m"},
                                  {"chainage": "2 km", "elevation": "110 m"},
                                  {"chainage": "5 km", "elevation": "120 m"},
                                  {"chainage": "9 km", "elevation": "215 m"},
                                  {"chainage": "12 km", "elevation": "155 m"}]).run()
    bores = [float(catalog.lookup("ductile-iron", f"DN {n} C40")["inner_diameter_m"])
             for n in (400, 350, 300)]
    ods = [float(catalog.lookup("ductile-iron", f"DN {n} C40")["outside_diameter_m"])
           for n in (400, 350, 300)]
    ground = np.interp(POINTS, [0, 2000, 5000, 9000, 12000], [100, 110, 120, 215, 155])
    axis = ground - 1.0 - 0.5 * np.array([ods[s] for s in STRETCH_SECTION] + [ods[2]])
    loss = np.array([0.02 / bores[s] * (0.15 / (math.pi * bores[s] ** 2 / 4)) ** 2 / (2 * G)
                     * (POINTS[k + 1] - POINTS[k]) for k, s in enumerate(STRETCH_SECTION)])
    p_atm = 101325.0 * (1 - 0.0065 * 215.0 / 288.15) ** 5.25588   # ISO 2533 (from memory)
    h9 = axis[5] + (2300.0 + 1000 * G * 3.0 - p_atm) / (1000 * G)
    head = np.concatenate([h9 + np.cumsum(loss[:5][::-1])[::-1], [h9], [h9 - loss[5]]])
    p = 1000 * G * (head - axis) / 1e5
    # the pressure changes sign on the stretches 7-9 km and 9-12 km
    assert p[4] > 0 > p[5] and p[6] > 0
    x0 = POINTS[4] + (POINTS[5] - POINTS[4]) * p[4] / (p[4] - p[5])
    x1 = POINTS[5] + (POINTS[6] - POINTS[5]) * -p[5] / (p[6] - p[5])
    expected = f"sub-atmospheric at {x0 / 1000:.1f}-{x1 / 1000:.1f} km (lowest {p[5]:.2f} bar)"
    assert expected in res.best["notes"]


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
