"""How long importing the views takes in a kernel, and what the chart library would add.

A notebook kernel has IPython, ipywidgets and pandas loaded before any cell imports tm_compare,
so each run starts a fresh interpreter, imports those first (untimed), then times

- ``from tm_compare.views import TopicView, SweepView`` (the views; Altair is not imported by
  this statement: a background thread starts loading it when it returns, so "altair loaded" may
  read True for the views),
- ``from tm_compare.views import TopicView`` alone, and
- ``import altair`` (what the views cost before Altair was loaded on the first chart drawn),

several runs each, printing min and median. The baseline is the second line: a module that
imports Altair at the top pays at least that much on import.

    python bench/import_views.py --runs 5
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys

KERNEL = "import IPython, ipywidgets, pandas, numpy"
TIMED = {
    "views (TopicView, SweepView)": "from tm_compare.views import TopicView, SweepView",
    "TopicView alone": "from tm_compare.views import TopicView",
    "altair alone (baseline)": "import altair",
}
PROBE = """
import time, sys
{kernel}
t = time.perf_counter()
{timed}
print(time.perf_counter() - t, "altair" in sys.modules)
"""


def once(statement: str) -> tuple[float, bool]:
    code = PROBE.format(kernel=KERNEL, timed=statement)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    seconds, loaded = out.stdout.split()
    return float(seconds), loaded == "True"


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args(argv)
    results = {}
    for name, statement in TIMED.items():
        runs = [once(statement) for _ in range(args.runs)]
        times = [t for t, _ in runs]
        results[name] = statistics.median(times)
        print(
            f"{name:32s} min {min(times):.3f} s  median {statistics.median(times):.3f} s  "
            f"altair loaded: {runs[0][1]}"
        )
    views, altair = results["views (TopicView, SweepView)"], results["altair alone (baseline)"]
    print(f"views import / altair import (medians): {views / altair:.2f}")


if __name__ == "__main__":
    main()
