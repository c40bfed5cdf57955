"""Writes the receipts workbooks that the import is checked against, each by an independent
writer, from one seeded table of invented receipts (receipts-source.csv, written here too).

Writers (Debian packages, versions read at run time and put in the file names):
  python3-openpyxl      two sheets, the receipts on the second, real date cells
  python3-xlsxwriter    1900 date system, and a second workbook in the 1904 date system
  python3-pandas        DataFrame.to_excel on both engines (openpyxl, xlsxwriter)
  LibreOffice Calc      soffice --headless --convert-to xlsx of the CSV, dates typed YMD
The exceljs workbook is written by make-exceljs-workbook.ts (run it after this script).

Two more workbooks repackage the openpyxl one as other conforming writers may lay a package out
(Open Packaging Conventions, ECMA-376 part 2): worksheet parts under other names, relationship
targets relative with "..", a percent-encoded target, and sheetIds that do not follow tab order.

expected.json records, per workbook, the sheet holding the receipts, its row count, the amount
total in cents, and what else the test should know. Run from the repository root:

  /usr/bin/python3 test/reference/workbooks/make_workbooks.py
  npx tsx test/reference/workbooks/make-exceljs-workbook.ts
"""
import csv
import datetime
import json
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile
import zipfile

import openpyxl
import pandas
import xlsxwriter

HERE = os.path.dirname(os.path.abspath(__file__))
ROWS = 300
SHEET = "Receipts"


def invented_receipts():
    """Seeded invented receipts: (receipt_id, customer_id, datetime, cents, store_id)."""
    rng = random.Random(20261203)
    start = datetime.datetime(2025, 1, 1)
    rows = []
    for number in range(1, ROWS + 1):
        day = start + datetime.timedelta(days=rng.randrange(0, 699))
        if number % 3 == 0:
            moment = day  # a date without a time of day
        else:
            moment = day + datetime.timedelta(hours=rng.randrange(7, 22), minutes=rng.randrange(0, 60), seconds=rng.randrange(0, 60))
        cents = rng.randrange(150, 25000)
        if number % 17 == 0:
            cents = -cents  # a refund
        rows.append((f"R{number:06d}", f"LM{rng.randrange(1, 60):05d}", moment, cents, f"S{rng.randrange(1, 17):02d}"))
    return rows


def iso(moment):
    return moment.strftime("%Y-%m-%d") if moment.time() == datetime.time(0) else moment.strftime("%Y-%m-%d %H:%M:%S")


HEADER = ["receipt_id", "customer_id", "date", "amount", "store_id"]


def write_source_csv(rows):
    with open(os.path.join(HERE, "receipts-source.csv"), "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(HEADER)
        for receipt, customer, moment, cents, store in rows:
            writer.writerow([receipt, customer, iso(moment), f"{cents / 100:.2f}", store])


def with_openpyxl(rows, path):
    book = openpyxl.Workbook()
    notes = book.active
    notes.title = "About"
    notes["A1"] = "Receipts of an invented chain, written by openpyxl for the import tests."
    sheet = book.create_sheet(SHEET)
    sheet.append(HEADER)
    for receipt, customer, moment, cents, store in rows:
        sheet.append([receipt, customer, moment, cents / 100, store])
        sheet.cell(row=sheet.max_row, column=3).number_format = "yyyy-mm-dd hh:mm:ss"
    book.save(path)


def with_xlsxwriter(rows, path, date_1904):
    book = xlsxwriter.Workbook(path, {"date_1904": date_1904})
    sheet = book.add_worksheet(SHEET)
    date_format = book.add_format({"num_format": "dd/mm/yyyy hh:mm"})
    money = book.add_format({"num_format": "#,##0.00"})
    sheet.write_row(0, 0, HEADER)
    for index, (receipt, customer, moment, cents, store) in enumerate(rows, start=1):
        sheet.write_string(index, 0, receipt)
        sheet.write_string(index, 1, customer)
        sheet.write_datetime(index, 2, moment, date_format)
        sheet.write_number(index, 3, cents / 100, money)
        sheet.write_string(index, 4, store)
    book.close()


def with_pandas(rows, path, engine):
    frame = pandas.DataFrame(
        {
            "receipt_id": [row[0] for row in rows],
            "customer_id": [row[1] for row in rows],
            "date": pandas.to_datetime([row[2] for row in rows]),
            "amount": [row[3] / 100 for row in rows],
            "store_id": [row[4] for row in rows],
        }
    )
    frame.to_excel(path, sheet_name=SHEET, index=False, engine=engine)


def libreoffice_version():
    output = subprocess.run(["soffice", "--version"], capture_output=True, text=True, check=True).stdout
    return re.search(r"LibreOffice (\d+(?:\.\d+)+)", output).group(1)


def with_libreoffice(path):
    """CSV to XLSX with LibreOffice Calc: comma, double quote, UTF-8, from line 1, column 3 as YMD date."""
    with tempfile.TemporaryDirectory() as work:
        source = os.path.join(work, SHEET + ".csv")
        shutil.copy(os.path.join(HERE, "receipts-source.csv"), source)
        profile = "file://" + os.path.join(work, "profile")
        subprocess.run(
            [
                "soffice", f"-env:UserInstallation={profile}", "--headless",
                "--infilter=CSV:44,34,76,1,1/2/2/2/3/5/4/1/5/2",
                "--convert-to", "xlsx:Calc MS Excel 2007 XML", "--outdir", work, source,
            ],
            check=True, capture_output=True,
        )
        shutil.move(os.path.join(work, SHEET + ".xlsx"), path)


def repackage(source, target, renames, edit_workbook, edit_rels):
    """Copies a workbook, renaming parts and editing the workbook part and its relationships."""
    with zipfile.ZipFile(source) as original, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as copy:
        for info in original.infolist():
            data = original.read(info.filename)
            name = renames.get(info.filename, info.filename)
            if info.filename == "xl/workbook.xml":
                data = edit_workbook(data.decode("utf-8")).encode("utf-8")
            if info.filename == "xl/_rels/workbook.xml.rels":
                data = edit_rels(data.decode("utf-8")).encode("utf-8")
            if info.filename == "[Content_Types].xml":
                text = data.decode("utf-8")
                for old, new in renames.items():
                    text = text.replace('"/' + old + '"', '"/' + new.replace(" ", "%20") + '"')
                data = text.encode("utf-8")
            copy.writestr(name, data)


def main():
    rows = invented_receipts()
    write_source_csv(rows)
    total_cents = sum(row[3] for row in rows)
    versions = {
        "openpyxl": openpyxl.__version__,
        "xlsxwriter": xlsxwriter.__version__,
        "pandas": pandas.__version__,
        "libreoffice": libreoffice_version(),
    }
    for name in os.listdir(HERE):
        if name.endswith(".xlsx") and not name.startswith("receipts-exceljs-"):
            os.remove(os.path.join(HERE, name))
    books = {}

    def add(name, writer, **facts):
        books[name] = {"writer": writer, "sheet": SHEET, "rows": ROWS, "amountTotalCents": total_cents, **facts}

    name = f"receipts-openpyxl-{versions['openpyxl']}.xlsx"
    with_openpyxl(rows, os.path.join(HERE, name))
    add(name, f"python3-openpyxl {versions['openpyxl']}", sheets=["About", SHEET], firstSheet="About")
    openpyxl_book = name

    name = f"receipts-xlsxwriter-{versions['xlsxwriter']}.xlsx"
    with_xlsxwriter(rows, os.path.join(HERE, name), False)
    add(name, f"python3-xlsxwriter {versions['xlsxwriter']}", sheets=[SHEET], firstSheet=SHEET, dateSystem=1900)
    name = f"receipts-xlsxwriter-{versions['xlsxwriter']}-date1904.xlsx"
    with_xlsxwriter(rows, os.path.join(HERE, name), True)
    add(name, f"python3-xlsxwriter {versions['xlsxwriter']} (1904 date system)", sheets=[SHEET], firstSheet=SHEET, dateSystem=1904)

    for engine in ("openpyxl", "xlsxwriter"):
        name = f"receipts-pandas-{versions['pandas']}-{engine}-{versions[engine]}.xlsx"
        with_pandas(rows, os.path.join(HERE, name), engine)
        add(name, f"python3-pandas {versions['pandas']} to_excel, engine {engine} {versions[engine]}", sheets=[SHEET], firstSheet=SHEET)

    name = f"receipts-libreoffice-{versions['libreoffice']}.xlsx"
    with_libreoffice(os.path.join(HERE, name))
    add(name, f"LibreOffice Calc {versions['libreoffice']} (soffice --headless --convert-to xlsx)", sheets=[SHEET], firstSheet=SHEET)

    # The openpyxl workbook laid out differently: parts renamed (one with a space, so its target
    # is percent-encoded), targets relative with "..", and sheetIds against the tab order.
    name = f"receipts-openpyxl-{versions['openpyxl']}-repackaged.xlsx"
    repackage(
        os.path.join(HERE, openpyxl_book),
        os.path.join(HERE, name),
        {"xl/worksheets/sheet1.xml": "xl/tabs/about notes.xml", "xl/worksheets/sheet2.xml": "xl/tabs/data.xml"},
        lambda xml: xml.replace('sheetId="1"', 'sheetId="9"'),
        lambda xml: xml.replace('Target="/xl/worksheets/sheet1.xml"', 'Target="../xl/tabs/about%20notes.xml"').replace(
            'Target="/xl/worksheets/sheet2.xml"', 'Target="tabs/./data.xml"'
        ),
    )
    add(name, f"python3-openpyxl {versions['openpyxl']}, parts renamed by this script", sheets=["About", SHEET], firstSheet="About")

    # The tabs reordered in the workbook part alone: the receipts tab first, with the higher sheetId.
    name = f"receipts-openpyxl-{versions['openpyxl']}-tab-order.xlsx"
    repackage(
        os.path.join(HERE, openpyxl_book),
        os.path.join(HERE, name),
        {},
        lambda xml: re.sub(r"(<sheet [^>]*/>)(<sheet [^>]*/>)", r"\2\1", xml),
        lambda xml: xml,
    )
    add(name, f"python3-openpyxl {versions['openpyxl']}, tabs reordered by this script", sheets=[SHEET, "About"], firstSheet=SHEET)

    expected_path = os.path.join(HERE, "expected.json")
    previous = {}
    if os.path.exists(expected_path):
        with open(expected_path, encoding="utf-8") as handle:
            previous = {key: value for key, value in json.load(handle)["workbooks"].items() if key.startswith("receipts-exceljs-")}
    with open(expected_path, "w", encoding="utf-8") as handle:
        json.dump({"source": "receipts-source.csv", "rows": ROWS, "amountTotalCents": total_cents, "workbooks": {**books, **previous}}, handle, indent=2)
        handle.write("\n")
    print(json.dumps({"rows": ROWS, "amountTotalCents": total_cents, "written": sorted(books)}, indent=2))


if __name__ == "__main__":
    sys.exit(main())
