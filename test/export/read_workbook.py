"""Reads a workbook with openpyxl (Debian's python3-openpyxl), independently of exceljs, and
prints one JSON object: per sheet its name, size, header, frozen pane, auto-filter, column
widths and, with --values, every cell as value, openpyxl data type, number format and (when set)
the quote-prefix flag; and the workbook's defined names. It also
counts formula elements (<f>) in the raw sheet XML, so a test can prove no formula was written.

Usage: python3 read_workbook.py FILE.xlsx [--values]
"""
import datetime
import json
import re
import sys
import zipfile
from xml.etree import ElementTree

import openpyxl
from openpyxl import load_workbook


def cell_json(cell):
    value = cell.value
    if isinstance(value, (datetime.datetime, datetime.date)):
        value = value.isoformat()
    entry = {"v": value, "t": cell.data_type, "f": cell.number_format}
    if cell.quotePrefix:
        entry["q"] = True
    return entry


def main():
    path = sys.argv[1]
    with_values = "--values" in sys.argv[2:]
    workbook = load_workbook(path)
    sheets = []
    for sheet in workbook.worksheets:
        rows = list(sheet.iter_rows())
        info = {
            "name": sheet.title,
            "maxRow": sheet.max_row,
            "maxColumn": sheet.max_column,
            "frozen": sheet.freeze_panes,
            "autoFilter": sheet.auto_filter.ref,
            "widths": {letter: dimension.width for letter, dimension in sheet.column_dimensions.items()},
            "header": [cell.value for cell in rows[0]] if rows else [],
        }
        if with_values:
            info["rows"] = [[cell_json(cell) for cell in row] for row in rows]
        sheets.append(info)
    with zipfile.ZipFile(path) as archive:
        formulas = sum(
            len(re.findall(rb"<f[ >/]", archive.read(name)))
            for name in archive.namelist()
            if name.startswith("xl/worksheets/") and name.endswith(".xml")
        )
        # openpyxl keeps no _xlnm._FilterDatabase names, so they are read from the workbook part itself.
        main = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
        root = ElementTree.fromstring(archive.read("xl/workbook.xml"))
        defined = [
            {
                "name": element.get("name"),
                "localSheetId": None if element.get("localSheetId") is None else int(element.get("localSheetId")),
                "hidden": element.get("hidden") in ("1", "true"),
                "value": element.text,
            }
            for element in root.iter(main + "definedName")
        ]
    json.dump({"reader": "openpyxl " + openpyxl.__version__, "sheets": sheets, "formulaElements": formulas, "definedNames": defined}, sys.stdout)


if __name__ == "__main__":
    main()
