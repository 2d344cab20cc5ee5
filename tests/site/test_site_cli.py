"""`aculink site`: summary, JSON, picture, exit codes, and the README's site-file reference."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from aculink.cli import main
from aculink.site.loader import CTD_COLUMNS, EQUATIONS, PROFILES, SECTION_KEYS

ROOT = Path(__file__).resolve().parents[2]
ENVIRONMENTS = ROOT / "environments"
BUNDLED = sorted(p.stem for p in ENVIRONMENTS.glob("*.toml"))
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.mark.parametrize("name", BUNDLED)
def test_every_bundled_site_prints_a_summary_and_a_png(name, tmp_path, capsys):
    png = tmp_path / f"{name}.png"
    assert main(["site", str(ENVIRONMENTS / f"{name}.toml"), "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert "Sound-channel axis".lower() in out.lower() and "Caution" in out and str(png) in out
    data = png.read_bytes()
    assert data.startswith(PNG_SIGNATURE) and len(data) > 20_000


def test_json_is_one_object(tmp_path, capsys):
    assert main(["site", str(ENVIRONMENTS / "shelf_summer.toml"), "--json"]) == 0
    obj = json.loads(capsys.readouterr().out)
    assert obj["geometry"]["receiver_range_m"] == 4000.0
    assert obj["water"]["regime"] == "downward refracting"
    assert "caution" in obj and obj["seabed"]["critical_grazing_angle_deg"] > 0


def test_subprocess_json_and_exit_code():
    """The real entry point: `python -m aculink site FILE --json` exits 0 with one JSON object."""
    run = subprocess.run([sys.executable, "-m", "aculink", "site", str(ENVIRONMENTS / "deep_channel.toml"),
                          "--json"], cwd=ROOT, capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stderr
    assert json.loads(run.stdout)["water"]["channel_axis_depth_m"] > 0


def test_subprocess_bad_file_is_one_line_exit_2(tmp_path):
    """A bad key: exit code 2, one line on stderr, no traceback."""
    bad = tmp_path / "bad.toml"
    bad.write_text((ENVIRONMENTS / "shelf_winter.toml").read_text().replace("rolloff = 0.25", "roloff = 0.25"))
    run = subprocess.run([sys.executable, "-m", "aculink", "site", str(bad)], cwd=ROOT, capture_output=True,
                         text=True, timeout=120)
    assert run.returncode == 2
    assert run.stdout == ""
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in run.stderr
    assert "roloff" in lines[0] and "did you mean 'rolloff'" in lines[0] and str(bad) in lines[0]


@pytest.mark.parametrize("edit, needle", [
    (lambda t: t.replace("depth_m = 50.0", "depth_m = 70.0"), "[receiver] depth_m"),
    (lambda t: t.replace("rolloff = 0.25", "rolloff = 1.25"), "[modem] rolloff"),
    (lambda t: t.replace("carrier_hz = 12000.0", "carrier_hz = 2000.0"), "[modem] bandwidth_hz"),
    (lambda t: t.replace("[surface]", "[surfce]"), "surfce"),
    (lambda t: t.replace("level_db = 180.0", "level_db = nan"), "[source] level_db"),
    (lambda t: t.replace("[modem]", "[modem"), "TOML syntax error"),
])
def test_bad_inputs_in_process(tmp_path, capsys, edit, needle):
    bad = tmp_path / "bad.toml"
    bad.write_text(edit((ENVIRONMENTS / "shelf_winter.toml").read_text()))
    assert main(["site", str(bad)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert len(captured.err.strip().splitlines()) == 1 and needle in captured.err


def test_missing_site_file_exit_2(tmp_path, capsys):
    assert main(["site", str(tmp_path / "none.toml")]) == 2
    assert "not found" in capsys.readouterr().err


def test_plot_is_not_overwritten_unless_asked(tmp_path, capsys):
    png = tmp_path / "site.png"
    png.write_bytes(b"keep me")
    site = str(ENVIRONMENTS / "polar_calm.toml")
    assert main(["site", site, "--plot", str(png)]) == 2
    assert png.read_bytes() == b"keep me" and "--overwrite" in capsys.readouterr().err
    assert main(["site", site, "--plot", str(png), "--overwrite"]) == 0
    assert png.read_bytes().startswith(PNG_SIGNATURE)


def test_plot_needs_png_name_and_existing_folder(tmp_path, capsys):
    site = str(ENVIRONMENTS / "polar_calm.toml")
    assert main(["site", site, "--plot", str(tmp_path / "site.jpg")]) == 2
    assert main(["site", site, "--plot", str(tmp_path / "no" / "site.png")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and ".png" in err[0] and "does not exist" in err[1]


def test_readme_documents_every_key():
    """The README's site-file reference names every section, key, equation, profile and CTD column."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = re.search(r"<!-- site-file-reference:start -->(.*)<!-- site-file-reference:end -->", text, re.S)
    assert section, "markers missing"
    ref = section.group(1)
    for name, keys in SECTION_KEYS.items():
        assert f"[{name}]" in ref
        for key in keys:
            assert f"`{key}`" in ref, (name, key)
    for word in (*EQUATIONS, *PROFILES, *CTD_COLUMNS, "name", "description"):
        assert word in ref
