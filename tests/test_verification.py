"""The verification record: every published reference check passes (the same definitions the
``pipeopt verify`` command prints; each check names its source in pipeopt/verification.py)."""

import pytest

from pipeopt.cli import main
from pipeopt.verification import CHECKS, Check, run_checks


def test_every_reference_check_passes():
    table = run_checks()
    failed = table[~table["passed"]]
    assert failed.empty, failed[["check", "expected", "computed", "note"]].to_string()
    assert len(table) == len(CHECKS) >= 40
    assert (table["source"].str.len() > 5).all()
    assert {"friction", "water", "catalog", "economics", "renewal", "sizing"} <= set(
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
def test_each_check_has_a_source_and_a_tolerance(check):
    assert check.source and check.tolerance > 0
