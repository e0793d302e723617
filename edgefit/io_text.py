"""The text stage of the reader: bytes to text, lines to cells, and the dialect.

``_decode`` turns the bytes of an export into text (BOMs, UTF-16 without BOM, Latin-1) and
makes Unicode spaces (no-break, thin, em, ideographic ...) plain spaces, so that spreadsheet
exports read like any other; ``_split`` cuts a line into cells, ``_number`` reads one cell,
``_sniff`` chooses separator and decimal mark, ``_clean_row_re`` is the regex of the fast path
(plain ASCII numbers and separators only: what ``numpy.fromstring`` reads). :mod:`edgefit.io` builds the table, header and spectra on top of them.

Lines longer than :data:`MAX_LINE_CHARS` are never split into cells: a line of millions of
cells would cost hundreds of bytes of Python objects per byte of the file.
"""
from __future__ import annotations

import codecs
import csv
import re
from collections import Counter
from pathlib import Path

from .errors import EdgefitError

_CONTROL_RE = re.compile(r"[\x00-\x08\x0b\x0e-\x1f]")
_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_SHEET_SUFFIXES = (".xlsx", ".xlsm", ".xls", ".ods", ".numbers")
_EXPORT_FIX = "export the sheet or spectrum as CSV or plain text and read that file"


#: Longest line split into cells [characters]; longer lines are never rows of the table.
MAX_LINE_CHARS = 100_000

#: Unicode spaces that spreadsheets and word processors write between or inside cells: all read
#: as a plain space (U+00A0 no-break space, also the Latin-1 byte 0xA0; U+1680; U+2000..U+200A
#: en/em/thin/hair spaces; U+202F narrow no-break space; U+205F; U+3000 ideographic space), and
#: the invisible U+200B zero-width space and U+FEFF (a BOM inside the text) removed.
_SPACES = dict.fromkeys([0xA0, 0x1680, *range(0x2000, 0x200B), 0x202F, 0x205F, 0x3000], " ")
_SPACES.update(dict.fromkeys([0x200B, 0xFEFF], None))
_SPACES = str.maketrans(_SPACES)


def _decode(data: bytes, name: str) -> str:
    """The text of ``data`` with Unicode spaces made plain spaces (see :data:`_SPACES`)."""
    text = _decode_bytes(data, name)
    return text if text.isascii() else text.translate(_SPACES)


def _decode_bytes(data: bytes, name: str) -> str:
    if data.startswith(b"PK\x03\x04"):
        raise EdgefitError("this is a zip container (an Excel .xlsx/.ods workbook or an archive),"
                           " not a text export", file=name, fix=_EXPORT_FIX, code="not-text")
    if data.startswith(_OLE_MAGIC):
        raise EdgefitError("this is an old-style Excel (.xls) or other binary document, not a "
                           "text export", file=name, fix=_EXPORT_FIX, code="not-text")
    for bom, enc in ((codecs.BOM_UTF32_LE, "utf-32-le"), (codecs.BOM_UTF32_BE, "utf-32-be"),
                     (codecs.BOM_UTF8, "utf-8"), (codecs.BOM_UTF16_LE, "utf-16-le"),
                     (codecs.BOM_UTF16_BE, "utf-16-be")):
        if data.startswith(bom):
            try:
                return data[len(bom):].decode(enc)
            except UnicodeDecodeError as exc:
                raise EdgefitError(f"the file starts with a {enc.upper()} byte-order mark but "
                                   f"byte {exc.start + len(bom)} is not {enc.upper()}",
                                   file=name, fix="save the file again as UTF-8",
                                   code="bad-file") from None
    if b"\x00" in data:
        # UTF-16 without a byte-order mark: text in the low bytes, NUL in the others.
        even, odd = data[0::2], data[1::2]
        if len(data) >= 8 and len(data) % 2 == 0:
            for zeros, enc in ((odd, "utf-16-le"), (even, "utf-16-be")):
                if zeros.count(0) >= 0.9 * len(zeros):
                    try:
                        return data.decode(enc)
                    except UnicodeDecodeError:
                        break
        suffix = Path(name).suffix.lower()
        kind = "a spreadsheet workbook" if suffix in _SHEET_SUFFIXES else "a binary file"
        raise EdgefitError(f"this looks like {kind} (it contains NUL bytes), not a text export",
                           file=name, fix=_EXPORT_FIX, code="not-text")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        pass
    try:
        return data.decode("cp1252")
    except UnicodeDecodeError:
        return data.decode("latin-1")


# ---------------------------------------------------------------------------- cells

_NUM_RE = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\Z")
_MISSING = frozenset(("", "nan", "-nan", "+nan", "n/a", "na", "#n/a", "null", "none", "-", "--",
                      "inf", "-inf", "+inf", "infinity", "-infinity", "#num!", "#value!"))
_NUMERICISH_RE = re.compile(r"[0-9.,;+\-−eE \t\"']*[0-9][0-9.,;+\-−eE \t\"']*\Z")
_DIALECTS = (("\t", "."), ("\t", ","), (";", "."), (";", ","), (",", "."), (None, "."),
             (None, ","), (",", ","))
_MISSING_CELL = object()


def _number(cell: str, dec: str):
    """float, ``_MISSING_CELL`` (empty, NaN, inf, n/a, ...) or None (not a number)."""
    s = cell if cell.isascii() else cell.replace("−", "-")     # U+2212 minus sign
    if dec == ",":
        if "." in s:
            return None
        s = s.replace(",", ".")
    try:
        v = float(s)
    except ValueError:
        return _MISSING_CELL if cell.lower() in _MISSING else None
    if v - v != 0:             # NaN or inf
        return _MISSING_CELL
    if "_" in s or not s.isascii():       # float() accepts 1_000 and non-ASCII digits
        return v if _NUM_RE.match(s) else None
    return v


def _split(line: str, sep, *, keep_empty: bool = False):
    """Cells of one line (stripped, unquoted; trailing empty cells dropped unless
    ``keep_empty``)."""
    if sep is None:
        cells = line.split()
    elif '"' in line:
        try:
            cells = next(csv.reader([line], delimiter=sep, skipinitialspace=True))
        except csv.Error:           # a quote the csv module refuses: split as plain text
            cells = line.split(sep)
    else:
        cells = line.split(sep)
    if '"' in line or "'" in line:
        cells = [c.strip().strip('"').strip("'").strip() for c in cells]
    elif sep is not None:
        cells = [c.strip() for c in cells]
    while cells and not cells[-1] and not keep_empty:
        cells.pop()
    return cells


def _strip_inline_comment(s: str) -> str:
    i = s.find("#")
    return s if i < 0 else s[:i].rstrip()


def _sniff(lines):
    """(separator, decimal mark, cells per row) that read the most numeric-looking lines of
    the longest run of them, or None when no line has two numbers."""
    match = _NUMERICISH_RE.match
    # Sample the longest run of numeric-looking lines (blank lines do not break it): the table.
    best, run = [], []
    for i, s in enumerate(lines):
        if len(s) <= MAX_LINE_CHARS and match(s):
            run.append(i)
        elif s:
            if len(run) > len(best):
                best = run
            run = []
    sample = run if len(run) > len(best) else best
    if not sample:
        return None
    if len(sample) > 40:
        sample = sample[:20] + sample[len(sample) // 2:len(sample) // 2 + 10] + sample[-10:]
    scores = []
    for rank, (sep, dec) in enumerate(_DIALECTS):
        counts = Counter()
        for i in sample:
            cells = _split(_strip_inline_comment(lines[i]), sep)
            if len(cells) >= 2 and all(isinstance(_number(c, dec), float) for c in cells):
                counts[len(cells)] += 1
        width, score = counts.most_common(1)[0] if counts else (0, 0)
        scores.append((score, -rank, sep, dec, width))
    score, _, sep, dec, width = max(scores)
    return (sep, dec, width) if score else None


def _clean_row_re(sep, dec, width):
    """A regex for a row of exactly ``width`` plain numbers in this dialect (the fast path)."""
    num = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
    if dec == ",":
        num = num.replace(r"\.", ",")
    gap = r"[ \t]+" if sep is None else r"[ ]*" + re.escape(sep) + r"[ ]*"
    tail = "" if sep is None else r"(?:[ ]*" + re.escape(sep) + r")*[ ]*"
    # re.ASCII: \d must not take other scripts' digits ("１２"), which numpy does not read
    return re.compile(num + (r"(?:" + gap + num + r")" + "{%d}" % (width - 1)) + tail + r"\Z",
                      re.ASCII)
