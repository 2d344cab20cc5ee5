"""Run every benchmark script in this folder and print one table of figures and targets.

    python tests/benchmarks/run_all.py [--only rays,modem]

Each ``bench_*.py`` measures the project against a plain numpy/scipy baseline in one run and
prints its figures; this runner runs them one after another in fresh processes (so numba
compilation and caches behave as for a user), shows their output, and ends with a table: the
script, its wall time, and every line that reports a figure against a target or a ratio, with
its verdict (met / MISSED, "-" for a ratio without a target), then the count of each.
These hosts are noisy: compare ratios measured in one run, not absolute figures across runs.
"""

from __future__ import annotations

import argparse
import os
import re
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
#: Lines worth repeating in the summary: targets met or missed, ratios, speed-ups.
_KEY = re.compile(r"target|ratio|speed-up|x faster|slower|MISSED|met\b", re.IGNORECASE)


def scripts(only=None):
    found = sorted(HERE.glob("bench_*.py"))
    if only:
        wanted = {f"bench_{name.strip()}.py" for name in only.split(",")}
        found = [p for p in found if p.name in wanted]
    return found


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", default=None, help="comma list of names, e.g. rays,modem")
    args = ap.parse_args(argv)
    env = dict(os.environ, PYTHONPATH=str(HERE.parents[1]) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    summary = []
    for path in scripts(args.only):
        print(f"\n=== {path.name} ===", flush=True)
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, str(path)], capture_output=True, text=True, env=env)
        wall = time.perf_counter() - t0
        sys.stdout.write(proc.stdout)
        if proc.returncode:
            sys.stdout.write(proc.stderr[-2000:])
        key_lines = [line.strip() for line in proc.stdout.splitlines() if _KEY.search(line)]
        summary.append((path.stem.removeprefix("bench_"), wall, proc.returncode, key_lines))
    print("\n=== summary ===")
    print(f"{'benchmark':<10} {'wall s':>7} {'status':>7}  {'verdict':<7}  figure against target or baseline")
    counts = {"met": 0, "MISSED": 0}
    for name, wall, code, lines in summary:
        status = "ok" if code == 0 else f"exit {code}"
        if not lines:
            lines = ["(no target lines)"]
        for k, line in enumerate(lines):
            v = verdict(line)
            if v in counts:
                counts[v] += 1
            head = f"{name:<10} {wall:7.1f} {status:>7}" if k == 0 else f"{'':<10} {'':>7} {'':>7}"
            print(f"{head}  {v:<7}  {line}")
    print(f"targets: {counts['met']} met, {counts['MISSED']} MISSED (a line with both verdicts counts as MISSED)")
    return 0 if all(code == 0 for _, _, code, _ in summary) else 1


def verdict(line: str) -> str:
    """The verdict a benchmark line gives its target: MISSED, met, or '-' (a ratio or figure only)."""
    if "MISSED" in line:
        return "MISSED"
    if re.search(r"\bmet\b", line):
        return "met"
    return "-"


if __name__ == "__main__":
    raise SystemExit(main())
