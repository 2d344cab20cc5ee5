"""Fuzz the ``aculink`` command line with thousands of random cases; print the counts.

    python tests/benchmarks/fuzz_cli.py [--cases N] [--seed S]

The same cases and checks as ``tests/test_cli_fuzz.py`` (exit 0 or 2; on 2 one line on stderr
and no file created or changed; never a traceback), run outside pytest so that the number of
cases can be large. Prints per command how many cases ended 0, ended 2, and broke the contract,
with the first few broken command lines. Exits 1 if any case broke it.
"""

from __future__ import annotations

import argparse
import collections
import random
import shutil
import sys
import tempfile
import time
import traceback
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from hypothesis import HealthCheck, given, settings  # noqa: E402

from fuzz_cli_cases import CHEAP, command_lines, prepare, run_case  # noqa: E402


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--cases", type=int, default=2000)
    p.add_argument("--seed", type=int, default=0)
    opts = p.parse_args()
    work = Path(tempfile.mkdtemp(prefix="aculink-fuzz-"))
    files = prepare(work)
    counts = collections.defaultdict(collections.Counter)
    broken = []
    accepted = []  # costly commands that ran although their case carried an early mistake
    started = time.perf_counter()

    def one(argv):
        case = Path(tempfile.mkdtemp(prefix="case-", dir=work.parent))
        shutil.copytree(work, case, dirs_exist_ok=True)
        argv = [a.replace(str(work), str(case)) for a in argv]
        try:
            code, out, err, changed = run_case(argv, case)
            lines = err.strip().splitlines()
            bad = ("Traceback" in out + err or code not in (0, 2)
                   or (code == 2 and (len(lines) != 1 or not lines[0].startswith("aculink: error:") or changed)))
            why = f"exit {code}, stderr {err.strip()[:300]!r}, changed={changed}"
        except BaseException as exc:  # noqa: BLE001 - a crash is what we are looking for
            code, bad, why = "crash", True, "".join(traceback.format_exception_only(exc)).strip()
        finally:
            shutil.rmtree(case, ignore_errors=True)
        counts[argv[0]]["broken" if bad else f"exit {code}"] += 1
        if code == 0 and argv[0] not in CHEAP:
            accepted.append(argv)
        if bad:
            broken.append((argv, why))

    rnd = random.Random(opts.seed)
    run = settings(max_examples=opts.cases, deadline=None, database=None, derandomize=False,
                   suppress_health_check=list(HealthCheck))(given(argv=command_lines(files))(one))
    try:
        run.hypothesis.inner_test  # noqa: B018 - only to check it is a hypothesis test
        from hypothesis import seed as hseed

        hseed(rnd.randrange(2**32))(run)()
    finally:
        shutil.rmtree(work, ignore_errors=True)
    total = sum(sum(c.values()) for c in counts.values())
    print(f"{total} cases in {time.perf_counter() - started:.0f} s")
    print(f"{'command':<10} {'exit 0':>7} {'exit 2':>7} {'broken':>7}")
    for cmd in sorted(counts):
        c = counts[cmd]
        print(f"{cmd:<10} {c['exit 0']:>7} {c['exit 2']:>7} {c['broken']:>7}")
    for argv in accepted[:10]:
        print("ACCEPTED (an early mistake was not refused):", " ".join(argv))
    for argv, why in broken[:15]:
        print("BROKEN:", " ".join(argv), "->", why)
    return 1 if broken or accepted else 0


if __name__ == "__main__":
    raise SystemExit(main())
