"""The verification record: every published reference check passes (the same definitions the
``pipeopt verify`` command prints; each check names its source in pipeopt/verification.py, and
the source's values are recorded in docs/references.md)."""

import re
from pathlib import Path

import mpmath as mp
import pytest

from pipeopt import verification as ref
from pipeopt.cli import main
from pipeopt.verification import CHECKS, Check, half_unit, run_checks, standard_tables

from .conftest import colebrook_mpmath

ROOT = Path(__file__).resolve().parents[1]
DOC = (ROOT / "docs" / "references.md").read_text(encoding="utf-8")


def _anchors() -> set[str]:
    """GitHub-style anchors of the headings of docs/references.md."""
    heads = re.findall(r"^#{1,4} (.+)$", DOC, flags=re.M)
    return {re.sub(r"[^a-z0-9 -]", "", h.lower()).strip().replace(" ", "-") for h in heads}


@pytest.mark.reference
def test_every_reference_check_passes():
    table = run_checks()
    failed = table[~table["passed"]]
    assert failed.empty, failed[["check", "expected", "computed", "note"]].to_string()
    assert len(table) == len(CHECKS) >= 40
    assert {"friction", "water", "surge", "catalog", "economics", "renewal", "sizing"} <= set(
        table["area"])


def test_a_failing_check_is_reported_not_hidden():
    bad = [Check("test", "deliberately wrong", "none", 1.0, lambda: 2.0, 1e-9),
           Check("test", "raises", "none", 1.0, lambda: 1 / 0, 1e-9)]
    table = run_checks(bad)
    assert not table["passed"].any()
    assert "ZeroDivisionError" in table["note"].iloc[1]


def test_verify_command(capsys):
    assert main(["verify"]) == 0
    out = capsys.readouterr().out
    assert f"{len(CHECKS)} of {len(CHECKS)} reference checks passed" in out
    assert "ASME B36.10M" in out


@pytest.mark.parametrize("check", CHECKS, ids=lambda c: c.name)
def test_each_check_points_into_the_repository(check):
    # a source a reader can follow: a section of docs/references.md that exists, and a stated
    # reason for the tolerance
    anchors = re.findall(r"docs/references\.md#([a-z0-9-]+)", check.source)
    assert anchors and set(anchors) <= _anchors(), check.source
    assert check.tolerance > 0 and check.why


@pytest.mark.reference
def test_half_unit_of_printed_numbers():
    # common practice: a value printed to n decimals is good to half a unit of its last digit
    assert half_unit("0.0802426") == pytest.approx(5e-8, rel=1e-12)
    assert half_unit("889.735100") == pytest.approx(5e-7, rel=1e-12)
    assert half_unit("1.00160e-3") == pytest.approx(5e-9, rel=1e-12)


def test_references_doc_records_every_table_value():
    # docs/references.md#pipe-dimensions lists every recorded table value (the data file and the
    # document say the same thing)
    section = DOC.split("## Pipe dimensions", 1)[1].split("\n## ", 1)[0]
    for rec in standard_tables().to_dict("records"):
        line = (f"| {rec['group']} | {rec['designation']} | {rec['quantity']} | {rec['value']} "
                f"| {rec['basis']} |")
        assert line in section, rec


def test_nothing_cites_a_file_outside_the_repository():
    # citations point to docs/references.md, the contributor guide or the published source
    pattern = re.compile(r"REFERENCES(\.md)?|MODEL\.md|/work/shared")
    for path in [*ROOT.glob("pipeopt/**/*.py"), *ROOT.glob("tests/*.py"),
                 *ROOT.glob("scripts/*.py"), ROOT / "DEVELOPERS.md", ROOT / "README.md",
                 *ROOT.glob("pipeopt/**/*.csv"), *ROOT.glob("docs/*.md")]:
        text = path.read_text(encoding="utf-8")
        if path.name == "test_verification.py":
            text = text.replace(pattern.pattern, "")
        assert not pattern.search(text), path


# --- the recorded check values themselves, recomputed from their published formulas ---------

def _printed(value, text: str) -> bool:
    """True when ``value`` rounds to ``text`` (within half a unit of its last digit)."""
    return abs(float(value) - float(text)) <= half_unit(text)


@pytest.mark.reference
def test_recorded_crf_and_colebrook_values_recomputed():
    # CRF = i (1 + i)^n / ((1 + i)^n - 1) (docs/references.md#economics) at 40 digits, and the
    # Colebrook (1939) root at 40 digits (tests/conftest.py): each printed value is that number
    # rounded
    with mp.workdps(40):
        for i, n, printed in ref.CRF_VALUES:
            x = mp.mpf(i)
            assert _printed(x * (1 + x) ** n / ((1 + x) ** n - 1), printed), (i, n)
    for re_, rr, printed in ref.COLEBROOK_ROOTS:
        assert _printed(colebrook_mpmath(re_, rr), printed), (re_, rr)


@pytest.mark.reference
def test_recorded_wave_speeds_recomputed():
    # docs/references.md#surge: Korteweg's thin-wall a = sqrt(K/rho)/sqrt(1 + K D/(E e)) on the
    # mean diameter, and the Wylie & Streeter thick-wall factor c1 = 2 (e/D)(1 + nu) + D/(D + e)
    # on the inner diameter D = D_m - e (psi = 1), at 30 digits
    with mp.workdps(30):
        k, rho = mp.mpf(ref.K_WATER), mp.mpf(ref.RHO_WAVE)
        for case, d_over_e, modulus, nu, thin, thick in ref.WAVE_SPEED_CASES:
            r, e_mod, nu_ = mp.mpf(d_over_e), mp.mpf(modulus), mp.mpf(nu)
            a_thin = mp.sqrt(k / rho) / mp.sqrt(1 + k * r / e_mod)
            d_in = r - 1
            c1 = 2 / d_in * (1 + nu_) + d_in / (d_in + 1)
            a_thick = mp.sqrt(k / rho) / mp.sqrt(1 + c1 * k * d_in / e_mod)
            assert _printed(a_thin, thin), case
            assert _printed(a_thick, thick), case


@pytest.mark.reference
def test_recorded_standard_atmosphere_recomputed():
    # ISO 2533:1975 (docs/references.md#long-lines): p = p0 (1 - L z/T0)^(g M/(R L)) with
    # p0 101325 Pa, T0 288.15 K, L 0.0065 K/m, M 0.0289644 kg/mol, R 8.3144598 J/(mol K),
    # g 9.80665 m/s^2; the recorded table values are that pressure as printed
    with mp.workdps(30):
        p0, t0, lapse = mp.mpf(101325), mp.mpf("288.15"), mp.mpf("0.0065")
        expo = mp.mpf("9.80665") * mp.mpf("0.0289644") / (mp.mpf("8.3144598") * lapse)
        for z, printed in ref.STANDARD_ATMOSPHERE:
            assert _printed(p0 * (1 - lapse * z / t0) ** expo / 1000, printed), z


@pytest.mark.reference
def test_recorded_affinity_case_by_hand():
    # affinity laws (Gulich 2014, 3.4, from memory): Q n, H n^2, P n^3 at n = 0.8
    (q, h, p, n), printed = ref.AFFINITY_CASE
    for value, text in zip((q * n, h * n**2, p * n**3), printed, strict=True):
        assert _printed(value, text)


@pytest.mark.reference
def test_recorded_pvc_pressure_classes_from_the_design_rule():
    # ISO 1452-2 (from memory; docs/references.md#pipe-dimensions): PN = 10 sigma / S with
    # S = (SDR - 1)/2 the nominal pipe series (ISO 4065), sigma 10 MPa up to 90 mm and 12.5 MPa
    # above, to the nearest nominal pressure of the series 2.5, 3.2, 4, 5, 6, 8, 10, 12.5, 16,
    # 20, 25 bar
    series = (2.5, 3.2, 4.0, 5.0, 6.0, 8.0, 10.0, 12.5, 16.0, 20.0, 25.0)
    nominal_s = {41: 20.0, 33: 16.0, 26: 12.5, 21: 10.0, 17: 8.0, 13.6: 6.3}
    for band, sigma in (("up to 90 mm", 10.0), ("above 90 mm", 12.5)):
        for sdr, pn in ref.PVC_PN_BY_SDR[band].items():
            assert nominal_s[sdr] == pytest.approx((sdr - 1) / 2, rel=0.02)
            rule = 10 * sigma / nominal_s[sdr]
            assert min(series, key=lambda x, r=rule: abs(x - r)) == pn, (band, sdr)


@pytest.mark.reference
def test_hazen_williams_si_constant_against_the_us_form():
    # docs/references.md#friction: the exact conversion of the US form's 4.727 (ft, ft^3/s) is
    # 4.727 x 0.3048^(4.8704 - 3 x 1.852) = 10.674; pipeopt's 10.67 is that within the stated
    # tolerance (the roundings of 10.67 and 4.727)
    from pipeopt.friction import HAZEN_WILLIAMS_SI_K

    exact = ref.HAZEN_WILLIAMS["us_k"] * 0.3048 ** (4.8704 - 3 * 1.852)
    assert exact == pytest.approx(10.674, abs=5e-4)
    assert HAZEN_WILLIAMS_SI_K == pytest.approx(exact, rel=ref.HAZEN_WILLIAMS["us_tolerance"])
