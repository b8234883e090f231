"""Shared fixtures and reference solvers for the pipeopt tests."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest


def colebrook_mpmath(re: float, rr: float, digits: int = 40) -> float:
    """Root of Colebrook-White (3.7 / 2.51 form, Colebrook 1939) to ``digits`` digits.

    Solved in x = 1/sqrt(f): x = -2 log10(rr/3.7 + 2.51 x / Re), with mpmath's secant/Newton
    root finder started from the smooth-pipe Prandtl-Karman estimate. An independent reference:
    it shares no code with pipeopt.
    """
    with mp.workdps(digits):
        R = mp.mpf(re)
        k = mp.mpf(rr)
        g = lambda x: x + 2 * mp.log10(k / mp.mpf("3.7") + mp.mpf("2.51") * x / R)  # noqa: E731
        x0 = mp.mpf(-2) * mp.log10(k / mp.mpf("3.7") + mp.mpf(5.74) / R ** mp.mpf("0.9"))
        x = mp.findroot(g, x0, tol=mp.mpf(10) ** (-digits + 5))
        return float(1 / (x * x))


@pytest.fixture(scope="session")
def colebrook_grid():
    """A wide (Re, relative roughness) grid and its 40-digit Colebrook-White roots.

    Re 4e3-1e8 (41 values, log-spaced), relative roughness 0 and 1e-7-0.05 (25 values).
    """
    re = np.logspace(np.log10(4e3), 8, 41)
    rr = np.concatenate([[0.0], np.logspace(-7, np.log10(0.05), 24)])
    R, K = np.meshgrid(re, rr, indexing="ij")
    R, K = R.ravel(), K.ravel()
    f = np.array([colebrook_mpmath(a, b) for a, b in zip(R, K, strict=True)])
    return R, K, f


#: A study (invented, illustrative) whose texts try to act where they are shown: a terminal
#: escape, HTML, a Markdown code fence in its name; formulas, HTML and a control character
#: in the designations and provenance of a user's size file.
HOSTILE_NAME = ("Quarry <img src=x onerror=alert(1)> ``` \u001b[2J\u001b]0;title\u0007 "
                "(test, illustrative)")
HOSTILE_SIZES = (
    "material,designation,class,outside_diameter_mm,wall_mm,pressure_rating_bar,"
    "provenance\n"
    'pe100,"=HYPERLINK(""http://example.invalid"",""x"")",SDR 17,301,17.8,10,'
    "\"@SUM(1+1)*cmd|' /C calc'!A0\"\n"
    "pe100,<script>alert(1)</script>,SDR 17,302,17.8,10,<b>bold</b> [link](javascript:alert(1))\n"
    "pe100,DN\x01 bell,SDR 17,304,17.8,10,invented for a test\n"
    "pe100,-2+3,SDR 17,305,17.8,10,invented for a test\n"
)


def write_hostile_study(folder, control: bool = True):
    """Write the hostile study and its size file into ``folder``; the study's path.

    ``control=False`` leaves out the size whose designation holds a control character.
    """
    from pathlib import Path

    folder = Path(folder)
    sizes = HOSTILE_SIZES if control else "".join(
        line + "\n" for line in HOSTILE_SIZES.splitlines() if "\x01" not in line)
    (folder / "hostile_sizes.csv").write_text(sizes, encoding="utf-8")
    name = HOSTILE_NAME.replace("\u001b", "\\u001b").replace("\u0007", "\\u0007")
    study = folder / "hostile.toml"
    study.write_text(f'''# Test study: the invented Quarry pump line; ILLUSTRATIVE numbers only.
[study]
name = "{name}"
currency = "EUR"
illustrative = true

[catalog]
sizes = "hostile_sizes.csv"

[fluid]
kind = "water"
temperature = "15 degC"

[line]
length = "1200 m"
static_head = "15 m"
minor_loss_k = 4.0

[[duty]]
flow = "300 m^3/h"
hours = 4000

[pumping]
efficiency = 0.7

[energy]
price = 0.12

[economics]
discount_rate = 0.05
horizon = 25
pipe_life = 50

[[material]]
name = "pe100"
min_diameter = "0.2 m"
max_diameter = "0.4 m"
classes = ["SDR 17"]
cost = {{ coefficient = 1400.0, exponent = 1.4 }}
''', encoding="utf-8")
    return study


def upgrade_study_for_main(main: dict, s) -> object:
    """One main as a single-main upgrade study with one "replace" option (public from_dict).

    ``main`` holds SI values: diameter, length, static_head, roughness (now), aging, flow
    [m³/s], hours, breaks_now, break_growth, capital, new_diameter; ``s`` is the
    :class:`pipeopt.replacement.RenewalScenario` whose shared inputs the study takes.
    """
    from pipeopt import UpgradeStudy

    return UpgradeStudy.from_dict({
        "fluid": {"kind": "water", "temperature": "10 degC"},
        "existing": {"material": "cast-iron-aged", "inner_diameter": f"{main['diameter']!r} m",
                     "length": f"{main['length']!r} m",
                     "static_head": f"{main['static_head']!r} m",
                     "minor_loss_k": s.minor_loss_k, "roughness": f"{main['roughness']!r} m",
                     "aging": f"{main['aging']!r} m/yr", "breaks_per_year": main["breaks_now"],
                     "break_growth": main["break_growth"], "break_cost": s.break_cost},
        "duty": [{"flow": f"{main['flow']!r} m^3/s", "hours": main["hours"]}],
        "growth": {"flow_per_year": s.flow_growth,
                   **({} if s.design_year is None else {"design_year": s.design_year})},
        "pumping": {"efficiency": s.efficiency},
        "energy": {"price": s.tariff.price, "escalation": s.tariff.escalation,
                   "demand_charge": s.tariff.demand_charge},
        "economics": {"discount_rate": s.discount_rate, "horizon": s.horizon,
                      "pipe_life": s.life},
        "option": [{"kind": "replace", "name": "replace", "material": "ductile-iron",
                    "inner_diameter": f"{main['new_diameter']!r} m",
                    "roughness": f"{s.new_roughness!r} m", "aging": f"{s.new_aging!r} m/yr",
                    "cost_per_metre": main["capital"] / main["length"], "life": s.life,
                    "maintenance": s.maintenance}],
    })
