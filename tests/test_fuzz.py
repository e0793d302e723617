"""Fuzz: 2,000 odd files (hand mutators of tests/fuzz_support.py over the reader corpus, the demo
files and synthetic tables; a fixed seed, so a failure is reproducible by its file number) through
``edgefit.parse_spectra`` and, for what parses, ``edgefit.analyse``. Every outcome must be a
result or an EdgefitError whose fix is not empty, with no Python warning on the way.
benchmarks/fuzz_readers.py runs 20,000 of the same kind."""
from __future__ import annotations

import collections

import fuzz_support

FILES = 2_000


def test_odd_files_end_in_a_result_or_an_edgefit_error_with_a_fix():
    seeds = fuzz_support.seed_files()
    counts = collections.Counter()
    bad, caught = [], []
    for k in range(FILES):
        name, data, options = fuzz_support.odd_file(k, 0, seeds)
        kind, detail = fuzz_support.outcome(name, data, options, caught)
        counts[kind] += 1
        if kind not in ("result", "reader-error", "analysis-error"):
            bad.append((k, name, options, kind, detail.strip().splitlines()[-1]))
    assert not bad, f"{len(bad)} of {FILES}; first: {bad[:3]}"
    assert not caught, caught[:5]
    # the mutators reach both stages: files that read and are analysed, and files that do not
    assert counts["result"] >= FILES // 10 and counts["reader-error"] >= FILES // 10, counts
    assert sum(counts.values()) == FILES
