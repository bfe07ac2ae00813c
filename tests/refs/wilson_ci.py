"""Wilson score intervals (no continuity correction) for the sim summaries' success rates, from
scipy.stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson") (scipy 1.17.1
as pinned in requirements.txt). Cases: the sizes the efficacy tables use (n = 10, 20, 50) with k
from 0 to n, and a few large n. Output: JSON [{"k", "n", "low", "high"}, ...].

    python tests/refs/wilson_ci.py tests/fixtures/stats/wilson_cases.json
"""

import json
import sys

from scipy.stats import binomtest


def main() -> None:
    out = sys.argv[1] if len(sys.argv) > 1 else "tests/fixtures/stats/wilson_cases.json"
    cases = [(k, n) for n in (1, 10, 20, 50) for k in range(n + 1)]
    cases += [(81, 263), (15, 148), (0, 1000), (999, 1000), (5000, 10000)]
    rows = []
    for k, n in cases:
        ci = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
        rows.append({"k": k, "n": n, "low": float(ci.low), "high": float(ci.high)})
    with open(out, "w", encoding="utf-8") as f:
        json.dump(rows, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
