"""The header vocabulary of the reader: what a column's name says about the x axis (unit,
wavelength or energy), the quantity (T, R, absorbance, α, diffuse R, Kubelka–Munk), the length
unit of an absorption coefficient, and whether a line reads as column names. :mod:`edgefit.io`
uses it for the header, :mod:`edgefit.io_values` for units and quantities."""
from __future__ import annotations

import re

from .io_text import _number, _split

def _norm(text: str) -> str:
    s = text.lower().replace("μ", "µ").replace("⁻¹", "-1").replace("⁻", "-").replace("¹", "1")
    s = s.replace("−", "-").replace("–", "-").replace("**", "").replace("^", "")
    s = re.sub(r"cm\s*-\s*1", "cm-1", s)
    return re.sub(r"\s+", " ", s).strip()


_X_UNIT_RES = (
    ("cm-1", re.compile(r"cm-1|1/cm|wave\s?-?numbers?|(?<![a-z])wn(?![a-z])")),
    ("mev", re.compile(r"(?<![a-z])mev(?![a-z])")),
    ("ev", re.compile(r"(?<![a-z])ev(?![a-z])|electron\s?volts?")),
    ("um", re.compile(r"(?<![a-z])(?:µm|um|microns?|micromet\w*)(?![a-z])")),
    ("nm", re.compile(r"(?<![a-z])(?:nm|nanomet\w*)(?![a-z])")),
    ("angstrom", re.compile(r"å|angstr|[(\[/]\s*a\s*[)\]]?$")),
)
_WAVELENGTH_RE = re.compile(r"wave\s?-?length|lambda|λ|(?<![a-z])(?:wl|wvl)(?![a-z])")
_ENERGY_RE = re.compile(r"energy|(?<![a-z])(?:hv|hν|h\s?nu|e)(?![a-z])|photon")
_INDEX_RE = re.compile(r"^(?:no\.?|#|n|index|idx|point|pt|nr\.?)$")


def _x_kind(name: str):
    """x unit named in a header ('nm', 'um', 'ev', 'mev', 'cm-1', 'angstrom'), 'wavelength' or
    'energy' when only the word is there, else None."""
    n = _norm(name)
    if not n:
        return None
    wavelength = bool(_WAVELENGTH_RE.search(n))
    for unit, rx in _X_UNIT_RES:
        if rx.search(n) and (unit != "angstrom" or wavelength or n.startswith(("(", "["))
                             or "å" in n or "angstr" in n):
            return unit
    if wavelength:
        return "wavelength"
    if _ENERGY_RE.search(n):
        return "energy"
    return None


_PER_LENGTH = (
    (re.compile(r"cm-1|1/cm|/cm(?![a-z])"), 1.0),
    (re.compile(r"(?<![a-zµ])(?:µm|um)-1|1/(?:µm|um)"), 1e4),
    (re.compile(r"(?<![a-zµ])nm-1|1/nm"), 1e7),
    (re.compile(r"(?<![a-zµc])m-1|1/m(?![a-z])"), 1e-2),
)
_Q_RES = (
    ("km", re.compile(r"(?<![a-z])f\s?\(\s?r|kubelka|(?<![a-z])k-?m(?![a-z])|remission")),
    ("absorption-coefficient", re.compile(r"alpha|α|coef")),
    ("diffuse-reflectance", re.compile(r"diffuse|(?<![a-z])drs?(?![a-z])|r[_ ]?diff|r∞|"
                                       r"(?<![a-z])r_?inf(?![a-z])")),
    ("absorbance", re.compile(r"absorbance|(?<![a-z])abs(?![a-z])|(?<![a-z])od(?![a-z])|"
                              r"optical density|(?<![a-z0-9])a\s*[(\[]")),
    ("reflectance", re.compile(r"reflect|(?<![a-z])refl(?![a-z])|(?<![a-z])%\s?r(?![a-z])|"
                               r"(?<![a-z0-9])r\s?(?:%|[(\[]\s*%)")),
    ("transmittance", re.compile(r"transm|(?<![a-z])trans(?![a-z])|(?<![a-z])%\s?t(?![a-z])|"
                                 r"(?<![a-z0-9])t\s?(?:%|[(\[]\s*%)")),
)
_BARE_LETTERS = {"t": "transmittance", "tr": "transmittance", "r": "reflectance",
                 "a": "absorbance", "abs": "absorbance"}


def _quantity_of(name: str):
    """(quantity or None, reason). Quantity ``km`` means a Kubelka–Munk column."""
    n = _norm(name)
    base = re.sub(r"[(\[].*?[)\]]", " ", n)
    base = re.sub(r"[%/\s.]+", " ", base).strip()
    hits = [q for q, rx in _Q_RES if rx.search(n)]
    if not hits and base in _BARE_LETTERS:
        hits = [_BARE_LETTERS[base]]
    if not hits and any(rx.search(n) for rx, _ in _PER_LENGTH):
        hits = ["absorption-coefficient"]
    # A more specific reading hides the general one inside it.
    if "km" in hits:
        hits = ["km"]
    if "absorption-coefficient" in hits:
        hits = [h for h in hits if h != "absorbance"]
    if "diffuse-reflectance" in hits:
        hits = [h for h in hits if h != "reflectance"]
    if len(hits) == 1:
        return hits[0], ""
    if len(hits) > 1:
        return None, "its header reads as " + " and as ".join(hits)
    if "absorption" in n:
        return None, "'absorption' may mean absorbance or absorption coefficient"
    return None, "its header names no known quantity"


def _per_cm_factor(name: str):
    n = _norm(name)
    for rx, factor in _PER_LENGTH:
        if rx.search(n):
            return factor
    return None


_UNIT_ONLY_RE = re.compile(r"^[(\[]?\s*(?:nm|µm|um|ev|mev|cm-1|1/cm|%|a\.?u\.?|-|1/m|m-1|å|"
                           r"1/µm|1/um|counts)\s*[)\]]?$")
_META_KEY_RE = re.compile(r"^(?:thickness|sample|date|time|operator|user|instrument|comment|"
                          r"title|method|mode|scan|slit|temperature|annealing|substrate|"
                          r"file|points|npts|description|source|detector|lamp|integration)",
                          re.I)
_SAMPLE_KEY_RE = re.compile(r"^(?:sample(?:[\s_-]*(?:name|id))?|specimen)$", re.I)
_THICK_KEY_RE = re.compile(r"thick", re.I)
_AXIS_KEY_RE = re.compile(r"^([xy])[\s_-]*(?:units?|axis|label|title)$", re.I)


def _looks_like_header(cells) -> bool:
    if not cells or not any(any(ch.isalpha() or ch in "%λα" for ch in c) for c in cells):
        return False
    if any(isinstance(_number(c, "."), float) or isinstance(_number(c, ","), float)
           for c in cells):
        return False
    if len(cells) == 2 and _META_KEY_RE.match(cells[0]) and not _x_kind(cells[0]) \
            and _quantity_of(cells[1])[0] is None:
        return False
    return True


def _split_header(text: str, sep, m: int):
    """Column names from a header line; whitespace headers are split with care."""
    if sep is not None:
        return _split(text, sep)
    if "\t" in text:
        cells = [c.strip() for c in text.split("\t") if c.strip()]
        if len(cells) == m:
            return cells
    cells = [c for c in re.split(r"\s{2,}", text.strip()) if c]
    if len(cells) == m:
        return cells
    merged = []
    for tok in text.split():
        if merged and (tok[0] in "([/" or _UNIT_ONLY_RE.match(_norm(tok))
                       or isinstance(_number(tok, "."), float)):
            merged[-1] += " " + tok
        else:
            merged.append(tok)
    toks = text.split()
    if len(merged) != m and m == 2 and len(toks) <= 40:      # (quadratic in the words)
        for k in range(1, len(toks)):
            left, right = " ".join(toks[:k]), " ".join(toks[k:])
            if _x_kind(left) and _quantity_of(right)[0]:
                return [left, right]
    return merged


def _fmt(v: float) -> str:
    return f"{v:.6g}"
