#!/usr/bin/env python3
"""Real input files for plumbline's readers and their expected contents.

What it does
------------
1. Draws one small table with ``numpy.random.default_rng(2024)``: a delivery
   log of 30 rows and 7 columns, ``order_id`` (``D-001`` ...), ``depot``
   (integer code 1-4), ``distance_km`` (one decimal), ``parcels`` (a count),
   ``driver_grade`` (``junior``/``senior``/``lead``), ``delivered`` (a date
   in spring 2024) and ``minutes`` (the response, one decimal). Three cells
   are empty: ``distance_km`` in data row 6, ``minutes`` in data row 11 and
   ``driver_grade`` in data row 19 (0-based data rows).
2. Writes that table in every format the readers take to
   ``tests/data/files/`` (see ``tests/data/files/README.md`` for the list and
   what a reader must get from each file), with
   ``tests/data/files/expected.json`` machine-readable.
3. Writes the bad inputs to ``tests/data/bad/`` with
   ``tests/data/bad/expected.json``.
4. With ``--check``, reads every workbook back with independent readers
   (openpyxl, odfpy, xlrd, pyxlsb, and python-calamine, the Python binding of the
   calamine crate the Rust readers use) and every text file with Python's
   csv module, and compares with ``expected.json``. Readers that are not
   installed are skipped with a note. The check never changes a file.

How to rerun
------------
From the repository root::

    python3 tests/reference/make_fixtures.py          # write everything
    python3 tests/reference/make_fixtures.py --check  # and read it back

Needs numpy, openpyxl (3.1.5 used), odfpy (1.4.1) and xlwt (1.3.0):
``pip install openpyxl odfpy xlwt``; the check also uses xlrd (2.0.2),
pyxlsb (1.0.10) and python-calamine (0.9.1) when present. Deterministic: two runs give
byte-identical files. To get there, workbook document properties are fixed
(created/modified 2024-06-01T12:00:00Z), the application name in the xlsx
extended properties is set to ``openpyxl``, and every zip container (xlsx,
ods, xlsb) is rewritten with a fixed entry time of 2024-06-01 12:00:00 and the
entry order and compression its writer chose. The xls writer stores no
timestamp.

Formats and how each is made
----------------------------
* xlsx: openpyxl; dates are real date cells (a serial number with the
  ``yyyy-mm-dd`` number format), numbers are numbers, missing cells are
  absent from the sheet XML.
* ods: odfpy; dates are ``office:value-type="date"`` cells with a date
  style, numbers ``float`` cells, text ``string`` cells.
* xls: xlwt (BIFF8); dates are numbers with a ``YYYY-MM-DD`` format.
* xlsb: no program or package that could be had here writes xlsb (the
  office suite in Debian's packages imports it but has no export filter; the
  Python xlsb packages only read). So ``write_xlsb`` assembles the file
  record by record from the published format specification (MS-XLSB), laid
  out as spreadsheet programs lay it out: shared-string table, a style sheet
  whose second cell format uses the number format ``yyyy-mm-dd``, integers
  and dates (whole-day serials) as RK cells, other numbers as 8-byte floats,
  missing values as absent cells. It was checked by opening it in that office
  suite (which showed the same cells and date formatting as for the xlsx),
  with the calamine crate 0.38 (dates come back as ``Data::DateTime``), with
  python-calamine and with pyxlsb.
* text files: written byte by byte by this script (encoding, delimiter,
  decimal mark and line ends as listed in the README).
* ``errors.xlsx``: openpyxl writes error values as error-typed cells
  (``t="e"``) and formulas without a cached result (``<f>1/0</f><v/>``); it
  cannot store a formula together with its cached result. So the column
  ``formula_cached`` is made by editing the sheet XML of the openpyxl output
  to hold the formula and its cached result in the one cell
  (``<c t="e"><f>1/0</f><v>#DIV/0!</v></c>``), which is how a spreadsheet
  program that computed the formula stores it.
"""

import csv
import datetime as dt
import io
import json
import pathlib
import re
import sys
import zipfile

import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[1]
FILES = ROOT / "data" / "files"
BAD = ROOT / "data" / "bad"

FIXED_TIME = dt.datetime(2024, 6, 1, 12, 0, 0)
ZIP_TIME = (2024, 6, 1, 12, 0, 0)

COLUMNS = ["order_id", "depot", "distance_km", "parcels", "driver_grade", "delivered", "minutes"]
KINDS = {
    "order_id": "identifier",
    "depot": "coded_category",
    "distance_km": "numeric",
    "parcels": "numeric",
    "driver_grade": "text_category",
    "delivered": "date",
    "minutes": "numeric",
}
MISSING_AT = {6: "distance_km", 11: "minutes", 19: "driver_grade"}
DEPOT_NAMES = {1: "Zürich-Süd", 2: "Köln-Mülheim", 3: "Genève", 4: "Malmö"}
NOTES = [
    "Delivery log, spring 2024: one row per order.",
    "minutes: time from leaving the depot to the last parcel handed over.",
    "depot: depot code 1 to 4. driver_grade: junior, senior or lead.",
    "An empty cell means the value was not recorded.",
]


# ---------------------------------------------------------------- the table

def make_table():
    rng = np.random.default_rng(2024)
    n = 30
    days = np.sort(rng.integers(0, 60, n))
    rows = []
    for i in range(n):
        depot = int(rng.integers(1, 5))
        distance = round(float(rng.uniform(0.8, 24.0)), 1)
        parcels = int(rng.poisson(14))
        grade = str(rng.choice(["junior", "senior", "lead"], p=[0.45, 0.40, 0.15]))
        bonus = {"junior": 4.0, "senior": 0.0, "lead": -2.0}[grade]
        minutes = round(12.0 + 2.4 * distance + 0.9 * parcels + bonus + float(rng.normal(0.0, 3.0)), 1)
        rows.append({
            "order_id": f"D-{i + 1:03d}",
            "depot": depot,
            "distance_km": distance,
            "parcels": parcels,
            "driver_grade": grade,
            "delivered": dt.date(2024, 4, 2) + dt.timedelta(days=int(days[i])),
            "minutes": minutes,
        })
    for i, col in MISSING_AT.items():
        rows[i][col] = None
    return rows


def declared_values(n):
    """Text of the extra ``declared_value`` column of the thousands file."""
    rng = np.random.default_rng(2025)
    out = []
    for i in range(n):
        v = round(float(rng.lognormal(6.6, 0.9)), 2)
        if i == 3:
            v = 1234.5
        if i == 8:
            v = 12000.0
        s = f"{v:,.2f}".rstrip("0").rstrip(".")
        out.append(s)
    return out


# ---------------------------------------------------------------- helpers

def rezip(data, path, edit=None):
    """Writes the zip ``data`` to ``path`` with fixed entry times, keeping the
    entry order and compression; ``edit`` maps entry names to byte edits."""
    src = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w") as z:
        for info in src.infolist():
            content = src.read(info.filename)
            if edit and info.filename in edit:
                content = edit[info.filename](content)
            zi = zipfile.ZipInfo(info.filename, date_time=ZIP_TIME)
            zi.compress_type = info.compress_type
            zi.create_system = 3
            zi.external_attr = 0o644 << 16
            z.writestr(zi, content)
    path.write_bytes(out.getvalue())


def num_text(v, decimal="."):
    s = repr(float(v)) if isinstance(v, float) else str(v)
    return s.replace(".", decimal)


def cell_text(row, col, decimal=".", date_fmt="%Y-%m-%d"):
    v = row[col]
    if v is None:
        return ""
    if isinstance(v, dt.date):
        return v.strftime(date_fmt)
    if isinstance(v, (int, float)):
        return num_text(v, decimal)
    return v


# ---------------------------------------------------------------- xlsx

def save_openpyxl(wb, path, edit=None):
    wb.properties.creator = "plumbline tests/reference/make_fixtures.py"
    wb.properties.created = FIXED_TIME
    buf = io.BytesIO()
    wb.save(buf)
    stamp = FIXED_TIME.strftime("%Y-%m-%dT%H:%M:%SZ").encode()
    edits = {
        # openpyxl sets `modified` to the time of saving: fix it.
        "docProps/core.xml": lambda b: re.sub(rb"(<dcterms:modified[^>]*>)[^<]*(</dcterms:modified>)",
                                              rb"\g<1>" + stamp + rb"\g<2>", b),
        "docProps/app.xml": lambda b: re.sub(rb"<Application>[^<]*</Application>",
                                             b"<Application>openpyxl</Application>", b),
    }
    edits.update(edit or {})
    rezip(buf.getvalue(), path, edits)


def write_rows_openpyxl(ws, rows, first_row):
    for j, name in enumerate(COLUMNS):
        ws.cell(row=first_row, column=j + 1, value=name)
    for i, r in enumerate(rows):
        for j, col in enumerate(COLUMNS):
            v = r[col]
            if v is None:
                continue
            c = ws.cell(row=first_row + 1 + i, column=j + 1, value=v)
            if isinstance(v, dt.date):
                c.number_format = "yyyy-mm-dd"


def write_xlsx(rows):
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Deliveries"
    write_rows_openpyxl(ws, rows, 1)
    notes = wb.create_sheet("Notes")
    for i, line in enumerate(NOTES):
        notes.cell(row=i + 1, column=1, value=line)
    save_openpyxl(wb, FILES / "deliveries.xlsx")

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Deliveries"
    ws.cell(row=1, column=1, value="Delivery log, spring")
    write_rows_openpyxl(ws, rows, 3)
    save_openpyxl(wb, FILES / "deliveries-title.xlsx")


ERROR_ROWS = {2: ("=1/0", "#DIV/0!"), 5: ("=NA()", "#N/A")}
ERROR_VALUES = [12.5, 7.25, None, 30.0, 4.5, None, 18.75, 9.0]


def write_errors_xlsx():
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Errors"
    names = ["id", "cached_error", "formula_no_cache", "formula_cached"]
    for j, name in enumerate(names):
        ws.cell(row=1, column=j + 1, value=name)
    for i, v in enumerate(ERROR_VALUES):
        r = i + 2
        ws.cell(row=r, column=1, value=i + 1)
        if i in ERROR_ROWS:
            formula, err = ERROR_ROWS[i]
            ws.cell(row=r, column=2, value=err)  # openpyxl stores it as t="e"
            ws.cell(row=r, column=3, value=formula)
            ws.cell(row=r, column=4, value=formula)
        elif i == 0:
            ws.cell(row=r, column=2, value=v)
            ws.cell(row=r, column=3, value="=2*21")
            ws.cell(row=r, column=4, value="=2*21")
        else:
            for c in (2, 3, 4):
                ws.cell(row=r, column=c, value=v)

    def add_cache(xml):
        # openpyxl writes <c r="D4"><f>1/0</f><v /></c>; store the result too.
        caches = {"D2": ("n", "42")}
        caches.update({f"D{i + 2}": ("e", err) for i, (_, err) in ERROR_ROWS.items()})
        for ref, (t, v) in caches.items():
            pat = re.compile(rf'<c r="{ref}"><f>([^<]*)</f><v\s*/>\s*</c>'.encode())
            xml, k = pat.subn(lambda m: f'<c r="{ref}" t="{t}"><f>'.encode() + m.group(1)
                              + f"</f><v>{v}</v></c>".encode(), xml)
            if k != 1:
                sys.exit(f"make_fixtures: could not add the cached value to {ref}")
        return xml

    save_openpyxl(wb, FILES / "errors.xlsx", {"xl/worksheets/sheet1.xml": add_cache})


# ---------------------------------------------------------------- ods

def write_ods(rows):
    from odf.opendocument import OpenDocumentSpreadsheet
    from odf.style import Style
    from odf.number import DateStyle, Day, Month, Year, Text as NumText
    from odf.table import Table, TableRow, TableCell
    from odf.text import P

    doc = OpenDocumentSpreadsheet()
    ds = DateStyle(name="isodate")
    ds.addElement(Year(style="long"))
    ds.addElement(NumText(text="-"))
    ds.addElement(Month(style="long"))
    ds.addElement(NumText(text="-"))
    ds.addElement(Day(style="long"))
    doc.automaticstyles.addElement(ds)
    date_cell = Style(name="datecell", family="table-cell", datastylename="isodate")
    doc.automaticstyles.addElement(date_cell)

    def text_cell(s):
        c = TableCell(valuetype="string")
        c.addElement(P(text=s))
        return c

    t = Table(name="Deliveries")
    tr = TableRow()
    for name in COLUMNS:
        tr.addElement(text_cell(name))
    t.addElement(tr)
    for r in rows:
        tr = TableRow()
        for col in COLUMNS:
            v = r[col]
            if v is None:
                c = TableCell()
            elif isinstance(v, dt.date):
                c = TableCell(valuetype="date", datevalue=v.isoformat(), stylename=date_cell)
                c.addElement(P(text=v.isoformat()))
            elif isinstance(v, (int, float)):
                c = TableCell(valuetype="float", value=num_text(v))
                c.addElement(P(text=num_text(v)))
            else:
                c = text_cell(v)
            tr.addElement(c)
        t.addElement(tr)
    doc.spreadsheet.addElement(t)
    notes = Table(name="Notes")
    for line in NOTES:
        tr = TableRow()
        tr.addElement(text_cell(line))
        notes.addElement(tr)
    doc.spreadsheet.addElement(notes)
    buf = io.BytesIO()
    doc.write(buf)
    rezip(buf.getvalue(), FILES / "deliveries.ods")


# ---------------------------------------------------------------- xls

def write_xls(rows):
    import xlwt

    wb = xlwt.Workbook(encoding="utf-8")
    ws = wb.add_sheet("Deliveries")
    date_style = xlwt.easyxf(num_format_str="YYYY-MM-DD")
    for j, name in enumerate(COLUMNS):
        ws.write(0, j, name)
    for i, r in enumerate(rows):
        for j, col in enumerate(COLUMNS):
            v = r[col]
            if v is None:
                continue
            if isinstance(v, dt.date):
                ws.write(i + 1, j, v, date_style)
            else:
                ws.write(i + 1, j, v)
    notes = wb.add_sheet("Notes")
    for i, line in enumerate(NOTES):
        notes.write(i, 0, line)
    buf = io.BytesIO()
    wb.save(buf)
    (FILES / "deliveries.xls").write_bytes(buf.getvalue())


# ---------------------------------------------------------------- xlsb
#
# No program or package that could be had here writes xlsb, so this section
# assembles one record by record from the published format specification
# (MS-XLSB): a zip of binary parts laid out as spreadsheet programs lay them
# out (shared-string table, a style sheet with a yyyy-mm-dd number format,
# integers and whole-day dates as RK cells, other numbers as 8-byte floats,
# absent cells for missing values). ``--check`` then opens it with
# python-calamine and pyxlsb.

def _rec(typ, body=b""):
    """One record: type and size as 7-bit varints, then the body."""
    out = bytearray()
    if typ < 0x80:
        out.append(typ)
    else:
        out += bytes([(typ & 0x7F) | 0x80, typ >> 7])
    n = len(body)
    while True:
        b = n & 0x7F
        n >>= 7
        out.append(b | (0x80 if n else 0))
        if not n:
            break
    return bytes(out) + body


def _u8(v):
    return v.to_bytes(1, "little")


def _u16(v):
    return v.to_bytes(2, "little")


def _u32(v):
    return v.to_bytes(4, "little")


def _f64(v):
    return np.float64(v).tobytes()


def _wstr(s):
    return _u32(len(s)) + s.encode("utf-16-le")


def _color(rgb=None, theme=None, indexed=None):
    # BrtColor: fValidRGB + xColorType, index, nTintAndShade, R, G, B, A
    if theme is not None:
        return _u8((3 << 1) | 0) + _u8(theme) + _u16(0) + bytes(4)
    if indexed is not None:
        return _u8((1 << 1) | 0) + _u8(indexed) + _u16(0) + bytes([0, 0, 0, 0xFF])
    r, g, b = rgb
    return _u8((2 << 1) | 1) + _u8(0) + _u16(0) + bytes([r, g, b, 0xFF])


def _xf(parent, fmt):
    # BrtXF: ixfeParent, iFmt, iFont, iFill, ixBorder, trot, indent,
    # alignment/protection flags (fLocked), xfGrbitAtr
    return _rec(0x002F, _u16(parent) + _u16(fmt) + _u16(0) + _u16(0) + _u16(0) + _u8(0) + _u8(0)
                + _u16(1 << 12) + _u16(0))


def xlsb_styles():
    body = _rec(0x0116)  # BrtBeginStyleSheet
    body += _rec(0x0267, _u32(1)) + _rec(0x002C, _u16(164) + _wstr("yyyy-mm-dd")) + _rec(0x0268)
    font = (_u16(220) + _u16(0) + _u16(400) + _u16(0) + _u8(0) + _u8(2) + _u8(0) + _u8(0)
            + _color(rgb=(0, 0, 0)) + _u8(0) + _wstr("Arial"))
    body += _rec(0x0263, _u32(1)) + _rec(0x002B, font) + _rec(0x0264)
    fill_tail = _u32(0) + _f64(0) * 5 + _u32(0)
    body += (_rec(0x025B, _u32(2))
             + _rec(0x002D, _u32(0) + _color(indexed=64) + _color(indexed=65) + fill_tail)
             + _rec(0x002D, _u32(17) + _color(indexed=64) + _color(indexed=65) + fill_tail)
             + _rec(0x025C))
    blxf = _u8(0) + _u8(0) + _color(indexed=64)
    body += _rec(0x0265, _u32(1)) + _rec(0x002E, _u8(0) + blxf * 5) + _rec(0x0266)
    body += _rec(0x0272, _u32(1)) + _xf(0xFFFF, 0) + _rec(0x0273)  # cell style XFs
    body += _rec(0x0269, _u32(2)) + _xf(0, 0) + _xf(0, 164) + _rec(0x026A)  # cell XFs: general, date
    body += (_rec(0x026B, _u32(1)) + _rec(0x0030, _u32(0) + _u16(1) + _u8(0) + _u8(0xFF) + _wstr("Normal"))
             + _rec(0x026C))
    body += _rec(0x01F9, _u32(0)) + _rec(0x01FA)  # DXFs
    body += _rec(0x01FC, _u32(0) + _wstr("TableStyleMedium2") + _wstr("PivotStyleLight16")) + _rec(0x01FD)
    return body + _rec(0x0117)


def xlsb_sheet(grid, sst):
    """grid: rows of cells (None, str, int, float or date)."""
    ncol = max(len(r) for r in grid)
    out = _rec(0x0081)  # BrtBeginSheet
    out += _rec(0x0094, _u32(0) + _u32(len(grid) - 1) + _u32(0) + _u32(ncol - 1))  # BrtWsDim
    out += _rec(0x0091)  # BrtBeginSheetData
    for i, row in enumerate(grid):
        cols = [j for j, v in enumerate(row) if v is not None]
        span = _u32(1) + _u32(cols[0]) + _u32(cols[-1]) if cols else _u32(0)
        out += _rec(0x0000, _u32(i) + _u32(0) + _u16(300) + bytes(3) + span)  # BrtRowHdr
        for j, v in enumerate(row):
            if v is None:
                continue
            if isinstance(v, dt.date):
                serial = (v - dt.date(1899, 12, 30)).days
                out += _rec(0x0002, _u32(j) + _u32(1) + _u32((serial << 2) | 2))  # RK, date style
            elif isinstance(v, str):
                if v not in sst:
                    sst[v] = len(sst)
                out += _rec(0x0007, _u32(j) + _u32(0) + _u32(sst[v]))  # BrtCellIsst
            elif isinstance(v, int) and -(1 << 29) <= v < (1 << 29):
                out += _rec(0x0002, _u32(j) + _u32(0) + _u32(((v << 2) | 2) & 0xFFFFFFFF))  # RK integer
            else:
                out += _rec(0x0005, _u32(j) + _u32(0) + _f64(v))  # BrtCellReal
    out += _rec(0x0092)  # BrtEndSheetData
    return out + _rec(0x0082)  # BrtEndSheet


def write_xlsb(rows):
    sst = {}
    grid = [list(COLUMNS)] + [[r[c] for c in COLUMNS] for r in rows]
    sheets = [("Deliveries", xlsb_sheet(grid, sst)), ("Notes", xlsb_sheet([[line] for line in NOTES], sst))]
    n_refs = sum(1 for g in ([grid] + [[[l] for l in NOTES]]) for r in g for v in r if isinstance(v, str))
    strings = _rec(0x009F, _u32(n_refs) + _u32(len(sst)))
    for s in sst:  # dicts keep insertion order = index order
        strings += _rec(0x0013, _u8(0) + _wstr(s))
    strings += _rec(0x00A0)

    wb = _rec(0x0083)  # BrtBeginBook
    wb += _rec(0x0099, _u32(0) + _u32(0) + _wstr(""))  # BrtWbProp: 1900 dates
    wb += _rec(0x0087) + _rec(0x009E, _u32(0) * 2 + _u32(19200) + _u32(10800) + _u32(600) + _u32(0) * 2
                              + _u8(0x78)) + _rec(0x0088)  # one book view: scroll bars, sheet tabs
    wb += _rec(0x008F)
    for k, (name, _) in enumerate(sheets):
        wb += _rec(0x009C, _u32(0) + _u32(k + 1) + _wstr(f"rId{k + 1}") + _wstr(name))  # BrtBundleSh
    wb += _rec(0x0090)
    # BrtCalcProp: recalcID, fAutoRecalc, cCalcCount, xnumDelta, cUserThreads, flags (fRefA1, fFullPrec)
    wb += _rec(0x009D, _u32(0) + _u32(1) + _u32(100) + _f64(0.001) + _u32(1) + _u16(0b1010))
    wb += _rec(0x0084)  # BrtEndBook

    rel_ns = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    pkg_ns = "http://schemas.openxmlformats.org/package/2006/relationships"
    ct = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
          '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
          '<Default Extension="bin" ContentType="application/vnd.ms-excel.sheet.binary.macroEnabled.main"/>'
          '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
          '<Default Extension="xml" ContentType="application/xml"/>'
          + "".join(f'<Override PartName="/xl/worksheets/sheet{k + 1}.bin" '
                    'ContentType="application/vnd.ms-excel.worksheet"/>' for k in range(len(sheets)))
          + '<Override PartName="/xl/styles.bin" ContentType="application/vnd.ms-excel.styles"/>'
          '<Override PartName="/xl/sharedStrings.bin" ContentType="application/vnd.ms-excel.sharedStrings"/>'
          '<Override PartName="/docProps/core.xml" '
          'ContentType="application/vnd.openxmlformats-package.core-properties+xml"/>'
          '<Override PartName="/docProps/app.xml" '
          'ContentType="application/vnd.openxmlformats-officedocument.extended-properties+xml"/>'
          '</Types>')
    rels = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
            f'<Relationships xmlns="{pkg_ns}">'
            f'<Relationship Id="rId1" Type="{rel_ns}/officeDocument" Target="xl/workbook.bin"/>'
            '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/relationships/'
            'metadata/core-properties" Target="docProps/core.xml"/>'
            f'<Relationship Id="rId3" Type="{rel_ns}/extended-properties" Target="docProps/app.xml"/>'
            '</Relationships>')
    n = len(sheets)
    wb_rels = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
               f'<Relationships xmlns="{pkg_ns}">'
               + "".join(f'<Relationship Id="rId{k + 1}" Type="{rel_ns}/worksheet" '
                         f'Target="worksheets/sheet{k + 1}.bin"/>' for k in range(n))
               + f'<Relationship Id="rId{n + 1}" Type="{rel_ns}/styles" Target="styles.bin"/>'
               f'<Relationship Id="rId{n + 2}" Type="{rel_ns}/sharedStrings" Target="sharedStrings.bin"/>'
               '</Relationships>')
    stamp = FIXED_TIME.strftime("%Y-%m-%dT%H:%M:%SZ")
    core = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
            '<cp:coreProperties xmlns:cp="http://schemas.openxmlformats.org/package/2006/metadata/core-properties" '
            'xmlns:dc="http://purl.org/dc/elements/1.1/" xmlns:dcterms="http://purl.org/dc/terms/" '
            'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            '<dc:creator>plumbline tests/reference/make_fixtures.py</dc:creator>'
            f'<dcterms:created xsi:type="dcterms:W3CDTF">{stamp}</dcterms:created>'
            f'<dcterms:modified xsi:type="dcterms:W3CDTF">{stamp}</dcterms:modified>'
            '</cp:coreProperties>')
    app = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
           '<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/extended-properties">'
           '<Application>plumbline make_fixtures.py</Application></Properties>')
    parts = [("[Content_Types].xml", ct.encode()), ("_rels/.rels", rels.encode()),
             ("xl/workbook.bin", wb), ("xl/_rels/workbook.bin.rels", wb_rels.encode()),
             ("xl/styles.bin", xlsb_styles()), ("xl/sharedStrings.bin", strings)]
    parts += [(f"xl/worksheets/sheet{k + 1}.bin", body) for k, (_, body) in enumerate(sheets)]
    parts += [("docProps/core.xml", core.encode()), ("docProps/app.xml", app.encode())]
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts:
            z.writestr(name, data)
    rezip(buf.getvalue(), FILES / "deliveries.xlsb")


# ---------------------------------------------------------------- text files

def write_text_files(rows):
    # Semicolon, decimal comma, Windows-1252, CRLF, dates as dd.mm.yyyy, an
    # extra text column with non-ASCII names and a non-ASCII header.
    header = ["order_id", "depot", "depot_name", "distance_km", "Päckchen", "driver_grade", "delivered",
              "minutes"]
    lines = [";".join(header)]
    for r in rows:
        cells = [cell_text(r, "order_id"), cell_text(r, "depot"), DEPOT_NAMES[r["depot"]],
                 cell_text(r, "distance_km", ","), cell_text(r, "parcels"), cell_text(r, "driver_grade"),
                 cell_text(r, "delivered", date_fmt="%d.%m.%Y"), cell_text(r, "minutes", ",")]
        lines.append(";".join(cells))
    (FILES / "deliveries-semicolon-latin1.csv").write_bytes(("\r\n".join(lines) + "\r\n").encode("cp1252"))

    # Comma, dot decimals, quoted thousands separators in declared_value.
    dv = declared_values(len(rows))
    lines = [",".join(COLUMNS + ["declared_value"])]
    for r, v in zip(rows, dv):
        cells = [cell_text(r, c) for c in COLUMNS] + [f'"{v}"' if "," in v else v]
        lines.append(",".join(cells))
    (FILES / "deliveries-thousands.csv").write_bytes(("\n".join(lines) + "\n").encode("utf-8"))

    # Tab-separated, dot decimals, ISO dates, LF.
    lines = ["\t".join(COLUMNS)] + ["\t".join(cell_text(r, c) for c in COLUMNS) for r in rows]
    (FILES / "deliveries.tsv").write_bytes(("\n".join(lines) + "\n").encode("utf-8"))

    # A block copied from a spreadsheet set to a decimal-comma locale: tabs,
    # decimal comma, dates as shown (dd.mm.yyyy), CRLF after every row, no
    # quoting.
    lines = ["\t".join(COLUMNS)] + ["\t".join(cell_text(r, c, ",", "%d.%m.%Y") for c in COLUMNS) for r in rows]
    (FILES / "deliveries-paste.txt").write_bytes(("\r\n".join(lines) + "\r\n").encode("utf-8"))
    return dv


# ---------------------------------------------------------------- expected

def jv(v):
    if isinstance(v, dt.date):
        return v.isoformat()
    if isinstance(v, int):
        return float(v)
    return v


def distinct(rows, col):
    return len({r[col] for r in rows if r[col] is not None})


def expected_files(rows, dv):
    missing = {c: sum(r[c] is None for r in rows) for c in COLUMNS}
    dist = {c: distinct(rows, c) for c in COLUMNS}
    spot_rows = [(0, "order_id"), (4, "distance_km"), (6, "distance_km"), (9, "delivered"), (17, "minutes"),
                 (19, "driver_grade"), (29, "parcels")]
    spots = [[i, c, jv(rows[i][c])] for i, c in spot_rows]
    base = {"columns": COLUMNS, "rows": len(rows), "missing": missing, "distinct": dist, "kinds": KINDS,
            "spot": spots}

    def wb(sheets, header_row, **kw):
        d = {"sheets": sheets, "sheet": "Deliveries", "header_row": header_row, "first_data_row": header_row + 1}
        d.update(base)
        d.update(kw)
        return d

    def text(**kw):
        d = {"sheets": None, "sheet": None, "header_row": 1, "first_data_row": 2}
        d.update(base)
        d.update(kw)
        return d

    out = {
        "deliveries.xlsx": wb(["Deliveries", "Notes"], 1, format="xlsx"),
        "deliveries-title.xlsx": wb(["Deliveries"], 3, format="xlsx",
                                    above_header=[[1, "A", "Delivery log, spring"], [2, None, None]]),
        "deliveries.ods": wb(["Deliveries", "Notes"], 1, format="ods"),
        "deliveries.xls": wb(["Deliveries", "Notes"], 1, format="xls"),
        "deliveries.xlsb": wb(["Deliveries", "Notes"], 1, format="xlsb"),
    }
    cols = ["order_id", "depot", "depot_name", "distance_km", "Päckchen", "driver_grade", "delivered", "minutes"]
    rename = {"parcels": "Päckchen"}
    kinds = {rename.get(c, c): k for c, k in KINDS.items()}
    kinds["depot_name"] = "text_category"
    kinds = {c: kinds[c] for c in cols}
    mis = {rename.get(c, c): v for c, v in missing.items()}
    mis["depot_name"] = 0
    dst = {rename.get(c, c): v for c, v in dist.items()}
    dst["depot_name"] = len({DEPOT_NAMES[r["depot"]] for r in rows})
    sp = [[i, rename.get(c, c), v] for i, c, v in spots]
    for d in (1, 2, 3):
        sp.append([next(i for i, r in enumerate(rows) if r["depot"] == d), "depot_name", DEPOT_NAMES[d]])
    out["deliveries-semicolon-latin1.csv"] = text(
        format="csv", encoding="windows-1252", delimiter=";", decimal=",", line_end="CRLF",
        date_format_in_file="dd.mm.yyyy", columns=cols, missing={c: mis[c] for c in cols},
        distinct={c: dst[c] for c in cols}, kinds=kinds, spot=sp)
    dvf = [float(s.replace(",", "")) for s in dv]
    out["deliveries-thousands.csv"] = text(
        format="csv", encoding="utf-8", delimiter=",", decimal=".", thousands=",", line_end="LF",
        date_format_in_file="yyyy-mm-dd", columns=COLUMNS + ["declared_value"],
        missing=dict(missing, declared_value=0), distinct=dict(dist, declared_value=len(set(dvf))),
        kinds=dict(KINDS, declared_value="numeric"),
        spot=spots + [[3, "declared_value", dvf[3]], [8, "declared_value", dvf[8]],
                      [0, "declared_value", dvf[0]]],
        declared_value_text=dv)
    out["deliveries.tsv"] = text(format="tsv", encoding="utf-8", delimiter="\t", decimal=".", line_end="LF",
                                 date_format_in_file="yyyy-mm-dd")
    out["deliveries-paste.txt"] = text(format="paste", encoding="utf-8", delimiter="\t", decimal=",",
                                       line_end="CRLF", quoting=False, date_format_in_file="dd.mm.yyyy")
    out["errors.xlsx"] = {
        "format": "xlsx", "sheets": ["Errors"], "sheet": "Errors", "header_row": 1, "first_data_row": 2,
        "columns": ["id", "cached_error", "formula_no_cache", "formula_cached"], "rows": len(ERROR_VALUES),
        "missing": {"id": 0, "cached_error": 2, "formula_no_cache": 3, "formula_cached": 2},
        "error_cells": [[i, c, err] for i, (_, err) in ERROR_ROWS.items() for c in ("cached_error", "formula_cached")],
        "formula_cells_without_cached_value": [[0, "formula_no_cache", "=2*21"]]
        + [[i, "formula_no_cache", f] for i, (f, _) in ERROR_ROWS.items()],
        "warnings": [
            "column cached_error: 2 cells hold spreadsheet error values (#DIV/0! in sheet row 4, #N/A in sheet "
            "row 7); they are read as missing",
            "column formula_no_cache: 3 cells hold formulas without a stored result (sheet rows 2, 4 and 7); "
            "they are read as missing (a reader that sees only stored values finds them empty)",
            "column formula_cached: 2 cells hold spreadsheet error values (#DIV/0! in sheet row 4, #N/A in sheet "
            "row 7); they are read as missing",
        ],
        "note": "a spot value that is a string starting with # is an error cell; the cell at [0, formula_cached] "
                "is the formula =2*21 with its stored result 42",
        "spot": [[0, "id", 1.0], [0, "cached_error", 12.5], [0, "formula_no_cache", None],
                 [0, "formula_cached", 42.0], [1, "formula_no_cache", 7.25], [2, "cached_error", "#DIV/0!"],
                 [5, "formula_cached", "#N/A"], [7, "formula_cached", 9.0]],
    }
    return out


# ---------------------------------------------------------------- bad inputs

def write_bad():
    BAD.mkdir(parents=True, exist_ok=True)
    good = (FILES / "deliveries.xlsx").read_bytes()
    (BAD / "truncated.xlsx").write_bytes(good[: len(good) // 2])
    rnd = np.random.default_rng(99).integers(0, 256, 2048, dtype=np.uint8).tobytes()
    assert not rnd.startswith(b"PK")
    (BAD / "random.xlsx").write_bytes(rnd)
    (BAD / "empty.csv").write_bytes(b"")
    (BAD / "header-only.csv").write_bytes(b"order_id,depot,minutes\n")
    (BAD / "ragged.csv").write_bytes(
        b"order_id,depot,minutes\nD-001,1,31.5\nD-002,2,40.1\nD-003,1,28.0\nD-004,3,35.2,extra\nD-005,4,44.9\n")
    (BAD / "duplicate-names.csv").write_bytes(
        b"item,cost,units,cost\nA,10.5,3,11.0\nB,8.25,5,8.0\nC,12.0,2,12.5\nD,9.75,4,10.0\n")
    (BAD / "all-missing-column.csv").write_bytes(
        b"id,amount,comment,units\n1,10.5,,3\n2,8.25,,5\n3,12.0,,2\n4,9.75,,4\n5,11.5,,6\n")
    (BAD / "constant-column.csv").write_bytes(
        b"id,amount,site,units\n1,10.5,7,3\n2,8.25,7,5\n3,12.0,7,2\n4,9.75,7,4\n5,11.5,7,6\n")
    (BAD / "text-in-numeric.csv").write_bytes(
        b"id,weight,units\n1,2.5,3\n2,NA,5\n3,3.75,2\n4,-,4\n5,4.0,6\n6,n/k,1\n7,.,2\n8,5.25,3\n9,1.5,4\n")
    (BAD / "bom.csv").write_bytes("\ufefforder_id,depot,minutes\nD-001,1,31.5\nD-002,2,40.1\nD-003,1,28.0\n"
                                  .encode("utf-8"))
    (BAD / "crlf-quotes-newline.csv").write_bytes(
        b'id,note,amount\r\n'
        b'1,"said ""fragile"" twice",10.5\r\n'
        b'2,"line one\nline two",8.25\r\n'
        b'3,plain,12.0\r\n'
        b'4,"comma, inside",9.75\r\n')

    exp = {
        "truncated.xlsx": {"outcome": "refuse", "line": None,
                           "what": "not a readable workbook: the zip container is cut off (no central directory)"},
        "random.xlsx": {"outcome": "refuse", "line": None,
                        "what": "not a workbook: 2048 random bytes with an .xlsx name (no zip signature)"},
        "empty.csv": {"outcome": "refuse", "line": None, "what": "the file is empty (0 bytes): no header, no data"},
        "header-only.csv": {"outcome": "refuse", "line": 1,
                            "what": "a header row (order_id,depot,minutes) but no data rows"},
        "ragged.csv": {"outcome": "refuse", "line": 5, "expected_cells": 3, "found_cells": 4,
                       "what": "line 5 has 4 cells but the header has 3"},
        "duplicate-names.csv": {
            "outcome": "load", "rows": 4, "columns": ["item", "cost", "units", "cost_2"],
            "warnings": ["the header name \"cost\" appears twice (columns 2 and 4); the second is renamed, e.g. cost_2"],
        },
        "all-missing-column.csv": {
            "outcome": "load", "rows": 5, "columns": ["id", "amount", "comment", "units"],
            "missing": {"id": 0, "amount": 0, "comment": 5, "units": 0}, "kinds": {"comment": "empty"},
            "warnings": ["column comment has no values: all 5 cells are empty"],
        },
        "constant-column.csv": {
            "outcome": "load", "rows": 5, "columns": ["id", "amount", "site", "units"],
            "kinds": {"site": "constant"},
            "warnings": ["column site has the same value (7) in every row, so it cannot explain anything"],
        },
        "text-in-numeric.csv": {
            "outcome": "load", "rows": 9, "columns": ["id", "weight", "units"],
            "missing_markers": [[1, "weight", "NA", 3], [3, "weight", "-", 5], [6, "weight", ".", 8]],
            "non_numbers": [[5, "weight", "n/k", 7]],
            "numbers_in_weight": 5,
            "warnings": ["column weight holds numbers except one cell that is not a number: \"n/k\" on line 7; "
                         "NA, - and . (lines 3, 5, 8) are missing-value markers"],
            "note": "entries are [data_row_0_based, column, text, line_1_based]",
        },
        "bom.csv": {
            "outcome": "load", "rows": 3, "columns": ["order_id", "depot", "minutes"], "warnings": [],
            "note": "starts with the UTF-8 byte-order mark EF BB BF; the first column is called order_id, "
                    "without the mark",
        },
        "crlf-quotes-newline.csv": {
            "outcome": "load", "rows": 4, "columns": ["id", "note", "amount"], "warnings": [],
            "source_lines": [2, 3, 5, 6],
            "spot": [[0, "note", "said \"fragile\" twice"], [1, "note", "line one\nline two"],
                     [3, "note", "comma, inside"], [2, "amount", 12.0]],
            "note": "CRLF row ends; the embedded line break inside the quoted cell of data row 1 is a bare LF "
                    "and is part of the cell; that record spans lines 3-4",
        },
    }
    dump(BAD / "expected.json", exp)


def _json(v, ind=0):
    """JSON with objects one key a line and lists of scalars on one line."""
    pad = " " * (ind + 1)
    if isinstance(v, dict):
        if not v:
            return "{}"
        items = [f"{pad}{json.dumps(k, ensure_ascii=False)}: {_json(x, ind + 1)}" for k, x in v.items()]
        return "{\n" + ",\n".join(items) + "\n" + " " * ind + "}"
    if isinstance(v, list) and any(isinstance(x, (dict, list)) for x in v):
        return "[\n" + ",\n".join(pad + _json(x, ind + 1) for x in v) + "\n" + " " * ind + "]"
    return json.dumps(v, ensure_ascii=False)


def dump(path, obj):
    path.write_text(_json(obj) + "\n", encoding="utf-8")


# ---------------------------------------------------------------- check

def from_serial(v):
    """A 1900-system day serial as an ISO date (None stays None)."""
    return None if v is None else (dt.date(1899, 12, 30) + dt.timedelta(days=int(v))).isoformat()


def check():
    exp = json.loads((FILES / "expected.json").read_text(encoding="utf-8"))["files"]
    problems = []

    def compare(fname, reader, got_cols, got_rows):
        e = exp[fname]
        if got_cols != e["columns"]:
            problems.append(f"{fname} ({reader}): columns {got_cols}")
        if len(got_rows) != e["rows"]:
            problems.append(f"{fname} ({reader}): {len(got_rows)} rows")
            return
        for j, c in enumerate(e["columns"]):
            m = sum(r[j] is None for r in got_rows)
            if "missing" in e and m != e["missing"][c]:
                problems.append(f"{fname} ({reader}): {m} missing in {c}")
        for i, c, v in e["spot"]:
            g = got_rows[i][e["columns"].index(c)]
            if g != v:
                problems.append(f"{fname} ({reader}): row {i} {c} = {g!r}, expected {v!r}")

    def norm(v):
        if v is None or v == "":
            return None
        if isinstance(v, dt.datetime):
            return v.date().isoformat()
        if isinstance(v, dt.date):
            return v.isoformat()
        if isinstance(v, bool):
            return v
        if isinstance(v, (int, float)):
            return float(v)
        return v

    def text_value(s, e, col):
        if s == "":
            return None
        if col == "delivered":
            fmt = "%d.%m.%Y" if e["date_format_in_file"] == "dd.mm.yyyy" else "%Y-%m-%d"
            return dt.datetime.strptime(s, fmt).date().isoformat()
        t = s.replace(",", "") if e.get("thousands") == "," and col == "declared_value" else s
        if e["decimal"] == ",":
            t = t.replace(",", ".")
        try:
            return float(t)
        except ValueError:
            return s

    # Text files with the csv module.
    for fname, e in exp.items():
        if e["sheet"] is not None:
            continue
        raw = (FILES / fname).read_bytes()
        text = raw.decode(e["encoding"])
        if e["line_end"] == "CRLF" and text.replace("\r\n", "") .count("\n") != 0:
            problems.append(f"{fname}: a bare LF in a CRLF file")
        recs = list(csv.reader(io.StringIO(text, newline=""), delimiter=e["delimiter"],
                               quoting=csv.QUOTE_NONE if e.get("quoting") is False else csv.QUOTE_MINIMAL))
        compare(fname, "csv module", recs[0], [[text_value(s, e, c) for s, c in zip(r, recs[0])] for r in recs[1:]])

    # Workbooks.
    import openpyxl

    for fname in ("deliveries.xlsx", "deliveries-title.xlsx", "errors.xlsx"):
        e = exp[fname]
        wb = openpyxl.load_workbook(FILES / fname)
        if wb.sheetnames != e["sheets"]:
            problems.append(f"{fname} (openpyxl): sheets {wb.sheetnames}")
        rows = [[norm(v) for v in r] for r in wb[e["sheet"]].iter_rows(values_only=True)]
        h = e["header_row"] - 1
        if fname == "errors.xlsx":
            # openpyxl shows formulas as their text and has no cached values.
            got = rows[h + 1:]
            want = [[1.0, 12.5, "=2*21", "=2*21"], [2.0, 7.25, 7.25, 7.25], [3.0, "#DIV/0!", "=1/0", "=1/0"],
                    [4.0, 30.0, 30.0, 30.0], [5.0, 4.5, 4.5, 4.5], [6.0, "#N/A", "=NA()", "=NA()"],
                    [7.0, 18.75, 18.75, 18.75], [8.0, 9.0, 9.0, 9.0]]
            if rows[h] != e["columns"] or got != want:
                problems.append(f"{fname} (openpyxl): {rows}")
            continue
        compare(fname, "openpyxl", rows[h], rows[h + 1:])

    try:
        from odf.opendocument import load
        from odf.table import Table, TableRow, TableCell
        from odf.namespaces import OFFICENS

        doc = load(str(FILES / "deliveries.ods"))
        tables = doc.spreadsheet.getElementsByType(Table)
        names = [t.getAttribute("name") for t in tables]
        if names != exp["deliveries.ods"]["sheets"]:
            problems.append(f"deliveries.ods (odfpy): sheets {names}")
        rows = []
        for tr in tables[0].getElementsByType(TableRow):
            r = []
            for c in tr.getElementsByType(TableCell):
                vt = c.attributes.get((OFFICENS, "value-type"))
                if vt == "float":
                    r.append(float(c.attributes[(OFFICENS, "value")]))
                elif vt == "date":
                    r.append(c.attributes[(OFFICENS, "date-value")])
                elif vt == "string":
                    r.append(str(c))
                else:
                    r.append(None)
            rows.append(r)
        compare("deliveries.ods", "odfpy", rows[0], rows[1:])
    except ImportError:
        print("check: odfpy missing, ods skipped")

    try:
        import xlrd

        book = xlrd.open_workbook(str(FILES / "deliveries.xls"))
        if book.sheet_names() != exp["deliveries.xls"]["sheets"]:
            problems.append(f"deliveries.xls (xlrd): sheets {book.sheet_names()}")
        sh = book.sheet_by_name("Deliveries")
        rows = []
        for i in range(sh.nrows):
            r = []
            for c in sh.row(i):
                if c.ctype == xlrd.XL_CELL_DATE:
                    r.append(xlrd.xldate_as_datetime(c.value, book.datemode).date().isoformat())
                elif c.ctype == xlrd.XL_CELL_EMPTY:
                    r.append(None)
                else:
                    r.append(norm(c.value))
            r += [None] * (sh.ncols - len(r))
            rows.append(r)
        compare("deliveries.xls", "xlrd", rows[0], rows[1:])
    except ImportError:
        print("check: xlrd missing, xls skipped")

    try:
        from python_calamine import CalamineWorkbook

        for fname, e in exp.items():
            if e["sheet"] is None:
                continue
            wb = CalamineWorkbook.from_path(str(FILES / fname))
            if wb.sheet_names != e["sheets"]:
                problems.append(f"{fname} (calamine): sheets {wb.sheet_names}")
            data = wb.get_sheet_by_name(e["sheet"]).to_python(skip_empty_area=False)
            width = len(e["columns"])
            rows = [[norm(v) for v in (list(r) + [None] * width)[:width]] for r in data]
            h = e["header_row"] - 1
            if fname == "errors.xlsx":
                # The Python binding turns an error cell into "" (calamine
                # itself has Data::Error), so expect errors as empty here.
                spot = [[i, c, None if isinstance(v, str) and v.startswith("#") else v] for i, c, v in e["spot"]]
                exp[fname] = dict(e, spot=spot)
                compare(fname, "calamine", rows[h], rows[h + 1:])
                exp[fname] = e
                continue
            if fname.endswith(".xlsb"):
                # The Python binding (unlike the calamine crate 0.38, which
                # gives Data::DateTime) returns xlsb dates as serial numbers.
                k = e["columns"].index("delivered")
                for r in rows[h + 1:]:
                    r[k] = from_serial(r[k])
            compare(fname, "calamine", rows[h], rows[h + 1:])
            if fname == "deliveries-title.xlsx" and (rows[0][0] != "Delivery log, spring" or any(rows[1])):
                problems.append(f"{fname} (calamine): rows above the header {rows[:2]}")
    except ImportError:
        print("check: python-calamine missing, calamine check skipped")

    try:
        from pyxlsb import open_workbook as open_xlsb

        e = exp["deliveries.xlsb"]
        with open_xlsb(str(FILES / "deliveries.xlsb")) as wb:
            if wb.sheets != e["sheets"]:
                problems.append(f"deliveries.xlsb (pyxlsb): sheets {wb.sheets}")
            with wb.get_sheet("Deliveries") as sh:
                rows = [[norm(c.v) for c in r] for r in sh.rows()]
        k = e["columns"].index("delivered")
        for r in rows[1:]:
            r[k] = from_serial(r[k])  # pyxlsb reads no number formats
        compare("deliveries.xlsb", "pyxlsb", rows[0], rows[1:])
    except ImportError:
        print("check: pyxlsb missing, xlsb skipped for it")

    if problems:
        sys.exit("make_fixtures --check failed:\n  " + "\n  ".join(problems))
    print("check: every file reads back as expected.json says")


def main():
    FILES.mkdir(parents=True, exist_ok=True)
    rows = make_table()
    write_xlsx(rows)
    write_ods(rows)
    write_xls(rows)
    write_xlsb(rows)
    dv = write_text_files(rows)
    write_errors_xlsx()
    dump(FILES / "expected.json", {
        "note": "spot entries are [data_row_index_0_based, column, value]; dates as ISO strings, numbers as "
                "floats, null = missing cell; header_row is 1-based",
        "files": expected_files(rows, dv),
    })
    write_bad()
    print(f"wrote {FILES} and {BAD}")
    if "--check" in sys.argv[1:]:
        check()


if __name__ == "__main__":
    main()
