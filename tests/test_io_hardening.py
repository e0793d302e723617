"""Reader hardening: the reproducers of odd files found by fuzzing and probing (Unicode space
separators, quotes the csv module refuses, lines of millions of cells, messages for values that
cannot be a transmittance), and the reader's memory against the size of the file."""
from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from edgefit.errors import EdgefitError
from edgefit.io import parse_spectra

WL = np.linspace(300.0, 800.0, 60)
T_PCT = 80.0 / (1 + np.exp((400.0 - WL) / 10.0)) + 0.1


def table(sep: str, y=T_PCT, header="Wavelength (nm){sep}%T") -> str:
    return header.format(sep=sep) + "\n" + "".join(f"{a:.1f}{sep}{b:.4f}\n" for a, b in zip(WL, y))


def error(data: bytes, name="f.csv", **kw) -> EdgefitError:
    with pytest.raises(EdgefitError) as info:
        parse_spectra(data, name, **kw)
    assert info.value.fix, "every reader error says how to fix it"
    return info.value


# ------------------------------------------------------------------ Unicode space separators

SPACES = {"no-break U+00A0": "\u00a0", "thin U+2009": "\u2009", "em U+2003": "\u2003",
          "narrow no-break U+202F": "\u202f", "ideographic U+3000": "\u3000",
          "tab and no-break": "\t\u00a0", "comma and no-break": ",\u00a0"}


@pytest.mark.parametrize("sep", list(SPACES.values()), ids=list(SPACES))
def test_unicode_space_separators_read_like_plain_ones(sep):
    (s,) = parse_spectra(table(sep).encode("utf-8"), "sheet.csv")
    assert s.quantity == "transmittance" and s.y_unit == "percent" and s.x_unit == "nm"
    np.testing.assert_allclose(s.x, WL, atol=0.05)
    np.testing.assert_allclose(s.y, np.round(T_PCT, 4), atol=1e-9)


def test_latin1_no_break_space_byte_separates_columns():
    data = table("\u00a0").encode("latin-1")
    assert b"\xa0" in data
    (s,) = parse_spectra(data, "sheet.txt")
    np.testing.assert_allclose(s.x, WL, atol=0.05)


def test_a_few_no_break_rows_in_a_space_separated_table():
    # The reproducer of the uncaught ValueError: rows that the row pattern accepted (\s also
    # matches U+00A0) but numpy.fromstring did not.
    lines = table(" ").splitlines()
    lines[10] = lines[10].replace(" ", "\u00a0")
    lines[30] = lines[30].replace(" ", "\u3000 ")
    (s,) = parse_spectra(("\n".join(lines) + "\n").encode(), "mixed.txt")
    assert s.points == WL.size
    np.testing.assert_allclose(s.x, WL, atol=0.05)


def test_zero_width_space_inside_numbers_is_ignored():
    (s,) = parse_spectra(table(",").replace(".", "\u200b.").encode(), "zw.csv")
    np.testing.assert_allclose(s.x, WL, atol=0.05)


# ------------------------------------------------------------------ quotes, long lines

def test_a_quoted_field_longer_than_the_csv_limit_is_an_edgefit_error():
    # csv.Error('field larger than field limit (131072)') escaped before
    data = ('"1",' * 500_000).encode()
    err = error(data)
    assert "characters long" in str(err) and err.line == 1


def test_a_spectrum_written_in_one_line_says_so():
    data = ("1 " * 1_000_000).encode()
    err = error(data, "row.txt")
    assert "one row per point" in str(err) and "columns" in err.fix


def test_long_lines_around_a_table_are_ignored():
    data = ("# " + "x" * 300_000 + "\n" + table(",") + "9" * 200_001 + "\n").encode()
    (s,) = parse_spectra(data, "f.csv")
    assert s.points == WL.size


# ------------------------------------------------------------------ messages

def test_single_column_of_numbers_is_not_called_a_header():
    err = error(("%T\n" + "".join(f"{v:.3f}\n" for v in T_PCT)).encode())
    assert "one column of numbers" in str(err) and "header without data" not in str(err)
    assert err.line == 2 and "x values" in err.fix


def test_percent_transmittance_above_100_is_named_not_divided():
    err = error(table(",", y=T_PCT * 3).encode())
    text = str(err)
    assert "divide by 100" not in text and "exceed 150 %" in text and "cannot be much above" in text
    assert err.column == "%T" and err.line is not None


@pytest.mark.parametrize("header", ["Wavelength (nm),T", "Wavelength (nm),%T",
                                    "Wavelength (nm),R"])
def test_all_negative_transmittance_or_reflectance_is_an_error(header):
    err = error(table(",", y=-T_PCT / 100, header=header).encode())
    assert "zero or negative" in str(err) and "baseline" in err.fix


def test_a_few_negative_values_are_still_read():
    y = T_PCT.copy()
    y[:3] = -0.2
    (s,) = parse_spectra(table(",", y=y).encode(), "f.csv")
    assert s.points == WL.size


# ------------------------------------------------------------------ memory

def _peak_ratio(data: bytes) -> float:
    parse_spectra(table(",").encode(), "warm.csv")        # imports and caches outside the count
    tracemalloc.start()
    try:
        try:
            parse_spectra(data, "big.txt")
        except EdgefitError:
            pass
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return peak / len(data)


N = 3_000_000          # bytes of the worst-case line: a few MB (the upload limit is 20 MB)

WORST_LINES = {
    "one line of numbers and spaces": ("1 " * (N // 2)).encode(),
    "one line of numbers and commas": ("1," * (N // 2)).encode(),
    "one line of quoted numbers": ('"1";' * (N // 4)).encode(),
    "a header, one long row, a short row": b"x\ty\n" + ("1\t" * (N // 2)).encode() + b"\n1\t2\n",
    "two long rows": (("1 " * (N // 4)) + "\n" + ("1 " * (N // 4))).encode(),
    "a table under a long comment": b"#" + b"a," * (N // 2) + b"\n" + table(",").encode(),
}


@pytest.mark.parametrize("data", list(WORST_LINES.values()), ids=list(WORST_LINES))
def test_reader_memory_of_a_worst_case_line_is_bounded(data):
    # Before: ~330 bytes of Python objects per byte of such a line (a 10 MB line took 3 GB).
    assert _peak_ratio(data) <= 10


def test_reader_memory_of_a_table_at_the_row_limit():
    # 200,000 rows of "wavelength,%T" (the default max_points): the Python string per line is
    # most of it (~70 bytes for a 17-byte row), so the ratio is the worst of any file of
    # realistic rows: measured 10.2 for comma, tab, semicolon and space (2026-12-03).
    x = np.linspace(200, 3000, 200_000)
    data = ("Wavelength (nm),%T\n" + "".join(f"{a:.3f},{50 + 40 * np.sin(a / 50):.4f}\n"
                                             for a in x)).encode()
    assert _peak_ratio(data) <= 11


def test_other_scripts_digits_take_the_careful_path():
    # fuzz reproducer: "１２" (fullwidth digits) matched the row pattern's \d, and
    # numpy.fromstring raised ValueError on it
    lines = table(",").splitlines()
    lines[5] = "１２" + lines[5][3:]           # "１２.9,0.2076": read by float() as 12.9
    (s,) = parse_spectra(("\n".join(lines) + "\n").encode(), "wide.csv")
    assert s.points == WL.size and s.x[0] == 12.9


@pytest.mark.parametrize("edit, words", [
    (lambda y: np.r_[y[:-1], 1e308], "not a plausible measurement"),     # fuzz file 1603
    (lambda y: -np.abs(y) * 1e4, "not a measured absorbance"),          # fuzz file 633
    (lambda y: y * 100, "not a measured absorbance"),
])
def test_absorbance_values_no_measurement_gives_are_errors(edit, words):
    a = np.linspace(0.05, 2.0, WL.size)
    err = error(table(",", y=edit(a), header="Wavelength (nm){sep}Abs").encode())
    assert words in str(err) and err.line is not None


def test_an_x_without_a_finite_photon_energy_is_an_error():
    # fuzz file 974: x = 1e-320 nm (hc/x overflows)
    lines = table(",").splitlines()
    lines[3] = "1e-320," + lines[3].split(",")[1]
    err = error(("\n".join(lines) + "\n").encode())
    assert "finite photon energy" in str(err) and err.line == 4


def test_a_long_line_of_words_above_a_two_column_table_is_read():
    # fuzz file 6103: 43,000 "1 " above the table; the split of a two-column header tried
    # every split point of the line (quadratic: minutes)
    data = ("# lambda/nm   T\n" + "1 " * 43_000 + "\n" + table(" ", header="")).encode()
    (s,) = parse_spectra(data, "ws.dat", quantity="transmittance")
    assert s.points == WL.size


def test_percent_transmittance_a_little_above_100_is_read_with_a_warning():
    y = T_PCT.copy()
    y[-5:] = 112.0
    (s,) = parse_spectra(table(",", y=y).encode(), "f.csv")
    (w,) = [w for w in s.warnings if "above 105 %" in w]
    assert "5 transmittance values" in w and "up to 112 %" in w and "reference" in w
