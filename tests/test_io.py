"""Readers: a corpus of awkward exports (tests/data/readers, synthetic values written by
make_corpus.py beside them), the error messages a user sees, parse_length_nm, a property test
over dialects, and the demo scenario's files against their manifest."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from edgefit.errors import EdgefitError
from edgefit.io import (DETECTION_RULES, normalise_quantity, normalise_x_unit, parse_length_nm,
                        parse_spectra, read_spectra)
from edgefit.optics import HC_EV_NM, kubelka_munk
from edgefit.spectrum import QUANTITIES, X_UNITS

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "tests" / "data" / "readers"
DEMO = ROOT / "spectra_demo"

# Synthetic %T of row i in the corpus (make_corpus.t_percent).
T_PERCENT = 10 + 2.5 * np.arange(20)


def one(name, **kw):
    specs = read_spectra(CORPUS / name, **kw)
    assert len(specs) == 1
    return specs[0]


def error_of(name, **kw) -> EdgefitError:
    with pytest.raises(EdgefitError) as info:
        read_spectra(CORPUS / name, **kw)
    return info.value


# ------------------------------------------------------------------ the corpus is current

def test_corpus_files_match_their_generator():
    import importlib.util
    spec = importlib.util.spec_from_file_location("make_corpus", CORPUS / "make_corpus.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    files = mod.corpus()
    assert len(files) >= 30
    for name, data in files.items():
        assert (CORPUS / name).read_bytes() == data, f"{name} differs: run make_corpus.py"


# ------------------------------------------------------------------ dialects and encodings

def test_comma_percent_with_metadata_and_thickness_offer():
    s = one("comma_percent_meta.csv")
    assert (s.quantity, s.x_unit, s.y_unit) == ("transmittance", "nm", "percent")
    np.testing.assert_allclose(s.x, 400 + np.arange(20))
    np.testing.assert_allclose(s.y, T_PERCENT)
    assert s.sample == "ZX-1"
    assert s.column == "%T"
    assert s.source == "comma_percent_meta.csv"
    assert s.metadata["Thickness"] == "650 nm"
    assert s.metadata["Operator"] == "bench 2"                      # key = value
    assert s.metadata["Instrument"] == "double-beam UV-Vis-NIR"     # key,value
    assert s.metadata["comment"] == "exported by the instrument software"
    # Offered, never applied: the reader only says so.
    assert "the file states a thickness of 650 nm; pass --thickness 650nm to use it" \
        in s.warnings
    import hashlib
    assert s.sha256 == hashlib.sha256((CORPUS / "comma_percent_meta.csv").read_bytes()
                                      ).hexdigest()


def test_semicolon_decimal_comma_latin1_micrometres_descending():
    s = one("semicolon_decimal_comma_latin1.csv")
    assert (s.quantity, s.x_unit, s.y_unit) == ("transmittance", "um", "percent")
    np.testing.assert_allclose(s.x, 0.400 + 0.001 * np.arange(20))      # sorted ascending
    np.testing.assert_allclose(s.y, T_PERCENT)
    assert s.metadata["Messtemperatur"] == "25 °C"                      # Latin-1 decoded
    assert s.metadata["Probe"] == "Schicht-7"
    # Unit in the key, decimal comma in the value: 0,45 µm.
    assert "the file states a thickness of 450 nm; pass --thickness 450nm to use it" \
        in s.warnings


def test_tab_utf8_bom_energy_absorbance():
    s = one("tab_energy_absorbance_bom.txt")
    assert (s.quantity, s.x_unit, s.y_unit) == ("absorbance", "ev", "absorbance")
    assert s.column == "Abs"                    # the BOM is not part of the first header
    np.testing.assert_allclose(s.x, 3.0 + 0.05 * np.arange(20))
    np.testing.assert_allclose(s.y, 0.1 * np.arange(20), atol=1e-12)


def test_whitespace_with_hash_comments_and_header_in_a_comment():
    s = one("whitespace_hash_comments.dat")
    assert (s.quantity, s.x_unit, s.y_unit) == ("transmittance", "nm", "fraction")
    assert s.column == "T"
    assert s.sample == "WS-3"
    np.testing.assert_allclose(s.x, 500 + 5 * np.arange(20))
    np.testing.assert_allclose(s.y, T_PERCENT / 100)     # inline "# lamp change" ignored
    assert s.warnings == []


def test_utf16_with_bom_wavenumber_reflectance():
    s = one("utf16_bom_wavenumber.txt")
    assert (s.quantity, s.x_unit, s.y_unit) == ("reflectance", "cm-1", "percent")
    np.testing.assert_allclose(s.x, 20000 + 100 * np.arange(20))
    np.testing.assert_allclose(s.y, 20 + np.arange(20))


def test_utf16_without_bom():
    s = one("utf16le_no_bom.csv")
    assert (s.quantity, s.y_unit) == ("transmittance", "percent")
    np.testing.assert_allclose(s.y, T_PERCENT)


def test_descending_with_duplicates_sorted_and_averaged():
    s = one("descending_duplicates.csv")
    assert s.y_unit == "fraction"
    np.testing.assert_allclose(s.x, np.arange(691, 711))
    assert np.all(np.diff(s.x) > 0)
    by_x = dict(zip(s.x, s.y))
    assert by_x[705] == pytest.approx((0.20 + 0.50) / 2)      # 0.20 in the table, 0.50 added
    assert by_x[699] == pytest.approx((0.32 + 0.44) / 2)
    assert by_x[710] == pytest.approx(0.10)
    assert "averaged 2 duplicate x values (first at line 7)" in s.warnings


def test_several_quantity_columns_give_one_spectrum_each():
    specs = read_spectra(CORPUS / "several_columns.csv")
    assert [s.column for s in specs] == ["Film A %T", "Film B %T", "Film C %T"]
    assert [s.sample for s in specs] == ["batch Q / Film A %T", "batch Q / Film B %T",
                                         "batch Q / Film C %T"]
    for k, s in enumerate(specs):
        assert (s.quantity, s.y_unit) == ("transmittance", "percent")
        np.testing.assert_allclose(s.y, T_PERCENT + k)
        np.testing.assert_allclose(s.x, 450 + 2 * np.arange(20))


@pytest.mark.parametrize("column, want", [("film b %t", "Film B %T"), (3, "Film B %T"),
                                          ("4", "Film C %T")])
def test_column_selection_by_name_or_number(column, want):
    s = one("several_columns.csv", column=column)
    assert s.column == want
    assert s.sample == f"batch Q / {want}"      # still says which column of the file


def test_unknown_column_lists_the_columns_found():
    err = error_of("several_columns.csv", column="Film D")
    msg = str(err)
    assert err.code == "bad-option"
    assert msg.startswith("several_columns.csv: no column 'Film D'")
    assert "1 'Wavelength (nm)', 2 'Film A %T', 3 'Film B %T', 4 'Film C %T'" in msg
    assert "--column" in msg


def test_column_selection_of_the_x_axis_is_refused():
    err = error_of("several_columns.csv", column=1)
    assert "is the x axis" in str(err) and "--column" in str(err)


def test_absorption_coefficient_per_metre_converted_to_per_cm():
    s = one("alpha_per_m.csv")
    assert (s.quantity, s.x_unit, s.y_unit) == ("absorption-coefficient", "ev", "per_cm")
    np.testing.assert_allclose(s.y, 1e3 * (np.arange(20) + 1))     # 1e5 m⁻¹ = 1e3 cm⁻¹
    assert any("converted to cm⁻¹" in w for w in s.warnings)


def test_absorption_coefficient_greek_header():
    s = one("alpha_greek_utf8.txt")
    assert (s.quantity, s.x_unit, s.y_unit, s.column) == ("absorption-coefficient", "ev",
                                                          "per_cm", "α (cm^-1)")
    np.testing.assert_allclose(s.y, 100 * (np.arange(20) + 1))
    assert s.warnings == []


def test_x_without_unit_inferred_as_nm_only_when_unambiguous():
    s = one("x_without_unit_nm.csv")
    assert s.x_unit == "nm" and s.x[0] == 190 and s.x[-1] == 3300
    assert any("names no unit" in w and "--x-unit" in w for w in s.warnings)
    err = error_of("x_without_unit_ambiguous.csv")
    msg = str(err)
    assert err.code == "needs-option"
    assert msg.startswith("x_without_unit_ambiguous.csv, line 1, column 'x': ")
    assert "µm or eV" in msg and "--x-unit nm|um|ev|cm-1" in msg
    # With the option, the same file reads.
    assert one("x_without_unit_ambiguous.csv", x_unit="µm").x_unit == "um"
    assert one("x_without_unit_ambiguous.csv", x_unit="eV").x_unit == "ev"


def test_diffuse_reflectance_percent_from_the_data_range():
    s = one("diffuse_reflectance.txt")
    assert (s.quantity, s.y_unit) == ("diffuse-reflectance", "percent")
    np.testing.assert_allclose(s.y, 5 + 4 * np.arange(20))


def test_kubelka_munk_column_converted_to_reflectance():
    s = one("kubelka_munk.csv")
    assert (s.quantity, s.y_unit) == ("diffuse-reflectance", "fraction")
    # Converting back gives the file's F(R) values.
    np.testing.assert_allclose(kubelka_munk(s.y), 0.1 * (np.arange(20) + 1), rtol=1e-12)
    assert any("Kubelka–Munk" in w for w in s.warnings)


def test_blank_and_text_rows_skipped_with_a_counting_warning():
    s = one("blank_and_text_rows.csv")
    np.testing.assert_allclose(s.y, T_PERCENT)
    assert "skipped 2 blank or non-numeric rows inside the table (first at line 10)" \
        in s.warnings
    assert "ignored 2 lines after the table (first at line 25)" in s.warnings


def test_quoted_cells_with_decimal_comma():
    s = one("quoted_decimal_comma.csv")
    np.testing.assert_allclose(s.x, 400.5 + np.arange(20))
    np.testing.assert_allclose(s.y, T_PERCENT)
    assert s.column == "%T"


def test_names_row_and_units_row_merged():
    s = one("two_row_header.csv")
    assert s.column == "Transmittance (%)"
    assert (s.quantity, s.x_unit, s.y_unit) == ("transmittance", "nm", "percent")


def test_cr_line_endings():
    s = one("cr_line_endings.txt")
    assert (s.quantity, s.points) == ("absorbance", 20)
    np.testing.assert_allclose(s.x, 610 + 10 * np.arange(20))


def test_angstrom_axis_converted_to_nm():
    s = one("angstrom_axis.csv")
    assert s.x_unit == "nm"
    np.testing.assert_allclose(s.x, 400 + np.arange(20))


def test_missing_values_dropped_with_warning():
    s = one("missing_values.csv")
    assert s.points == 18
    assert 404 not in s.x and 409 not in s.x
    assert "dropped 2 points with a missing value in column '%T' (first at line 6)" \
        in s.warnings


def test_no_header_needs_the_quantity_then_reads():
    err = error_of("no_header.txt")
    assert str(err).startswith("no_header.txt, column 2: cannot tell what this column holds")
    assert "--quantity transmittance|reflectance|absorbance|absorption-coefficient|" \
           "diffuse-reflectance" in str(err)
    s = one("no_header.txt", quantity="transmittance")
    assert (s.x_unit, s.y_unit, s.column) == ("nm", "fraction", "column 2")


def test_axis_keys_stand_in_for_a_missing_header():
    s = one("axis_keys.txt")
    assert (s.quantity, s.x_unit, s.column) == ("absorbance", "nm", "ABSORBANCE")
    assert s.metadata["TITLE"] == "film 9"
    assert s.metadata["comment"] == "XYDATA"


def test_metadata_right_above_the_table_is_not_taken_for_a_header():
    err = error_of("metadata_then_marker.txt")
    assert "column 2: cannot tell what this column holds" in str(err)
    s = one("metadata_then_marker.txt", quantity="transmittance")
    assert s.sample == "MK-2" and s.y_unit == "percent"
    assert s.metadata["comment"] == ">>> begin data <<<"
    assert "the file states a thickness of 500 nm; pass --thickness 500nm to use it" \
        in s.warnings


def test_overrides_are_validated():
    with pytest.raises(EdgefitError, match="unknown quantity 'transmitance'.*--quantity"):
        one("no_header.txt", quantity="transmitance")
    with pytest.raises(EdgefitError, match="unknown x unit 'furlong'.*--x-unit"):
        one("no_header.txt", quantity="T", x_unit="furlong")


def test_y_unit_override_settles_fraction_or_percent():
    err = error_of("percent_or_fraction.csv")
    assert err.code == "needs-option"
    assert str(err).startswith("percent_or_fraction.csv, line 1, column 'T': cannot tell "
                               "whether the values (up to 1.25) are fractions or percent")
    assert "--y-unit fraction or --y-unit percent" in str(err)
    assert one("percent_or_fraction.csv", y_unit="percent").y_unit == "percent"


# ------------------------------------------------------------------ broken files

@pytest.mark.parametrize("name, code, pieces", [
    ("empty.csv", "bad-file", ["empty.csv: the file is empty"]),
    ("header_only.csv", "bad-file", ["header_only.csv: no rows of numbers",
                                     "a header without data", "fix: export the data rows"]),
    ("text_cell.csv", "bad-file", ["text_cell.csv, line 9, column '%T': 'abc' is not a number",
                                   "correct or delete the row"]),
    ("short_row.csv", "bad-file", ["short_row.csv, line 12: this row has 1 cell where the "
                                   "table has 2 columns"]),
    ("workbook.xlsx", "not-text", ["workbook.xlsx: ", "Excel", "export the sheet or spectrum "
                                   "as CSV or plain text"]),
    ("binary.dat", "not-text", ["binary.dat: this looks like a binary file", "CSV"]),
    ("undetectable_quantity.csv", "needs-option", [
        "undetectable_quantity.csv, line 1, column 'Signal': cannot tell what this column "
        "holds", "--quantity transmittance|reflectance|absorbance|absorption-coefficient|"
        "diffuse-reflectance"]),
    ("absorption_ambiguous.csv", "needs-option", [
        "column 'Absorption'", "absorbance or absorption coefficient", "--quantity"]),
    ("too_few_points.csv", "bad-file", ["too_few_points.csv: only 3 data points in column "
                                        "'%T'; at least 5 are needed"]),
])
def test_broken_files_say_what_where_and_how_to_fix(name, code, pieces):
    err = error_of(name)
    assert err.code == code
    for piece in pieces:
        assert piece in str(err)
    assert "\n" not in str(err)     # the CLI prints one line


def test_named_xls_that_is_really_text_is_read():
    # Some programs write a text table under an .xls name: the content decides.
    data = (CORPUS / "comma_percent_meta.csv").read_bytes()
    assert parse_spectra(data, "export.xls")[0].points == 20


def test_missing_file_and_folder():
    with pytest.raises(EdgefitError, match="no such file"):
        read_spectra(CORPUS / "does-not-exist.csv")
    with pytest.raises(EdgefitError, match="folder"):
        read_spectra(CORPUS)


def test_max_points_gives_too_large():
    data = (CORPUS / "comma_percent_meta.csv").read_bytes()
    with pytest.raises(EdgefitError) as info:
        parse_spectra(data, "big.csv", max_points=10)
    assert info.value.code == "too-large"
    assert "more than the limit of 10" in str(info.value)


def test_non_positive_wavelength_names_the_line():
    text = "Wavelength (nm),%T\n" + "\n".join(f"{w},{50}" for w in (400, 401, 0, 403, 404, 405))
    with pytest.raises(EdgefitError, match=r"x\.csv, line 4, column 'Wavelength \(nm\)': x "
                                           r"value 0 is not positive"):
        parse_spectra(text.encode(), "x.csv")


def test_second_x_axis_in_other_units_is_ignored():
    rows = "\n".join(f"{w}\t{HC_EV_NM / w:.5f}\t{0.5}" for w in range(400, 420))
    s = parse_spectra(("Wavelength (nm)\tEnergy (eV)\tT\n" + rows).encode(), "two-x.txt")
    assert len(s) == 1 and s[0].column == "T"
    assert any("repeats the x axis" in w for w in s[0].warnings)


def test_percent_header_with_tiny_values_warns():
    rows = "\n".join(f"{w},{0.01 * (w - 399)}" for w in range(400, 420))
    s = parse_spectra(("Wavelength (nm),%T\n" + rows).encode(), "dark.csv")[0]
    assert s.y_unit == "percent"
    assert any("--y-unit fraction" in w for w in s.warnings)


@pytest.mark.parametrize("header, quantity, y_unit", [
    ("%T", "transmittance", "percent"), ("T%", "transmittance", "percent"),
    ("T (%)", "transmittance", "percent"), ("Transmittance", "transmittance", "fraction"),
    ("Transmission [%]", "transmittance", "percent"), ("Abs", "absorbance", "absorbance"),
    ("Absorbance", "absorbance", "absorbance"), ("A", "absorbance", "absorbance"),
    ("R", "reflectance", "fraction"), ("%R", "reflectance", "percent"),
    ("R%", "reflectance", "percent"), ("Reflectance", "reflectance", "fraction"),
    ("alpha (1/cm)", "absorption-coefficient", "per_cm"),
    ("α (cm^-1)", "absorption-coefficient", "per_cm"),
    ("abs. coeff (cm-1)", "absorption-coefficient", "per_cm"),
    ("Diffuse reflectance", "diffuse-reflectance", "fraction"),
    ("DR %", "diffuse-reflectance", "percent"), ("R_diffuse", "diffuse-reflectance", "fraction"),
])
def test_quantity_words(header, quantity, y_unit):
    rows = "\n".join(f"{w},{0.01 * (w - 390):.2f}" for w in range(400, 420))
    s = parse_spectra((f"Wavelength (nm),{header}\n" + rows).encode(), "q.csv")[0]
    assert (s.quantity, s.y_unit) == (quantity, y_unit)


@pytest.mark.parametrize("header, unit, first", [
    ("Wavelength (nm)", "nm", 1.0), ("Wavelength [µm]", "um", 1.0), ("lambda/nm", "nm", 1.0),
    ("Energy [eV]", "ev", 1.0), ("hv (eV)", "ev", 1.0), ("Wavenumber (cm-1)", "cm-1", 1.0),
    ("cm-1", "cm-1", 1.0), ("Wavelength (micron)", "um", 1.0), ("Energy (meV)", "ev", 1e-3),
    ("Wavelength", "nm", 1.0),
])
def test_x_words(header, unit, first):
    rows = "\n".join(f"{x},{0.5}" for x in range(400, 420))
    s = parse_spectra((f"{header},T\n" + rows).encode(), "x.csv")[0]
    assert s.x_unit == unit
    assert s.x[0] == pytest.approx(400 * first)


def test_detection_rules_are_written_down():
    # The README copies this text; it must cover every rule the code applies.
    for word in ("Encoding", "Dialect", "Header", "Metadata", "x axis", "Quantity", "percent",
                 "--x-unit", "--quantity", "--y-unit", "--thickness"):
        assert word in DETECTION_RULES


# ------------------------------------------------------------------ option helpers

@pytest.mark.parametrize("text, nm", [
    ("400nm", 400), ("0.4um", 400), ("0.4µm", 400), ("0.4μm", 400), ("400 nm", 400),
    ("4000A", 400), ("4000Å", 400), ("0.0004mm", 400), ("0,4 um", 400), ("0.4 micron", 400),
])
def test_parse_length_nm(text, nm):
    assert parse_length_nm(text) == pytest.approx(nm)


def test_parse_length_nm_refuses_a_bare_number():
    with pytest.raises(EdgefitError) as info:
        parse_length_nm("400")
    assert str(info.value) == "the length '400' has no unit (fix: say the unit, e.g. " \
                              "--thickness 400nm)"
    assert info.value.code == "bad-option"
    with pytest.raises(EdgefitError, match="unknown length unit 'furlongs'"):
        parse_length_nm("3 furlongs")
    with pytest.raises(EdgefitError, match="must be positive"):
        parse_length_nm("0nm")


def test_option_spellings():
    assert normalise_x_unit("µm") == normalise_x_unit("micron") == normalise_x_unit("um") \
        == "um"
    assert normalise_x_unit("eV") == "ev"
    assert normalise_x_unit("1/cm") == normalise_x_unit("wavenumber") == "cm-1"
    assert {normalise_quantity(q) for q in QUANTITIES} == set(QUANTITIES)
    assert set(map(normalise_x_unit, X_UNITS)) == set(X_UNITS)


# ------------------------------------------------------------------ property: round trips

DIALECTS = [(",", "."), (";", ","), ("\t", "."), ("\t", ","), (" ", ".")]


@settings(max_examples=50, deadline=None)
@given(data=st.data(), dialect=st.sampled_from(DIALECTS), n=st.integers(5, 40),
       ncols=st.integers(1, 3), descending=st.booleans(), meta=st.booleans())
def test_random_tables_round_trip(data, dialect, n, ncols, descending, meta):
    """Synthetic: random tables written in a dialect read back to the same numbers."""
    sep, dec = dialect
    steps = data.draw(st.lists(st.integers(1, 500), min_size=n, max_size=n))
    x = 200 + np.cumsum(steps) / 10.0          # nm, strictly ascending, one decimal
    ys = [np.round(np.array(data.draw(st.lists(st.floats(0, 1), min_size=n, max_size=n))), 5)
          for _ in range(ncols)]
    order = np.arange(n)[::-1] if descending else np.arange(n)

    def cell(v):
        return f"{v:.6g}".replace(".", dec)

    names = ["Wavelength (nm)"] + ([f"Transmittance {k}" for k in range(ncols)] if ncols > 1
                                   else ["T"])
    head = ["Sample: P-7", "Thickness: 500 nm", ""] if meta else []
    body = [sep.join([cell(x[i])] + [cell(y[i]) for y in ys]) for i in order]
    text = "\n".join(head + [sep.join(names)] + body) + "\n"
    specs = parse_spectra(text.encode("utf-8"), "prop.txt", y_unit="fraction")
    assert len(specs) == ncols
    for s, y in zip(specs, ys):
        assert (s.quantity, s.x_unit, s.y_unit) == ("transmittance", "nm", "fraction")
        np.testing.assert_allclose(s.x, [float(f"{v:.6g}") for v in x])
        np.testing.assert_allclose(s.y, [float(f"{v:.6g}") for v in y])
        assert s.sample == ("P-7" if meta else "prop") + (f" / {s.column}" if ncols > 1
                                                         else "")


# ------------------------------------------------------------------ the demo scenario

def _manifest_entries():
    return json.loads((DEMO / "manifest_core.json").read_text(encoding="utf-8"))


def _make_demo_module():
    import importlib.util
    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_demo_manifest_covers_the_scenario():
    entries = _manifest_entries()
    assert len(entries) >= 6
    for e in entries:
        assert (DEMO / e["file"]).is_file()
        assert set(e) >= {"file", "options", "metadata", "truth", "detected"}
        assert set(e["truth"]) >= {"eg_direct_ev", "eg_indirect_ev", "eu_mev"}
        assert all(isinstance(v, str) for v in e["options"].values())     # CLI strings
    series = [e for e in entries if "Annealing temperature (C)" in e["metadata"]]
    assert len(series) >= 3
    gaps = [e["truth"]["eg_direct_ev"] for e in sorted(
        series, key=lambda e: float(e["metadata"]["Annealing temperature (C)"]))]
    assert gaps == sorted(gaps) and gaps[0] < gaps[-1]
    quantities = {e["detected"]["quantity"] for e in entries}
    assert quantities >= {"transmittance", "diffuse-reflectance", "absorbance",
                          "absorption-coefficient"}
    assert any(e["truth"]["eg_direct_ev"] and e["truth"]["eg_indirect_ev"] and
               e["truth"]["eg_direct_ev"] > e["truth"]["eg_indirect_ev"] + 0.3 for e in entries)


@pytest.mark.parametrize("entry", _manifest_entries(), ids=lambda e: e["file"])
def test_demo_files_read_as_the_manifest_says(entry):
    specs = read_spectra(DEMO / entry["file"])
    want = entry["detected"]
    assert len(specs) == 1
    s = specs[0]
    assert (s.quantity, s.x_unit, s.y_unit) == (want["quantity"], want["x_unit"],
                                                want["y_unit"])
    assert s.points == want["points"]
    assert s.sample == entry["metadata"]["sample"]
    if "thickness" in entry["options"]:
        nm = parse_length_nm(entry["options"]["thickness"])
        assert f"the file states a thickness of {nm:.6g} nm; pass --thickness {nm:.6g}nm to " \
               "use it" in s.warnings
    for key, value in entry.get("file_metadata", {}).items():
        assert s.metadata[key] == value


def _lin_intercept(e, y, lo, hi):
    m = (e >= lo) & (e <= hi) & np.isfinite(y)
    slope, icpt = np.polyfit(e[m], y[m], 1)
    return slope, icpt, int(m.sum())


@pytest.mark.parametrize("entry", _manifest_entries(), ids=lambda e: e["file"])
def test_demo_files_hold_their_truths(entry):
    """Synthetic: undo the generator's measurement model with the known constants and check
    that the files carry the recorded gaps and Urbach energies. This checks the demo data (its
    formulas and units), not edgefit's analysis. Windows are the model's exact regions: above Et
    the Tauc ordinate is exactly linear, below Et ln α exactly so; the tolerances (5 meV on Eg,
    5 % on Eu) are about 3 standard errors of these small fits at the generator's noise."""
    md = _make_demo_module()
    s = read_spectra(DEMO / entry["file"])[0]
    e = HC_EV_NM / s.x if s.x_unit == "nm" else (s.x if s.x_unit == "ev" else
                                                   HC_EV_NM * s.x * 1e-7)
    order = np.argsort(e)
    e, y = e[order], s.y[order]
    tr = entry["truth"]
    with np.errstate(all="ignore"):
        if s.quantity == "transmittance":
            t = (y / 100 if s.y_unit == "percent" else y) - tr.get("stray_light_t", 0.0)
            alpha = -np.log(t / (1 - md.R_LOSS)) / (tr["thickness_nm"] * 1e-7)
            alpha[t < 0.005] = np.nan                   # saturated: nothing to undo
        elif s.quantity == "absorbance":
            alpha = np.log(10) * y / (tr["thickness_nm"] * 1e-7)
        elif s.quantity == "diffuse-reflectance":
            alpha = kubelka_munk(y / 100) - md.POWDER["f_background"]
        else:
            alpha = y - md.REFERENCE["background"]
        if tr["transition"] == "direct+indirect":
            p = md.TWO_ONSET
            a_dir = md.edge_alpha_per_cm(e, p["eg_dir"], p["eu_dir_mev"] / 1e3, p["b_dir"], 0.5)
            a_ind = md.edge_alpha_per_cm(e, p["eg_ind"], p["eu_ind_mev"] / 1e3, p["b_ind"], 2.0)
            et1 = md.joining_energy_ev(p["eg_ind"], p["eu_ind_mev"] / 1e3, 2.0)
            et2 = md.joining_energy_ev(p["eg_dir"], p["eu_dir_mev"] / 1e3, 0.5)
            k, b, n = _lin_intercept(e, np.sqrt(np.clip(alpha - a_dir, 0, None) * e),
                                     et1 + 0.03, 2.80)
            assert -b / k == pytest.approx(tr["eg_indirect_ev"], abs=0.01)   # weak onset: noisier
            k, b, n = _lin_intercept(e, ((alpha - a_ind) * e) ** 2, et2 + 0.01, et2 + 0.2)
            assert -b / k == pytest.approx(tr["eg_direct_ev"], abs=0.005)
            return
        direct = tr["transition"] == "direct"
        eg = tr["eg_direct_ev"] if direct else tr["eg_indirect_ev"]
        eu = tr["eu_mev"] / 1e3
        r = 0.5 if direct else 2.0
        et = md.joining_energy_ev(eg, eu, r)
        ordinate = (alpha * e) ** (1 / r)
        k, b, n = _lin_intercept(e, ordinate, et + 0.01, et + (0.15 if direct else 0.3))
        assert n >= 10
        assert -b / k == pytest.approx(eg, abs=0.005)
        k, b, n = _lin_intercept(e, np.log(alpha), et - (3 if direct else 2) * eu,
                                 et - (0.5 if direct else 0.3) * eu)
        assert n >= 8
        assert 1 / k == pytest.approx(eu, rel=0.05)


def test_demo_edge_model_is_continuous_in_value_and_slope():
    """Synthetic: the generator's joined edge has no step or kink in ln α at Et."""
    md = _make_demo_module()
    for r in (0.5, 2.0):
        eg, eu = 3.0, 0.05
        et = md.joining_energy_ev(eg, eu, r)
        h = 1e-6
        la = np.log(md.edge_alpha_per_cm(et + h * np.arange(-2, 3), eg, eu, 1e5, r))
        steps = np.diff(la) / h                 # slopes just below and just above Et
        np.testing.assert_allclose(steps, 1 / eu, rtol=1e-3)    # no step, no kink
        # Far from Et the two sides are the Urbach tail and the power law.
        assert md.edge_alpha_per_cm(eg - 0.2, eg, eu, 1e5, r) == pytest.approx(
            md.edge_alpha_per_cm(et, eg, eu, 1e5, r) * np.exp((eg - 0.2 - et) / eu))
        e_hi = eg + 0.5
        assert md.edge_alpha_per_cm(e_hi, eg, eu, 1e5, r) == pytest.approx(
            1e5 * 0.5 ** r / e_hi)
