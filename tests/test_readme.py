"""The README cannot drift from the program: shown output, limit tables, renamed keys, set-up.

* The fast commands shown in *A tour of the commands* are run and their shown lines compared
  with the real output (``...`` marks lines left out; the caution line is left out of every
  excerpt, as the README says).
* The site-file reference's ``allowed`` column and the table of command-line limits state the
  numbers of :data:`aculink.site.model.LIMITS`, the one table the loader and the options check
  against.
* The renamed-keys note lists exactly :data:`aculink.io.reports.RENAMED_KEYS`.
* The two set-up commands name things the project really has.

Contract checks of our own documentation (common practice, no source).
"""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest

from aculink.cli import COMMANDS, main

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")
#: Commands whose README excerpts run in a few seconds (the others are shown but not rerun here).
FAST = ("site", "rays", "arrivals", "channel")
_NUMBER = re.compile(r"(?<![\w.])-?\d+(?:\.\d+)?(?:e[+-]?\d+)?")


def excerpts():
    """(command line, shown lines) of every ```` ``` ```` block that starts with ``$ aculink``."""
    out = []
    for block in re.findall(r"```\n(\$ aculink[^\n]*)\n(.*?)```", README, flags=re.S):
        out.append((block[0][2:], block[1].rstrip("\n").split("\n")))
    return out


def test_every_command_has_a_tour_section():
    """`aculink --help` lists COMMANDS; each has its heading in the tour."""
    for name in COMMANDS:
        assert f"### `aculink {name}" in README, name


def _matches(shown, output):
    """True when the shown lines are the output with only ``...`` lines standing for left-out runs."""
    chunks, cur = [], []
    for line in shown:
        if line.strip() == "...":
            chunks.append(cur)
            cur = []
        else:
            cur.append(line)
    chunks.append(cur)
    pos = 0
    for k, chunk in enumerate(chunks):
        if not chunk:
            continue
        n = len(chunk)
        found = next((i for i in range(pos, len(output) - n + 1) if output[i:i + n] == chunk), None)
        if found is None or (k == 0 and found != 0):
            return False
        pos = found + n
    return bool(chunks[-1]) is False or pos == len(output)


@pytest.mark.parametrize("command, shown", [e for e in excerpts() if e[0].split()[1] in FAST],
                         ids=lambda v: v if isinstance(v, str) else "")
def test_shown_output_is_real(command, shown, capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    argv = shlex.split(command)[1:]
    assert main(argv) == 0
    out = [line for line in capsys.readouterr().out.rstrip("\n").split("\n") if not line.startswith("Caution:")]
    while out and out[-1] == "":
        out.pop()
    assert _matches(shown, out), "README shows:\n" + "\n".join(shown) + "\n\nthe command prints:\n" + "\n".join(out)


def test_fast_excerpts_exist():
    """The drift test above has something to run for each fast command."""
    assert {e[0].split()[1] for e in excerpts()} >= set(FAST)


def _table_rows(text):
    """Cells of every Markdown table row in ``text`` (header and rule rows dropped)."""
    rows = []
    for line in text.splitlines():
        if line.startswith("|") and not set(line) <= set("|-: "):
            rows.append([c.strip() for c in line.strip().strip("|").split("|")])
    return [r for r in rows if r and r[0] not in ("key", "option", "command", "column", "form", "columns")]


def _sections():
    """Site-file reference section name -> its key table rows (key cell, allowed cell)."""
    ref = README[README.index("<!-- site-file-reference:start -->"):README.index("<!-- site-file-reference:end -->")]
    out = {}
    parts = re.split(r"\n### ", ref)
    for part in parts[1:]:
        head, body = part.split("\n", 1)
        names = re.findall(r"`\[(\w+)\]`", head)
        for row in _table_rows(body):
            if len(row) < 4:
                continue
            key = re.match(r"`(\w+)`(?: \((\w+)\))?", row[0])
            if not key:
                continue
            for name in names:
                if key.group(2) in (None, name):
                    out.setdefault(name, {})[key.group(1)] = row[3]
    return out


#: Limits the README states relative to other keys or to the site (checked by phrase, not number).
RELATIVE = {("modem", "bandwidth_hz"): "twice `carrier_hz`",
            ("source", "depth_m"): "between the surface and the seabed",
            ("receiver", "depth_m"): "between the surface and the seabed"}
#: LIMITS keys documented outside their section's key table, and where.
ELSEWHERE = {("noise", "wind_speed_mps"): "the wind comes from `[surface]`",
             ("water", "pressure_dbar"): "0 to 12000 dbar"}


def _check_cell(where, cell, limits, integer=False):
    low, high, low_open, high_open, _unit = limits
    numbers = [int(n) if re.fullmatch(r"-?\d+", n) else float(n) for n in _NUMBER.findall(cell.replace("`", ""))]
    assert len(numbers) >= 2 and numbers[:2] == [low, high], (where, cell, limits)
    assert (f"above {low:g}" in cell) == bool(low_open), (where, cell, "lower end open?")
    assert (f"below {high:g}" in cell) == bool(high_open), (where, cell, "upper end open?")
    if integer:
        assert "whole number" in cell, (where, cell)


def test_site_reference_states_the_limits_table():
    from aculink.site.model import LIMITS

    documented = _sections()
    for section, keys in LIMITS.items():
        if section == "run":
            continue
        for key, limits in keys.items():
            if (section, key) in ELSEWHERE:
                assert ELSEWHERE[(section, key)] in README, (section, key)
                continue
            cell = documented.get(section, {}).get(key)
            assert cell is not None, f"[{section}] {key} is not in the README's site-file reference"
            if (section, key) in RELATIVE:
                assert RELATIVE[(section, key)] in cell, (section, key, cell)
                continue
            _check_cell(f"[{section}] {key}", cell, limits)


def test_command_line_limits_table_states_the_run_limits():
    """Every option checked against LIMITS["run"] is in the README's table with the same numbers."""
    from aculink.cli._common import OPTION_LIMITS
    from aculink.site.model import INTEGER_LIMITS, LIMITS

    block = README[README.index("<!-- run-limits:start -->"):README.index("<!-- run-limits:end -->")]
    rows = {r[0].strip("`"): r[2] for r in _table_rows(block)}
    run_options = {f"--{dest.replace('_', '-')}": key for dest, (section, key) in OPTION_LIMITS.items()
                   if section == "run"}
    assert set(rows) == set(run_options)
    for option, key in run_options.items():
        _check_cell(option, rows[option], LIMITS["run"][key], integer=key in INTEGER_LIMITS)


def test_renamed_keys_note_lists_the_renames():
    from aculink.io.reports import RENAMED_KEYS

    block = README[README.index("<!-- renamed-keys:start -->"):README.index("<!-- renamed-keys:end -->")]
    listed = set()
    for cmd, old, new in (r[:3] for r in _table_rows(block)):
        for name in re.findall(r"`(\w+) --", cmd):
            listed.add((name, old.strip("`"), new.strip("`")))
    assert listed == {(c, o, n) for c, pairs in RENAMED_KEYS.items() for o, n in pairs.items()}


def test_setup_commands_are_true():
    """The two set-up commands: a console script ``aculink`` with a ``demo`` command, a ``test``
    extra with pytest, and the Python version the README names."""
    try:
        import tomllib
    except ImportError:  # Python 3.10
        import tomli as tomllib

    assert "python3 -m venv .venv && .venv/bin/pip install . && .venv/bin/aculink demo" in README
    assert '.venv/bin/pip install ".[test]" && .venv/bin/python -m pytest -q' in README
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    assert project["scripts"]["aculink"] == "aculink.cli:main"
    assert any(dep.startswith("pytest") for dep in project["optional-dependencies"]["test"])
    version = re.search(r">=\s*3\.(\d+)", project["requires-python"]).group(1)
    assert f"Python 3.{version} or newer" in README
    assert "demo" in COMMANDS
