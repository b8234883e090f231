"""Tests of pipeopt.studyfile: bounded reading, standard input, byte-order mark, typed readers."""

from __future__ import annotations

import io
import sys
from pathlib import Path

import pytest

from pipeopt import studyfile
from pipeopt.studyfile import Section, StudyFileError, read_study, read_toml

DATA = Path(__file__).parent / "data"


def test_a_utf8_byte_order_mark_is_accepted(tmp_path):
    f = tmp_path / "bom.toml"
    f.write_bytes(b"\xef\xbb\xbf[study]\nname = \"x\"\n")    # what some editors write
    assert read_toml(f) == {"study": {"name": "x"}}


def test_dash_reads_standard_input(monkeypatch, tmp_path):
    text = (DATA / "marrowin_flats.toml").read_bytes()
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(text)))
    monkeypatch.chdir(tmp_path)
    mapping, base, inputs = read_study("-")
    assert mapping["study"]["name"].startswith("Marrowin")
    assert base == tmp_path and inputs == []


def test_read_study_lists_the_files_it_reads(tmp_path):
    f = tmp_path / "s.toml"
    f.write_text('[catalog]\nsizes = "my/sizes.csv"\nmaterials = "m.csv"\n')
    mapping, base, inputs = read_study(f)
    assert base == tmp_path
    assert inputs == [f, tmp_path / "my" / "sizes.csv", tmp_path / "m.csv"]


def test_a_huge_file_is_refused_unread(tmp_path, monkeypatch):
    monkeypatch.setattr(studyfile, "MAX_FILE_BYTES", 1000)
    f = tmp_path / "big.toml"
    f.write_text("# " + "x" * 2000 + "\n")
    with pytest.raises(StudyFileError, match="larger than 0 MB; a study file is a few kB"):
        read_toml(f)


@pytest.mark.parametrize(("text", "match"), [
    ("a = " + "[" * 4000 + "]" * 4000, r"line 1, key a: arrays or inline tables nested deeper "
                                       r"than 16 levels"),
    ("[t]\nb = " + "{c = " * 3000 + "1" + "}" * 3000, r"line 2, key t.b: arrays or inline"),
    ("[t]\nb = " + "[" * 17 + "]" * 17, r"t.b\[0\](\[0\]){14}: tables and arrays nested deeper"),
    ("a" + ".a" * 20 + " = 1", r"^a(\.a){16}: tables and arrays nested deeper than 16"),
    ("x = 9223372036854775808", r"^x: integers are 64-bit in TOML"),
    ("x = -9223372036854775809", r"^x: integers are 64-bit in TOML"),
    ("x = 1" + "0" * 400, r"^x: integers are 64-bit .*an integer of about 401 digits"),
    ("x = 1" + "0" * 6000, r"a number with thousands of digits"),
])
def test_nesting_and_integers_are_bounded(tmp_path, text, match):
    f = tmp_path / "s.toml"
    f.write_text(text)
    with pytest.raises(StudyFileError, match=match) as info:
        read_toml(f)
    assert len(str(info.value)) < 200


def test_the_bounds_themselves_are_accepted(tmp_path):
    f = tmp_path / "s.toml"
    f.write_text("x = 9223372036854775807\ny = -9223372036854775808\n"
                 "z = " + "[" * 15 + "1" + "]" * 15 + "\n")
    data = read_toml(f)
    assert data["x"] == 2**63 - 1 and data["y"] == -(2**63)


def test_plain_numbers_are_bounded_unless_the_key_allows_more():
    sec = Section({"a": 1e13, "b": 10**30, "c": 5e11, "d": 1e15}, "s", ("a", "b", "c", "d"))
    with pytest.raises(StudyFileError, match=r"s\.a: must be at most 1e\+12 in magnitude"):
        sec.number("a")
    with pytest.raises(StudyFileError, match=r"s\.b: must be at most 1e\+12 in magnitude"):
        sec.number("b", integer=True)
    assert sec.number("c") == 5e11
    assert sec.number("d", limit=1e16) == 1e15


def test_quantities_are_bounded():
    sec = Section({"l": "2e12 m", "n": 10**30, "q": "3 km"}, "line", ("l", "n", "q"))
    with pytest.raises(StudyFileError, match=r"line\.l: 2e12 m is beyond the accepted "
                                             r"magnitude \(1e\+12 m\)"):
        sec.quantity("l", "length")
    with pytest.raises(StudyFileError, match=r"line\.n: expected a length .* with no unit"):
        sec.quantity("n", "length")
    assert sec.quantity("q", "length") == 3000.0


def test_texts_are_bounded_and_messages_short():
    long = "x" * 5000
    sec = Section({"name": long, "kind": long, "v": long}, "study", ("name", "kind", "v"))
    with pytest.raises(StudyFileError, match=r"study\.name: at most 1000 characters; got a "
                                             r"text of 5000"):
        sec.text("name")
    for call in (lambda: sec.text("kind", choices=("water", "custom")),
                 lambda: sec.number("v")):
        with pytest.raises(StudyFileError) as info:
            call()
        assert len(str(info.value)) < 200
    with pytest.raises(StudyFileError) as info:
        Section({long: 1}, "study", ("name",))
    assert len(str(info.value)) < 200


def test_keys_with_control_characters_are_shown_escaped():
    with pytest.raises(StudyFileError, match=r"study\.'\\x1b\[2J': unknown key"):
        Section({"\x1b[2J": 1}, "study", ("name",))


def test_a_frozen_study_refuses_changes_and_replace_builds_another():
    from pipeopt.inputs import StudyInfo

    class Toy(studyfile.FrozenStudy):
        def __init__(self, size: int, *, name: str = "toy") -> None:
            self._args = {"size": size, "name": name}
            self.size = size
            self.info = StudyInfo(name, "EUR")
            self._frozen = True

    toy = Toy(3)
    with pytest.raises(AttributeError, match=r"a Toy cannot be changed after it is built "
                                             r"\(size\); use study\.replace\(size=\.\.\.\)"):
        toy.size = 4
    other = toy.replace(name="other")
    assert (other.size, other.name, other.currency, other.illustrative) == (3, "other", "EUR",
                                                                           False)
    assert toy.name == "toy"
    with pytest.raises(ValueError, match=r"replace: unknown argument 'colour'; arguments: "
                                         r"name, size"):
        toy.replace(colour="red")
