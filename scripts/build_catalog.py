"""Write the bundled size tables in pipeopt/catalog/*.csv from the standards' tables and rules.

Run from the repository root: ``python scripts/build_catalog.py`` (``--check`` compares instead of
writing and exits 1 on any difference). The CSV files are committed; this script documents how
every number in them was obtained and regenerates them identically. Sources and values are
recorded in docs/references.md#pipe-dimensions; the published table values that the catalog is
checked against are in pipeopt/data/standard_tables.csv. Where a table value is recorded it wins
over the rule, and each row's ``provenance`` says which one it came from.

- Steel (ASME B36.10M) and stainless steel (ASME B36.19M): outside diameters and walls typed from
  the standards' tables (from memory of the standards). Inner diameter from the nominal wall.
  Lined steel (the same steel sizes, NPS 4 and up): cement-mortar lining by size as in AWWA C205
  (from memory), or a liquid-epoxy lining of 0.41 mm (16 mil, AWWA C210 minimum dry film, from
  memory); bore = OD - 2 wall - 2 lining.
- Ductile iron C classes (EN 545:2010): outside diameters DE from the standard's table; the wall
  of class C<PFA> by the standard's design rule e_min = PFA SF DE / (20 Rm + PFA SF), SF = 3,
  Rm = 420 MPa, e_min >= 3.0 mm, nominal e = e_min + (1.3 + 0.001 DN), computed in exact rational
  arithmetic and rounded UP to 0.1 mm (from memory of EN 545:2010; rounding up reproduces 14 of
  the 18 remembered preferred-class walls, rounding half-up 9). The preferred class of each DN
  takes the remembered table wall. Cement-mortar lining by DN range (EN 545 / ISO 4179).
- Ductile iron K classes (ISO 2531:1998, EN 545:2006): e = K (0.5 + 0.001 DN), at least 6.0 mm
  (centrifugally cast pipe), exact arithmetic, rounded up to 0.1 mm (from memory). Not rated here.
- PE (ISO 4427 / EN 12201) and PVC-U (ISO 1452 / EN 1452): minimum wall by the ISO 4065 rule
  e = d / (2 S + 1), S the exact R10 value of the pipe series, rounded to 0.01 mm (half up)
  and then up to 0.1 mm, at least 2.0 mm (the two-step rounding reproduces every recorded table
  value except three small PE sizes, where EN 12201-2 lists 3.0 mm and the table value is used).
  Inner diameter from the minimum wall. PN from MRS, S and the design coefficient C, rounded
  down to the R10 series of PN values.
- Copper tube (EN 1057, building services): outside diameter x wall typed from the standard's
  size range (from memory). EN 1057 gives no pressure rating; none is bundled, so a study makes
  no pressure check on copper (its candidate table says so).
"""

from __future__ import annotations

import argparse
import csv
import io
import math
import sys
from fractions import Fraction
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "pipeopt" / "catalog"
TABLES = ROOT / "pipeopt" / "data" / "standard_tables.csv"
DATE = "2026-12-02"

B3610 = "ASME B36.10M Table 1 (from memory of the standard, verify)"
B3619 = "ASME B36.19M Table 1 (from memory of the standard, verify)"

# NPS: (OD mm, {schedule: wall mm}) - carbon steel, ASME B36.10M
STEEL = {
    "1/2": (21.3, {"10": 2.11, "STD": 2.77, "40": 2.77, "XS": 3.73, "80": 3.73}),
    "3/4": (26.7, {"10": 2.11, "STD": 2.87, "40": 2.87, "XS": 3.91, "80": 3.91}),
    "1": (33.4, {"10": 2.77, "STD": 3.38, "40": 3.38, "XS": 4.55, "80": 4.55}),
    "1-1/4": (42.2, {"10": 2.77, "STD": 3.56, "40": 3.56, "XS": 4.85, "80": 4.85}),
    "1-1/2": (48.3, {"10": 2.77, "STD": 3.68, "40": 3.68, "XS": 5.08, "80": 5.08}),
    "2": (60.3, {"10": 2.77, "STD": 3.91, "40": 3.91, "XS": 5.54, "80": 5.54}),
    "2-1/2": (73.0, {"10": 3.05, "STD": 5.16, "40": 5.16, "XS": 7.01, "80": 7.01}),
    "3": (88.9, {"10": 3.05, "STD": 5.49, "40": 5.49, "XS": 7.62, "80": 7.62}),
    "3-1/2": (101.6, {"10": 3.05, "STD": 5.74, "40": 5.74, "XS": 8.08, "80": 8.08}),
    "4": (114.3, {"10": 3.05, "STD": 6.02, "40": 6.02, "XS": 8.56, "80": 8.56}),
    "5": (141.3, {"10": 3.40, "STD": 6.55, "40": 6.55, "XS": 9.53, "80": 9.53}),
    "6": (168.3, {"10": 3.40, "STD": 7.11, "40": 7.11, "XS": 10.97, "80": 10.97}),
    "8": (219.1, {"10": 3.76, "STD": 8.18, "40": 8.18, "XS": 12.70, "80": 12.70}),
    "10": (273.0, {"10": 4.19, "STD": 9.27, "40": 9.27, "XS": 12.70, "80": 15.09}),
    "12": (323.8, {"10": 4.57, "STD": 9.53, "40": 10.31, "XS": 12.70, "80": 17.48}),
    "14": (355.6, {"10": 6.35, "STD": 9.53, "40": 11.13, "XS": 12.70, "80": 19.05}),
    "16": (406.4, {"10": 6.35, "STD": 9.53, "40": 12.70, "XS": 12.70, "80": 21.44}),
    "18": (457.0, {"10": 6.35, "STD": 9.53, "40": 14.27, "XS": 12.70, "80": 23.83}),
    "20": (508.0, {"10": 6.35, "STD": 9.53, "40": 15.09, "XS": 12.70, "80": 26.19}),
    "22": (559.0, {"10": 6.35, "STD": 9.53, "XS": 12.70, "80": 28.58}),
    "24": (610.0, {"10": 6.35, "STD": 9.53, "40": 17.48, "XS": 12.70, "80": 30.96}),
    "26": (660.0, {"10": 7.92, "STD": 9.53, "XS": 12.70}),
    "28": (711.0, {"10": 7.92, "STD": 9.53, "XS": 12.70}),
    "30": (762.0, {"10": 7.92, "STD": 9.53, "XS": 12.70}),
    "32": (813.0, {"10": 7.92, "STD": 9.53, "40": 17.48, "XS": 12.70}),
    "34": (864.0, {"10": 7.92, "STD": 9.53, "40": 17.48, "XS": 12.70}),
    "36": (914.0, {"10": 7.92, "STD": 9.53, "40": 19.05, "XS": 12.70}),
    "42": (1067.0, {"STD": 9.53, "XS": 12.70}),
    "48": (1219.0, {"STD": 9.53, "XS": 12.70}),
}
# NPS: (OD mm, {schedule: wall mm}) - stainless steel, ASME B36.19M
STAINLESS = {
    "1/2": (21.3, {"5S": 1.65, "10S": 2.11, "40S": 2.77, "80S": 3.73}),
    "3/4": (26.7, {"5S": 1.65, "10S": 2.11, "40S": 2.87, "80S": 3.91}),
    "1": (33.4, {"5S": 1.65, "10S": 2.77, "40S": 3.38, "80S": 4.55}),
    "1-1/4": (42.2, {"5S": 1.65, "10S": 2.77, "40S": 3.56, "80S": 4.85}),
    "1-1/2": (48.3, {"5S": 1.65, "10S": 2.77, "40S": 3.68, "80S": 5.08}),
    "2": (60.3, {"5S": 1.65, "10S": 2.77, "40S": 3.91, "80S": 5.54}),
    "2-1/2": (73.0, {"5S": 2.11, "10S": 3.05, "40S": 5.16, "80S": 7.01}),
    "3": (88.9, {"5S": 2.11, "10S": 3.05, "40S": 5.49, "80S": 7.62}),
    "3-1/2": (101.6, {"5S": 2.11, "10S": 3.05, "40S": 5.74, "80S": 8.08}),
    "4": (114.3, {"5S": 2.11, "10S": 3.05, "40S": 6.02, "80S": 8.56}),
    "5": (141.3, {"5S": 2.77, "10S": 3.40, "40S": 6.55, "80S": 9.53}),
    "6": (168.3, {"5S": 2.77, "10S": 3.40, "40S": 7.11, "80S": 10.97}),
    "8": (219.1, {"5S": 2.77, "10S": 3.76, "40S": 8.18, "80S": 12.70}),
    "10": (273.0, {"5S": 3.40, "10S": 4.19, "40S": 9.27, "80S": 12.70}),
    "12": (323.8, {"5S": 3.96, "10S": 4.57, "40S": 9.53, "80S": 12.70}),
    "14": (355.6, {"5S": 3.96, "10S": 4.78, "40S": 9.53, "80S": 12.70}),
    "16": (406.4, {"5S": 4.19, "10S": 4.78, "40S": 9.53, "80S": 12.70}),
    "18": (457.0, {"5S": 4.19, "10S": 4.78, "40S": 9.53, "80S": 12.70}),
    "20": (508.0, {"5S": 4.78, "10S": 5.54, "40S": 9.53, "80S": 12.70}),
    "22": (559.0, {"5S": 4.78, "10S": 5.54}),
    "24": (610.0, {"5S": 5.54, "10S": 6.35, "40S": 9.53, "80S": 12.70}),
    "30": (762.0, {"5S": 6.35, "10S": 7.92}),
}

# DN: outside diameter DE [mm], EN 545:2010 / ISO 2531 (table values in standard_tables.csv)
DUCTILE_DN = (80, 100, 125, 150, 200, 250, 300, 350, 400, 450, 500, 600, 700, 800, 900, 1000,
              1100, 1200)
DUCTILE_CLASSES = (25, 30, 40, 50, 64, 100)
K_CLASSES = (7, 8, 9, 10, 12)
# preferred classes of EN 545:2010 (from memory): C40 to DN 300, C30 DN 350-600, C25 above
DUCTILE_PREFERRED = {dn: (40 if dn <= 300 else 30 if dn <= 600 else 25) for dn in DUCTILE_DN}

# cement-mortar lining of steel water pipe by NPS, AWWA C205 shop-applied lining (from memory):
# 4-10 in 1/4 in, 11-23 in 5/16 in, 24-36 in 3/8 in, larger 1/2 in
CML_STEEL = ((10.0, 6.35), (23.0, 7.94), (36.0, 9.53), (1e9, 12.7))
EPOXY_MM = 0.41  # 16 mil minimum dry film of liquid epoxy, AWWA C210 (from memory)
LINED_SCHEDULES = ("10", "STD", "40", "XS")

# copper tube, EN 1057: (outside diameter mm, wall mm), typed from the standard's size range
# (from memory): the common European sizes, and the thin walls of the former BS 2871 Table X
COPPER = [(12, 1.0), (15, 0.7), (15, 1.0), (18, 1.0), (22, 0.9), (22, 1.0), (28, 0.9), (28, 1.0),
          (28, 1.5), (35, 1.2), (35, 1.5), (42, 1.2), (42, 1.5), (54, 1.2), (54, 1.5), (54, 2.0),
          (64, 2.0), (67, 1.2), (76.1, 1.5), (76.1, 2.0), (88.9, 2.0), (108, 1.5), (108, 2.5),
          (133, 1.5), (133, 3.0), (159, 2.0), (159, 3.0)]

PLASTIC_OD = [20, 25, 32, 40, 50, 63, 75, 90, 110, 125, 140, 160, 180, 200, 225, 250, 280, 315,
              355, 400, 450, 500, 560, 630, 710, 800, 900, 1000, 1200]
PVC_OD = [63, 75, 90, 110, 125, 140, 160, 180, 200, 225, 250, 280, 315, 355, 400, 450, 500, 560,
          630]


def series_s(k: int) -> Fraction:
    """The R10 pipe series S = 10^(k/10) to 1e-15 (exact enough for 0.01 mm rounding)."""
    return Fraction(10 ** (k / 10)).limit_denominator(10**15)


# nominal SDR -> the pipe series S of ISO 4065 (R10 numbers; S 20 is the R10 value 20 exactly)
PE_SERIES = {26: series_s(11), 21: series_s(10), 17: series_s(9), 13.6: series_s(8),
             11: series_s(7), 9: series_s(6), 7.4: series_s(5)}
PVC_SERIES = {41: Fraction(20), 33: series_s(12), 26: series_s(11), 21: series_s(10),
              17: series_s(9), 13.6: series_s(8)}
R10_PN = [2.5, 3.2, 4.0, 5.0, 6.0, 8.0, 10.0, 12.5, 16.0, 20.0, 25.0, 32.0]

PLASTIC_RULE = ("ISO 4065 rule e_min = d/(2S+1), rounded to 0.01 mm then up to 0.1 mm, >= 2.0 mm")


def load_tables(path: Path = TABLES) -> dict[tuple[str, str, str], tuple[float, str, str]]:
    """Recorded table values: {(group, designation, quantity): (value, source, basis)}."""
    text = "".join(line for line in path.read_text(encoding="utf-8").splitlines(True)
                   if not line.startswith("#"))
    return {(r["group"], r["designation"], r["quantity"]): (float(r["value"]), r["source"],
                                                            r["basis"])
            for r in csv.DictReader(io.StringIO(text))}


def ceil_tenth(x: Fraction) -> Fraction:
    """Round an exact value up to 0.1 mm."""
    return Fraction(math.ceil(x * 10), 10)


def half_up(x: Fraction, step: Fraction) -> Fraction:
    return math.floor(x / step + Fraction(1, 2)) * step


def plastic_wall_mm(od: float, s: Fraction) -> Fraction:
    """ISO 4065 minimum wall: d/(2S+1) to 0.01 mm (half up), then up to 0.1 mm, >= 2.0 mm."""
    q = Fraction(od) / (2 * s + 1)
    return max(ceil_tenth(half_up(q, Fraction(1, 100))), Fraction(2))


def ductile_wall_mm(dn: int, od: int, pfa_bar: int) -> Fraction:
    """Nominal wall of class C<pfa> by the EN 545:2010 rule, exact, rounded up to 0.1 mm."""
    e_min = Fraction(pfa_bar * 3 * od, 20 * 420 + pfa_bar * 3)
    e_min = max(e_min, Fraction(3))
    return ceil_tenth(e_min + Fraction(13, 10) + Fraction(dn, 1000))


def k_class_wall_mm(dn: int, k: int) -> Fraction:
    """Nominal wall of class K<k>, ISO 2531: K (0.5 + 0.001 DN), >= 6.0 mm, up to 0.1 mm."""
    return max(ceil_tenth(k * (Fraction(1, 2) + Fraction(dn, 1000))), Fraction(6))


def ductile_lining_mm(dn: int) -> float:
    """Nominal cement-mortar lining, EN 545:2010 / ISO 4179 by DN range (from memory)."""
    if dn <= 300:
        return 3.0
    if dn <= 600:
        return 5.0
    if dn <= 1200:
        return 6.0
    return 9.0


def pn_round_down(value: float) -> float:
    return max(p for p in R10_PN if p <= value + 1e-9)


def fmt(x: float | Fraction) -> str:
    return f"{float(x):.2f}".rstrip("0").rstrip(".")


HEADER = ["designation", "nominal", "class", "outside_diameter_mm", "wall_mm",
          "lining_mm", "inner_diameter_mm", "pressure_rating_bar", "provenance"]


def render(rows: list[dict], note: str) -> str:
    buf = io.StringIO()
    for line in note.strip().splitlines():
        buf.write(f"# {line}\n")
    w = csv.DictWriter(buf, fieldnames=HEADER, lineterminator="\n")
    w.writeheader()
    w.writerows(rows)
    return buf.getvalue()


def _table_note(entry: tuple[float, str, str]) -> str:
    _, source, basis = entry
    return f"table: {source} ({basis})"


def steel_rows(table: dict, source: str, lining=None, lining_source: str = "",
               schedules=None, min_nps: float = 0.0) -> list[dict]:
    rows = []
    for nps, (od, walls) in table.items():
        size = _nps_value(nps)
        if size < min_nps:
            continue
        for sch, wall in walls.items():
            if schedules is not None and sch not in schedules:
                continue
            label = sch if sch in ("STD", "XS") else f"Sch {sch}"
            lin = lining(size) if lining else 0.0
            rows.append({
                "designation": f"NPS {nps} {label}", "nominal": f"NPS {nps}",
                "class": label, "outside_diameter_mm": fmt(od), "wall_mm": fmt(wall),
                "lining_mm": fmt(lin), "inner_diameter_mm": fmt(od - 2 * wall - 2 * lin),
                "pressure_rating_bar": "",
                "provenance": f"table: {source}" + (f"; lining {lining_source}" if lining else ""),
            })
    return rows


def _nps_value(nps: str) -> float:
    whole, _, frac = nps.partition("-")
    if "/" in whole and not frac:
        a, b = whole.split("/")
        return float(a) / float(b)
    return float(whole) + (float(Fraction(frac)) if frac else 0.0)


def cml_steel_mm(nps: float) -> float:
    return next(t for top, t in CML_STEEL if nps <= top)


def ductile_rows(tables: dict, k_classes: bool = False) -> list[dict]:
    """C classes of EN 545:2010, or (``k_classes``) the K classes of ISO 2531:1998."""
    rows = []
    for dn in DUCTILE_DN:
        od_entry = tables[("ductile-iron", f"DN {dn}", "outside_diameter_mm")]
        od = int(od_entry[0])
        lining = ductile_lining_mm(dn)
        lin_entry = tables.get(("ductile-iron", f"DN {dn}", "lining_mm"))
        if lin_entry is not None and lin_entry[0] != lining:
            raise SystemExit(f"DN {dn}: lining rule {lining} != table {lin_entry[0]}")
        od_src = f"outside diameter {_table_note(od_entry)}"
        lin_src = "lining EN 545:2010 / ISO 4179 by DN range (from memory)"
        classes = [(f"C{c}", c, ductile_wall_mm(dn, od, c), (
            "wall rule: EN 545:2010 e_min = PFA SF DE/(20 Rm + PFA SF), SF 3, Rm 420 MPa, "
            ">= 3.0 mm, + (1.3 + 0.001 DN), rounded up to 0.1 mm (from memory)"))
            for c in DUCTILE_CLASSES]
        k_rows = [(f"K{k}", None, k_class_wall_mm(dn, k), (
            "wall rule: ISO 2531:1998 K (0.5 + 0.001 DN), >= 6.0 mm, rounded up to 0.1 mm "
            "(from memory)")) for k in K_CLASSES]
        if k_classes:
            classes = k_rows
        for label, pfa, wall, wall_src in classes:
            group = "ductile-iron-k" if k_classes else "ductile-iron"
            entry = tables.get((group, f"DN {dn} {label}", "wall_mm"))
            if entry is not None:
                rule = wall
                wall = Fraction(entry[0]).limit_denominator(100)
                wall_src = f"wall {_table_note(entry)}" + (
                    "; equals the rule" if rule == wall else f"; the rule gives {fmt(rule)}")
            if pfa is not None and DUCTILE_PREFERRED[dn] == pfa:
                wall_src += "; preferred class"
            if pfa is None:
                wall_src += "; no rating bundled: pressure not checked"
            rows.append({
                "designation": f"DN {dn} {label}", "nominal": f"DN {dn}",
                "class": label, "outside_diameter_mm": fmt(od), "wall_mm": fmt(wall),
                "lining_mm": fmt(lining), "inner_diameter_mm": fmt(od - 2 * wall - 2 * lining),
                "pressure_rating_bar": fmt(pfa) if pfa is not None else "",
                "provenance": f"{od_src}; {wall_src}; {lin_src}",
            })
    return rows


def plastic_rows(tables: dict, ods: list, series: dict, designation, rating) -> list[dict]:
    rows = []
    for od in ods:
        for sdr, s in series.items():
            rule = plastic_wall_mm(od, s)
            if od / rule < Fraction(85, 100) * Fraction(sdr).limit_denominator(10):
                continue  # the 2.0 mm minimum would change the series
            entry = tables.get(("thermoplastics", f"{od} SDR {fmt(sdr)}", "wall_mm"))
            if entry is not None:
                wall = Fraction(entry[0]).limit_denominator(100)
                src = f"wall {_table_note(entry)}" + (
                    "; equals the rule" if rule == wall else
                    f"; the {PLASTIC_RULE} gives {fmt(rule)}")
            else:
                wall, src = rule, f"wall rule: {PLASTIC_RULE}"
            pn, pn_src = rating(sdr)
            label = designation(sdr, pn)
            rows.append({
                "designation": f"{od} {label}", "nominal": f"{od}", "class": label,
                "outside_diameter_mm": fmt(od), "wall_mm": fmt(wall), "lining_mm": "0",
                "inner_diameter_mm": fmt(od - 2 * wall), "pressure_rating_bar": fmt(pn),
                "provenance": f"SDR {fmt(sdr)}; {src}; {pn_src}",
            })
    return rows


def build() -> dict[str, str]:
    """Every bundled size table as CSV text, by file name."""
    tables = load_tables()
    out = {}
    out["steel"] = render(steel_rows(STEEL, B3610), f"""
Carbon steel pipe, ASME B36.10M, NPS 1/2 to 48, schedules 10, STD, 40, XS and 80 where they exist.
Inner diameter = outside diameter - 2 x nominal wall. Pressure rating left blank: pipeopt computes
it with Barlow's formula from the allowable stress, joint factor and corrosion allowance.
Dated {DATE}. Generated by scripts/build_catalog.py.
""")
    out["stainless-steel"] = render(steel_rows(STAINLESS, B3619), f"""
Stainless steel pipe, ASME B36.19M, schedules 5S, 10S, 40S and 80S where they exist.
Inner diameter = outside diameter - 2 x nominal wall. Pressure rating: Barlow's formula.
Dated {DATE}. Generated by scripts/build_catalog.py.
""")
    out["steel-cement-lined"] = render(steel_rows(
        STEEL, B3610, cml_steel_mm, "AWWA C205 cement-mortar lining by size (from memory)",
        LINED_SCHEDULES, 4.0), f"""
Cement-mortar-lined carbon steel pipe: ASME B36.10M sizes NPS 4 to 48 (Sch 10, STD, 40, XS) with
a shop-applied cement-mortar lining by size (AWWA C205, from memory: 6.35 mm to NPS 10, 7.94 mm
to 23 in, 9.53 mm to 36 in, 12.7 mm above). Inner diameter = outside diameter - 2 x nominal wall
- 2 x lining. Pressure rating: Barlow's formula on the steel wall. Dated {DATE}.
Generated by scripts/build_catalog.py.
""")
    out["steel-epoxy-lined"] = render(steel_rows(
        STEEL, B3610, lambda nps: EPOXY_MM, "liquid epoxy 0.41 mm, AWWA C210 minimum dry film "
        "(from memory)", LINED_SCHEDULES, 4.0), f"""
Epoxy-lined carbon steel pipe: ASME B36.10M sizes NPS 4 to 48 (Sch 10, STD, 40, XS) with a
liquid-epoxy lining of 0.41 mm (16 mil minimum dry film, AWWA C210, from memory). Inner diameter
= outside diameter - 2 x nominal wall - 2 x lining. Pressure rating: Barlow's formula on the
steel wall. Dated {DATE}. Generated by scripts/build_catalog.py.
""")
    out["ductile-iron"] = render(ductile_rows(tables), f"""
Ductile iron pressure pipe, EN 545:2010, DN 80 to 1200, classes C25, C30, C40, C50, C64, C100.
Wall = nominal wall of the class (design rule or recorded table, see each row's provenance and
scripts/build_catalog.py); lining = nominal cement-mortar lining. Hydraulic inner diameter =
OD - 2 x wall - 2 x lining. Pressure rating = PFA of the class in bar. Dated {DATE}.
""")
    out["ductile-iron-k"] = render(ductile_rows(tables, k_classes=True), f"""
Ductile iron pipe of the older K classes, ISO 2531:1998 / EN 545:2006, DN 80 to 1200, K7, K8,
K9, K10, K12: wall = nominal wall K (0.5 + 0.001 DN), at least 6.0 mm; lining = nominal
cement-mortar lining. Hydraulic inner diameter = OD - 2 x wall - 2 x lining. Not rated here
(the standard rates K classes by DN in tables not recorded in pipeopt): a study makes no
pressure check on these sizes and says so. Dated {DATE}.
""")

    def sdr_label(sdr, pn):
        return f"SDR {fmt(sdr)}"

    for name, mrs, grade in (("pe100", 10.0, "PE 100"), ("pe80", 8.0, "PE 80")):
        def pe_rating(sdr, mrs=mrs):
            return (pn_round_down(20.0 * mrs / (1.25 * (sdr - 1.0))),
                    "PN rule: 20 MRS/(C (SDR-1)), C = 1.25, rounded down to R10 (ISO 4427-1)")
        out[name] = render(plastic_rows(tables, PLASTIC_OD, PE_SERIES, sdr_label, pe_rating), f"""
{grade} pressure pipe, ISO 4427 / EN 12201, outside diameter 20 to 1200 mm, SDR 26 to 7.4.
Inner diameter computed from the MINIMUM wall (the standard's e_min), so it is the largest bore
the standard allows: mean walls are thicker by up to about 10 %. MRS {mrs:g} MPa, design
coefficient C = 1.25 (water at 20 degC). Dated {DATE}.
""")

    rows = []
    for od in PVC_OD:
        sigma = 10.0 if od <= 90 else 12.5  # MRS 25 MPa, C = 2.5 up to 90 mm, 2.0 above

        def rating(sdr, sigma=sigma):
            pn = min(R10_PN, key=lambda p: abs(p - 10.0 * sigma / ((sdr - 1.0) / 2.0)))
            return pn, (f"PN rule: 10 sigma/S with sigma = {sigma:g} MPa (MRS 25 MPa, "
                        f"C = {25 / sigma:g}), ISO 1452-2 (from memory)")
        rows += plastic_rows(tables, [od], PVC_SERIES, lambda sdr, pn: f"PN {fmt(pn)}", rating)
    out["pvc-u"] = render(rows, f"""
Unplasticized PVC pressure pipe, ISO 1452 / EN 1452, outside diameter 63 to 630 mm.
Inner diameter computed from the MINIMUM wall. Pressure rating = PN at 25 degC. Dated {DATE}.
""")

    rows = [{"designation": f"{fmt(od)} x {e:.1f}", "nominal": fmt(od),
             "class": f"wall {e:.1f}", "outside_diameter_mm": fmt(od),
             "wall_mm": fmt(e), "lining_mm": "0", "inner_diameter_mm": fmt(od - 2 * e),
             "pressure_rating_bar": "",
             "provenance": "table: EN 1057 copper tube size range (from memory); EN 1057 gives "
                           "no pressure rating: none bundled, pressure not checked"}
            for od, e in COPPER]
    out["copper"] = render(rows, f"""
Copper tube for water and heating in buildings, EN 1057, outside diameter 12 to 159 mm.
Inner diameter = outside diameter - 2 x nominal wall. No pressure rating: EN 1057 gives none
(ratings depend on temper, temperature and jointing; take them from the manufacturer or the
governing code), so a study makes no pressure check on copper. Dated {DATE}.
""")
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true",
                        help="compare with the committed CSV files instead of writing them")
    args = parser.parse_args(argv)
    differ = []
    for name, text in build().items():
        path = OUT / f"{name}.csv"
        if args.check:
            if not path.is_file() or path.read_text(encoding="utf-8") != text:
                differ.append(name)
        else:
            path.write_text(text, encoding="utf-8")
    if differ:
        print("differ from the builder: " + ", ".join(differ))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
