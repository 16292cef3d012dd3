#!/usr/bin/env python3
"""Reads a workbook with openpyxl (an independent xlsx reader) and prints
every sheet's cell values as JSON: {"sheet": [[row cells], ...], ...}.

Used by tests/exports.rs to check that plumbline's results workbook reads
back to the same values. Numbers are printed with repr(), so every digit
survives; empty cells are null.

Usage: python3 tests/reference/workbook_readback.py FILE.xlsx
"""
import json
import sys

import openpyxl


def main(path):
    wb = openpyxl.load_workbook(path, data_only=True)
    out = {}
    for ws in wb.worksheets:
        rows = []
        for row in ws.iter_rows(values_only=True):
            rows.append([c for c in row])
        out[ws.title] = rows
    formats = {}
    for ws in wb.worksheets:
        if ws.max_row >= 2:
            formats[ws.title] = [ws.cell(row=2, column=j).number_format for j in range(1, ws.max_column + 1)]
    json.dump({"sheets": out, "formats": formats}, sys.stdout, allow_nan=False, default=str)


if __name__ == "__main__":
    main(sys.argv[1])
