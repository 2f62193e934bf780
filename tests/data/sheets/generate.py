"""Writes the small invented workbooks that tests/sheets.rs reads. Run once; the outputs are
committed, so the tests need no Python. Every number is synthetic: a peak-shaped integer series
k(i) = 100 + 5 * i * (20 - i) over i = 0..20, written as k / 1000 (absorbance-like) or as k
(counts), so the Rust tests can rebuild the exact same floats without rounding questions.

    python3 -m venv /tmp/wb && /tmp/wb/bin/pip install openpyxl==3.1.5 odfpy==1.4.1 msoffcrypto-tool==6.1.0
    cd tests/data/sheets && /tmp/wb/bin/python generate.py
"""

import io
import re
import zipfile

import msoffcrypto.format.ooxml
import openpyxl
from odf.opendocument import OpenDocumentSpreadsheet
from odf.table import Table, TableCell, TableRow
from odf.text import P

N = 21


def k(i):
    return 100 + 5 * i * (20 - i)


def nm(i):
    return 400 + 10 * i


def xlsx(name, sheets):
    """sheets: list of (title, rows); a row is a list of cells (None = empty)."""
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for title, rows in sheets:
        ws = wb.create_sheet(title)
        for r in rows:
            ws.append(r)
    wb.save(name)


def ods(name, sheets):
    doc = OpenDocumentSpreadsheet()
    for title, rows in sheets:
        t = Table(name=title)
        for r in rows:
            tr = TableRow()
            for c in r:
                if c is None:
                    tr.addElement(TableCell())
                elif isinstance(c, (int, float)):
                    cell = TableCell(valuetype="float", value=c)
                    cell.addElement(P(text=str(c)))
                    tr.addElement(cell)
                else:
                    cell = TableCell(valuetype="string")
                    cell.addElement(P(text=c))
                    tr.addElement(cell)
            t.addElement(tr)
        doc.spreadsheet.addElement(t)
    doc.save(name)


def both(stem, sheets):
    xlsx(stem + ".xlsx", sheets)
    ods(stem + ".ods", sheets)


# One sample: wavelength and absorbance.
one = [["Wavelength (nm)", "Absorbance"]] + [[nm(i), k(i) / 1000] for i in range(N)]
both("one_sample", [("Sheet1", one)])

# Several samples side by side over one wavelength column (aliquots of a growth series).
side = [["Wavelength (nm)", "2 min", "5 min", "10 min"]] + [
    [nm(i), k(i) / 1000, 2 * k(i) / 1000, 3 * k(i) / 1000] for i in range(N)
]
both("side_by_side", [("Series", side)])

# x,y pairs per sample, of uneven length (QD-B has 15 points on its own grid).
pairs = [["nm", "QD-A", "nm", "QD-B"]]
for i in range(N):
    row = [nm(i), k(i) / 1000]
    row += [405 + 10 * i, k(i) / 500] if i < 15 else [None, None]
    pairs.append(row)
both("xy_pairs", [("Pairs", pairs)])

# A title row above, a header row with units (PL in counts over photon energy).
units = [["QD-17 emission (invented)", None], ["Energy (eV)", "PL (counts)"]] + [
    [round(2.5 - 0.01 * i, 2), k(i) * 10] for i in range(N)
]
both("units_header", [("PL", units)])

# Notes under the data: an empty row, then text and a key/value line with a number.
notes = one + [[None, None], ["Notes", None], ["Baseline", "hexane blank"], ["Path (cm)", 1]]
both("notes_below", [("Sheet1", notes)])

# A notes sheet first, the data on the second sheet.
cover = [["Batch", "CdSe-invented-04"], ["Operator", "nobody"], ["Path (cm)", 1]]
both("second_sheet", [("Cover", cover), ("Data", one)])

# Two sheets of data: a choice is needed.
run2 = [["Wavelength (nm)", "Absorbance"]] + [[nm(i), 2 * k(i) / 1000] for i in range(N)]
both("two_runs", [("Run 1", one), ("Run 2", run2)])

# Bad: a text-only workbook, an empty one, a formula error inside the data.
xlsx("no_numbers.xlsx", [("Cover", cover[:2]), ("Plan", [["step", "what"], ["1", "heat"]])])
xlsx("empty.xlsx", [("Sheet1", [])])
err = [row[:] for row in one]
err[9][1] = "#DIV/0!"  # openpyxl writes an error-typed cell, as a failed formula leaves it
xlsx("formula_error.xlsx", [("Sheet1", err)])

# Bad: a word typed into the data (row 12, column B).
typo = [row[:] for row in one]
typo[11][1] = "see notes"
xlsx("word_in_data.xlsx", [("Sheet1", typo)])

# Repeated cells, as OpenDocument writes them: a few hundred bytes can stand for millions of cells.
NS = (
    'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
    'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
    'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"'
)
MANIFEST = (
    '<?xml version="1.0" encoding="UTF-8"?><manifest:manifest '
    'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
    '<manifest:file-entry manifest:full-path="/" '
    'manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
    '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/>'
    "</manifest:manifest>"
)


def raw_ods(name, table_xml):
    content = (
        f'<?xml version="1.0" encoding="UTF-8"?><office:document-content {NS} office:version="1.2">'
        f"<office:body><office:spreadsheet>{table_xml}</office:spreadsheet></office:body>"
        "</office:document-content>"
    )
    with zipfile.ZipFile(name, "w") as z:
        z.writestr(zipfile.ZipInfo("mimetype"), "application/vnd.oasis.opendocument.spreadsheet")
        z.writestr("content.xml", content, compress_type=zipfile.ZIP_DEFLATED)
        z.writestr("META-INF/manifest.xml", MANIFEST, compress_type=zipfile.ZIP_DEFLATED)


def num_cell(v):
    return f'<table:table-cell office:value-type="float" office:value="{v}"><text:p>{v}</text:p></table:table-cell>'


def str_cell(t):
    return f'<table:table-cell office:value-type="string"><text:p>{t}</text:p></table:table-cell>'


# Bad: 6,000 rows of 16,000 cells that each hold the number 1 (96 million cells).
raw_ods(
    "repeated_cells.ods",
    '<table:table table:name="Huge"><table:table-row table:number-rows-repeated="6000">'
    '<table:table-cell table:number-columns-repeated="16000" office:value-type="float" '
    'office:value="1"><text:p>1</text:p></table:table-cell></table:table-row></table:table>',
)

# Fine: one spectrum, then the formatted but empty rest of the sheet, written as repeats of
# empty cells (how a spreadsheet program saves a sheet with styled columns).
rows = "<table:table-row>" + str_cell("Wavelength (nm)") + str_cell("Absorbance") + "</table:table-row>"
for i in range(N):
    rows += "<table:table-row>" + num_cell(nm(i)) + num_cell(k(i) / 1000) + (
        '<table:table-cell table:number-columns-repeated="1022"/></table:table-row>'
    )
rows += (
    '<table:table-row table:number-rows-repeated="1048553">'
    '<table:table-cell table:number-columns-repeated="1024"/></table:table-row>'
)
raw_ods("empty_repeats.ods", f'<table:table table:name="Sheet1">{rows}</table:table>')

# Bad: a zip that is no workbook.
with zipfile.ZipFile("not_a_workbook.xlsx", "w") as z:
    z.writestr("readme.txt", "just a zip\n")

# Bad: password-protected workbooks. The xlsx is encrypted for real (an OLE container holding
# the EncryptedPackage); the ods carries the manifest's encryption-data entry that marks an
# encrypted OpenDocument file.
plain = io.BytesIO()
wb = openpyxl.Workbook()
for r in one:
    wb.active.append(r)
wb.save(plain)
plain.seek(0)
office = msoffcrypto.format.ooxml.OOXMLFile(plain)
with open("encrypted.xlsx", "wb") as out:
    office.encrypt("invented-password", out)

with zipfile.ZipFile("one_sample.ods") as src, zipfile.ZipFile("encrypted.ods", "w") as dst:
    for item in src.infolist():
        data = src.read(item.filename)
        if item.filename == "META-INF/manifest.xml":
            data = re.sub(
                rb'(<manifest:file-entry manifest:full-path="content.xml"[^>]*)/>',
                rb'\1><manifest:encryption-data manifest:checksum-type="SHA1/1K" '
                rb'manifest:checksum="AAAA"/></manifest:file-entry>',
                data,
            )
        dst.writestr(item, data)
