"""The formula guard of every CSV edgefit writes (the batch summary.csv, the web pages'
comparison CSV; both are edgefit.report.summary_csv): a cell a spreadsheet would run as a
formula is written as text, also after leading whitespace or a bare carriage return."""
from __future__ import annotations

import csv
import io

import pytest

from edgefit.report import summary_csv

# Reproducers of the probe: "\r=1+1" was written unquoted (a new row with a live =1+1), and a
# leading space or no-break space before "=" was not neutralised.
FORMULAS = ["\r=1+1", "\r\n=1+1", "\n=1+1", " =1+1", "\u00a0=1+1", "\u3000+1+A1", "\t=1",
            "  @SUM(A1)", "-2+3", "=HYPERLINK(\"x\")", "\u2009-A1"]


def _cells(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text)))


def _live(cell: str) -> bool:
    """Whether a spreadsheet would read the cell as a formula: = + - @ as its first character
    after whitespace, unless the cell starts with the text marker '."""
    return not cell.startswith("'") and cell.lstrip()[:1] in ("=", "+", "-", "@")


@pytest.mark.parametrize("value", FORMULAS, ids=[repr(v) for v in FORMULAS])
def test_formula_cells_are_text_in_the_summary_csv(value):
    text = summary_csv([{"sample": value, "source": "f.csv", "metadata": {"operator": value}}])
    rows = _cells(text)
    assert len(rows) == 2, "a line break inside a value must not start a new row"
    header, row = rows
    for name in ("sample", "meta:operator"):
        cell = row[header.index(name)]
        assert not _live(cell), (name, cell)
    # and no physical line of the file starts with a formula either (a reader that splits on
    # bare carriage returns)
    for line in text.replace("\r", "\n").split("\n"):
        assert not line.lstrip()[:1] in ("=", "+", "@"), repr(line)


@pytest.mark.parametrize("value", ["-1.5", "+2", " 3.25", "-4e-3"])
def test_numbers_stay_numbers(value):
    header, row = _cells(summary_csv([{"sample": "s", "metadata": {"t": value}}]))
    assert row[header.index("meta:t")] == value


def test_list_cells_are_guarded_too():
    header, row = _cells(summary_csv([{"sample": "s", "flags": ["\r=1+1", "x"]}]))
    assert not _live(row[header.index("flags")])
