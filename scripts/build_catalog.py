"""Write the bundled size tables in pipeopt/catalog/*.csv from the standards' rules and tables.

Run from the repository root: ``python scripts/build_catalog.py``. The CSV files are committed;
this script documents how every number in them was obtained and regenerates them identically.

- Steel (ASME B36.10M) and stainless steel (ASME B36.19M): outside diameters and walls typed from
  the standards' tables (from memory of the standards; rows the project's REFERENCES list confirms
  say so). Inner diameter from the nominal wall.
- Ductile iron (EN 545:2010): outside diameters from the standard's table; the wall of each
  pressure class from the standard's design rule e_min = PFA SF DE / (20 Rm + PFA SF), SF = 3,
  Rm = 420 MPa, e_min >= 3.0 mm, nominal e = e_min + (1.3 + 0.001 DN) (from memory of EN 545:2010
  clause 4.3.3, verify); cement-mortar lining by DN range (EN 545 Table 17, from memory).
- PE (ISO 4427 / EN 12201) and PVC-U (ISO 1452 / EN 1452): minimum wall e = d / (2 S + 1) with S
  the exact R10 value of the pipe series (ISO 4065), rounded up to 0.1 mm, and at least 2.0 mm;
  inner diameter from the minimum wall. PN from MRS, S and the design coefficient C, rounded down
  to the R10 series of PN values.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

OUT = Path(__file__).resolve().parents[1] / "pipeopt" / "catalog"
DATE = "2026-12-01"

B3610 = "ASME B36.10M Table 1 (from memory of the standard, verify)"
B3610_REF = "ASME B36.10M Table 1"  # values also listed in the project's REFERENCES
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
STEEL_CONFIRMED = {("2", "40"), ("4", "40"), ("2", "STD"), ("4", "STD"), ("12", "STD"),
                   ("4", "10"), ("12", "40")}

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

# DN: OD mm, EN 545:2010 Table 16 (DN 80-1000 as in the project's REFERENCES; others from memory)
DUCTILE_OD = {80: 98, 100: 118, 125: 144, 150: 170, 200: 222, 250: 274, 300: 326, 350: 378,
              400: 429, 450: 480, 500: 532, 600: 635, 700: 738, 800: 842, 900: 945, 1000: 1048,
              1100: 1152, 1200: 1255}
DUCTILE_OD_CONFIRMED = {80, 100, 150, 200, 300, 400, 500, 600, 800, 1000}
DUCTILE_CLASSES = (25, 30, 40, 64)
# preferred classes of EN 545:2010 (from memory): C40 to DN 300, C30 DN 350-600, C25 above
DUCTILE_PREFERRED = {dn: (40 if dn <= 300 else 30 if dn <= 600 else 25) for dn in DUCTILE_OD}


def ductile_lining_mm(dn: int) -> float:
    """Nominal cement-mortar lining thickness, EN 545:2010 Table 17 (from memory, verify)."""
    if dn <= 300:
        return 3.0
    if dn <= 600:
        return 5.0
    if dn <= 1200:
        return 6.0
    return 9.0


def ductile_wall_mm(dn: int, od: float, pfa_bar: float) -> float:
    """Nominal wall of class C<pfa> from the EN 545:2010 design rule (see module docstring)."""
    e_min = pfa_bar * 3.0 * od / (20.0 * 420.0 + pfa_bar * 3.0)
    e_min = max(e_min, 3.0)
    return round(e_min + 1.3 + 0.001 * dn, 1)


PLASTIC_OD = [20, 25, 32, 40, 50, 63, 75, 90, 110, 125, 140, 160, 180, 200, 225, 250, 280, 315,
              355, 400, 450, 500, 560, 630, 710, 800, 900, 1000, 1200]
PVC_OD = [63, 75, 90, 110, 125, 140, 160, 180, 200, 225, 250, 280, 315, 355, 400, 450, 500, 560,
          630]
# nominal SDR -> exact S of the ISO 4065 R10 series
PE_SERIES = {26: 10**1.1, 21: 10.0, 17: 10**0.9, 13.6: 10**0.8, 11: 10**0.7, 9: 10**0.6,
             7.4: 10**0.5}
PVC_SERIES = {41: 20.0, 33: 10**1.2, 26: 10**1.1, 21: 10.0, 17: 10**0.9, 13.6: 10**0.8}
R10_PN = [2.5, 3.2, 4.0, 5.0, 6.0, 8.0, 10.0, 12.5, 16.0, 20.0, 25.0, 32.0]


def plastic_wall_mm(od: float, s_exact: float) -> float:
    e = od / (2.0 * s_exact + 1.0)
    return max(math.ceil(e * 10.0 - 1e-9) / 10.0, 2.0)


def pn_round_down(value: float) -> float:
    return max(p for p in R10_PN if p <= value + 1e-9)


def fmt(x: float) -> str:
    return f"{x:.2f}".rstrip("0").rstrip(".")


def write(name: str, header: list[str], rows: list[dict], note: str) -> None:
    path = OUT / f"{name}.csv"
    with path.open("w", newline="", encoding="utf-8") as fh:
        for line in note.strip().splitlines():
            fh.write(f"# {line}\n")
        w = csv.DictWriter(fh, fieldnames=header, lineterminator="\n")
        w.writeheader()
        w.writerows(rows)


HEADER = ["designation", "nominal", "pressure_class", "outside_diameter_mm", "wall_mm",
          "lining_mm", "inner_diameter_mm", "pressure_rating_bar", "provenance"]


def steel_rows(table: dict, confirmed: set, source: str, confirmed_source: str) -> list[dict]:
    rows = []
    for nps, (od, walls) in table.items():
        for sch, wall in walls.items():
            label = sch if sch in ("STD", "XS") else f"Sch {sch}"
            rows.append({
                "designation": f"NPS {nps} {label}", "nominal": f"NPS {nps}",
                "pressure_class": label, "outside_diameter_mm": fmt(od), "wall_mm": fmt(wall),
                "lining_mm": "0", "inner_diameter_mm": fmt(od - 2 * wall),
                "pressure_rating_bar": "",
                "provenance": confirmed_source if (nps, sch) in confirmed else source,
            })
    return rows


def main() -> None:
    note_steel = f"""
Carbon steel pipe, ASME B36.10M, NPS 1/2 to 48, schedules 10, STD, 40, XS and 80 where they exist.
Inner diameter = outside diameter - 2 x nominal wall. Pressure rating left blank: pipeopt computes
it with Barlow's formula from the allowable stress, joint factor and corrosion allowance.
Dated {DATE}. Generated by scripts/build_catalog.py.
"""
    write("steel", HEADER, steel_rows(STEEL, STEEL_CONFIRMED, B3610, B3610_REF), note_steel)
    note_ss = f"""
Stainless steel pipe, ASME B36.19M, schedules 5S, 10S, 40S and 80S where they exist.
Inner diameter = outside diameter - 2 x nominal wall. Pressure rating: Barlow's formula.
Dated {DATE}. Generated by scripts/build_catalog.py.
"""
    write("stainless-steel", HEADER, steel_rows(STAINLESS, set(), B3619, B3619), note_ss)

    rows = []
    for dn, od in DUCTILE_OD.items():
        lining = ductile_lining_mm(dn)
        od_src = ("EN 545:2010 Table 16 (outside diameter)" if dn in DUCTILE_OD_CONFIRMED
                  else "EN 545:2010 Table 16 (outside diameter, from memory, verify)")
        for c in DUCTILE_CLASSES:
            wall = ductile_wall_mm(dn, od, c)
            pref = "; preferred class" if DUCTILE_PREFERRED[dn] == c else ""
            rows.append({
                "designation": f"DN {dn} C{c}", "nominal": f"DN {dn}", "pressure_class": f"C{c}",
                "outside_diameter_mm": fmt(od), "wall_mm": fmt(wall), "lining_mm": fmt(lining),
                "inner_diameter_mm": fmt(od - 2 * wall - 2 * lining),
                "pressure_rating_bar": fmt(c),
                "provenance": f"{od_src}; wall from the EN 545:2010 design rule for class C{c} "
                              f"(from memory, verify); lining EN 545 Table 17 (from memory){pref}",
            })
    note_di = f"""
Ductile iron pressure pipe, EN 545:2010 / ISO 2531, DN 80 to 1200, classes C25, C30, C40, C64.
Wall = nominal wall of the class (design rule of the standard, see scripts/build_catalog.py);
lining = nominal cement-mortar lining. Hydraulic inner diameter = OD - 2 x wall - 2 x lining.
Pressure rating = PFA of the class in bar. Dated {DATE}.
"""
    write("ductile-iron", HEADER, rows, note_di)

    for name, mrs, grade in (("pe100", 10.0, "PE 100"), ("pe80", 8.0, "PE 80")):
        rows = []
        for od in PLASTIC_OD:
            for sdr, s in PE_SERIES.items():
                wall = plastic_wall_mm(od, s)
                if od / wall < 0.85 * sdr:  # the 2.0 mm minimum would change the series
                    continue
                pn = pn_round_down(20.0 * mrs / (1.25 * (sdr - 1.0)))
                rows.append({
                    "designation": f"{od} SDR {fmt(sdr)}", "nominal": f"{od}",
                    "pressure_class": f"SDR {fmt(sdr)}", "outside_diameter_mm": fmt(od),
                    "wall_mm": fmt(wall), "lining_mm": "0",
                    "inner_diameter_mm": fmt(od - 2 * wall), "pressure_rating_bar": fmt(pn),
                    "provenance": "ISO 4427-2 / EN 12201-2 Table 2 rule: e_min = d/(2S+1) rounded "
                                  "up to 0.1 mm, >= 2.0 mm (ISO 4065); PN = 20 MRS/(C (SDR-1)), "
                                  "C = 1.25, rounded down to R10",
                })
        note = f"""
{grade} pressure pipe, ISO 4427 / EN 12201, outside diameter 20 to 1200 mm, SDR 26 to 7.4.
Inner diameter computed from the MINIMUM wall (the standard's e_min), so it is the largest bore
the standard allows: mean walls are thicker by up to about 10 %. MRS {mrs:g} MPa, design
coefficient C = 1.25 (water at 20 degC). Dated {DATE}.
"""
        write(name, HEADER, rows, note)

    rows = []
    for od in PVC_OD:
        sigma = 10.0 if od <= 90 else 12.5  # MRS 25 MPa, C = 2.5 up to 90 mm, 2.0 above
        for sdr, s in PVC_SERIES.items():
            wall = plastic_wall_mm(od, s)
            if od / wall < 0.85 * sdr:
                continue
            nominal_s = (sdr - 1.0) / 2.0
            pn = min(R10_PN, key=lambda p: abs(p - 10.0 * sigma / nominal_s))
            rows.append({
                "designation": f"{od} PN {fmt(pn)}", "nominal": f"{od}",
                "pressure_class": f"PN {fmt(pn)}", "outside_diameter_mm": fmt(od),
                "wall_mm": fmt(wall), "lining_mm": "0", "inner_diameter_mm": fmt(od - 2 * wall),
                "pressure_rating_bar": fmt(pn),
                "provenance": f"ISO 1452-2 / EN 1452-2 rule (from memory, verify): SDR {fmt(sdr)}, "
                              f"e_min = d/(2S+1) rounded up to 0.1 mm; PN = 10 sigma/S with "
                              f"sigma = {sigma:g} MPa (MRS 25 MPa, C = {25 / sigma:g})",
            })
    note = f"""
Unplasticized PVC pressure pipe, ISO 1452 / EN 1452, outside diameter 63 to 630 mm.
Inner diameter computed from the MINIMUM wall. Pressure rating = PN at 25 degC. Dated {DATE}.
"""
    write("pvc-u", HEADER, rows, note)


if __name__ == "__main__":
    main()
