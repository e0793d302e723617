"""Survey (prints the table): edgefit on every refractiveindex.info table of the semiconductors
of tests/refidx_survey.py that spans its gap, as a new user would try published data. The
sets, their truths and sources, the classes and the exclusion rule are in that module's
docstring; tests/test_survey.py holds the thresholds.

    python benchmarks/survey_refidx.py [--all] [--json out.json]
"""
from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from tests.refidx_survey import fractions, run  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--json", help="write every row to this file")
    ap.add_argument("--all", action="store_true", help="list the right ones too")
    args = ap.parse_args(argv)
    rows, counts = run()
    right, amb, off, excl = fractions(counts)
    judged = sum(v for k, v in counts.items() if k != "excluded")
    print(f"{len(rows)} refractiveindex.info sets, "
          f"{judged} judged: " + ", ".join(f"{k} {v}" for k, v in sorted(counts.items())))
    print(f"  right {100 * right:.0f} %, ambiguous {100 * amb:.0f} %, confident and off "
          f"{100 * off:.0f} % of the judged; excluded {100 * excl:.0f} % of all")
    for r in rows:
        if r["class"] == "excluded":
            print(f"  {'excluded':21s} {r['set']:34s} {r['reason']}")
        elif r["class"] != "right" or args.all:
            print(f"  {r['class']:21s} {r['set']:34s} truth {r['truth_ev']:.2f} "
                  f"{r['truth_type'][:3]}; edgefit {r['transition']} ({r['strength']}) "
                  f"{r['gaps']} flags {r['flags']}")
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1), encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
