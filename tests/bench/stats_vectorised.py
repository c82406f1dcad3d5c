"""Benchmark: recomputing p for many t statistics in one vectorised call vs a Python loop.

Not a test: it prints timings and, with --json, writes them to a file. Run from the repository
root:

    .venv/bin/python tests/bench/stats_vectorised.py --n 10000 \
        --json tests/bench/results/stats_vectorised.json
    .venv/bin/python tests/bench/stats_vectorised.py --smoke
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np

from ledger.stats.pvalues import p_from_statistic

SMOKE_N = 200


def _best_of(repeats: int, run) -> float:
    """Fastest of several runs: the least disturbed by other work on the machine."""
    timings = []
    for _ in range(repeats):
        start = time.perf_counter()
        run()
        timings.append(time.perf_counter() - start)
    return min(timings)


def measure(*, n: int, repeats: int, seed: int = 1) -> dict[str, float | int]:
    rng = np.random.default_rng(seed)
    t_values = rng.normal(0.0, 3.0, size=n)
    degrees = rng.integers(2, 300, size=n).astype(float)

    vectorised = p_from_statistic(kind="t", value=t_values, df1=degrees)
    looped = np.array(
        [p_from_statistic(kind="t", value=float(t), df1=float(d)) for t, d in zip(t_values, degrees, strict=True)]
    )
    # Both routes must give the same numbers, or the comparison means nothing.
    np.testing.assert_allclose(vectorised, looped, rtol=1e-12)

    vectorised_seconds = _best_of(repeats, lambda: p_from_statistic(kind="t", value=t_values, df1=degrees))
    loop_seconds = _best_of(
        repeats,
        lambda: [
            p_from_statistic(kind="t", value=float(t), df1=float(d)) for t, d in zip(t_values, degrees, strict=True)
        ],
    )
    return {
        "n": n,
        "repeats": repeats,
        "vectorised_seconds": vectorised_seconds,
        "loop_seconds": loop_seconds,
        "speedup": loop_seconds / vectorised_seconds,
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=10_000, help="number of t statistics")
    parser.add_argument("--repeats", type=int, default=3, help="timed runs; the fastest counts")
    parser.add_argument("--json", type=Path, help="also write the figures to this JSON file")
    parser.add_argument(
        "--smoke",
        action="store_true",
        help=f"tiny run (n = {SMOKE_N}, one repeat) to check that it works",
    )
    arguments = parser.parse_args(argv)
    if arguments.n < 1 or arguments.repeats < 1:
        parser.error("--n and --repeats must be at least 1")
    n, repeats = (SMOKE_N, 1) if arguments.smoke else (arguments.n, arguments.repeats)

    figures = measure(n=n, repeats=repeats)
    print(f"t statistics:        {figures['n']:,}")
    print(f"vectorised call:     {figures['vectorised_seconds'] * 1e3:10.2f} ms")
    print(f"Python loop:         {figures['loop_seconds'] * 1e3:10.2f} ms")
    print(f"loop / vectorised:   {figures['speedup']:10.1f} x")
    if arguments.json:
        arguments.json.parent.mkdir(parents=True, exist_ok=True)
        arguments.json.write_text(json.dumps(figures, indent=2) + "\n")
        print(f"figures written to {arguments.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
