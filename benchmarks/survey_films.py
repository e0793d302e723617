"""Survey (prints the table): films simulated from the real n + ik of the survey's tables.

The films are those of tests/film_survey.py (every judged table of tests/refidx_survey.py
on glass through tmm; what is simulated and what is excluded is said there). Each film is
analysed as a user would: T alone with --substrate-index 1.52 and no thickness (fringes may
give one), and T with R. The classes are those of the table survey.

    python benchmarks/survey_films.py [--thickness 300 1000] [--workers 2] [--json out.json]
"""
from __future__ import annotations

import argparse
import collections
import json
import sys
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from tests.film_survey import jobs, one  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--thickness", type=float, nargs="+", default=[300.0, 1000.0])
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--json", help="write every row to this file")
    args = ap.parse_args(argv)
    with ProcessPoolExecutor(args.workers) as pool:
        rows = [r for r in pool.map(one, jobs(args.thickness), chunksize=2) if r is not None]
    excluded = [r for r in rows if "excluded" in r]
    rows = [r for r in rows if "excluded" not in r]
    print(f"{len(excluded)} films excluded (too thin to show the edge)")
    for how in ("T", "T+R"):
        counts = collections.Counter(r[how]["class"] for r in rows)
        right = counts.get("right", 0) / max(len(rows), 1)
        print(f"{how:4s}: {len(rows)} films: " + ", ".join(f"{k} {v}"
                                                        for k, v in sorted(counts.items()))
              + f"; right {100 * right:.0f} %")
    for r in rows:
        if r["T"]["class"] != "right" or r["T+R"]["class"] != "right":
            print(f"  {r['set']:34s} {r['thickness_nm']:5.0f} nm truth {r['truth_ev']:.2f} "
                  f"{r['truth_type'][:3]}  T: {r['T']['class']} {r['T']['gaps']}  "
                  f"T+R: {r['T+R']['class']} {r['T+R']['gaps']}")
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1), encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
