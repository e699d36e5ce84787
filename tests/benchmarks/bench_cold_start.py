"""Cold start: a fresh Python process importing rankfold and opening the demo explorer.

Run: ``python tests/benchmarks/bench_cold_start.py`` (about a minute). Every figure is the best
of several fresh processes, each started the same way, so the operating system's file cache is
warm for all of them alike, and with Python's bytecode cache (as after ``pip install``, even
where the environment turns writing it off); the processor time is printed too. Printed beside
them: outside baselines measured in the same run, a process that only imports pandas (which
rankfold needs anyway), one that only imports Altair, and one that also makes Altair's offline
chart script (what any offline Altair widget costs).

Goals: ``import rankfold`` at most 0.5 s; the demo explorer open within 2.5 s of a fresh
process, with the chart script read from the disk cache (its first-ever bundling is shown
apart, in an empty cache folder).
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import tempfile
import time

REPEATS = 5

OPEN_EXPLORER = (
    "import rankfold; from rankfold.widgets import explore; "
    "explore(rankfold.demo.transit_survey(n=2000, seed=1))"
)


def fresh_process(code: str, cache: str) -> tuple[float, float]:
    """Wall time and processor time (user + system) of ``python -c code``, start to exit."""
    env = dict(os.environ, RANKFOLD_CACHE_DIR=cache)
    # as after a pip install: modules load from their bytecode cache, written by the first run
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    used = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True, env=env)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, after.ru_utime + after.ru_stime - used.ru_utime - used.ru_stime


def best(code: str, cache: str) -> tuple[float, float]:
    runs = [fresh_process(code, cache) for _ in range(REPEATS)]
    return min(wall for wall, _ in runs), min(cpu for _, cpu in runs)


def main() -> None:
    with tempfile.TemporaryDirectory() as cache:
        first_open, _ = fresh_process(OPEN_EXPLORER, cache)  # bundles into the empty cache,
        # and writes the bytecode of every module the later runs import
        rows = [
            ("python -c pass", best("pass", cache), None),
            ("import pandas (outside baseline)", best("import pandas", cache), None),
            ("import rankfold", best("import rankfold", cache), 0.5),
            ("import altair (outside baseline)", best("import altair", cache), None),
            ("import altair + its offline script (outside baseline)",
             best("import altair as alt; alt.JupyterChart.enable_offline()", cache), None),
            ("import rankfold.widgets", best("import rankfold.widgets", cache), None),
            ("open the demo explorer, script cached", best(OPEN_EXPLORER, cache), 2.5),
        ]
    print(f"fresh processes, best of {REPEATS}: wall time, and processor time (user + system,"
          " less disturbed by other work on a shared machine)")
    for label, (wall, cpu), goal in rows:
        target = f"  goal <= {goal} s" if goal else ""
        print(f"  {label:<56} {wall:6.2f} s  cpu {cpu:6.2f} s{target}")
    print(f"  {'open the demo explorer, first ever (bundles the script)':<56} "
          f"{first_open:6.2f} s")


if __name__ == "__main__":
    main()
