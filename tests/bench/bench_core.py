"""Benchmark of the core simulator (figures, not a timed test).

Run: ``.venv/bin/python tests/bench/bench_core.py`` (or ``tripsim bench``).  Prints the
seconds for 100,000 segments from segments to trace, the ratio to the memory floor measured
in the same run, the ratio of a solve_ivp integration of the same physics, and the time to
load and route on the demo OSM network, cold and cached.
"""

from tripsim.bench import run_bench

if __name__ == "__main__":
    raise SystemExit(run_bench())
