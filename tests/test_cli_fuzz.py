"""Property-based fuzz test of the whole command line (hypothesis).

Random combinations of every command's options (valid, out of range, wrong type, missing or broken
files, outputs that already exist) on the bundled sites. Whatever the input: the exit code is 0 or
2; on 2, stderr is exactly one line starting ``aculink: error:`` and no file was created or
changed; never a traceback. The rule is the project's error contract (DEVELOPERS.md, *Errors*);
common practice, no source. ``tests/benchmarks/fuzz_cli.py`` runs thousands of the same cases.
"""

from __future__ import annotations

import shutil
import sys
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).parent))  # the case generator is shared with the benchmark script
from fuzz_cli_cases import command_lines, prepare, run_case  # noqa: E402

_WORK = Path(tempfile.mkdtemp(prefix="aculink-fuzz-"))
_FILES = prepare(_WORK)


def check_case(argv):
    """Run one case in a fresh copy of the work folder and check the contract."""
    work = Path(tempfile.mkdtemp(prefix="case-", dir=_WORK.parent))
    try:
        shutil.copytree(_WORK, work, dirs_exist_ok=True)
        argv = [a.replace(str(_WORK), str(work)) for a in argv]
        code, out, err, changed = run_case(argv, work)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    assert "Traceback" not in err + out, (argv, err)
    assert code in (0, 2), (argv, code, err)
    if code == 2:
        lines = err.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("aculink: error:"), (argv, err)
        assert not changed, (argv, "a refused command created or changed a file")
    return code


@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow], database=None)
@given(argv=command_lines(_FILES))
def test_command_line_never_breaks_its_contract(argv):
    check_case(argv)


@settings(max_examples=30, deadline=None, database=None)
@given(command=st.sampled_from(["site", "rays", "arrivals", "loss", "channel", "link", "plan", "sweep", "redraw",
                                 "demo"]),
       junk=st.lists(st.text(alphabet="-=:,.x0123456789e", min_size=1, max_size=8), max_size=4))
def test_junk_words_are_one_line(command, junk):
    """Arbitrary words after a command: a usage mistake is still one line, exit 2."""
    check_case([command, *junk])
