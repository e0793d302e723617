"""Write the reader test corpus: small, awkward spectrometer exports (synthetic values).

Run ``python tests/data/readers/make_corpus.py`` to regenerate; the files are committed as
fixtures, byte for byte (the encodings are the point), and tests/test_io.py reads them. Every
value is a simple function of the row number, so the tests can say what each file must give.
"""
from __future__ import annotations

import io
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent


def t_percent(i):
    """Synthetic %T of row i: 10, 12.5, 15, ..."""
    return 10 + 2.5 * i


def write(name: str, data: bytes) -> None:
    (HERE / name).write_bytes(data)


def lines(*rows: str, eol: str = "\n") -> str:
    return eol.join(rows) + eol


def corpus() -> dict:
    """File name -> bytes."""
    out = {}
    n = 20
    # 1. comma, '.' decimal, metadata lines of three kinds, a comment, a blank line, %T.
    rows = [f"{400 + i},{t_percent(i):.2f}" for i in range(n)]
    out["comma_percent_meta.csv"] = lines(
        "Sample: ZX-1", "Thickness: 650 nm", "Operator = bench 2",
        "Instrument,double-beam UV-Vis-NIR", "# exported by the instrument software", "",
        "Wavelength (nm),%T", *rows, eol="\r\n").encode("utf-8")
    # 2. semicolon, decimal comma, Latin-1 header with µ and °, µm axis, descending.
    rows = [f"{(0.419 - 0.001 * i):.3f};{t_percent(n - 1 - i):.2f}".replace(".", ",")
            for i in range(n)]
    out["semicolon_decimal_comma_latin1.csv"] = lines(
        "Probe;Schicht-7", "Messtemperatur: 25 °C", "Thickness (µm);0,45", "",
        "Wavelength [µm];T (%)", *rows, eol="\r\n").encode("latin-1")
    # 3. tab, UTF-8 with BOM, energy axis, absorbance.
    rows = [f"{3.0 + 0.05 * i:.2f}\t{0.1 * i:.3f}" for i in range(n)]
    out["tab_energy_absorbance_bom.txt"] = (
        "\ufeff" + lines("Energy [eV]\tAbs", *rows)).encode("utf-8")
    # 4. whitespace, '#' comments, the header in a comment, an inline comment, fraction T.
    rows = [f"  {500 + 5 * i:7.1f}   {t_percent(i) / 100:.4f}" for i in range(n)]
    rows[3] += "   # lamp change"
    out["whitespace_hash_comments.dat"] = lines(
        "# synthetic test spectrum", "# Sample: WS-3", "#", "# lambda/nm   T", *rows
    ).encode("ascii")
    # 5. UTF-16 LE with BOM, tab, wavenumber axis, R%.
    rows = [f"{20000 + 100 * i}\t{20 + i:.1f}" for i in range(n)]
    out["utf16_bom_wavenumber.txt"] = lines("Wavenumber (cm-1)\tR%", *rows).encode("utf-16")
    # 6. UTF-16 LE without BOM.
    rows = [f"{600 + i},{t_percent(i):.2f}" for i in range(n)]
    out["utf16le_no_bom.csv"] = lines("Wavelength (nm),%T", *rows).encode("utf-16-le")
    # 7. descending scan with two duplicate x values (averaged: 0.30 and 0.50 -> 0.40).
    xs = [710 - i for i in range(n)]
    ys = [0.02 * i + 0.1 for i in range(n)]
    rows = [f"{x},{y:.2f}" for x, y in zip(xs, ys)]
    rows.insert(5, "705,0.50")      # duplicate of 705 (0.30 in the table)
    rows.insert(12, "699,0.44")     # duplicate of 699 (0.32 in the table) -> 0.38
    out["descending_duplicates.csv"] = lines("Wavelength (nm),T", *rows).encode("ascii")
    # 8. several quantity columns against one x column.
    rows = [f"{450 + 2 * i},{t_percent(i):.2f},{t_percent(i) + 1:.2f},{t_percent(i) + 2:.2f}"
            for i in range(n)]
    out["several_columns.csv"] = lines("Sample: batch Q",
                                       "Wavelength (nm),Film A %T,Film B %T,Film C %T",
                                       *rows).encode("utf-8")
    # 9. absorption coefficient per metre, photon-energy axis "hv (eV)".
    rows = [f"{2.0 + 0.1 * i:.1f},{1e5 * (i + 1):.6g}" for i in range(n)]
    out["alpha_per_m.csv"] = lines("hv (eV),alpha (1/m)", *rows).encode("ascii")
    # 10. α in cm^-1 with a Greek header, UTF-8, tab.
    rows = [f"{1.5 + 0.02 * i:.2f}\t{100 * (i + 1)}" for i in range(n)]
    out["alpha_greek_utf8.txt"] = lines("E (eV)\tα (cm^-1)", *rows).encode("utf-8")
    # 11. x header without a unit, values 190..3300 -> nm.
    rows = [f"{190 + 160 * i},{t_percent(i):.2f}" for i in range(n)] + ["3300,60.00"]
    out["x_without_unit_nm.csv"] = lines("x,%T", *rows).encode("ascii")
    # 12. x header without a unit, values 0.2..3.3: µm or eV? (error)
    rows = [f"{0.2 + 0.155 * i:.3f},{t_percent(i) / 100:.3f}" for i in range(n)] + ["3.3,0.6"]
    out["x_without_unit_ambiguous.csv"] = lines("x,T", *rows).encode("ascii")
    # 13. diffuse reflectance, percent from the data range (no '%' in the header).
    rows = [f"{300 + 10 * i}\t{5 + 4 * i:.1f}" for i in range(n)]
    out["diffuse_reflectance.txt"] = lines("Wavelength (nm)\tR_diffuse", *rows).encode("ascii")
    # 14. Kubelka–Munk function F(R) (converted to R∞).
    rows = [f"{300 + 10 * i},{0.1 * (i + 1):.1f}" for i in range(n)]
    out["kubelka_munk.csv"] = lines("Wavelength (nm),F(R)", *rows).encode("ascii")
    # 15. blank and non-numeric rows inside the table, a trailer below it.
    rows = [f"{400 + i},{t_percent(i):.2f}" for i in range(n)]
    rows.insert(8, "")
    rows.insert(12, "-- lamp change --")
    out["blank_and_text_rows.csv"] = lines("Wavelength (nm),%T", *rows, "", "End of data",
                                           "Points,20").encode("ascii")
    # 16. every cell quoted, decimal comma inside the quotes, comma separator.
    rows = [f'"{400 + i},5","{t_percent(i):.2f}"'.replace(".", ",") for i in range(n)]
    out["quoted_decimal_comma.csv"] = lines('"Wavelength (nm)","%T"', *rows).encode("utf-8")
    # 17. names in one row, units in the next.
    rows = [f"{400 + i},{t_percent(i):.2f}" for i in range(n)]
    out["two_row_header.csv"] = lines("Wavelength,Transmittance", "nm,%", *rows).encode("ascii")
    # 18. old Mac line endings (CR only), absorbance.
    rows = [f"{800 - 10 * i}\t{0.05 * i:.2f}" for i in range(n)]
    out["cr_line_endings.txt"] = lines("Wavelength (nm)\tAbsorbance", *rows,
                                       eol="\r").encode("ascii")
    # 19. Ångström axis (converted to nm).
    rows = [f"{4000 + 10 * i},{t_percent(i):.2f}" for i in range(n)]
    out["angstrom_axis.csv"] = lines("Wavelength (Å),%T", *rows).encode("utf-8")
    # 20. empty cells and NaN are missing values (dropped with a warning).
    rows = [f"{400 + i},{t_percent(i):.2f}" for i in range(n)]
    rows[4], rows[9] = "404,", "409,NaN"
    out["missing_values.csv"] = lines("Wavelength (nm),%T", *rows).encode("ascii")
    # 21. no header at all, nm range: the quantity must be given.
    rows = [f"{400 + i}\t{t_percent(i) / 100:.3f}" for i in range(n)]
    out["no_header.txt"] = lines(*rows).encode("ascii")
    # 22. no names row: axis keys above a data marker stand in for the header.
    rows = [f"{400 + i}\t{0.05 * i:.2f}" for i in range(n)]
    out["axis_keys.txt"] = lines("TITLE\tfilm 9", "XUNITS\tNANOMETERS", "YUNITS\tABSORBANCE",
                                 "XYDATA", *rows).encode("ascii")
    # 23. metadata directly above the table, no header, a marker line is not a header.
    rows = [f"{400 + i}\t{t_percent(i):.2f}" for i in range(n)]
    out["metadata_then_marker.txt"] = lines("Sample: MK-2", "Thickness: 0.5 um",
                                            ">>> begin data <<<", *rows).encode("ascii")

    # Broken files.
    out["empty.csv"] = b""
    out["header_only.csv"] = b"Wavelength (nm),%T\r\n"
    rows = [f"{500 + i},{t_percent(i):.2f}" for i in range(n)]
    rows[6] = "506,abc"
    out["text_cell.csv"] = lines("Sample: TC", "Wavelength (nm),%T", *rows).encode("ascii")
    rows = [f"{500 + i},{t_percent(i):.2f}" for i in range(n)]
    rows[10] = "510"
    out["short_row.csv"] = lines("Wavelength (nm),%T", *rows).encode("ascii")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        for part, xml in (("[Content_Types].xml", "<Types/>"), ("xl/workbook.xml",
                                                                "<workbook/>")):
            # A fixed date keeps the bytes the same on every run.
            z.writestr(zipfile.ZipInfo(part, date_time=(2020, 1, 1, 0, 0, 0)),
                       '<?xml version="1.0"?>' + xml)
    out["workbook.xlsx"] = buf.getvalue()
    out["binary.dat"] = bytes(range(256)) * 4
    rows = [f"{500 + i},{t_percent(i):.2f}" for i in range(n)]
    out["undetectable_quantity.csv"] = lines("Wavelength (nm),Signal", *rows).encode("ascii")
    out["absorption_ambiguous.csv"] = lines("Wavelength (nm),Absorption",
                                            *rows).encode("ascii")
    out["too_few_points.csv"] = lines("Wavelength (nm),%T", "500,10", "501,11",
                                      "502,12").encode("ascii")
    rows = [f"{500 + i},{0.3 + 0.05 * i:.2f}" for i in range(n)]      # up to 1.25
    out["percent_or_fraction.csv"] = lines("Wavelength (nm),T", *rows).encode("ascii")
    return out


def main() -> None:
    for name, data in corpus().items():
        write(name, data)
    print(f"wrote {len(corpus())} files to {HERE}")


if __name__ == "__main__":
    main()
