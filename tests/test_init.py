"""The package's entry points stay light: heavy libraries load only where they are used."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

import pipeopt

# Libraries that take a large share of a second (or seconds: CoolProp's fluid library) to load.
HEAVY = ("CoolProp", "matplotlib", "pandas.plotting._matplotlib", "openpyxl", "ipywidgets",
         "tqdm")


def _modules_after(code: str) -> set[str]:
    out = subprocess.run([sys.executable, "-c", code + "\nimport sys, json\n"
                          "print(json.dumps(sorted(sys.modules)))"],
                         capture_output=True, text=True, timeout=120, check=True)
    return set(json.loads(out.stdout.strip().splitlines()[-1]))


def _loaded(modules: set[str], names) -> list[str]:
    return sorted(n for n in names if n in modules or any(m.startswith(n + ".") for m in modules))


def test_import_pipeopt_loads_no_numerical_library():
    modules = _modules_after("import pipeopt")
    assert _loaded(modules, HEAVY + ("pandas", "scipy", "numpy", "pint")) == []


def test_help_loads_no_numerical_library():
    modules = _modules_after("import pipeopt.cli\n"
                             "try:\n    pipeopt.cli.main(['--help'])\nexcept SystemExit:\n"
                             "    pass")
    assert _loaded(modules, HEAVY + ("pandas", "scipy", "numpy", "pint")) == []


def test_an_invalid_study_file_is_answered_without_pandas_or_scipy(tmp_path):
    # every section is checked before the study classes (pandas, scipy) are imported
    bad = tmp_path / "bad.toml"
    bad.write_text('[study]\nname = "x"\n[pipe]\nlength = "2 km"\n', encoding="utf-8")
    modules = _modules_after("import pipeopt.cli\n"
                             "try:\n"
                             f"    code = pipeopt.cli.main(['run', {str(bad)!r}])\n"
                             "except SystemExit as exc:\n"
                             "    code = exc.code\n"
                             "assert code == 2, code")
    assert _loaded(modules, HEAVY + ("pandas", "scipy")) == []


def test_a_study_file_missing_a_section_is_answered_before_any_unit_is_parsed(tmp_path):
    # the required sections are checked present before any value is converted: no pint
    bad = tmp_path / "no_duty.toml"
    bad.write_text('[study]\nname = "x"\n[fluid]\nkind = "water"\ntemperature = "12 degC"\n'
                   '[line]\nlength = "3.2 km"\n', encoding="utf-8")
    modules = _modules_after("import contextlib, io, pipeopt.cli\n"
                             "err = io.StringIO()\n"
                             "with contextlib.redirect_stderr(err):\n"
                             f"    code = pipeopt.cli.main(['run', {str(bad)!r}])\n"
                             "assert code == 2, code\n"
                             "assert 'duty: required' in err.getvalue(), err.getvalue()")
    assert _loaded(modules, HEAVY + ("pandas", "scipy", "pint")) == []
    # nor the long-line model (the route's sections are read after the common ones) or the
    # result-set writer (the message is made printable by pipeopt.terminal)
    assert _loaded(modules, ("pipeopt.stations", "pipeopt.lifecycle", "pipeopt.outputs")) == []


def test_units_do_not_load_dask_through_pint_and_dask_still_imports():
    pytest.importorskip("dask")
    modules = _modules_after("from pipeopt.units import to_si\n"
                             "assert to_si('3.2 km', 'length', 'line.length') == 3200.0\n"
                             "import sys\n"
                             "assert 'dask' not in sys.modules\n"
                             "import pint.compat\n"
                             "assert not pint.compat.HAS_DASK\n"
                             "import dask.array\n"
                             "assert int(dask.array.ones(4).sum().compute()) == 4")
    assert "dask" in modules and "pint" in modules


def test_a_water_study_loads_no_fluid_library_and_no_plotting():
    modules = _modules_after("from pipeopt import SizingStudy\n"
                             "assert SizingStudy.demo().run().best is not None")
    assert _loaded(modules, HEAVY) == []


def test_lazy_names_resolve_and_unknown_names_fail():
    from pipeopt.fluid import Fluid
    from pipeopt.sizing import SizingStudy

    assert pipeopt.Fluid is Fluid and pipeopt.SizingStudy is SizingStudy
    assert pipeopt.catalog.__name__ == "pipeopt.catalog"
    assert set(pipeopt.__all__) <= set(dir(pipeopt))
    with pytest.raises(AttributeError, match="no attribute 'Unobtainium'"):
        pipeopt.Unobtainium  # noqa: B018
