"""Tests of pipeopt.pressure: Barlow's formula and PN from SDR.

Sources: Barlow's formula p = 2 S E t / D_o (ASME B31.3 para. 304.1.2, thin-wall form, from
memory); PN = 20 MRS / (C (SDR - 1)) (ISO 4427-1 / EN 12201-1, from memory;
docs/references.md#pipe-dimensions).
"""

import numpy as np
import pytest

from pipeopt import catalog
from pipeopt.errors import InputError
from pipeopt.pressure import barlow_pressure, derating_factor, pn_from_sdr


@pytest.mark.reference
def test_barlow_by_hand():
    # NPS 4 Sch 40 (114.3 x 6.02 mm, ASME B36.10M), S = 137.9 MPa, E = 1, no allowances:
    # p = 2 * 137.9e6 * 6.02e-3 / 0.1143 = 145.26 bar (worked by hand)
    p = barlow_pressure(0.1143, 6.02e-3, 137.9e6, mill_tolerance=0.0)
    assert p == pytest.approx(2 * 137.9e6 * 6.02e-3 / 0.1143, rel=1e-14)


@pytest.mark.reference
def test_barlow_allowances_and_vectorized():
    p = barlow_pressure([0.1143, 0.3238], [6.02e-3, 9.53e-3], 137.9e6, joint_factor=0.85,
                        corrosion_allowance=1.5e-3, mill_tolerance=0.125)
    t = np.array([6.02e-3, 9.53e-3]) * 0.875 - 1.5e-3
    np.testing.assert_allclose(p, 2 * 137.9e6 * 0.85 * t / np.array([0.1143, 0.3238]))
    assert barlow_pressure(0.1143, 1e-3, 137.9e6, corrosion_allowance=2e-3) == 0.0


def test_barlow_errors():
    with pytest.raises(InputError, match="joint_factor"):
        barlow_pressure(0.1, 0.005, 1e8, joint_factor=1.2)
    with pytest.raises(InputError, match="less than half"):
        barlow_pressure(0.1, 0.06, 1e8)


@pytest.mark.reference
@pytest.mark.parametrize(("sdr", "pn"), [(11, 16.0), (17, 10.0), (21, 8.0), (9, 20.0)])
def test_pn_from_sdr_pe100(sdr, pn):
    # PE 100 (MRS 10 MPa), C = 1.25: SDR 11 PN 16, SDR 17 PN 10 (ISO 4427-1 / EN 12201-1,
    # docs/references.md#pipe-dimensions); 21 and 9 exact from the same formula by hand:
    # 20 * 10 / (1.25 * 20) = 8, 20 * 10 / (1.25 * 8) = 20
    assert pn_from_sdr(sdr, 10e6) / 1e5 == pytest.approx(pn, rel=1e-14)


@pytest.mark.reference
def test_pn_from_sdr_pe80():
    # PE 80 (MRS 8 MPa), C = 1.25: 20 * 8 / (1.25 * 10) = 12.8 bar for SDR 11, which the
    # standard's R10 series rounds down to PN 12.5 (ISO 4427-1, from memory); SDR 17: 8.0
    assert pn_from_sdr(11, 8e6) / 1e5 == pytest.approx(12.8, rel=1e-14)
    assert pn_from_sdr(17, 8e6) / 1e5 == pytest.approx(8.0, rel=1e-14)


def test_pn_errors():
    with pytest.raises(InputError, match="sdr must be greater than 1"):
        pn_from_sdr(1.0, 10e6)


# ISO 4427-1:2019 / EN 12201-1, Annex A, Table A.1: derating factors of PE pressure pipe for
# water, 1.00 at 20 degC, 0.87 at 30 degC, 0.74 at 40 degC (from memory), typed here
PE_TABLE_C = (20.0, 30.0, 40.0)
PE_TABLE_F = (1.00, 0.87, 0.74)


@pytest.mark.reference
def test_derating_factor_interpolates_the_iso_4427_table():
    tk = [273.15 + t for t in PE_TABLE_C]
    # at the table's points: the table; between them linear, by hand:
    # 25 degC: 1.00 + (0.87 - 1.00) * 5/10 = 0.935; 35 degC: 0.87 + (0.74 - 0.87) / 2 = 0.805;
    # 32 degC: 0.87 + (0.74 - 0.87) * 2/10 = 0.844; below 20 degC the reference rating (1.00)
    cases = {20.0: 1.00, 30.0: 0.87, 40.0: 0.74, 25.0: 0.935, 35.0: 0.805, 32.0: 0.844,
             5.0: 1.00}
    got = derating_factor([273.15 + t for t in cases], tk, PE_TABLE_F)
    np.testing.assert_allclose(got, list(cases.values()), rtol=1e-12)
    # above the table's last point the rating is not defined
    assert np.isnan(derating_factor(273.15 + 41.0, tk, PE_TABLE_F))


@pytest.mark.reference
def test_pe_service_limits_carry_the_iso_4427_table():
    # the bundled PE 100 and PE 80 derating is the published table (typed above), and the
    # allowable operating pressure of PE 100 SDR 11 (PN 16) at 30 degC is 0.87 x 16 = 13.92 bar
    for key in ("pe100", "pe80"):
        svc = catalog.default_catalog().service(key)
        np.testing.assert_allclose(svc.derating_temperature,
                                   [273.15 + t for t in PE_TABLE_C], rtol=1e-12)
        np.testing.assert_allclose(svc.derating_factor, PE_TABLE_F, rtol=1e-12)
        assert svc.max_temperature == pytest.approx(273.15 + 40.0, rel=1e-12)
    svc = catalog.default_catalog().service("pe100")
    pfa = svc.factor(303.15) * pn_from_sdr(11, 10e6)
    assert pfa / 1e5 == pytest.approx(13.92, rel=1e-12)
