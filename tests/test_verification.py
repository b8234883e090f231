"""The verification record: every published reference check passes (the same definitions the
``pipeopt verify`` command prints; each check names its source in pipeopt/verification.py, and
the source's values are recorded in docs/references.md)."""

import re
from pathlib import Path

import pytest

from pipeopt.cli import main
from pipeopt.verification import CHECKS, Check, half_unit, run_checks, standard_tables

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


def test_half_unit_of_printed_numbers():
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
