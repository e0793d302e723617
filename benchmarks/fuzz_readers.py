"""Fuzz benchmark (a script, never a test): odd files through the reader and the analysis.

Makes ``--files`` odd files with the hand mutators of tests/fuzz_support.py (seed files: the
reader corpus, the demo files, synthetic tables), feeds each to ``edgefit.parse_spectra`` and
what parses to ``edgefit.analyse``, and prints how many ended how. Every outcome must be a
result or an EdgefitError with a fix: the counts of ``reader-uncaught``, ``analysis-uncaught``,
``no-fix`` and ``hang`` (a file still running after ``--timeout`` seconds) must be 0. Files
that break that rule are written to ``--save`` (default ``fuzz-failures/``) with their reader
options, so that each can become a regression test.

    python benchmarks/fuzz_readers.py [--files 20000] [--seed 0] [--workers 2] [--save DIR]
                                      [--timeout 60]
"""
from __future__ import annotations

import argparse
import collections
import json
import multiprocessing
import signal
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

import fuzz_support  # noqa: E402

BAD = ("reader-uncaught", "analysis-uncaught", "no-fix", "hang")
_SEEDS = None


class _Hang(BaseException):
    """Raised by the alarm: not an Exception, so that the outcome's handlers let it through."""


def _alarm(signum, frame):
    raise _Hang()


def _one(args):
    global _SEEDS
    k, seed, timeout_s = args
    if _SEEDS is None:
        _SEEDS = fuzz_support.seed_files()
        signal.signal(signal.SIGALRM, _alarm)
    name, data, options = fuzz_support.odd_file(k, seed, _SEEDS)
    signal.alarm(timeout_s)
    try:
        kind, detail = fuzz_support.outcome(name, data, options)
    except _Hang:
        kind, detail = "hang", f"still running after {timeout_s} s"
    finally:
        signal.alarm(0)
    return k, kind, (name, data, options, detail) if kind in BAD else None


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--files", type=int, default=20_000)
    p.add_argument("--seed", type=int, default=0)
    p.add_argument("--workers", type=int, default=2)
    p.add_argument("--save", default="fuzz-failures")
    p.add_argument("--timeout", type=int, default=60, help="seconds per file before it counts "
                   "as a hang (default 60)")
    args = p.parse_args(argv)
    counts = collections.Counter()
    failures = []
    t0 = time.perf_counter()
    jobs = [(k, args.seed, args.timeout) for k in range(args.files)]
    with multiprocessing.get_context("spawn").Pool(args.workers) as pool:
        for k, kind, bad in pool.imap_unordered(_one, jobs, chunksize=50):
            counts[kind] += 1
            if bad:
                failures.append((k, *bad))
    wall = time.perf_counter() - t0
    print(f"{args.files} odd files (seed {args.seed}, {args.workers} workers, {wall:.0f} s):")
    for kind in ("result", "reader-error", "analysis-error", *BAD):
        print(f"  {kind:18s} {counts[kind]}")
    uncaught = sum(counts[k] for k in BAD)
    print(f"uncaught or without a fix: {uncaught}")
    if failures:
        out = Path(args.save)
        out.mkdir(parents=True, exist_ok=True)
        for k, name, data, options, detail in sorted(failures)[:200]:
            (out / f"{k:06d}-{name}").write_bytes(data)
            (out / f"{k:06d}-{name}.json").write_text(json.dumps(
                {"file": k, "seed": args.seed, "options": options, "error": detail}, indent=1))
        last = {}
        for k, name, data, options, detail in sorted(failures):
            last.setdefault(detail.strip().splitlines()[-1], k)
        print(f"written to {out}/; distinct last lines (first file number):")
        for line, k in last.items():
            print(f"  {k:6d}  {line[:150]}")
    return 1 if uncaught else 0


if __name__ == "__main__":
    raise SystemExit(main())
