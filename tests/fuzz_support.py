"""Odd files for the reader fuzz test (tests/test_fuzz.py) and benchmark
(benchmarks/fuzz_readers.py): hand mutators over the reader corpus, the demo files and
synthetic tables, deterministic for a given seed.

:func:`odd_file` ``(k, seed)`` makes file number ``k``: a seed file with one to three mutations
(bytes flipped, inserted, deleted, duplicated; separators, decimal marks, encodings, headers,
numbers, signs and scales changed; lines shuffled, truncated, made very long) and sometimes
reader options. :func:`outcome` feeds it to ``edgefit.parse_spectra`` and every spectrum that
parses to ``edgefit.analyse``, and classifies what happened.
"""
from __future__ import annotations

import random
import traceback
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
SEED_DIRS = (ROOT / "tests" / "data" / "readers", ROOT / "spectra_demo")
SUFFIXES = {".csv", ".txt", ".dat", ".tsv", ".asc", ".xlsx"}

#: Characters and words the mutators insert.
PALETTE = ["\u00a0", "\u2009", "\u2003", "\u202f", "\u3000", "\u200b", "\ufeff", "\u202e", "\t",
           " ", ",", ";", ".", '"', "'", "#", "\r", "\n", "\r\n", "\x00", "\x1a", "e", "E", "-",
           "+", "−", "%", "NaN", "inf", "-inf", "1e308", "1e-320", "0", "-0", "n/a", "µm", "nm",
           "eV", "cm-1", "Å", "1,5", "١٢٣", "½", "=1+1", "\\", "//", "Sample: x", "Thickness: 5"]
HEADERS = ["Wavelength (nm)", "%T", "T", "R", "%R", "Abs", "A", "alpha (1/cm)", "α (1/m)",
           "Energy (eV)", "hv", "Wavenumber (cm-1)", "F(R)", "Kubelka-Munk", "DRS", "No.",
           "Absorption", "Transmittance [%]", "λ [µm]", "", "x", "y", "Sample", "Å"]
NUMBER_SWAPS = ["0", "-0", "-1", "-50", "1e308", "-1e308", "1e-320", "NaN", "inf", "", "5e5",
                "1.0.0", "1,2,3", "0x10", "1_000", "１２", "--", "e5"]
QUANTITIES = ["transmittance", "reflectance", "absorbance", "absorption-coefficient",
              "diffuse-reflectance"]


def seed_files() -> list[tuple[str, bytes]]:
    """(name, bytes) of every seed: the reader corpus, the demo files, synthetic tables."""
    out = []
    for d in SEED_DIRS:
        for p in sorted(d.iterdir()):
            if p.suffix.lower() in SUFFIXES and p.is_file():
                out.append((p.name, p.read_bytes()))
    wl = np.linspace(300.0, 900.0, 121)
    t = 0.85 / (1 + np.exp((420.0 - wl) / 12.0)) + 1e-3
    for sep in (",", "\t", ";", " "):
        out.append((f"synthetic{len(out)}.csv", ("Wavelength (nm)" + sep + "T\n" + "".join(
            f"{a:.1f}{sep}{b:.5f}\n" for a, b in zip(wl, t))).encode()))
    return out


def _lines(data: bytes) -> list[bytes]:
    return data.split(b"\n")


def _flip(rng, data):
    b = bytearray(data)
    for _ in range(rng.randint(1, 8)):
        if b:
            b[rng.randrange(len(b))] = rng.randrange(256)
    return bytes(b)


def _insert(rng, data):
    text = rng.choice(PALETTE).encode("utf-8")
    i = rng.randint(0, len(data))
    return data[:i] + text * rng.randint(1, 3) + data[i:]


def _delete(rng, data):
    if not data:
        return data
    i = rng.randrange(len(data))
    return data[:i] + data[i + rng.randint(1, 200):]


def _duplicate(rng, data):
    lines = _lines(data)
    i = rng.randrange(len(lines))
    return b"\n".join(lines[:i] + [lines[i]] * rng.randint(2, 20) + lines[i:])


def _truncate(rng, data):
    return data[:rng.randint(0, len(data))]


def _separator(rng, data):
    old = rng.choice([b",", b"\t", b";", b" "])
    new = rng.choice(["\u00a0", "\u2009", "\u3000", ", ", ",\u00a0", ";", "\t", "  ", "|", ","])
    return data.replace(old, new.encode("utf-8"))


def _decimal(rng, data):
    return data.replace(b".", b",") if rng.random() < 0.7 else data.replace(b",", b".")


def _encoding(rng, data):
    text = data.decode("utf-8", errors="replace")
    enc = rng.choice(["utf-16", "utf-16-le", "utf-16-be", "utf-8-sig", "latin-1", "cp1252",
                      "utf-32"])
    return text.encode(enc, errors="replace")


def _header(rng, data):
    lines = _lines(data)
    i = min(rng.randrange(len(lines)), 30)
    sep = rng.choice([",", "\t", ";", " "])
    lines.insert(i, sep.join(rng.choice(HEADERS) for _ in range(rng.randint(1, 4))).encode())
    return b"\n".join(lines)


def _numbers(rng, data):
    lines = _lines(data)
    for _ in range(rng.randint(1, 10)):
        i = rng.randrange(len(lines))
        parts = lines[i].replace(b"\t", b",").split(b",")
        j = rng.randrange(len(parts))
        parts[j] = rng.choice(NUMBER_SWAPS).encode("utf-8")
        lines[i] = b",".join(parts)
    return b"\n".join(lines)


def _column(rng, data):
    """Scale, negate or flatten the last column of every row that splits into numbers."""
    how = rng.choice(["neg", "x100", "tiny", "const", "drop", "x-neg"])
    out = []
    for line in _lines(data):
        sep = b"\t" if b"\t" in line else b";" if b";" in line else b","
        parts = line.split(sep)
        try:
            vals = [float(p) for p in parts]
        except ValueError:
            out.append(line)
            continue
        if how == "drop":
            parts = parts[:-1] if len(parts) > 1 else parts
        elif how == "x-neg":
            parts[0] = repr(-vals[0]).encode()
        else:
            v = vals[-1]
            v = {"neg": -v, "x100": v * 100, "tiny": v * 1e-9, "const": 0.5}[how]
            parts[-1] = repr(v).encode()
        out.append(sep.join(parts))
    return b"\n".join(out)


def _shuffle(rng, data):
    lines = _lines(data)
    rng.shuffle(lines)
    return b"\n".join(lines)


def _few(rng, data):
    lines = _lines(data)
    return b"\n".join(lines[:rng.randint(1, 9)])


def _long_line(rng, data):
    cell = rng.choice([b"1 ", b"1,", b"a", b'"1";', b"0.5\t"])
    lines = _lines(data)
    lines.insert(rng.randrange(len(lines) + 1), cell * rng.randint(1_000, 60_000))
    return b"\n".join(lines)


def _line_endings(rng, data):
    return data.replace(b"\n", rng.choice([b"\r", b"\r\n", b"\n\n", b"\r\r\n", b"\x85"]))


MUTATORS = [_flip, _insert, _delete, _duplicate, _truncate, _separator, _decimal, _encoding,
            _header, _numbers, _column, _shuffle, _few, _long_line, _line_endings]
#: Relative weights: the rare costly ones (very long lines) less often.
WEIGHTS = [1, 4, 1, 2, 0.5, 3, 2, 1, 3, 4, 4, 1, 1, 0.3, 1]


def odd_file(k: int, seed: int = 0, seeds=None) -> tuple[str, bytes, dict]:
    """File number ``k``: (name, bytes, reader options)."""
    seeds = seeds or seed_files()
    rng = random.Random(seed * 1_000_003 + k)
    name, data = seeds[rng.randrange(len(seeds))]
    for fn in rng.choices(MUTATORS, WEIGHTS, k=rng.randint(1, 3)):
        data = fn(rng, data)
    options = {}
    if rng.random() < 0.15:
        options["quantity"] = rng.choice(QUANTITIES)
    if rng.random() < 0.08:
        options["x_unit"] = rng.choice(["nm", "um", "ev", "cm-1"])
    if rng.random() < 0.05:
        options["column"] = rng.choice([1, 2, 3, "%T", "nope"])
    if rng.random() < 0.05:
        options["y_unit"] = rng.choice(["fraction", "percent"])
    return name, data, options


def outcome(name: str, data: bytes, options: dict, caught: list | None = None) -> tuple[str, str]:
    """(kind, detail) of one file. Kinds: ``result`` (analysed), ``reader-error`` and
    ``analysis-error`` (an EdgefitError with a fix), ``no-fix`` (an EdgefitError without one),
    ``reader-uncaught`` and ``analysis-uncaught`` (any other exception; detail: traceback).
    Python warnings raised on the way are appended to ``caught`` (as "Category: message")."""
    import edgefit
    from edgefit.errors import EdgefitError
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        try:
            return _outcome(edgefit, EdgefitError, name, data, options)
        finally:
            if caught is not None:
                caught += [f"{w.category.__name__}: {w.message} ({Path(w.filename).name}:"
                           f"{w.lineno})" for w in seen]


def _outcome(edgefit, EdgefitError, name, data, options):
    try:
        spectra = edgefit.parse_spectra(data, name, **options)
    except EdgefitError as exc:
        return ("reader-error" if exc.fix else "no-fix"), str(exc)
    except Exception:       # noqa: BLE001 - what the fuzzer looks for
        return "reader-uncaught", traceback.format_exc()
    kind = "result"
    for s in spectra[:2]:
        try:
            edgefit.analyse(s, bootstrap=20)
        except EdgefitError as exc:
            if not exc.fix:
                return "no-fix", str(exc)
            kind = "analysis-error"
        except Exception:   # noqa: BLE001
            return "analysis-uncaught", traceback.format_exc()
    return kind, ""
