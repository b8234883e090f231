"""Checks on the project itself: the README's commands and what CI runs."""

import re
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set up", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```bash\n(.+?)\n```", setup)


def test_readme_has_exactly_two_one_line_setup_commands():
    cmds = _readme_commands()
    assert len(cmds) == 2 and all("\n" not in c for c in cmds)
    assert cmds[0].endswith("pipeopt demo")
    assert "pytest" in cmds[1]


def test_ci_runs_the_readme_test_command_exactly():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert _readme_commands()[1] in ci.splitlines()


# ------------------------------------------------------------------------------------------
# every scenario is invented: its place names are in this short list, and none is a real place
# ------------------------------------------------------------------------------------------
#: The place names of every demo, notebook, test-data and README scenario. Each is an invented
#: word (checked by hand when added; none names a real town, district or street). A scenario
#: that names a place not in this list fails the test below.
SCENARIO_NAMES = frozenset({
    "Quarnhollow", "Tarnwick Rise", "Pellinmoor Lane", "Ostrevale", "Zenthall Point",
    "Crowlark Street", "Marrowin Flats", "Tullomere", "Quillmere", "Quillmere Cross",
    "Vexholt Square", "Ombrellin Green", "Ombrellin", "Tarkwane Row", "Glimmerhythe",
    "Pindlewick Lane", "Sorvantle Quay", "Sorvantle", "Zelvadine", "Yarrowquin End",
    "Quistlemoor Row", "Quistlemoor Lane", "Oxtervale", "Oxtervale Water", "Vordhallow",
    "Quennisade", "Gorvaline Ridge", "Skellivane",
})
#: Capitalised words that name no place (standards, sizes, currencies, words of a sentence).
GENERIC = frozenset({"DN", "PE", "SDR", "EUR", "USD", "GBP", "STD", "Sch", "NPS", "C40",
                     "ILLUSTRATIVE"})
_RUN = re.compile(r"[A-Z][\w'-]*(?: [A-Z][\w'-]*)*")
_FICTIONAL = re.compile(r"(?:fictional|invented)(?: [a-z-]+){0,3}? (?:of )?"
                        r"([A-Z][\w'-]*(?: [A-Z][\w'-]*)*)")


def _places(name: str) -> set[str]:
    """The runs of capitalised words of a scenario's name (its place names)."""
    return {r for r in _RUN.findall(name) if not set(r.split()) <= GENERIC}


def _scenario_names() -> dict[str, set[str]]:
    """Place names found in every scenario, by where they were found."""
    import json
    import tomllib

    found: dict[str, set[str]] = {}

    def from_toml(where: str, data: dict) -> None:
        names = [data.get("study", {}).get("name", "")]
        for table in ("source", "node", "pipe"):
            names += [t.get(key, "") for t in data.get(table, []) for key in ("name", "from",
                                                                               "to")]
        places = set().union(*(_places(n) for n in names))
        places |= set(_FICTIONAL.findall(data.get("study", {}).get("description", "")))
        found[where] = places

    for path in [*(ROOT / "pipeopt" / "data").glob("*.toml"), *(ROOT / "tests" / "data").glob(
            "*.toml")]:
        from_toml(str(path.relative_to(ROOT)), tomllib.loads(path.read_text(encoding="utf-8")))
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    for k, block in enumerate(re.findall(r"```toml\n(.*?)\n```", readme, re.S)):
        from_toml(f"README.md toml block {k}", tomllib.loads(block))
    prose = " ".join(readme.split())
    found["README.md prose"] = set(_FICTIONAL.findall(prose)) | set(
        re.findall(r"invented [a-z ]+? of ([A-Z]\w*)", prose))
    script = (ROOT / "scripts" / "make_notebooks.py").read_text(encoding="utf-8")
    notebooks = "\n".join(json.dumps(json.loads(p.read_text(encoding="utf-8")))
                          for p in sorted((ROOT / "notebooks").glob("*.ipynb")))
    for where, text in (("scripts/make_notebooks.py", script), ("notebooks", notebooks)):
        studies = re.findall(r'\\?"study\\?": \{\\?"name\\?": \\?"([^"\\]+)', text)
        found[where] = set().union(*(_places(n) for n in studies)) | set(
            _FICTIONAL.findall(text.replace("\\n", " ")))
    for path in sorted((ROOT / "tests").glob("test_network*.py")):
        names = re.findall(r'"name": "([A-Z][^"]*)"', path.read_text(encoding="utf-8"))
        found[str(path.relative_to(ROOT))] = set().union(*(_places(n) for n in names))
    return found


def test_every_scenario_names_only_invented_places():
    found = _scenario_names()
    unknown = {where: sorted(p - SCENARIO_NAMES) for where, p in found.items()
               if p - SCENARIO_NAMES}
    assert not unknown, f"not in SCENARIO_NAMES (invent a name, add it there): {unknown}"
    # the search sees the scenarios: each demo's place, the notebooks' and the README's
    seen = set().union(*found.values())
    assert {"Quarnhollow", "Pellinmoor Lane", "Quillmere", "Ostrevale", "Zenthall Point",
            "Crowlark Street", "Marrowin Flats", "Tullomere", "Vexholt Square"} <= seen
    assert found["README.md prose"] and found["notebooks"] == found["scripts/make_notebooks.py"]


def test_a_real_sounding_place_would_fail():
    # the check is not vacuous: a place outside the list is reported
    assert _places("Unlisted Town rising main (illustrative)") - SCENARIO_NAMES == {"Unlisted Town"}
    assert _FICTIONAL.findall("the fictional town of Nowhere Ferry is fed") == ["Nowhere Ferry"]
    assert _places("replace DN 300") == set()


def test_every_mutation_of_the_mutation_check_still_applies():
    # scripts/mutation_check.py replaces a text that must occur exactly once in its file; a
    # refactor that moves the text would otherwise surface only in CI's last step
    import importlib.util

    spec = importlib.util.spec_from_file_location("mutation_check",
                                                  ROOT / "scripts" / "mutation_check.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up there
    try:
        spec.loader.exec_module(module)
    finally:
        del sys.modules[spec.name]
    assert len(module.MUTATIONS) >= 6
    for m in module.MUTATIONS:
        text = (ROOT / m.path).read_text(encoding="utf-8")
        assert text.count(m.old) == 1, (m.name, text.count(m.old))
        assert all((ROOT / t).is_file() for t in m.tests if t.startswith("tests/")), m.name
