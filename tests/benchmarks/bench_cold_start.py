"""Cold start: a fresh Python process importing rankfold and opening the demo explorer.

Run: ``python tests/benchmarks/bench_cold_start.py`` (about a minute). Every figure is the best
of several fresh processes, each started the same way, so the operating system's file cache is
warm for all of them alike. Printed beside each: the outside baselines measured in the same
run, a process that only imports pandas (which rankfold needs anyway) and one that only
imports Altair and makes its offline chart script (what any offline Altair widget costs).

Goals: ``import rankfold`` at most 0.5 s; the demo explorer open within 2.5 s of a fresh
process, with the chart script read from the disk cache (its first-ever bundling is shown
apart, in an empty cache folder).
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time

REPEATS = 5

OPEN_EXPLORER = (
    "import rankfold; from rankfold.widgets import explore; "
    "explore(rankfold.demo.transit_survey(n=2000, seed=1))"
)


def fresh_process(code: str, cache: str) -> float:
    """Wall time of ``python -c code`` from start to exit."""
    env = dict(os.environ, RANKFOLD_CACHE_DIR=cache)
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True, env=env)
    return time.perf_counter() - start


def best(code: str, cache: str) -> float:
    return min(fresh_process(code, cache) for _ in range(REPEATS))


def main() -> None:
    with tempfile.TemporaryDirectory() as cache:
        empty = fresh_process("pass", cache)
        first_open = fresh_process(OPEN_EXPLORER, cache)  # bundles into the empty cache
        rows = [
            ("python -c pass", best("pass", cache), None),
            ("import pandas (outside baseline)", best("import pandas", cache), None),
            ("import rankfold", best("import rankfold", cache), 0.5),
            ("import altair + its offline script (outside baseline)",
             best("import altair as alt; alt.JupyterChart.enable_offline()", cache), None),
            ("import rankfold.widgets", best("import rankfold.widgets", cache), None),
            ("open the demo explorer, script cached", best(OPEN_EXPLORER, cache), 2.5),
        ]
    print(f"fresh processes, best of {REPEATS} (interpreter start alone {empty:.2f} s)")
    for label, seconds, goal in rows:
        target = f"  goal <= {goal} s" if goal else ""
        print(f"  {label:<56} {seconds:6.2f} s{target}")
    print(f"  {'open the demo explorer, first ever (bundles the script)':<56} "
          f"{first_open:6.2f} s")


if __name__ == "__main__":
    main()
