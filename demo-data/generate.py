#!/usr/bin/env python3
"""Seeded generator for the plumbline demo data set "Office building energy use".

Scenario
--------
One row per office building in an invented property portfolio, for one year.
The response is ``energy_mwh``: annual electricity plus gas use in MWh. The
data are invented for the plumbline demo only. They describe no real
buildings, portfolio or survey.

Seed and determinism
--------------------
All numbers come from the standard library's ``random.Random(SEED)`` with
``SEED = 20250684``, drawn in a fixed order. numpy is not used, so the output
does not depend on a numpy version. The xlsx is written with openpyxl. Its
workbook properties (creator "plumbline demo generator", created and modified
at 2025-01-01T00:00:00Z) and every zip entry's timestamp are fixed, so two runs
write the same bytes. (The xlsx bytes also depend on the zlib and openpyxl
versions, so ``building-energy.csv`` is the canonical copy of the table. The
xlsx holds the same values.)

Rerun from the repository root with::

    python3 demo-data/generate.py

This rewrites ``demo-data/building-energy.csv`` and
``demo-data/building-energy.xlsx``.

Model used to generate the response
-----------------------------------
Natural logs, with zone 1, ``district heat`` and no retrofit as the baselines::

    log(energy_mwh) = -1.10
                      + 0.9 * log(floor_area_m2)
                      + zone_effect[climate_zone]      (0, +0.15, -0.05, +0.25, +0.08)
                      + hvac_effect[hvac_type]         (heat pump -0.20, gas boiler +0.10,
                                                        district heat 0)
                      + 0.0055 * (mean_outdoor_temp_c - 13)^2
                      - 0.18 * retrofit
                      + 0.004 * building_age
                      + Normal(0, 0.15) noise

Planted features
----------------
* Identifiers: ``building_id`` is a text code (B-0001 ... B-0240) and
  ``site_code`` is a consecutive integer sequence (1001 ... 1240). Both are
  identifiers, not amounts. They must not be used as numeric predictors.
* Coded category: ``climate_zone`` is an integer code 1-5. Each zone has its
  own effect, and the effects are not linear in the code (log-scale effects
  0, +0.15, -0.05, +0.25, +0.08, roughly +0 %, +16 %, -5 %, +28 %, +8 %).
  It should be treated as a category, not a number.
* Skewed predictor: ``floor_area_m2`` is lognormal (median about 4,000 m2,
  log-sd 0.9, clipped to 250-60,000 m2). It is strongly right-skewed. Energy
  is roughly proportional to area**0.9, so a log-log model is natural.
* Curved relationship: energy depends on ``mean_outdoor_temp_c`` through a
  U-shaped quadratic term, with heating when it is cold and cooling when it
  is warm. Use is lowest at 13 degC.
* Text category with spaces: ``hvac_type`` has the levels ``heat pump``,
  ``gas boiler`` and ``district heat``.
* Binary: ``retrofit`` is 0/1. A recent retrofit lowers use by about 16 %.
* Missing cells: six blank cells in three predictor columns:
  ``building_age`` for B-0023, B-0118 and B-0201; ``occupants`` for B-0057
  and B-0164; ``mean_outdoor_temp_c`` for B-0090.
* Influential row: B-0137 has a typo-like ``floor_area_m2``. Its true area
  (one tenth of the largest other area, an ordinary size) was entered with
  two extra zeros, so the recorded value is about ten times the second-largest
  area in the table. Its energy and occupants come from the true area and are
  ordinary. In a regression of log(energy) on log(area) this row has by far
  the largest leverage and a large Cook's distance.
"""

import csv
import datetime
import io
import math
import os
import random
import zipfile

import openpyxl
from openpyxl.xml.functions import tostring

SEED = 20250684
N_ROWS = 240

HERE = os.path.dirname(os.path.abspath(__file__))
CSV_PATH = os.path.join(HERE, "building-energy.csv")
XLSX_PATH = os.path.join(HERE, "building-energy.xlsx")

FIXED_DATETIME = datetime.datetime(2025, 1, 1, 0, 0, 0)
ZIP_DATE_TIME = (2025, 1, 1, 0, 0, 0)
CREATOR = "plumbline demo generator"
SHEET_TITLE = "Portfolio energy survey 2025"

COLUMNS = [
    "building_id",
    "site_code",
    "climate_zone",
    "floor_area_m2",
    "occupants",
    "building_age",
    "mean_outdoor_temp_c",
    "hvac_type",
    "retrofit",
    "energy_mwh",
]

INTERCEPT = -1.10
AREA_SLOPE = 0.9
ZONE_EFFECT = {1: 0.0, 2: 0.15, 3: -0.05, 4: 0.25, 5: 0.08}
ZONE_WEIGHTS = [0.22, 0.24, 0.20, 0.16, 0.18]
HVAC_LEVELS = ["heat pump", "gas boiler", "district heat"]
HVAC_WEIGHTS = [0.35, 0.45, 0.20]
HVAC_EFFECT = {"heat pump": -0.20, "gas boiler": 0.10, "district heat": 0.0}
TEMP_OPTIMUM = 13.0
TEMP_CURVATURE = 0.0055
RETROFIT_PROB = 0.30
RETROFIT_EFFECT = -0.18
AGE_SLOPE = 0.004
NOISE_SD = 0.15

AREA_MEDIAN = 4000.0
AREA_LOG_SD = 0.9
AREA_MIN, AREA_MAX = 250, 60000

# Planted features, by 1-based row number (= the number in building_id).
INFLUENTIAL_ROW = 137
MISSING_CELLS = {
    "building_age": [23, 118, 201],
    "occupants": [57, 164],
    "mean_outdoor_temp_c": [90],
}


def weighted_choice(rng, items, weights):
    """Pick one item with the given weights using a single rng.random() draw."""
    u = rng.random() * sum(weights)
    acc = 0.0
    for item, w in zip(items, weights):
        acc += w
        if u < acc:
            return item
    return items[-1]


def generate_rows(seed=SEED):
    rng = random.Random(seed)

    # Pass 1: draw the predictors for every row (fixed order of draws per row).
    rows = []
    for i in range(1, N_ROWS + 1):
        area = AREA_MEDIAN * math.exp(rng.gauss(0.0, AREA_LOG_SD))
        area = int(round(min(max(area, AREA_MIN), AREA_MAX)))
        zone = weighted_choice(rng, [1, 2, 3, 4, 5], ZONE_WEIGHTS)
        age = rng.randint(1, 80)
        temp = round(rng.uniform(2.0, 24.0), 1)
        hvac = weighted_choice(rng, HVAC_LEVELS, HVAC_WEIGHTS)
        retrofit = 1 if rng.random() < RETROFIT_PROB else 0
        m2_per_person = 22.0 * math.exp(rng.gauss(0.0, 0.25))
        noise = rng.gauss(0.0, NOISE_SD)
        rows.append({
            "i": i, "area": area, "zone": zone, "age": age, "temp": temp,
            "hvac": hvac, "retrofit": retrofit,
            "m2_per_person": m2_per_person, "noise": noise,
        })

    # Influential row: true area is one tenth of the largest other area
    # (an ordinary size). It is recorded with two extra zeros, i.e. about ten
    # times the second-largest recorded area.
    max_other = max(r["area"] for r in rows if r["i"] != INFLUENTIAL_ROW)
    planted = rows[INFLUENTIAL_ROW - 1]
    planted["area"] = int(round(max_other / 10.0))

    # Pass 2: derived columns and the response (computed from the true area).
    out = []
    for r in rows:
        true_area = r["area"]
        occupants = max(1, int(round(true_area / r["m2_per_person"])))
        log_e = (INTERCEPT
                 + AREA_SLOPE * math.log(true_area)
                 + ZONE_EFFECT[r["zone"]]
                 + HVAC_EFFECT[r["hvac"]]
                 + TEMP_CURVATURE * (r["temp"] - TEMP_OPTIMUM) ** 2
                 + RETROFIT_EFFECT * r["retrofit"]
                 + AGE_SLOPE * r["age"]
                 + r["noise"])
        energy = round(math.exp(log_e), 1)
        recorded_area = true_area * 100 if r["i"] == INFLUENTIAL_ROW else true_area
        out.append({
            "building_id": "B-%04d" % r["i"],
            "site_code": 1000 + r["i"],
            "climate_zone": r["zone"],
            "floor_area_m2": recorded_area,
            "occupants": occupants,
            "building_age": r["age"],
            "mean_outdoor_temp_c": r["temp"],
            "hvac_type": r["hvac"],
            "retrofit": r["retrofit"],
            "energy_mwh": energy,
        })

    for col, row_numbers in MISSING_CELLS.items():
        for n in row_numbers:
            out[n - 1][col] = None
    return out


def format_cell(col, value):
    if value is None:
        return ""
    if col in ("mean_outdoor_temp_c", "energy_mwh"):
        return "%.1f" % value
    return str(value)


def write_csv(rows, path):
    buf = io.StringIO()
    writer = csv.writer(buf, delimiter=",", lineterminator="\n",
                        quoting=csv.QUOTE_MINIMAL)
    writer.writerow(COLUMNS)
    for row in rows:
        writer.writerow([format_cell(c, row[c]) for c in COLUMNS])
    with open(path, "wb") as f:
        f.write(buf.getvalue().encode("utf-8"))


def write_xlsx(rows, path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Buildings"
    ws["A1"] = SHEET_TITLE
    # Row 2 is left blank; the header is in row 3.
    for j, col in enumerate(COLUMNS, start=1):
        ws.cell(row=3, column=j, value=col)
    for k, row in enumerate(rows, start=4):
        for j, col in enumerate(COLUMNS, start=1):
            value = row[col]
            if value is not None:
                ws.cell(row=k, column=j, value=value)
            # None -> the cell is simply left empty

    props = wb.properties
    props.creator = CREATOR
    props.lastModifiedBy = CREATOR
    props.title = SHEET_TITLE
    props.created = FIXED_DATETIME
    props.modified = FIXED_DATETIME

    # openpyxl stamps "modified" with the current time on save, and zipfile
    # stamps each entry with the current time. Save to memory, then repack
    # with a fixed core.xml and fixed entry timestamps.
    raw = io.BytesIO()
    wb.save(raw)
    props.modified = FIXED_DATETIME
    core_xml = tostring(props.to_tree())

    packed = io.BytesIO()
    with zipfile.ZipFile(raw, "r") as zin, \
            zipfile.ZipFile(packed, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "docProps/core.xml":
                data = core_xml
            zinfo = zipfile.ZipInfo(info.filename, date_time=ZIP_DATE_TIME)
            zinfo.compress_type = zipfile.ZIP_DEFLATED
            zinfo.external_attr = 0o600 << 16
            zinfo.create_system = 0
            zout.writestr(zinfo, data)
    with open(path, "wb") as f:
        f.write(packed.getvalue())


def main():
    rows = generate_rows(SEED)
    write_csv(rows, CSV_PATH)
    write_xlsx(rows, XLSX_PATH)
    print("wrote %s (%d rows)" % (os.path.relpath(CSV_PATH), len(rows)))
    print("wrote %s" % os.path.relpath(XLSX_PATH))


if __name__ == "__main__":
    main()
