#!/usr/bin/env python3
"""Writes every sample export under demo-db/samples/ from the formulas below. Invented data:
no instrument measured any of it. Python 3 standard library only; deterministic (its own
splitmix64 generator with fixed seeds, numbers written with fixed decimals, workbooks stored
uncompressed with a fixed time stamp), so the same files come out on every machine and
tests/sample_exports.rs checks that the committed files are what this script writes.

    python3 demo-db/samples/generate.py            # rewrites the files beside this script
    python3 demo-db/samples/generate.py OUTDIR     # writes them under OUTDIR instead

The invented sample: CdSe-like dots grown in one hot-injection batch, aliquots drawn at 2, 5,
10, 20 and 30 min after injection, then the product washed. Each aliquot is diluted in hexane
and read in a 1 cm cuvette.

Energy and wavelength: E = HC / lambda, HC = 1239.841984 eV nm (CODATA 2018 h, c, e).
G(E; mu, s) = exp(-(E - mu)^2 / (2 s^2)), a Gaussian of unit height.

Absorbance (lambda = 400 .. 750 nm in 1 nm steps), with E1 = HC / lambda1 the first exciton:

    A(lambda) = a1 * [ G(E; E1, s1)
                       + 0.45 * G(E; E1 + 0.18 eV, 1.3 s1)    second transition
                       + 0.80 * G(E; E1 + 0.50 eV, 1.8 s1) ]  third transition
              + a1 * 0.9 * S(E) * (1 + 1.5 /eV * (E - E1))    continuum rising to the UV
              + c * (400 nm / lambda)^4                       scattering
              + 0.0006 * N(0, 1)                              instrument noise
    S(E) = 1 / (1 + exp(-(E - E1 - 0.30 eV) / 0.10 eV))      onset of the continuum

written to 4 decimals. Near lambda1 the higher terms add less than 0.5 nm of shift, so the
first-exciton peak of each file is lambda1 of the table below to within 1 nm.

Photoluminescence (lambda = 495 .. 720 nm in 1 nm steps, excited at EXCITATION_NM = 480 nm):

    lambda_PL = lambda1 + stokes,  stokes = 15 nm - 4 nm * (lambda1 - 520 nm) / 70 nm
    s_PL      = 0.9 * s1
    P(lambda) = round( 20 + F * g(lambda) + sqrt(20 + F * g(lambda)) * N(0, 1) )  counts
    g(lambda) = G(E; HC / lambda_PL, s_PL) / sum over the grid of (G * 1 nm)

so the PL integral over wavelength (dark counts off) is F. F is what the invented demo lab's
QY reference (rhodamine 6G in ethanol, QY 0.95, excited at 480 nm, A 0.05, integral 52000;
see demo-db/lab.json) gives for the sample's quantum yield QY, by the single-point relative
method (Brouwer, Pure Appl. Chem. 83, 2213 (2011)):

    F = 52000 * (QY / 0.95) * (1 - 10^-Aex) / (1 - 10^-0.05) * (1.3749 / 1.3611)^2

with refractive indices of hexane and ethanol 1.3749 and 1.3611, and Aex the crystals'
absorbance at 480 nm in the PL cuvette: the formula above without its scattering and noise
terms, divided by PL_DILUTION = 5 (the PL solution is the absorbance solution diluted five
times more; for the later, more concentrated aliquots Aex still exceeds 0.1, and cuvette's
inner-filter warning says so). Import the PL files with a PL dilution five times the
absorbance dilution (demo-db/README.md gives the commands).

Per sample (lambda1 in nm, s1 in eV, a1 absorbance at the first exciton, c scattering):

    sample      lambda1   s1      a1     c       QY
    2 min       520       0.062   0.16   0.010   0.12
    5 min       545       0.054   0.22   0.010   0.21
    10 min      565       0.049   0.28   0.011   0.30
    20 min      580       0.046   0.33   0.012   0.34
    30 min      590       0.047   0.36   0.012   0.33
    washed      589       0.047   0.42   0.004   0.27

Noise: each file has its own generator, seeded with SEED + the CRC-32 of its path under
samples/ (zlib.crc32, a fixed checksum), so one file can change without moving the others.
N(0, 1) is a Box-Muller normal from two uniforms (53-bit) of the generator.
"""

import math
import os
import sys
import zipfile
import zlib

HC = 1239.841984
SEED = 20260314
EXCITATION_NM = 480.0
PL_DILUTION = 5.0
DARK = 20.0

# name: (lambda1 nm, s1 eV, a1, scattering c, QY)
SAMPLES = {
    "2 min": (520.0, 0.062, 0.16, 0.010, 0.12),
    "5 min": (545.0, 0.054, 0.22, 0.010, 0.21),
    "10 min": (565.0, 0.049, 0.28, 0.011, 0.30),
    "20 min": (580.0, 0.046, 0.33, 0.012, 0.34),
    "30 min": (590.0, 0.047, 0.36, 0.012, 0.33),
    "washed": (589.0, 0.047, 0.42, 0.004, 0.27),
}

ABS_GRID = [400.0 + i for i in range(351)]
PL_GRID = [495.0 + i for i in range(226)]

M64 = (1 << 64) - 1


class Rng:
    """splitmix64: small, fast, and the same on every machine."""

    def __init__(self, name):
        self.state = (SEED + zlib.crc32(name.encode("utf-8"))) & M64

    def next_u64(self):
        self.state = (self.state + 0x9E3779B97F4A7C15) & M64
        z = self.state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M64
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M64
        return z ^ (z >> 31)

    def uniform(self):
        return (self.next_u64() >> 11) / float(1 << 53)

    def normal(self):
        u1 = max(self.uniform(), 1e-300)
        u2 = self.uniform()
        return math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)


def gauss(e, mu, s):
    return math.exp(-((e - mu) ** 2) / (2.0 * s * s))


def crystal_absorbance(lam, sample):
    """The formula's absorbance without scattering and noise."""
    l1, s1, a1, _c, _qy = SAMPLES[sample]
    e, e1 = HC / lam, HC / l1
    peaks = gauss(e, e1, s1) + 0.45 * gauss(e, e1 + 0.18, 1.3 * s1) + 0.80 * gauss(e, e1 + 0.50, 1.8 * s1)
    onset = 1.0 / (1.0 + math.exp(-(e - e1 - 0.30) / 0.10))
    return a1 * peaks + a1 * 0.9 * onset * (1.0 + 1.5 * (e - e1))


def absorbance(sample, rng, grid=ABS_GRID):
    c = SAMPLES[sample][3]
    return [crystal_absorbance(lam, sample) + c * (400.0 / lam) ** 4 + 0.0006 * rng.normal() for lam in grid]


def pl_integral(sample):
    qy = SAMPLES[sample][4]
    a_ex = crystal_absorbance(EXCITATION_NM, sample) / PL_DILUTION
    f = lambda a: 1.0 - 10.0 ** (-a)
    return 52000.0 * (qy / 0.95) * f(a_ex) / f(0.05) * (1.3749 / 1.3611) ** 2


def pl_peak_nm(sample):
    l1 = SAMPLES[sample][0]
    return l1 + 15.0 - 4.0 * (l1 - 520.0) / 70.0


def photoluminescence(sample, rng, grid=PL_GRID):
    s_pl = 0.9 * SAMPLES[sample][1]
    e_pl = HC / pl_peak_nm(sample)
    shape = [gauss(HC / lam, e_pl, s_pl) for lam in grid]
    area = sum(shape) * (grid[1] - grid[0])
    big_f = pl_integral(sample)
    out = []
    for s in shape:
        mean = DARK + big_f * s / area
        out.append(max(0, round(mean + math.sqrt(mean) * rng.normal())))
    return out


def dec(v, places=4):
    """Fixed decimals; never '-0.0000'."""
    s = f"{v:.{places}f}"
    return s[1:] if s.startswith("-") and float(s) == 0.0 else s


def nm(x):
    return f"{x:g}"


# ---------------------------------------------------------------------------------------------
# Writers


class Out:
    def __init__(self, root):
        self.root = root
        self.written = []

    def write(self, rel, data):
        path = os.path.join(self.root, *rel.split("/"))
        os.makedirs(os.path.dirname(path), exist_ok=True)
        if isinstance(data, str):
            data = data.encode("utf-8")
        with open(path, "wb") as f:
            f.write(data)
        self.written.append((rel, len(data)))


def lines(rows, eol="\n"):
    return "".join(r + eol for r in rows)


def abs_csv(sample, rel):
    y = absorbance(sample, Rng(rel))
    return lines(["Wavelength (nm),Absorbance"] + [f"{nm(x)},{dec(v)}" for x, v in zip(ABS_GRID, y)])


def pl_csv(sample, rel):
    y = photoluminescence(sample, Rng(rel))
    return lines(["Wavelength (nm),PL intensity (counts)"] + [f"{nm(x)},{v}" for x, v in zip(PL_GRID, y)])


def series(out):
    for folder, sample, tag in [
        ("growth", "2 min", "02min"),
        ("growth", "5 min", "05min"),
        ("growth", "10 min", "10min"),
        ("growth", "20 min", "20min"),
        ("washed", "washed", "washed"),
        ("arriving", "30 min", "30min"),
    ]:
        for kind, make in [("abs", abs_csv), ("pl", pl_csv)]:
            rel = f"{folder}/{kind}_{tag}.csv"
            out.write(rel, make(sample, rel))


# --- formats/ ---------------------------------------------------------------------------------


def xml_escape(s):
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def stored_zip(entries):
    """A zip of (name, bytes), stored (no compression: deflate output differs between zlib
    builds) with a fixed time stamp and file mode, so the bytes are the same on every machine."""
    import io

    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", compression=zipfile.ZIP_STORED) as z:
        for name, data in entries:
            info = zipfile.ZipInfo(name, date_time=(2026, 3, 14, 12, 0, 0))
            info.compress_type = zipfile.ZIP_STORED
            info.create_system = 3
            info.external_attr = 0o644 << 16
            z.writestr(info, data)
    return buf.getvalue()


def col_letter(i):
    return "ABCDEFGHIJ"[i]


def xlsx(sheet_name, rows):
    """The least an .xlsx needs: content types, the package and workbook relationships, the
    workbook, shared strings and one worksheet. Numbers are written as in the CSV files."""
    strings = []
    sheet_rows = []
    for r, row in enumerate(rows, start=1):
        cells = []
        for c, v in enumerate(row):
            ref = f"{col_letter(c)}{r}"
            if isinstance(v, str) and not v.lstrip("-").replace(".", "", 1).isdigit():
                if v not in strings:
                    strings.append(v)
                cells.append(f'<c r="{ref}" t="s"><v>{strings.index(v)}</v></c>')
            else:
                cells.append(f'<c r="{ref}"><v>{v}</v></c>')
        sheet_rows.append(f'<row r="{r}">{"".join(cells)}</row>')
    main = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
    rel = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    pkg = "http://schemas.openxmlformats.org/package/2006/relationships"
    ct = "application/vnd.openxmlformats-officedocument.spreadsheetml"
    head = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
    entries = [
        (
            "[Content_Types].xml",
            head + '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
            '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            f'<Override PartName="/xl/workbook.xml" ContentType="{ct}.sheet.main+xml"/>'
            f'<Override PartName="/xl/worksheets/sheet1.xml" ContentType="{ct}.worksheet+xml"/>'
            f'<Override PartName="/xl/sharedStrings.xml" ContentType="{ct}.sharedStrings+xml"/>'
            "</Types>",
        ),
        (
            "_rels/.rels",
            head + f'<Relationships xmlns="{pkg}">'
            f'<Relationship Id="rId1" Type="{rel}/officeDocument" Target="xl/workbook.xml"/>'
            "</Relationships>",
        ),
        (
            "xl/workbook.xml",
            head + f'<workbook xmlns="{main}" xmlns:r="{rel}"><sheets>'
            f'<sheet name="{xml_escape(sheet_name)}" sheetId="1" r:id="rId1"/></sheets></workbook>',
        ),
        (
            "xl/_rels/workbook.xml.rels",
            head + f'<Relationships xmlns="{pkg}">'
            f'<Relationship Id="rId1" Type="{rel}/worksheet" Target="worksheets/sheet1.xml"/>'
            f'<Relationship Id="rId2" Type="{rel}/sharedStrings" Target="sharedStrings.xml"/>'
            "</Relationships>",
        ),
        (
            "xl/sharedStrings.xml",
            head + f'<sst xmlns="{main}" count="{len(strings)}" uniqueCount="{len(strings)}">'
            + "".join(f"<si><t>{xml_escape(s)}</t></si>" for s in strings)
            + "</sst>",
        ),
        (
            "xl/worksheets/sheet1.xml",
            head + f'<worksheet xmlns="{main}"><sheetData>' + "".join(sheet_rows) + "</sheetData></worksheet>",
        ),
    ]
    return stored_zip([(n, d.encode("utf-8")) for n, d in entries])


def ods(sheet_name, rows):
    """The least an .ods needs: the uncompressed mimetype first, content.xml and the manifest
    (OpenDocument 1.2, part 3)."""
    ns = (
        'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"'
    )
    body = []
    for row in rows:
        cells = []
        for v in row:
            if isinstance(v, str) and not v.lstrip("-").replace(".", "", 1).isdigit():
                cells.append(f'<table:table-cell office:value-type="string"><text:p>{xml_escape(v)}</text:p></table:table-cell>')
            else:
                cells.append(f'<table:table-cell office:value-type="float" office:value="{v}"><text:p>{v}</text:p></table:table-cell>')
        body.append("<table:table-row>" + "".join(cells) + "</table:table-row>")
    content = (
        f'<?xml version="1.0" encoding="UTF-8"?>\n<office:document-content {ns} office:version="1.2">'
        f'<office:body><office:spreadsheet><table:table table:name="{xml_escape(sheet_name)}">'
        + "".join(body)
        + "</table:table></office:spreadsheet></office:body></office:document-content>"
    )
    manifest = (
        '<?xml version="1.0" encoding="UTF-8"?>\n<manifest:manifest '
        'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
        '<manifest:file-entry manifest:full-path="/" manifest:version="1.2" '
        'manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
        '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/>'
        "</manifest:manifest>"
    )
    return stored_zip(
        [
            ("mimetype", b"application/vnd.oasis.opendocument.spreadsheet"),
            ("content.xml", content.encode("utf-8")),
            ("META-INF/manifest.xml", manifest.encode("utf-8")),
        ]
    )


def jcamp(sample, rel):
    """JCAMP-DX 4.24, ##XYDATA=(X++(Y..Y)) in AFFN: integer ordinates times YFACTOR, ten a line,
    each line led by the abscissa of its first ordinate."""
    y = absorbance(sample, Rng(rel))
    ints = [round(v / 0.0001) for v in y]
    head = [
        f"##TITLE=QD-S1 aliquot {sample} (invented sample)",
        "##JCAMP-DX=4.24",
        "##DATA TYPE=UV/VIS SPECTRUM",
        "##ORIGIN=cuvette demo-db/samples/generate.py (invented data)",
        "##OWNER=public domain",
        "##SAMPLE DESCRIPTION=CdSe-like dots in hexane, 1 cm cuvette",
        "##XUNITS=NANOMETERS",
        "##YUNITS=ABSORBANCE",
        "##XFACTOR=1",
        "##YFACTOR=0.0001",
        f"##FIRSTX={nm(ABS_GRID[0])}",
        f"##LASTX={nm(ABS_GRID[-1])}",
        "##DELTAX=1",
        f"##MINY={min(ints) * 0.0001:.4f}",
        f"##MAXY={max(ints) * 0.0001:.4f}",
        f"##NPOINTS={len(ints)}",
        "##FIRSTY=" + dec(ints[0] * 0.0001),
        "##XYDATA=(X++(Y..Y))",
    ]
    body = []
    for i in range(0, len(ints), 10):
        body.append(nm(ABS_GRID[i]) + " " + " ".join(str(v) for v in ints[i : i + 10]))
    return lines(head + body + ["##END="])


def formats(out):
    # Plain CSV with a header: the 10 min aliquot.
    rel = "formats/plain.csv"
    out.write(rel, abs_csv("10 min", rel))

    # Tab-separated, wavelength descending as many scanning instruments write it: 5 min.
    rel = "formats/tab_separated.txt"
    y = absorbance("5 min", Rng(rel))
    rows = [f"{nm(x)}\t{dec(v)}" for x, v in zip(ABS_GRID, y)]
    out.write(rel, lines(["Wavelength (nm)\tAbsorbance"] + rows[::-1]))

    # Decimal comma, semicolons, CRLF: 20 min.
    rel = "formats/decimal_comma.csv"
    y = absorbance("20 min", Rng(rel))
    rows = [f"{nm(x)};{dec(v)}".replace(".", ",") for x, v in zip(ABS_GRID, y)]
    out.write(rel, lines(["Wavelength (nm);Absorbance"] + rows, "\r\n"))

    # JCAMP-DX: 2 min.
    rel = "formats/jcamp.jdx"
    out.write(rel, jcamp("2 min", rel))

    # A preamble of settings, the data between begin/end markers: the washed product.
    rel = "formats/markers.txt"
    y = absorbance("washed", Rng(rel))
    pre = [
        "Sample: QD-S1 washed product (invented)",
        "Operator: Wren Halloway",
        "Date: 2026-03-14",
        "Solvent: hexane",
        "Path length: 1 cm",
        "Scan: 750 to 400 nm, 1 nm steps",
        "",
        "Begin spectral data",
    ]
    rows = [f"{nm(x)}, {dec(v)}" for x, v in zip(ABS_GRID, y)]
    out.write(rel, lines(pre + rows + ["End spectral data"]))

    # Data, then an instrument-information block below it: the 30 min aliquot.
    rel = "formats/trailing_info.csv"
    y = absorbance("30 min", Rng(rel))
    rows = [f"{nm(x)},{dec(v)}" for x, v in zip(ABS_GRID, y)]
    tail = [
        "",
        "Instrument information",
        "Lamp change: 340 nm",
        "Slit width: 2 nm",
        "Averaging time: 0.1 s",
        "Baseline: hexane blank",
    ]
    out.write(rel, lines(["Wavelength (nm),Absorbance"] + rows + tail))

    # A spreadsheet-saved CSV: a title row, quoted headers, two samples side by side.
    rel = "formats/side_by_side.csv"
    a = absorbance("5 min", Rng(rel + " 5 min"))
    b = absorbance("10 min", Rng(rel + " 10 min"))
    rows = [f"{nm(x)},{dec(u)},{dec(v)}" for x, u, v in zip(ABS_GRID, a, b)]
    out.write(
        rel,
        lines(['"QD-S1 absorbance, two aliquots (invented)",,', '"Wavelength (nm)","5 min","10 min"'] + rows, "\r\n"),
    )

    # Per cent transmittance, %T = 100 * 10^-A: the 10 min aliquot.
    rel = "formats/percent_t.csv"
    y = absorbance("10 min", Rng(rel))
    rows = [f"{nm(x)},{dec(100.0 * 10.0 ** (-v), 3)}" for x, v in zip(ABS_GRID, y)]
    out.write(rel, lines(["Wavelength (nm),%T"] + rows))

    # x in eV, 1.66 to 3.10 eV in 0.005 eV steps (ascending energy, descending wavelength): 20 min.
    rel = "formats/energy_ev.csv"
    ev = [round(1.66 + 0.005 * i, 3) for i in range(289)]
    y = absorbance("20 min", Rng(rel), grid=[HC / e for e in ev])
    out.write(rel, lines(["Energy (eV),Absorbance"] + [f"{e:.3f},{dec(v)}" for e, v in zip(ev, y)]))

    # UTF-16 little-endian with a byte-order mark, tab-separated, CRLF (a "Unicode text" save): 5 min.
    rel = "formats/utf16.txt"
    y = absorbance("5 min", Rng(rel))
    text = lines(
        ["Sample\tQD-S1 5 min (invented)", "Temperature\t21 °C", "Wavelength (nm)\tAbsorbance"]
        + [f"{nm(x)}\t{dec(v)}" for x, v in zip(ABS_GRID, y)],
        "\r\n",
    )
    out.write(rel, b"\xff\xfe" + text.encode("utf-16-le"))

    # Workbooks: the 20 min aliquot as .xlsx, the washed product as .ods.
    rel = "formats/workbook.xlsx"
    y = absorbance("20 min", Rng(rel))
    out.write(rel, xlsx("Spectrum", [["Wavelength (nm)", "Absorbance"]] + [[nm(x), dec(v)] for x, v in zip(ABS_GRID, y)]))
    rel = "formats/workbook.ods"
    y = absorbance("washed", Rng(rel))
    out.write(rel, ods("Spectrum", [["Wavelength (nm)", "Absorbance"]] + [[nm(x), dec(v)] for x, v in zip(ABS_GRID, y)]))


def main():
    root = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    out = Out(root)
    series(out)
    formats(out)
    total = sum(n for _, n in out.written)
    for rel, n in out.written:
        print(f"{n:8d}  {rel}")
    print(f"{total:8d}  bytes in {len(out.written)} files")


if __name__ == "__main__":
    main()
