"""Each plotting function runs on the demo results and draws the expected artists with units."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import pytest  # noqa: E402

from pipeopt import SizingStudy, UpgradeStudy, plots  # noqa: E402
from pipeopt.uncertainty import Triangular, Uniform  # noqa: E402


@pytest.fixture(scope="module")
def demo():
    study = SizingStudy.demo()
    result = study.run()
    mc = study.monte_carlo({"energy_price": Triangular(0.1, 0.14, 0.22),
                            "discount_rate": Uniform(0.03, 0.08)}, n=300, seed=1)
    return study, result, mc


def _has_unit(label: str) -> bool:
    return "[" in label and "]" in label


def test_cost_curves(demo):
    _, result, _ = demo
    ax = plots.cost_curves(result)
    assert _has_unit(ax.get_xlabel()) and "EUR/yr" in ax.get_ylabel()
    labels = [line.get_label() for line in ax.get_lines()]
    assert any("total EAC" in x for x in labels) and any("chosen" in x for x in labels)
    assert any("infeasible" in x for x in labels)
    plt.close(ax.figure)


def test_breakdown_velocity_friction(demo):
    _, result, _ = demo
    ax = plots.cost_breakdown(result)
    assert len(ax.patches) >= 5 and "EUR" in ax.get_ylabel()
    plt.close(ax.figure)
    ax = plots.velocity_head(result)
    assert ax.get_ylabel() == "velocity [m/s]" and _has_unit(ax.get_xlabel())
    assert any(line.get_linestyle() == "--" for line in ax.get_lines())  # the limits
    plt.close(ax.figure)
    ax = plots.friction_chart(result)
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert _has_unit(ax.get_xlabel()) and _has_unit(ax.get_ylabel())
    assert len(ax.get_lines()) >= 9
    plt.close(ax.figure)


def test_uncertainty_figures(demo):
    study, _, mc = demo
    ax = plots.tornado_chart(study.tornado({"energy_price": (0.1, 0.2),
                                            "discount_rate": (0.03, 0.07)}))
    assert len(ax.patches) == 4 and "EUR/yr" in ax.get_xlabel()
    plt.close(ax.figure)
    ax = plots.probability_cheapest(mc)
    assert ax.get_ylim() == (0, 1) and _has_unit(ax.get_ylabel())
    plt.close(ax.figure)
    ax = plots.eac_distributions(mc)
    assert len(ax.patches) >= 1 and "EUR/yr" in ax.get_xlabel()
    plt.close(ax.figure)


def test_cumulative_cash_flow():
    res = UpgradeStudy.demo().run()
    ax = plots.cumulative_cash_flow(res)
    assert len(ax.get_lines()) >= 3 and "EUR" in ax.get_ylabel()
    assert ax.get_xlabel() == "study year [yr]"
    assert any("discounted payback" in t.get_text() for t in ax.texts)
    plt.close(ax.figure)


def test_figure_png_matches_matplotlibs_own_drawing(demo):
    # The text-bitmap cache must not change the picture: compared with matplotlib's own Agg
    # drawing of the same figure at the same margins, lines and markers are identical and each
    # text has the same ink, placed to within a pixel.
    import io

    import numpy as np
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.text import Text
    from PIL import Image

    _, result, _ = demo
    ax = plots.cost_curves(result)
    fig = ax.figure
    png = plots.figure_png(fig, dpi=100)
    again = plots.figure_png(fig, dpi=100)  # every text now comes from the cache
    assert png == again and png[:8] == b"\x89PNG\r\n\x1a\n"
    ours = np.asarray(Image.open(io.BytesIO(png)).convert("L"), dtype=float)
    FigureCanvasAgg(fig).draw()
    theirs = np.asarray(Image.fromarray(np.asarray(fig.canvas.buffer_rgba())).convert("L"),
                        dtype=float)
    assert ours.shape == theirs.shape
    renderer = fig.canvas.get_renderer()
    height = ours.shape[0]
    texts = [t for t in fig.findobj(Text) if t.get_visible() and t.get_text()]
    mask = np.zeros(ours.shape, dtype=bool)
    for text in texts:
        box = text.get_window_extent(renderer)
        rows = slice(max(0, int(height - box.y1) - 2), int(height - box.y0) + 3)
        cols = slice(max(0, int(box.x0) - 2), int(box.x1) + 3)
        mask[rows, cols] = True
        ink_ours, ink_theirs = (255 - ours[rows, cols]).sum(), (255 - theirs[rows, cols]).sum()
        assert ink_ours == pytest.approx(ink_theirs, rel=0.12), text.get_text()
    assert len(texts) > 20
    np.testing.assert_array_equal(ours[~mask], theirs[~mask])
    plt.close(fig)


def test_figure_png_widens_margins_for_what_falls_outside():
    fig, ax = plt.subplots(figsize=(4, 3))
    ax.plot([0, 1], [0, 1e9])
    ax.set_ylabel("a long label [unit]\nover two lines, pushed far left")
    ax.yaxis.labelpad = 60
    plots.figure_png(fig, everything=True)
    renderer = fig.canvas.get_renderer()
    assert fig.get_tightbbox(renderer).x0 >= 0  # inches: nothing left of the figure
    assert ax.yaxis.label.get_window_extent(renderer).x0 >= 0
    plt.close(fig)


def test_log_tick_labels_are_plain_text():
    # Common practice for log axes: decades as powers of ten; within a short view, the
    # multiples 2, 3 and 5 as plain numbers. No math text (no "$" in any label).
    fig, (wide, short) = plt.subplots(1, 2)
    for ax, (low, high) in ((wide, (1e3, 1e8)), (short, (0.3, 2.5))):
        ax.plot([low, high], [low, high])
        ax.set_xscale("log")
        ax.set_yscale("log")
        plots._log_labels(ax.xaxis, ax.yaxis)
        ax.set_xlim(low, high)
    plots.figure_png(fig)
    wide_labels = [t.get_text() for t in wide.xaxis.get_majorticklabels() if t.get_text()]
    assert "10⁴" in wide_labels and "10⁸" in wide_labels
    short_labels = [t.get_text() for t in short.xaxis.get_ticklabels(which="both")
                    if t.get_text()]
    assert {"0.3", "0.5", "1", "2"} <= set(short_labels)
    assert not any("$" in t for t in wide_labels + short_labels)
    plt.close(fig)


def test_profile_of_a_long_line():
    result = SizingStudy.demo("longline").run()
    ax = plots.profile(result)
    assert _has_unit(ax.get_xlabel()) and _has_unit(ax.get_ylabel())
    labels = [line.get_label() for line in ax.get_lines()]
    for word in ("pipe axis", "highest grade line", "lowest grade line", "PFA", "least head",
                 "stations"):
        assert any(word in x for x in labels), word
    legend = ax.get_legend()
    assert legend is not None and legend.get_bbox_to_anchor().x0 > ax.bbox.x1 - 1  # off data
    plt.close(ax.figure)
    tables, fig = plots.profile_section(result)
    assert set(tables) == {"Grade line along the line", "Stations",
                           "Best design with each number of boosters"}
    assert list(tables["Best design with each number of boosters"]["boosters"]) == [0, 1, 2]
    plt.close(fig)
    with pytest.raises(ValueError, match="long line"):
        plots.profile(SizingStudy.demo().run())


# ------------------------------------------------------------------------------------------
# figures a reviewer can read: parts that add up, whole titles, legends off the data
# ------------------------------------------------------------------------------------------
def test_cost_curve_parts_add_up_to_the_total_at_every_diameter(demo):
    import numpy as np

    _, result, _ = demo
    ax = plots.cost_curves(result)
    lines = {line.get_gid(): line for line in ax.get_lines() if line.get_gid()}
    b = result.best
    total = lines[f"total:{b['material']}:{b['class']}"]
    parts = [line for gid, line in lines.items() if gid.startswith("part:")]
    drawn = {gid.split(":", 1)[1] for gid in lines if gid.startswith("part:")}
    # the demo has capital, energy, maintenance, station renewals and a residual credit
    assert {"eac_capital", "eac_energy", "eac_maintenance", "eac_renewal",
            "eac_residual"} <= drawn
    x = np.asarray(total.get_xdata(), dtype=float)
    for line in parts:
        np.testing.assert_array_equal(np.asarray(line.get_xdata(), dtype=float), x)
    summed = np.sum([np.asarray(line.get_ydata(), dtype=float) for line in parts], axis=0)
    np.testing.assert_allclose(summed, np.asarray(total.get_ydata(), dtype=float), rtol=1e-12)
    # the total drawn is the table's EAC of every size of that class (nothing left out)
    rows = result.candidates[(result.candidates["material"] == b["material"])
                             & (result.candidates["class"] == b["class"])]
    assert len(x) == len(rows)
    np.testing.assert_allclose(np.sort(np.asarray(total.get_ydata(), dtype=float)),
                               np.sort(rows["eac"].to_numpy()), rtol=1e-15)
    assert min(np.asarray(lines["part:eac_residual"].get_ydata())) < 0  # a credit, drawn below
    assert ax.get_ylim()[0] < 0
    plt.close(ax.figure)


def _every_figure(demo):
    study, result, mc = demo
    up = UpgradeStudy.demo()
    return [plots.cost_curves(result), plots.cost_breakdown(result),
            plots.velocity_head(result), plots.friction_chart(result),
            plots.tornado_chart(study.tornado()), plots.tornado_chart(up.tornado()),
            plots.probability_cheapest(mc), plots.eac_distributions(mc),
            plots.cumulative_cash_flow(up.run())]


def test_titles_are_whole_and_legends_off_the_data(demo):
    from matplotlib.text import Text

    for ax in _every_figure(demo):
        fig = ax.figure
        plots.figure_png(fig, dpi=110, everything=True)        # as the report draws it
        renderer = fig.canvas.get_renderer()
        width, height = fig.canvas.get_width_height(physical=True)
        titles = [t for t in ax.get_children() if isinstance(t, Text)
                  and t.get_gid() == plots.TITLE_GID]
        assert len(titles) == 1, ax.get_title(loc="left")
        box = titles[0].get_window_extent(renderer)
        assert 0 <= box.x0 and box.x1 <= width and 0 <= box.y0 and box.y1 <= height, \
            (titles[0].get_text(), box, width)
        legend = ax.get_legend()
        if legend is not None:
            lbox = legend.get_window_extent(renderer)
            inside = ax.get_window_extent(renderer)
            # the legend lies outside the axes, whole within the figure
            assert not lbox.overlaps(inside), titles[0].get_text()
            assert 0 <= lbox.x0 and lbox.x1 <= width and 0 <= lbox.y0 and lbox.y1 <= height
            assert not lbox.overlaps(ax.xaxis.label.get_window_extent(renderer))
        plt.close(fig)


def test_a_title_too_long_for_its_figure_moves_left_then_wraps():
    from matplotlib.text import Text

    fig, ax = plt.subplots(figsize=(3.0, 2.5))
    ax.plot([0, 1], [0, 1])
    ax.set_yticks([0, 1], ["a very long tick label", "another long one"])
    plots._style(ax, "A title far longer than the narrow figure it belongs to can hold")
    plots.figure_png(fig, dpi=100, everything=True)
    renderer = fig.canvas.get_renderer()
    width = fig.canvas.get_width_height(physical=True)[0]
    title = [t for t in ax.get_children() if isinstance(t, Text)
             and t.get_gid() == plots.TITLE_GID][0]
    box = title.get_window_extent(renderer)
    assert box.x0 >= 0 and box.x1 <= width and "\n" in title.get_text()
    assert " ".join(title.get_text().split()) == ("A title far longer than the narrow figure "
                                                 "it belongs to can hold")
    plt.close(fig)


# ------------------------------------------------------------------------------------------
# what the axes show, against hand computations
# ------------------------------------------------------------------------------------------
@pytest.mark.reference
def test_friction_chart_curves_are_colebrook_roots_and_the_laminar_law():
    import numpy as np

    from .conftest import colebrook_mpmath

    ax = plots.friction_chart()
    curves = {line.get_label(): line for line in ax.get_lines()}
    lam = curves["laminar, 64/Re"]
    x, y = (np.asarray(a, dtype=float) for a in lam.get_data())
    np.testing.assert_allclose(y, 64 / x, rtol=1e-15)       # Hagen-Poiseuille, f = 64/Re
    for rr in (0.0, 1e-5, 1e-4, 1e-3, 5e-3, 0.02, 0.05):
        x, y = (np.asarray(a, dtype=float) for a in curves[f"ε/D = {rr:g}"].get_data())
        assert x[0] == pytest.approx(2000.0) and x[-1] == pytest.approx(1e8)
        for i in range(0, len(x), 37):                      # Colebrook (1939), mpmath roots
            assert y[i] == pytest.approx(colebrook_mpmath(x[i], rr), rel=1e-13), (rr, x[i])
    plt.close(ax.figure)


@pytest.mark.reference
def test_velocity_axis_values_are_the_flow_over_the_bore_area(demo):
    import numpy as np

    _, result, _ = demo
    ax = plots.velocity_head(result)
    lines = {line.get_label(): line for line in ax.get_lines()}
    # the demo's largest duty is 520 m^3/h (pipeopt/data/demo_sizing.toml); its flow grows by
    # 1.2 %/yr to year 40: V = Q / (pi D^2 / 4), D from the x axis in mm, by hand
    for label, q in (("velocity, largest duty, year 1", 520 / 3600),
                     ("velocity, largest flow of any year", 520 / 3600 * 1.012 ** 39)):
        x, y = (np.asarray(a, dtype=float) for a in lines[label].get_data())
        assert len(x) == len(result.candidates)
        d = x / 1000
        np.testing.assert_allclose(y, q / (np.pi * d * d / 4), rtol=1e-12)
    plt.close(ax.figure)


@pytest.mark.reference
def test_cost_curve_capital_part_is_the_annuity_of_the_capital(demo):
    import numpy as np

    _, result, _ = demo
    ax = plots.cost_curves(result)
    lines = {line.get_gid(): line for line in ax.get_lines() if line.get_gid()}
    b = result.best
    rows = result.candidates[(result.candidates["material"] == b["material"])
                             & (result.candidates["class"] == b["class"])]
    rows = rows.sort_values("inner_diameter_m")
    # the capital recovery factor at the demo's 5 % over 40 years, r (1+r)^n / ((1+r)^n - 1)
    # (compound-interest tables; common practice), on the capital spent in year 0
    r, n = 0.05, 40
    crf = r * (1 + r) ** n / ((1 + r) ** n - 1)
    capital = lines["part:eac_capital"]
    x, y = (np.asarray(a, dtype=float) for a in capital.get_data())
    order = np.argsort(x)
    want = (rows["capex_pipe"] + rows["capex_pump_station"]).to_numpy() * crf
    np.testing.assert_allclose(y[order], want, rtol=1e-12)
    total = lines[f"total:{b['material']}:{b['class']}"]
    yt = np.asarray(total.get_ydata(), dtype=float)[np.argsort(total.get_xdata())]
    np.testing.assert_allclose(yt, rows["pv_total"].to_numpy() * crf, rtol=1e-12)
    plt.close(ax.figure)


@pytest.mark.reference
def test_cumulative_cash_flow_is_the_discounted_sum_by_hand():
    import numpy as np

    res = UpgradeStudy.demo().run()
    rate = res.study.economics.discount_rate
    cf = res.cash_flows
    ax = plots.cumulative_cash_flow(res)
    lines = {line.get_label(): line for line in ax.get_lines()}
    keep = cf[cf["option"] == "keep"].set_index("year")["total"]
    options = [o for o in cf["option"].unique() if o != "keep"]
    assert options
    paid_back = 0
    for opt in options:
        mine = cf[cf["option"] == opt].set_index("year")["total"]
        # the saving of each year discounted by (1 + i)^-t and summed, written out here
        cum, running = {}, 0.0
        for year in sorted(keep.index):
            running += (keep[year] - mine[year]) / (1 + rate) ** year
            cum[year] = running
        x, y = (np.asarray(a, dtype=float) for a in lines[opt].get_data())
        np.testing.assert_allclose(x, sorted(cum))
        np.testing.assert_allclose(y, [cum[t] for t in sorted(cum)], rtol=1e-9,
                                   atol=1e-6 * max(abs(v) for v in cum.values()))
        # the discounted payback year by exhaustive search: the first year from which the
        # cumulative saving never falls below zero again
        years = sorted(cum)
        never = [t for t in years if all(cum[u] >= 0 for u in years if u >= t)]
        pb = res.summary.set_index("option").loc[opt, "discounted_payback_year"]
        if never:
            assert int(pb) == never[0], opt
            paid_back += 1
        else:
            assert pb is None or np.isnan(pb), opt
    assert paid_back >= 1   # the demo has an option that pays back
    plt.close(ax.figure)


@pytest.mark.reference
def test_head_loss_axis_values_are_darcy_weisbach_with_colebrook(demo):
    import iapws
    import numpy as np

    from .conftest import colebrook_mpmath

    _, result, _ = demo
    ax = plots.velocity_head(result)
    twin = [a for a in ax.figure.axes if a is not ax and a.get_ylabel() == "head loss [m]"][0]
    x, y = (np.asarray(a, dtype=float) for a in twin.get_lines()[0].get_data())
    c = result.candidates.sort_values("inner_diameter_m")
    np.testing.assert_allclose(x, c["inner_diameter_m"].to_numpy() * 1e3, rtol=1e-15)
    # demo inputs (pipeopt/data/demo_sizing.toml): 520 m^3/h, 4.6 km, K = 9, water at 12 degC
    # (the iapws package); h = (f L/D + K) V^2 / (2 g), f the mpmath Colebrook root, by hand
    water = iapws.IAPWS95(T=285.15, P=0.101325)
    rough = c["roughness_m"].to_numpy()     # each material's roughness (catalog input)
    for i in range(0, len(x), 7):
        d = x[i] / 1000
        v = 520 / 3600 / (np.pi * d * d / 4)
        f = colebrook_mpmath(water.rho * v * d / water.mu, rough[i] / d)
        want = (f * 4600.0 / d + 9.0) * v * v / (2 * 9.80665)
        assert y[i] == pytest.approx(want, rel=1e-7), x[i]
    plt.close(ax.figure)


@pytest.mark.reference
def test_probability_bars_are_counts_of_the_cheapest_feasible_draw(demo):
    import numpy as np

    _, _, mc = demo
    ax = plots.probability_cheapest(mc)
    heights = [p.get_height() for p in ax.patches]
    # brute force: in each draw, the cheapest feasible candidate, counted over the draws
    wins = np.zeros(mc.eac.shape[1])
    for k in range(mc.n):
        feasible = np.flatnonzero(mc.feasible[k])
        if feasible.size:
            wins[feasible[np.argmin(mc.eac[k, feasible])]] += 1
    top = mc.candidates.head(len(heights))
    want = [wins[int(j)] / mc.n for j in top["candidate_index"]]
    np.testing.assert_allclose(heights, want, rtol=0, atol=1e-15)
    assert sum(heights) <= 1.0 + 1e-12 and max(heights) == pytest.approx(max(wins) / mc.n)
    plt.close(ax.figure)


# ------------------------------------------------------------------------------------------
# bars and lines against the demo's life-cycle cost written out by hand
# ------------------------------------------------------------------------------------------
def _hand_pv_of_the_chosen_pipe(price: float = 0.14, rate: float = 0.05) -> dict:
    """Present value parts of the demo's chosen pipe, PE 100 500 SDR 17, by hand from the
    inputs of pipeopt/data/demo_sizing.toml (4.6 km, 38 m static head, K 9, duties 310 m3/h
    for 5200 h and 520 m3/h for 2400 h growing 1.2 %/yr, efficiency 0.72, price escalating
    1 %/yr, 60 per kW of peak, station 9000 (1.5 P_max)^0.68 with life 20, maintenance 0.3 %
    of the pipe and 1.5 % of the station, pipe life 80, 40 years):
    EN 12201-2 dimensions (OD 500, wall 29.7 mm; from memory), PE 960 kg/m3 and 0.007 mm
    (common practice), water at 12 degC from iapws (IAPWS-95), Darcy-Weisbach with the mpmath
    Colebrook root (Colebrook 1939), present values as explicit discounted sums (common
    practice) and EAC = PV r(1+r)^n/((1+r)^n - 1)."""
    import math

    import iapws

    from .conftest import colebrook_mpmath

    w = iapws.IAPWS95(T=285.15, P=0.101325)
    d = 0.5 - 2 * 0.0297

    def power_kw(q):
        v = q / (math.pi * d * d / 4)
        f = colebrook_mpmath(w.rho * v * d / w.mu, 0.007e-3 / d)
        head = 38.0 + (f * 4600.0 / d + 9.0) * v * v / (2 * 9.80665)
        return w.rho * 9.80665 * q * head / 0.72 / 1e3

    grow = [1.012 ** (t - 1) for t in range(41)]
    peak = {t: power_kw(520 / 3600 * grow[t]) for t in range(1, 41)}
    energy = {t: power_kw(310 / 3600 * grow[t]) * 5200 + peak[t] * 2400 for t in range(1, 41)}
    pipe = 4600.0 * (2.6 * math.pi / 4 * (0.5**2 - d**2) * 960.0 + 380.0 * 0.5**1.05)
    station = 9000.0 * (1.5 * max(peak.values())) ** 0.68
    disc = [(1 + rate) ** -t for t in range(41)]
    pv = {"capex_pipe": pipe, "pv_pump_station": station,
          "pv_energy": sum((energy[t] * price * 1.01 ** (t - 1) + 60.0 * peak[t]) * disc[t]
                           for t in range(1, 41)),
          "pv_maintenance": sum((0.003 * pipe + 0.015 * station) * disc[t]
                                for t in range(1, 41)),
          "pv_replacement": station * disc[20],
          "pv_residual": pipe * (1 - 40 / 80) * disc[40]}
    pv["pv_total"] = sum(v for k, v in pv.items() if k != "pv_residual") - pv["pv_residual"]
    pv["eac"] = pv["pv_total"] * rate * (1 + rate) ** 40 / ((1 + rate) ** 40 - 1)
    return pv


@pytest.mark.reference
def test_breakdown_bars_of_the_chosen_pipe_are_its_present_values_by_hand(demo):
    # the first stack is the chosen pipe; each part's bar height, the residual credit drawn
    # below zero and the net marker equal the present values written out by hand
    import numpy as np

    _, result, _ = demo
    assert result.best["size"] == "500 SDR 17"
    hand = _hand_pv_of_the_chosen_pipe()
    ax = plots.cost_breakdown(result)
    first = [p for p in ax.patches if abs(p.get_x() + p.get_width() / 2) < 1e-9]
    by_label = {}
    for name, patch in zip([c.get_label() for c in ax.containers], first, strict=True):
        by_label[name] = patch
    for label, key in (("pipe", "capex_pipe"), ("pump station", "pv_pump_station"),
                       ("energy", "pv_energy"), ("maintenance", "pv_maintenance"),
                       ("station renewal", "pv_replacement")):
        assert by_label[label].get_height() == pytest.approx(hand[key], rel=1e-7), label
    assert by_label["residual value (credit)"].get_height() == pytest.approx(
        -hand["pv_residual"], rel=1e-7)
    stacked = sum(by_label[k].get_height() for k in ("pipe", "pump station", "energy",
                                                      "maintenance", "station renewal"))
    assert stacked == pytest.approx(hand["pv_total"] + hand["pv_residual"], rel=1e-7)
    net = [ln for ln in ax.get_lines() if ln.get_marker() == "_"][0]
    assert np.asarray(net.get_ydata(), dtype=float)[0] == pytest.approx(hand["pv_total"],
                                                                         rel=1e-7)
    plt.close(ax.figure)


@pytest.mark.reference
def test_tornado_bars_are_the_eac_by_hand_at_each_low_and_high_value(demo):
    # the chosen pipe's EAC by hand (_hand_pv_of_the_chosen_pipe) at the energy price 0.10
    # and 0.20 EUR/kWh and at the discount rates 3 % and 7 %, the others at base
    study, _, _ = demo
    t = study.tornado({"energy_price": (0.1, 0.2), "discount_rate": (0.03, 0.07)})
    ax = plots.tornado_chart(t)
    base = _hand_pv_of_the_chosen_pipe()["eac"]
    assert t.base_value == pytest.approx(base, rel=1e-7)
    want = {"energy_price": (_hand_pv_of_the_chosen_pipe(price=0.1)["eac"],
                             _hand_pv_of_the_chosen_pipe(price=0.2)["eac"]),
            "discount_rate": (_hand_pv_of_the_chosen_pipe(rate=0.03)["eac"],
                              _hand_pv_of_the_chosen_pipe(rate=0.07)["eac"])}
    low, high = ax.containers[0], ax.containers[1]
    labels = [tick.get_text() for tick in ax.get_yticklabels()]
    for i, label in enumerate(labels):
        name = label.split(" (")[0]
        for bars, value in ((low, want[name][0]), (high, want[name][1])):
            bar = bars[i]
            assert bar.get_x() == pytest.approx(base, rel=1e-7)
            assert bar.get_x() + bar.get_width() == pytest.approx(value, rel=1e-7), name
    assert sorted(label.split(" (")[0] for label in labels) == ["discount_rate",
                                                                "energy_price"]
    plt.close(ax.figure)


@pytest.mark.reference
def test_long_line_figure_draws_the_file_ground_and_the_published_limits():
    # the demo long line (pipeopt/data/demo_longline.toml): the ground drawn through the
    # file's elevations (19 km, a booster site, interpolated: (232 + 289) / 2 = 260.5 m); the
    # PFA line the class's PFA (EN 545: the class number in bar, from memory) as a head
    # p / (rho g) above the pipe axis; the least head the vapour pressure + the default
    # constraints.vapour_margin 3 m (DEVELOPERS.md, long lines) in absolute terms, p_atm by
    # ISO 2533 at the ground (from memory), water at 12 degC from iapws (IAPWS-95)
    import iapws
    import numpy as np

    result = SizingStudy.demo("longline").run()
    ax = plots.profile(result)
    lines = {line.get_label(): line for line in ax.get_lines()}
    x, axis = (np.asarray(a, dtype=float) for a in lines["pipe axis"].get_data())
    ground = {0: 45, 4: 52, 8: 58, 12: 70, 14: 126, 16: 175, 18: 232, 19: 260.5, 20: 289,
              21: 310, 22: 320, 23: 312, 24: 297, 28: 258, 32: 245, 36: 270, 39.6: 282}
    z = np.array([ground[round(k, 1) if k % 1 else int(k)] for k in x])
    od = np.array([0.738 if s.startswith("DN 700") else np.nan for s in result.profile["size"]])
    assert not np.isnan(od).any()                     # DN 700 throughout (EN 545 OD 738 mm)
    np.testing.assert_allclose(axis, z - 1.2 - od / 2, rtol=1e-12)   # 1.2 m cover to crown
    w = iapws.IAPWS95(T=285.15, P=0.101325)
    rho_g = w.rho * 9.80665
    pv = iapws.IAPWS95(T=285.15, x=0).P * 1e6
    p_atm = 101325.0 * (1 - 0.0065 * z / 288.15) ** (9.80665 * 0.0289644 / (8.3144598 * 0.0065))
    xl, least = (np.asarray(a, dtype=float) for a in lines["least head allowed"].get_data())
    np.testing.assert_allclose(least, axis + (pv + 3.0 * rho_g - p_atm) / rho_g, rtol=1e-9)
    xs, ys = (np.asarray(a, dtype=float) for a in
              lines["PFA of the class laid (as head)"].get_data())
    cls = result.profile["class"].to_numpy()
    for s in range(len(x) - 1):
        if x[s] == x[s + 1]:
            continue                                    # a station's two rows
        above = float(cls[s][1:]) * 1e5 / rho_g
        assert ys[3 * s] == pytest.approx(axis[s] + above, rel=1e-9)
        assert ys[3 * s + 1] == pytest.approx(axis[s + 1] + above, rel=1e-9)
    plt.close(ax.figure)


@pytest.mark.reference
def test_cost_curve_at_the_chosen_pipe_is_its_eac_by_hand(demo):
    # at the chosen pipe's bore (EN 12201-2: 500 - 2 x 29.7 = 440.6 mm) each drawn part is
    # its present value by hand (_hand_pv_of_the_chosen_pipe) times the capital recovery
    # factor r(1+r)^n/((1+r)^n-1) at 5 % over 40 years; the chosen marker sits at the EAC
    import numpy as np

    _, result, _ = demo
    hand = _hand_pv_of_the_chosen_pipe()
    crf = 0.05 * 1.05**40 / (1.05**40 - 1)
    ax = plots.cost_curves(result)
    lines = {line.get_gid(): line for line in ax.get_lines() if line.get_gid()}

    def at_bore(line):
        x, y = (np.asarray(a, dtype=float) for a in line.get_data())
        k = np.flatnonzero(np.isclose(x, 440.6, rtol=0, atol=1e-9))
        assert k.size == 1
        return y[k[0]]

    want = {"eac_capital": (hand["capex_pipe"] + hand["pv_pump_station"]) * crf,
            "eac_energy": hand["pv_energy"] * crf,
            "eac_maintenance": hand["pv_maintenance"] * crf,
            "eac_renewal": hand["pv_replacement"] * crf,
            "eac_residual": -hand["pv_residual"] * crf}
    for part, value in want.items():
        assert at_bore(lines[f"part:{part}"]) == pytest.approx(value, rel=1e-7), part
    assert at_bore(lines["total:pe100:SDR 17"]) == pytest.approx(hand["eac"], rel=1e-7)
    chosen = [ln for ln in ax.get_lines() if "chosen" in ln.get_label()][0]
    cx, cy = (np.asarray(a, dtype=float) for a in chosen.get_data())
    assert cx[0] == pytest.approx(440.6, abs=1e-9)
    assert cy[0] == pytest.approx(hand["eac"], rel=1e-7)
    plt.close(ax.figure)


@pytest.mark.parametrize("kind", ["sizing", "upgrade"])
def test_an_update_that_cannot_move_the_points_redraws_what_a_fresh_drawing_shows(kind):
    # update_cost_curves / update_cumulative_cash_flow with redraw=True: where the figure
    # changes in more than its points (here: fewer materials; paybacks that go), they say so
    # (False), empty the axes and draw anew from the data they worked out; the picture is the
    # one of the same figure cleared whole and drawn anew, byte for byte. Without redraw they
    # change nothing.
    if kind == "sizing":
        study = SizingStudy.demo()
        first, second = study.run(), study.run(inputs={"energy_price": 0.31})
        draw_first = lambda ax: plots.cost_curves(first, ax=ax)  # noqa: E731
        draw = lambda r, ax: plots.cost_curves(r, materials=["pe100"], ax=ax)  # noqa: E731
        update = lambda r, ax, **k: plots.update_cost_curves(  # noqa: E731
            ax, r, materials=["pe100"], **k)
    else:
        study = UpgradeStudy.demo()
        first, second = study.run(inputs={"energy_price": 0.5}), study.run()
        draw_first = lambda ax: plots.cumulative_cash_flow(first, ax=ax)  # noqa: E731
        draw = lambda r, ax: plots.cumulative_cash_flow(r, ax=ax)  # noqa: E731
        update = lambda r, ax, **k: plots.update_cumulative_cash_flow(ax, r, **k)  # noqa: E731
    figs = []
    for _ in range(2):  # the same figure twice, drawn and rendered once (margins fitted)
        fig, ax = plt.subplots(figsize=(7.5, 4.3))
        draw_first(ax)
        figs.append((fig, ax, plots.figure_png(fig, dpi=100)))
    (fig, ax, before), (fig_ref, ax_ref, _) = figs
    assert update(second, ax) is False
    assert plots.figure_png(fig, dpi=100) == before        # nothing changed
    assert update(second, ax, redraw=True) is False
    ax_ref.clear()
    draw(second, ax_ref)
    assert plots.figure_png(fig, dpi=100) == plots.figure_png(fig_ref, dpi=100)
    plt.close(fig)
    plt.close(fig_ref)


@pytest.mark.parametrize("dpi", [72, 100, 110])
def test_text_layout_with_kept_font_heights_equals_matplotlibs_own(dpi):
    # The renderer of figure_png keeps each font's ascent, descent and line gap (read from the
    # font's tables for every text of every draw otherwise); the layout of every text, one
    # line or several, at every size and weight, is then exactly matplotlib's own.
    from matplotlib.backends.backend_agg import RendererAgg

    fig = plt.figure(figsize=(5, 3), dpi=dpi)
    texts = [fig.text(0.1, 0.1 + 0.1 * i, words, fontsize=size, fontweight=weight,
                      rotation=rotation)
             for i, (words, size, weight, rotation) in enumerate([
                 ("EAC [EUR/yr]", 10, "normal", 0), ("12,345,678", 8, "normal", 0),
                 ("two\nlines of text", 9, "bold", 0), ("inner diameter [mm]", 11, "normal", 90),
                 ("discounted payback, year 14", 7, "normal", 0), ("g_j p", 14, "light", 30)])]
    ours = plots._TextCachingRenderer(500, 300, dpi)
    theirs = RendererAgg(500, 300, dpi)
    for text in texts:
        assert repr(text._get_layout(ours)) == repr(text._get_layout(theirs)), text.get_text()
    assert ours._get_font_height_metrics(texts[0].get_fontproperties())[0] is not None
    plt.close(fig)
