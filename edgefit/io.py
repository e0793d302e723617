"""Readers for spectrometer exports: encoding, dialect, header words, units and quantity.

``read_spectra(path)`` reads a file, ``parse_spectra(data, name)`` a buffer of bytes; both
return one :class:`~edgefit.spectrum.Spectrum` per quantity column. Detection is written down
in :data:`DETECTION_RULES` (the same text the README shows); whenever a rule cannot decide, the
reader raises :class:`~edgefit.errors.EdgefitError` naming the option that settles it.

Spectra come back with x sorted ascending in the file's own x unit (duplicates averaged, with a
warning); the conversion to photon energy happens later, in :mod:`edgefit.optics`.
"""
from __future__ import annotations

import hashlib
import re
from collections import Counter
from pathlib import Path

import numpy as np

from .errors import EdgefitError
from .io_text import (_CONTROL_RE, _EXPORT_FIX, _MISSING_CELL, MAX_LINE_CHARS, _clean_row_re,
                      _decode, _number, _split, _sniff, _strip_inline_comment)
from .io_values import MIN_POINTS, _Values
from .io_words import (_AXIS_KEY_RE, _INDEX_RE, _SAMPLE_KEY_RE, _THICK_KEY_RE, _UNIT_ONLY_RE,
                       _fmt, _looks_like_header, _norm, _quantity_of, _split_header, _x_kind)
from .optics import energy_ev_from
from .spectrum import QUANTITIES, X_UNITS

#: Default limit on data rows per file (``max_points``); larger files raise code ``too-large``.
MAX_POINTS = 200_000

DETECTION_RULES = """\
Encoding: UTF-8 (with or without BOM), UTF-16/32 with BOM (UTF-16 without BOM when every
  other byte is NUL), else Windows-1252/Latin-1. Excel workbooks (.xlsx/.xls/.ods) and other
  binary files (NUL bytes) are refused: export the sheet as CSV or text.
Dialect: the separator (tab, ';', ',', or runs of whitespace) and the decimal mark ('.' or ',')
  are chosen together: the pair under which the most rows split into the same number (>= 2) of
  numbers wins; ties go to tab, then ';', then ',', then whitespace, and to '.' before ','.
  Fields may be quoted. Trailing separators and '#' comments after the numbers are ignored.
  Unicode spaces (no-break U+00A0 or the Latin-1 byte 0xA0, thin, em, narrow no-break,
  ideographic) read as plain spaces. A line longer than 100,000 characters is never a row.
Table: the longest stretch of rows whose first cell is a number and that have the table's
  number of cells (blank and '#' lines do not break it). A line of words inside the table is
  skipped with a warning; a number cell that is text is an error naming line and column; empty
  cells and NaN are missing values (dropped, with a warning).
Header: the nearest non-blank line above the table when it reads as column names (a '#'
  comment line counts when it names the x axis or a quantity); a units-only row under a names row
  is merged ("Wavelength" + "nm"). Lines above it are metadata: 'key: value', 'key = value',
  'key<separator>value'; other lines are kept under "comment".
Metadata: a 'Sample' / 'Sample name' / 'Sample ID' line sets the sample name (otherwise the
  file stem, plus ' / <column>' when a file holds several quantity columns). A thickness line is
  offered in a warning (pass --thickness to use it); it is never applied silently.
x axis: the first column (the second when the first is an index such as 'No.'). Unit from the
  header: nm, µm/um/micron, Å (converted to nm), eV, meV (converted to eV), cm-1/1/cm/wavenumber.
  'Wavelength' without a unit: nm when all values >= 50, µm when all <= 30. 'Energy'/'hv' without
  a unit: eV. No usable header: nm only when all values lie within 150..3500; anything else
  needs --x-unit.
Quantity, from each column header: 'alpha', 'α', 'abs. coeff', a 1/length unit ->
  absorption-coefficient (1/m, 1/µm, 1/nm converted to 1/cm; no unit read as 1/cm, with a
  warning); 'F(R)', 'Kubelka-Munk', 'KM' -> diffuse-reflectance (converted to R∞ by the inverse
  Kubelka–Munk function, with a warning); 'diffuse', 'DR', 'DRS', 'R_diffuse', 'R∞' ->
  diffuse-reflectance; 'Abs', 'Absorbance', 'A', 'OD' -> absorbance (decadic); 'R', '%R', 'R%',
  'Reflectance' -> reflectance; 'T', '%T', 'T%', 'Transmittance', 'Transmission' ->
  transmittance. 'Absorption' alone, no match or two matches -> error naming --quantity.
Fraction or percent (T, R, diffuse R): '%' in the header -> percent; else the largest value:
  > 1.5 -> percent, <= 1.05 -> fraction, in between -> error naming --y-unit.
  A tenth of the values above 150 % (or 1.5), or none above 0 and some below, is an error.
Order: x sorted ascending; duplicate x values averaged (warning). At least 5 points.
"""

# ---------------------------------------------------------------------------- options

_QUANTITY_ALIASES = {
    "transmittance": "transmittance", "transmission": "transmittance", "t": "transmittance",
    "reflectance": "reflectance", "reflection": "reflectance", "r": "reflectance",
    "absorbance": "absorbance", "abs": "absorbance", "a": "absorbance", "od": "absorbance",
    "absorption-coefficient": "absorption-coefficient", "absorption coefficient":
        "absorption-coefficient", "absorption_coefficient": "absorption-coefficient",
    "alpha": "absorption-coefficient", "α": "absorption-coefficient",
    "diffuse-reflectance": "diffuse-reflectance", "diffuse reflectance": "diffuse-reflectance",
    "diffuse_reflectance": "diffuse-reflectance", "diffuse": "diffuse-reflectance",
    "dr": "diffuse-reflectance", "drs": "diffuse-reflectance",
}
_X_UNIT_ALIASES = {
    "nm": "nm", "nanometer": "nm", "nanometre": "nm",
    "um": "um", "µm": "um", "μm": "um", "micron": "um", "microns": "um", "micrometer": "um",
    "micrometre": "um",
    "ev": "ev", "electronvolt": "ev",
    "cm-1": "cm-1", "1/cm": "cm-1", "cm^-1": "cm-1", "cm⁻¹": "cm-1", "wavenumber": "cm-1",
}
_Y_UNIT_ALIASES = {"fraction": "fraction", "percent": "percent", "%": "percent", "pct": "percent"}


def normalise_quantity(text: str) -> str:
    """The canonical quantity name (one of :data:`~edgefit.spectrum.QUANTITIES`) for ``text``.

    Raises
    ------
    EdgefitError
        Code ``bad-option`` when ``text`` is not a known quantity.
    """
    return _canonical(text, _QUANTITY_ALIASES, "quantity", "--quantity " + "|".join(QUANTITIES))


def _canonical(text, aliases: dict, what: str, fix: str) -> str:
    """``aliases[text]`` (trimmed, any case), else the bad-option error naming ``fix``."""
    key = str(text).strip().lower()
    if key in aliases:
        return aliases[key]
    raise EdgefitError(f"unknown {what} '{text}'", fix=fix, code="bad-option")


def normalise_x_unit(text: str) -> str:
    """The canonical x unit (one of :data:`~edgefit.spectrum.X_UNITS`) for ``text``.

    Accepts ``um``/``µm``/``micron``, ``eV`` in any case, ``cm-1``/``1/cm``/``wavenumber``.
    """
    return _canonical(text, _X_UNIT_ALIASES, "x unit", "--x-unit " + "|".join(X_UNITS))


def normalise_y_unit(text: str) -> str:
    """``"fraction"`` or ``"percent"`` for ``text`` (also ``%``)."""
    return _canonical(text, _Y_UNIT_ALIASES, "y unit", "--y-unit fraction|percent")


_LENGTH_NM = {"nm": 1.0, "nanometer": 1.0, "nanometers": 1.0, "nanometre": 1.0,
              "nanometres": 1.0, "um": 1e3, "µm": 1e3, "μm": 1e3, "micron": 1e3,
              "microns": 1e3, "micrometer": 1e3, "micrometers": 1e3, "micrometre": 1e3,
              "micrometres": 1e3, "mm": 1e6, "cm": 1e7, "m": 1e9, "a": 0.1, "å": 0.1,
              "angstrom": 0.1, "angstroms": 0.1, "pm": 1e-3}
_LENGTH_RE = re.compile(r"^\s*([+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?)\s*"
                        r"([^\d\s.,+-][^\d]*?)?\s*$")


def parse_length_nm(text, *, option: str = "--thickness") -> float:
    """A length with its unit, in nm: ``"400nm"``, ``"0.4um"``, ``"0.4 µm"``, ``"4000Å"``.

    Parameters
    ----------
    text : str
        Number and unit (nm, µm/um/micron, mm, cm, m, Å/A/angstrom, pm); a decimal comma is
        accepted. A bare number is refused: the unit must be said.
    option : str
        The option named in error messages.

    Returns
    -------
    float
        The length [nm], > 0.

    Raises
    ------
    EdgefitError
        Code ``bad-option`` for a bare number, an unknown unit or a non-positive length.
    """
    s = str(text).strip()
    m = _LENGTH_RE.match(s)
    if not m:
        raise EdgefitError(f"cannot read the length '{s}'", fix=f"write a number and a unit, "
                           f"e.g. {option} 400nm or {option} 0.4um", code="bad-option")
    number, unit = m.group(1).replace(",", "."), (m.group(2) or "").strip()
    if not unit:
        raise EdgefitError(f"the length '{s}' has no unit", fix=f"say the unit, e.g. "
                           f"{option} {number}nm", code="bad-option")
    factor = _LENGTH_NM.get(unit.lower().replace("μ", "µ"))
    if factor is None:
        raise EdgefitError(f"unknown length unit '{unit}' in '{s}'", fix=f"use nm, um, mm or "
                           f"Å, e.g. {option} {number}nm", code="bad-option")
    value = float(number) * factor
    if not np.isfinite(value) or value <= 0:
        raise EdgefitError(f"the length '{s}' must be positive", fix=f"e.g. {option} 400nm",
                           code="bad-option")
    return value


# ---------------------------------------------------------------------------- reading

def read_spectra(path, *, quantity=None, x_unit=None, column=None, y_unit=None,
                 max_points: int = MAX_POINTS) -> list:
    """Read a spectrometer export file into one Spectrum per quantity column.

    Parameters
    ----------
    path : str or path-like
        The file. Messages name only its file name.
    quantity : str, optional
        Override of the detected quantity (see :func:`normalise_quantity`).
    x_unit : str, optional
        Override of the detected x unit (see :func:`normalise_x_unit`).
    column : str or int, optional
        Keep only this column: its header (case-insensitive) or its 1-based number.
    y_unit : {"fraction", "percent"}, optional
        Override of the detected scale of T, R and diffuse R.
    max_points : int
        Most data rows accepted (error code ``too-large`` beyond).

    Returns
    -------
    list of Spectrum

    Raises
    ------
    EdgefitError
        Whatever the file or the options make impossible; the message names file, line and
        column where known and what would fix it.
    """
    p = Path(path)
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise EdgefitError("no such file", file=str(path), fix="check the path",
                           code="bad-file") from None
    except IsADirectoryError:
        raise EdgefitError("this is a folder, not a file", file=str(path),
                           fix="name the files, or use `edgefit batch` for a folder",
                           code="bad-file") from None
    except OSError as exc:
        raise EdgefitError(f"cannot read the file ({exc.strerror})", file=p.name,
                           code="bad-file") from None
    return parse_spectra(data, p.name, quantity=quantity, x_unit=x_unit, column=column,
                         y_unit=y_unit, max_points=max_points)


def parse_spectra(data: bytes, name: str, *, quantity=None, x_unit=None, column=None,
                  y_unit=None, max_points: int = MAX_POINTS) -> list:
    """Parse the bytes of a spectrometer export; same options as :func:`read_spectra`.

    ``name`` is used as :attr:`Spectrum.source`, in messages, and (its stem) as the default
    sample name.
    """
    return _Parser(data, name, max_points).spectra(
        quantity=None if quantity is None else normalise_quantity(quantity),
        x_unit=None if x_unit is None else normalise_x_unit(x_unit),
        y_unit=None if y_unit is None else normalise_y_unit(y_unit),
        column=column)




# ---------------------------------------------------------------------------- the parser

class _Parser(_Values):
    """One pass over one file: lines → dialect → table, header, metadata → spectra."""

    def __init__(self, data: bytes, name: str, max_points: int):
        if not isinstance(data, (bytes, bytearray, memoryview)):
            raise TypeError("parse_spectra expects bytes")
        data = bytes(data)
        self.name = name
        self.sha256 = hashlib.sha256(data).hexdigest()
        self.max_points = int(max_points)
        self.warnings = []
        self.header_line = None     # 1-based line of the column names, when there is one
        self.long_lines = []        # 0-based lines longer than MAX_LINE_CHARS (never split)
        if not data.strip():
            raise EdgefitError("the file is empty", file=name,
                               fix="export the spectrum again; the file has no content",
                               code="bad-file")
        if data.count(b"\n") > 2 * self.max_points + 10_000:
            self._too_large(data.count(b"\n"))
        text = _decode(data, name)
        if text.startswith("\ufeff"):
            text = text[1:]
        bad = len(_CONTROL_RE.findall(text, 0, 20_000))
        if bad > max(5, 0.01 * min(len(text), 20_000)):
            raise EdgefitError("this looks like a binary file, not a text export", file=name,
                               fix=_EXPORT_FIX, code="not-text")
        self.lines = [s.strip() for s in re.split(r"\r\n|\r|\n", text)]

    def _err(self, what, *, line=None, column=None, fix=None, code="bad-file"):
        if isinstance(column, str) and re.fullmatch(r"column \d+", column):
            column = int(column.split()[1])         # an unnamed column: say its number
        return EdgefitError(what, file=self.name, line=line, column=column, fix=fix, code=code)

    def _too_large(self, rows):
        raise self._err(f"the file holds {rows} rows, more than the limit of {self.max_points}",
                        fix="thin the spectrum (e.g. every 2nd point) or raise the limit "
                            "(max_points)", code="too-large")

    # -- structure ---------------------------------------------------------------------
    def _classify(self):
        """Per line: kind ('blank', 'comment', 'data' = first cell a number, 'text'), cell count,
        and whether the row is plain numbers (the fast path). Cells are not kept: a file of
        odd rows would otherwise hold a Python string per cell of the whole file."""
        sep, dec = self.sep, self.dec
        clean = _clean_row_re(sep, dec, self.width).match
        n = len(self.lines)
        kinds, widths, plain = ["data"] * n, [self.width] * n, [True] * n
        for i in [i for i, s in enumerate(self.lines) if not clean(s)]:
            s = self.lines[i]
            plain[i] = False
            if not s or s.startswith(("#", "//")):
                kinds[i], widths[i] = ("comment" if s else "blank"), 0
                continue
            if len(s) > MAX_LINE_CHARS:
                kinds[i], widths[i] = "text", 0
                self.long_lines.append(i)
                continue
            cells = self._cells(s)
            widths[i] = len(cells)
            first = _number(cells[0], dec) if cells else None
            if isinstance(first, float):
                continue
            if first is _MISSING_CELL and cells and cells[0] and len(cells) >= 2 and all(
                    _number(c, dec) is not None for c in cells[1:]):
                continue                    # x is NaN: dropped later with the missing cells
            kinds[i] = "text"
        return kinds, widths, plain

    def _cells(self, s):
        """The cells of a line that is not plain numbers."""
        sep = self.sep
        cells = _split(_strip_inline_comment(s), sep)
        if sep is not None and len(cells) < self.width:
            # "404," in a table of two columns: the last value is missing, not the column.
            full = _split(_strip_inline_comment(s), sep, keep_empty=True)
            if len(full) >= self.width:
                cells = full[:self.width]
        return cells

    def _find_table(self, kinds, widths):
        counts = Counter(w for k, w in zip(kinds, widths) if k == "data" and w >= 2)
        if not counts:
            return None
        m = counts.most_common(1)[0][0]
        good = [k == "data" and w == m for k, w in zip(kinds, widths)]
        quiet = [k in ("blank", "comment") for k in kinds]
        # Longest run of good lines; blank and comment lines do not break a run.
        best, i, n = None, 0, len(kinds)
        while i < n:
            if not good[i]:
                i += 1
                continue
            j, last, count = i, i, 0
            while j < n and (good[j] or quiet[j]):
                if good[j]:
                    last, count = j, count + 1
                j += 1
            if best is None or count > best[2]:
                best = (i, last, count)
            i = j
        start, end, _ = best

        def block_size(frm, step):
            """Good lines in the blank-tolerant block that begins beyond ``frm``."""
            k, size, edge = frm, 0, None
            while 0 <= k < n and (good[k] or quiet[k]):
                if good[k]:
                    size, edge = size + 1, k
                k += step
            return size, edge

        def next_solid(frm, step):
            k = frm
            while 0 <= k < n and quiet[k]:
                k += step
            return k

        while True:             # lines of text inside the table, above the longest run
            p = next_solid(start - 1, -1)
            if p < 0:
                break
            size, edge = block_size(next_solid(p - 1, -1), -1)
            if size >= 3:
                start = edge
            else:
                break
        while True:             # ... and below it
            p = next_solid(end + 1, 1)
            if p >= n:
                break
            size, edge = block_size(next_solid(p + 1, 1), 1)
            if size >= 3:
                end = edge
            else:
                break
        return m, start, end, good

    # -- header and metadata ---------------------------------------------------------------
    def _header(self, start, m):
        """(column names or None, index of the header's first line or of the table)."""
        k = start - 1
        while k >= 0:
            s = self.lines[k]
            if len(s) > MAX_LINE_CHARS:
                return None, start          # too long for names (and never split)
            if s.startswith(("#", "//")):
                cells = _split_header(s.lstrip("#/").strip(), self.sep, m)
                if len(cells) == m and (_x_kind(cells[0]) or any(_quantity_of(c)[0]
                                                                 for c in cells[1:])):
                    self.header_line = k + 1
                    return cells, k
            elif s:
                break
            k -= 1
        if k < 0:
            return None, start
        cells = _split_header(s, self.sep, m)
        if not _looks_like_header(cells) or (len(cells) != m and re.search(r"\w\s*[:=]", s)):
            return None, start              # "Thickness: 0.5 um" is metadata, not names
        top = k
        if len(cells) == m and all(_UNIT_ONLY_RE.match(_norm(c)) for c in cells):
            j = k - 1
            while j >= 0 and not self.lines[j]:
                j -= 1
            if j >= 0:
                above = _split_header(self.lines[j], self.sep, m)
                if len(above) == m and _looks_like_header(above):
                    cells = [f"{a} ({u})" if u else a for a, u in zip(above, cells)]
                    top = j
        if len(cells) != m:
            if len(cells) > m and not any(cells[m:]):
                cells = cells[:m]
            elif not (_x_kind(cells[0]) or any(_quantity_of(c)[0] for c in cells)):
                return None, start          # a marker such as "Begin data", not names
            else:
                self.warnings.append(f"the header on line {k + 1} names {len(cells)} columns "
                                     f"but the table has {m}; columns without a name are "
                                     "numbered")
                cells = (cells + [""] * m)[:m]
        self.header_line = k + 1
        return cells, top

    def _metadata(self, upto):
        """``key: value``, ``key = value`` and ``key<sep>value`` lines; the rest as comment."""
        meta, comments = {}, []
        delims = [":", "=", self.sep or "\t"]
        for k in range(upto):
            s = self.lines[k]
            if len(s) > MAX_LINE_CHARS:
                self.warnings.append(f"ignored line {k + 1} above the table: it is "
                                     f"{len(s):,} characters long")
                continue
            if s.startswith(("#", "//")):
                s = s.lstrip("#/").strip()
            s = s.strip('"').strip()
            if not s:
                continue
            at = [(s.find(c), c) for c in delims if s.find(c) > 0]
            if at:
                i, c = min(at)
                key, value = s[:i], s[i + 1:]
                if c == self.sep and self.sep in value:
                    value = " ".join(x for x in _split(value, self.sep) if x)
            elif self.sep is None and re.search(r"\S\s{2,}\S", s):
                key, value = re.split(r"\s{2,}", s, maxsplit=1)
            else:
                comments.append(s)
                continue
            key, value = key.strip().strip('"').strip(), value.strip().strip('"').strip()
            base, j = key, 2
            while key in meta:
                key, j = f"{base} ({j})", j + 1
            meta[key] = value
        if comments:
            meta["comment"] = "\n".join(comments)
        return meta

    def _offer_thickness(self, meta):
        for key, value in meta.items():
            if not _THICK_KEY_RE.search(key) or not value:
                continue
            unit = re.search(r"[(\[]\s*([^)\]]+?)\s*[)\]]", key)
            nm = None
            for attempt in (value, value + (unit.group(1) if unit else "")):
                try:
                    nm = parse_length_nm(attempt)
                    break
                except EdgefitError:
                    continue
            if nm is None:
                self.warnings.append(f"the file states a thickness '{value}' ({key}) that "
                                     "could not be read; pass --thickness with a unit, e.g. "
                                     "--thickness 500nm, to use one")
            else:
                self.warnings.append(f"the file states a thickness of {_fmt(nm)} nm; pass "
                                     f"--thickness {_fmt(nm)}nm to use it")

    # -- main ---------------------------------------------------------------------------------
    def _no_table(self):
        """The error for a file without rows of two numbers, when it is one of two known
        shapes: a single column of numbers, or a line too long to be a row (a spectrum in
        rows rather than columns). Returns when it is neither."""
        long = [i for i, s in enumerate(self.lines) if len(s) > MAX_LINE_CHARS]
        if long:
            raise self._err(f"line {long[0] + 1} is {len(self.lines[long[0]]):,} characters "
                            f"long; a row of a table has at most {MAX_LINE_CHARS:,} characters,"
                            " and this reader takes one row per point", line=long[0] + 1,
                            fix="export the spectrum as columns: one line per point, the x "
                                "value first, then the measured values")
        single = [i for i, s in enumerate(self.lines) if s and len(s) <= 100
                  and any(isinstance(_number(s.strip('"\';,\t '), d), float) for d in ".,")]
        if len(single) >= MIN_POINTS:
            raise self._err(f"the table has only one column of numbers (lines {single[0] + 1}"
                            f"..{single[-1] + 1}): an x column and a value column are needed",
                            line=single[0] + 1,
                            fix="export the x values (wavelength or photon energy) in a column "
                                "beside the measured values")

    def spectra(self, *, quantity, x_unit, y_unit, column):
        name = self.name
        sniff = _sniff(self.lines)
        if sniff is None:
            self._no_table()
            if any(self.lines):
                n = sum(1 for s in self.lines if s)
                raise self._err(f"no rows of numbers: the file holds only {n} line"
                                f"{'s' if n > 1 else ''} of text (a header without data?)",
                                fix="export the data rows too: an x column and one or more "
                                    "value columns of numbers")
            raise self._err("the file is empty", fix="export the spectrum again")
        self.sep, self.dec, self.width = sniff
        kinds, widths, plain = self._classify()
        found = self._find_table(kinds, widths)
        if found is None:
            raise self._err("no table of numbers found (no row holds two or more numbers)",
                            fix="export at least an x column and one value column")
        m, start, end, good = found
        rows = np.flatnonzero(np.asarray(good[start:end + 1], dtype=bool)) + start
        if len(rows) > self.max_points:
            self._too_large(len(rows))

        # Lines in the table that are not rows, and what lies below it.
        skipped = [k for k in range(start, end + 1) if not good[k] and kinds[k] != "comment"]
        for k in skipped:
            if kinds[k] == "data":      # a number first, but the wrong count of cells
                raise self._err(f"this row has {widths[k]} cell{'s' if widths[k] > 1 else ''} "
                                f"where the table has {m} columns", line=k + 1,
                                fix="complete or delete the row")
        if skipped:
            self.warnings.append(f"skipped {len(skipped)} blank or non-numeric row"
                                 f"{'s' if len(skipped) > 1 else ''} inside the table (first "
                                 f"at line {skipped[0] + 1})")
        trailer = [k for k in range(end + 1, len(kinds)) if kinds[k] in ("text", "data")]
        if trailer:
            self.warnings.append(f"ignored {len(trailer)} line{'s' if len(trailer) > 1 else ''}"
                                 f" after the table (first at line {trailer[0] + 1})")

        names, top = self._header(start, m)
        meta = self._metadata(top)
        if names is None:
            # No names row: axis keys such as "XUNITS  NANOMETERS" / "YUNITS  %T" stand in.
            names = [""] * m
            for key, value in meta.items():
                axis = _AXIS_KEY_RE.match(key.strip())
                if axis and value and (axis.group(1).lower() == "x" or m == 2):
                    names[0 if axis.group(1).lower() == "x" else 1] = value
        labels = [nm_ if nm_ else f"column {i + 1}" for i, nm_ in enumerate(names)]
        self._offer_thickness(meta)
        sample = next((v for k, v in meta.items() if _SAMPLE_KEY_RE.match(k.strip()) and v),
                      None) or Path(name).stem

        values = self._values(rows, plain, m, labels)
        # The lines are done with: free them before the arrays of each spectrum are made.
        self.lines = None
        del kinds, widths, plain, good

        # The x column and the quantity columns.
        xi = 0
        if m > 2 and _INDEX_RE.match(_norm(names[0])) and _x_kind(names[1]):
            xi = 1
        x = values[:, xi]
        ycols = []
        for i in range(m):
            if i == xi or (i < xi):
                continue
            if names[i] and _x_kind(names[i]) and _quantity_of(names[i])[0] is None:
                if self._same_axis(x, names[xi], values[:, i], names[i]):
                    self.warnings.append(f"column '{labels[i]}' repeats the x axis in other "
                                         "units; ignored")
                    continue
                raise self._err("a second x column with other values: this reader takes one x"
                                " column per file", column=labels[i],
                                fix="export each spectrum with its own x column to its own file")
            ycols.append(i)
        if not ycols:
            raise self._err("the table has an x column but no value column",
                            fix="export the measured values next to the x values")

        several = len(ycols) > 1
        if column is not None:
            ycols = [self._select(column, labels, xi, ycols)]

        xunit, xfactor = self._x_unit(x_unit, names[xi], labels[xi], x, rows)
        self.x_label = labels[xi]
        out = []
        for i in ycols:
            out.append(self._one(values[:, i], x, rows, xunit, xfactor, names[i], labels[i],
                                 quantity, y_unit, meta,
                                 f"{sample} / {labels[i]}" if several else sample))
        return out

    @staticmethod
    def _same_axis(x, xname, other, name):
        """Whether ``other`` is the x axis again (same values, or the same photons in another
        unit)."""
        ok = np.isfinite(x) & np.isfinite(other)
        if np.allclose(x[ok], other[ok]):
            return True
        units = {"nm": ("nm", 1), "um": ("um", 1), "ev": ("ev", 1), "cm-1": ("cm-1", 1),
                 "angstrom": ("nm", 0.1), "mev": ("ev", 1e-3)}
        a, b = units.get(_x_kind(xname) or ""), units.get(_x_kind(name) or "")
        if not (a and b) or not ok.any():
            return False
        with np.errstate(all="ignore"):
            ea = energy_ev_from(x[ok] * a[1], a[0])
            eb = energy_ev_from(other[ok] * b[1], b[0])
            return bool(np.allclose(ea, eb, rtol=5e-3))

    def _values(self, rows, plain, m, labels):
        dec = self.dec
        is_plain = np.asarray(plain, dtype=bool)[rows]
        fast = np.flatnonzero(is_plain)
        flat = self._fast_numbers([self.lines[k] for k in rows[fast].tolist()], m)
        if flat is None:        # cannot happen for rows the regex accepted: read them one by one
            is_plain[:] = False
        if flat is not None and fast.size == len(rows):
            arr = flat.reshape(len(rows), m)            # no copy: the common case
        else:
            arr = np.empty((len(rows), m))
            if flat is not None and fast.size:
                arr[fast] = flat.reshape(fast.size, m)
        del flat
        for r in np.flatnonzero(~is_plain).tolist():
            k = int(rows[r])
            cells = self._cells(self.lines[k])
            for c in range(m):
                v = _number(cells[c], dec)
                if v is None:
                    raise self._err(f"'{cells[c]}' is not a number", line=k + 1,
                                    column=labels[c] if labels[c] != f"column {c + 1}"
                                    else c + 1,
                                    fix="correct or delete the row; leave a missing value empty "
                                        "or write NaN")
                arr[r, c] = np.nan if v is _MISSING_CELL else v
        return arr

    def _fast_numbers(self, lines, m):
        """The numbers of rows of plain numbers, flat, or None when numpy cannot read them all.
        With '.' decimals and a separator the rows are joined by it and read in one pass (no
        copy of the text with the separator replaced)."""
        if not lines:
            return np.empty(0)
        sep, dec = self.sep, self.dec
        for joiner in ([sep] if sep is not None and dec == "." else []) + [" "]:
            text = joiner.join(lines) if joiner != " " else "\n".join(lines)
            if joiner == " " and sep is not None:
                text = text.replace(sep, " ")
            if joiner == " " and dec == ",":
                text = text.replace(",", ".")
            try:
                flat = np.fromstring(text, dtype=float, sep=joiner)
            except ValueError:      # numpy >= 2.3 raises where it stopped early before
                continue
            finally:
                del text
            if flat.size == len(lines) * m:
                return flat
        return None

    def _select(self, column, labels, xi, ycols):
        listing = ", ".join(f"{i + 1} '{lab}'" for i, lab in enumerate(labels))
        idx = None
        if isinstance(column, (int, np.integer)) or str(column).strip().isdigit():
            idx = int(str(column).strip()) - 1
            if not 0 <= idx < len(labels):
                idx = None
        else:
            want = str(column).strip().lower()
            hits = [i for i, lab in enumerate(labels) if lab.strip().lower() == want]
            idx = hits[0] if hits else None
        if idx is None:
            raise self._err(f"no column '{column}'; the columns found are {listing}",
                            fix="--column with one of these names or numbers",
                            code="bad-option")
        if idx == xi:
            raise self._err(f"column {idx + 1} '{labels[idx]}' is the x axis, not a value "
                            "column", fix=f"--column with one of: {listing}", code="bad-option")
        if idx not in ycols:
            raise self._err(f"column {idx + 1} '{labels[idx]}' is not a value column",
                            fix=f"--column with one of: {listing}", code="bad-option")
        return idx
