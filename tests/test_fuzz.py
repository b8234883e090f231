"""Fuzz: thousands of malformed study files get one message, exit status 2, no traceback and no
partial output (hypothesis generates the damage); then hostile inputs, class by class: unit
towers, deep nesting, huge integers, control characters, formula strings, HTML, path tricks.
Every hostile case is one test; each failed on the code before the robustness work (a hang, an
internal error, injected text or a lost file)."""

from __future__ import annotations

import contextlib
import copy
import datetime
import io
import os
import re
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pipeopt.cli import main
from tests.conftest import write_hostile_study

ROOT = Path(__file__).resolve().parents[1]
SIZING = tomllib.loads((ROOT / "pipeopt" / "data" / "demo_sizing.toml").read_text())
UPGRADE = tomllib.loads((ROOT / "pipeopt" / "data" / "demo_upgrade.toml").read_text())

JUNK = st.one_of(st.integers(-10**6, 10**6), st.floats(allow_nan=False, allow_infinity=False),
                 st.booleans(), st.text(max_size=12), st.lists(st.integers(), max_size=3))
BAD_QUANTITY = st.one_of(st.sampled_from(["3 kg", "12", "-4 m", "fast", "1e999 m", "3 m/s",
                                          "2 bar", "0 m^3/h", "nan m", "5 degC", ""]),
                         st.integers(), st.floats(allow_nan=False))


def _paths(d: dict, prefix: tuple = ()) -> list[tuple]:
    out = []
    for k, v in d.items():
        out.append(prefix + (k,))
        if isinstance(v, dict):
            out += _paths(v, prefix + (k,))
        elif isinstance(v, list):
            for i, item in enumerate(v):
                if isinstance(item, dict):
                    out += _paths(item, prefix + (k, i))
    return out


def _set(d, path, value):
    for key in path[:-1]:
        d = d[key]
    d[path[-1]] = value


def _delete(d, path):
    for key in path[:-1]:
        d = d[key]
    del d[path[-1]]


def _string(value: str) -> str:
    """A TOML basic string (TOML v1.0.0, "String"): control characters as \\uXXXX escapes."""
    out = value.replace("\\", "\\\\").replace('"', '\\"')
    return '"' + re.sub(r"[\x00-\x1f\x7f]", lambda m: f"\\u{ord(m.group()):04x}", out) + '"'


def _toml(value) -> str:
    if isinstance(value, datetime.date):   # a TOML local date (TOML v1.0.0, "Local Date")
        return value.isoformat()
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return _string(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return "{ " + ", ".join(f"{_string(k)} = {_toml(v)}" for k, v in value.items()) + " }"


def dump(d: dict) -> str:
    """A small TOML writer (inline tables) good enough for these mappings."""
    lines = []
    for key, value in d.items():
        if isinstance(value, dict):
            lines.append(f"[{_string(key)}]")
            lines += [f"{_string(k)} = {_toml(v)}" for k, v in value.items()]
        elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            for item in value:
                lines.append(f"[[{_string(key)}]]")
                lines += [f"{_string(k)} = {_toml(v)}" for k, v in item.items()]
        else:
            lines.append(f"{_string(key)} = {_toml(value)}")
    return "\n".join(lines) + "\n"


#: At least 2,000 malformed files (the robustness issue); an environment variable may raise it.
FUZZ_EXAMPLES = int(os.environ.get("PIPEOPT_FUZZ_EXAMPLES", "2000"))

MUTATIONS = ("delete_required", "junk_value", "bad_quantity", "unknown_key", "bad_kind",
             "syntax", "bytes", "huge_number", "deep_nesting", "control_key")
REQUIRED_SIZING = [("fluid",), ("line",), ("line", "length"), ("duty",), ("pumping",),
                   ("energy",), ("economics",), ("material",), ("economics", "horizon"),
                   ("pumping", "efficiency"), ("energy", "price")]
QUANTITY_KEYS = [("line", "length"), ("line", "static_head"), ("fluid", "temperature"),
                 ("constraints", "velocity_max"), ("constraints", "velocity_min")]
NUMBER_KEYS = [("pumping", "efficiency"), ("energy", "price"), ("economics", "horizon"),
               ("economics", "discount_rate"), ("economics", "pipe_life")]


@st.composite
def broken_study(draw):
    kind = draw(st.sampled_from(["run", "upgrade"]))
    base = copy.deepcopy(SIZING if kind == "run" else UPGRADE)
    how = draw(st.sampled_from(MUTATIONS))
    if how == "bytes":
        return kind, draw(st.binary(min_size=1, max_size=200))
    if how == "syntax":  # a line that is never valid TOML, inserted between two lines
        lines = dump(base).splitlines()
        at = draw(st.integers(0, len(lines)))
        bad = draw(st.sampled_from(["[[broken", "key = = 1", '"open = "', "= 3",
                                    "[study]", "x = [1, 2"]))
        lines.insert(at, bad)
        return kind, ("\n".join(lines) + "\n").encode("utf-8")
    if how == "delete_required":
        paths = REQUIRED_SIZING if kind == "run" else [("existing",), ("option",), ("fluid",),
                                                       ("existing", "length"), ("duty",)]
        _delete(base, draw(st.sampled_from(paths)))
    elif how == "junk_value":
        keys = NUMBER_KEYS if kind == "run" else [("pumping", "efficiency"),
                                                  ("energy", "price"),
                                                  ("economics", "horizon")]
        value = draw(st.one_of(st.text(min_size=1, max_size=8), st.booleans(),
                               st.lists(st.integers(), max_size=2),
                               st.sampled_from([-1.0, 1e9, -1e9])))
        _set(base, draw(st.sampled_from(keys)), value)
    elif how == "bad_quantity":
        keys = QUANTITY_KEYS if kind == "run" else [("existing", "length"),
                                                   ("existing", "inner_diameter"),
                                                   ("fluid", "temperature")]
        path = draw(st.sampled_from(keys))
        if path[0] == "constraints" and "constraints" not in base:
            base["constraints"] = {}
        _set(base, path, draw(st.sampled_from(["3 kg", "12", "fast", "1e999 m", "2 bar",
                                               "0 m^3/h", "nan m", "", "-3 s"])))
    elif how == "unknown_key":
        path = draw(st.sampled_from([p for p in _paths(base) if isinstance(p[-1], str)]))
        parent = base
        for key in path[:-1]:
            parent = parent[key]
        if isinstance(parent, dict):
            parent[draw(st.sampled_from(["lenght", "efficency", "pricee", "zz", "Name"]))] = \
                draw(JUNK)
    elif how == "huge_number":  # beyond 64-bit integers, or beyond the bound of a plain number
        keys = NUMBER_KEYS if kind == "run" else [("energy", "price"), ("economics", "horizon")]
        value = draw(st.one_of(st.integers(2**63, 10**400), st.integers(-(10**400), -(2**63)),
                               st.floats(1e13, 1e308), st.integers(10**13, 2**63 - 1)))
        _set(base, draw(st.sampled_from(keys)), value)
    elif how == "deep_nesting":  # arrays or inline tables deeper than the bound, at any key
        depth = draw(st.integers(17, 3000))
        opener, closer = draw(st.sampled_from([("[", "]"), ("{a = ", "}")]))
        lines = dump(base).splitlines()
        at = draw(st.integers(0, len(lines)))
        lines.insert(at, f"deep = {opener * depth}1{closer * depth}")
        return kind, ("\n".join(lines) + "\n").encode("utf-8")
    elif how == "control_key":  # a key carrying terminal escapes; its message must not
        section = draw(st.sampled_from(["study", "line" if kind == "run" else "existing"]))
        key = draw(st.sampled_from(["\x1b[2J", "a\x1b]0;t\x07b", "\x9b1m", "x\x08\x08y"]))
        base.setdefault(section, {})[key] = draw(JUNK)
    elif how == "bad_kind":
        if kind == "run":
            base["fluid"]["kind"] = draw(st.sampled_from(["wine", "", "WATER", "gas"]))
        else:
            base["option"][0]["kind"] = draw(st.sampled_from(["keep", "repalce", "", "x"]))
    return kind, dump(base).encode("utf-8", "surrogatepass")


@settings(max_examples=FUZZ_EXAMPLES, deadline=None, suppress_health_check=list(HealthCheck),
          derandomize=True)
@given(case=broken_study())
def test_malformed_study_files_fail_cleanly(case, tmp_path_factory):
    kind, content = case
    folder = tmp_path_factory.mktemp("fuzz")
    study = folder / "study.toml"
    study.write_bytes(content)
    out = folder / "out"
    err = io.StringIO()
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
        code = main([kind, str(study), "--out", str(out)])
    message = err.getvalue()
    assert code == 2, (code, message, content[:300])
    assert "Traceback" not in message and message.startswith("pipeopt: error: ")
    assert len(message.strip().splitlines()) == 1
    assert not re.search(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]", message)   # no terminal controls
    assert not out.exists() or not any(out.iterdir())     # no partial outputs
    assert study.read_bytes() == content                   # the study file is untouched


# ------------------------------------------------------------------------------------------
# hostile inputs, class by class (each case failed before: hang, exit 3, injection, lost file)
# ------------------------------------------------------------------------------------------
def _cli(*args: str, stdin: bytes | None = None, timeout: float = 90,
         cwd: Path | None = None) -> subprocess.CompletedProcess:
    """The command in a fresh process, with a deadline (a regression may hang or eat memory)."""
    return subprocess.run([sys.executable, "-m", "pipeopt.cli", *args], input=stdin,
                          capture_output=True, timeout=timeout, cwd=cwd)


def _main(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


def _study(folder: Path, change=None, name: str = "study.toml") -> Path:
    data = copy.deepcopy(SIZING)
    if change:
        change(data)
    path = folder / name
    path.write_text(dump(data), encoding="utf-8")
    return path


def _one_error(err: str, *words: str) -> None:
    assert err.startswith("pipeopt: error: ") and len(err.strip().splitlines()) == 1, err
    assert "Traceback" not in err and "internal error" not in err
    for w in words:
        assert w in err, (w, err)


# unit towers: pint would compute 2**2**2**... as an exact integer (minutes, gigabytes)
TOWER = "1 m**2**2**2**2**2**2"


def test_unit_tower_in_a_study_file(tmp_path):
    study = _study(tmp_path, lambda d: d["line"].update(length=TOWER))
    t0 = time.monotonic()
    proc = _cli("run", str(study))
    assert proc.returncode == 2, proc.stderr
    _one_error(proc.stderr.decode(), "line.length", "exponent")
    assert time.monotonic() - t0 < 60


def test_unit_tower_in_a_csv_cell(tmp_path):
    (tmp_path / "sizes.csv").write_text(
        f"material,designation,class,outside_diameter,wall_mm\n"
        f"pe100,X 1,SDR 17,{TOWER},10\n", encoding="utf-8")
    study = _study(tmp_path, lambda d: d.update(catalog={"sizes": "sizes.csv"}))
    proc = _cli("run", str(study))
    assert proc.returncode == 2, proc.stderr
    _one_error(proc.stderr.decode(), "row 1, column outside_diameter")


def test_unit_tower_in_min_diameter():
    proc = _cli("catalog", "pe100", "--min-diameter", TOWER)
    assert proc.returncode == 2, proc.stderr
    _one_error(proc.stderr.decode(), "--min-diameter", "exponent")


@pytest.mark.parametrize("text", ["2 km/0", "1 m/(0)"])
def test_unit_junk_is_refused_by_rule(tmp_path, text):
    study = _study(tmp_path, lambda d: d["line"].update(length=text))
    code, _, err = _main("run", str(study))
    assert code == 2
    _one_error(err, "line.length")


# deep nesting: the TOML reader recurses once per level
@pytest.mark.parametrize("opener,closer", [("[", "]"), ("{a = ", "}")])
def test_deep_nesting(tmp_path, opener, closer):
    f = tmp_path / "study.toml"
    f.write_text(dump(SIZING).replace('"length" = "4.6 km"',
                                      f'"length" = {opener * 5000}1{closer * 5000}'),
                 encoding="utf-8")
    code, _, err = _main("run", str(f))
    assert code == 2
    _one_error(err, "line 1", "nested deeper than 16 levels")
    assert "line.length" in err or '"line"."length"' in err


# huge integers and magnitudes
@pytest.mark.parametrize(("path", "value", "words"), [
    (("economics", "horizon"), 10**400, ("economics.horizon", "64-bit")),
    (("economics", "horizon"), "1" * 5000, ("thousands of digits",)),
    (("material", 0, "cost", "price_per_kg"), 1e308, ("material[0].cost.price_per_kg",
                                                     "must be <= 100000")),
    (("energy", "demand_charge"), 1e308, ("energy.demand_charge", "must be <= 100000")),
])
def test_huge_numbers(tmp_path, path, value, words):
    f = tmp_path / "study.toml"
    text = dump(SIZING)
    if isinstance(value, str):  # longer than Python converts: written into the text itself
        text = text.replace('"horizon" = 40', f'"horizon" = {value}')
    else:
        data = copy.deepcopy(SIZING)
        _set(data, path, value)
        text = dump(data)
    f.write_text(text, encoding="utf-8")
    code, out, err = _main("run", str(f))
    assert code == 2 and "EAC" not in out
    _one_error(err, *words)


# control characters
def test_terminal_escapes_in_a_study_never_reach_the_terminal(tmp_path):
    study = write_hostile_study(tmp_path)
    code, out, err = _main("run", str(study))
    assert code == 0, err
    assert "Quarry" in out and "(test, illustrative)" in out
    assert not re.search(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]", out + err)


def test_control_characters_in_an_error_message(tmp_path):
    study = _study(tmp_path, lambda d: d["line"].update({"\x1b[2J\x1b]0;title\x07": 1}))
    code, _, err = _main("run", str(study))
    assert code == 2
    _one_error(err, "[2J", "unknown key")
    assert "\x1b" not in err and "\x07" not in err


def test_a_control_character_in_a_designation_does_not_break_the_workbook(tmp_path):
    import warnings

    study = write_hostile_study(tmp_path)
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", "Glyph", UserWarning)  # matplotlib: no glyph for it
        code, out, err = _main("run", str(study), "--out", str(tmp_path / "out"))
    assert code == 0, err
    import openpyxl

    book = openpyxl.load_workbook(tmp_path / "out" / "workbook.xlsx")
    assert "DN bell" in {c.value for row in book["candidates"].iter_rows() for c in row}


# formula strings and HTML (a user's size file; the study's name)
@pytest.fixture(scope="module")
def hostile_out(tmp_path_factory):
    import warnings

    folder = tmp_path_factory.mktemp("hostile")
    study = write_hostile_study(folder, control=False)
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", "Glyph", UserWarning)
        code, _, err = _main("run", str(study), "--out", str(folder / "out"))
    assert code == 0, err
    return folder / "out"


def test_formula_strings_are_inert_in_csv(hostile_out):
    text = (hostile_out / "candidates.csv").read_text(encoding="utf-8")
    assert '"\'=HYPERLINK(' in text and "\n'-2+3," not in text
    assert not re.search(r'(^|,)"?[=@+\t\r]', text, flags=re.MULTILINE)


def test_formula_strings_are_text_in_the_workbook(hostile_out):
    import openpyxl

    book = openpyxl.load_workbook(hostile_out / "workbook.xlsx")
    cells = [c for row in book["candidates"].iter_rows() for c in row
             if isinstance(c.value, str) and c.value.startswith("=")]
    assert cells and {c.data_type for c in cells} == {"s"}


def test_html_in_names_is_escaped_in_both_reports(hostile_out):
    md = (hostile_out / "report.md").read_text(encoding="utf-8")
    page = (hostile_out / "report.html").read_text(encoding="utf-8")
    assert "<script>" not in page and "<img src=x" not in page
    assert md.splitlines()[0].startswith("# pipeopt sizing study: Quarry &lt;img")
    assert "<b>bold" not in md


# path tricks
def test_the_study_file_is_never_an_output(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    study = _study(out, name="report.md")
    before = study.read_bytes()
    code, stdout, err = _main("run", str(study), "--out", str(out), "--force")
    assert code == 2 and "Best:" not in stdout               # refused before computing
    _one_error(err, "'report.md' would replace the input")
    assert study.read_bytes() == before


def test_a_link_to_the_study_is_never_an_output(tmp_path):
    study = _study(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    (out / "candidates.csv").symlink_to(study)
    code, stdout, err = _main("run", str(study), "--out", str(out), "--force")
    assert code == 2 and "Best:" not in stdout
    _one_error(err, "'candidates.csv' would replace the input")


def test_a_catalog_file_is_never_an_output(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "inputs.csv").write_text("designation,outside_diameter_mm,wall_mm\n",
                                    encoding="utf-8")
    study = _study(tmp_path, lambda d: d.update(catalog={"sizes": "out/inputs.csv"}))
    code, stdout, err = _main("run", str(study), "--out", str(out), "--force")
    assert code == 2 and "Best:" not in stdout
    _one_error(err, "'inputs.csv' would replace the input")


@pytest.mark.skipif(not Path("/proc/self/environ").is_file(), reason="no /proc/self/environ")
def test_an_error_never_echoes_another_file(tmp_path):
    first_line = Path("/proc/self/environ").read_bytes().split(b"\x00")[0].decode(errors="replace")
    study = _study(tmp_path, lambda d: d.update(catalog={"sizes": "/proc/self/environ"}))
    code, _, err = _main("run", str(study))
    assert code == 2
    _one_error(err, "/proc/self/environ")
    value = first_line.partition("=")[2]
    assert first_line not in err and (len(value) < 4 or value not in err)


def test_a_broken_link_as_out_is_refused_before_computing(tmp_path):
    link = tmp_path / "results"
    link.symlink_to(tmp_path / "gone" / "results")
    code, stdout, err = _main("run", str(_study(tmp_path)), "--out", str(link))
    assert code == 2 and "Best:" not in stdout
    _one_error(err, "--out", "does not exist")


def test_an_empty_csv_is_an_input_error(tmp_path):
    (tmp_path / "sizes.csv").write_bytes(b"")
    study = _study(tmp_path, lambda d: d.update(catalog={"sizes": "sizes.csv"}))
    code, _, err = _main("run", str(study))
    assert code == 2
    _one_error(err, "sizes.csv", "is empty")


def test_no_size_in_the_diameter_range():
    code, _, err = _main("catalog", "pe100", "--min-diameter", "5 m")
    assert code == 2
    _one_error(err, "--min-diameter '5 m'", "no size of pe100")


def test_init_on_a_folder(tmp_path):
    code, _, err = _main("init", str(tmp_path), "--force")
    assert code == 2
    _one_error(err, "is a folder")
    assert not list(tmp_path.iterdir())
