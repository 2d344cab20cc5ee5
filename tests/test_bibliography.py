"""The repository's bibliography (docs/references.md) covers every source the code cites by key,
and nothing in the repository points to a file outside it."""

import pathlib
import re

ROOT = pathlib.Path(__file__).resolve().parent.parent
BIBLIOGRAPHY = ROOT / "docs" / "references.md"
KEY = re.compile(r"\[([A-Z][A-Za-z]+(?:19|20)\d\d[a-z]?)\]")
SCANNED = ["aculink", "tests", "examples", "README.md", "DEVELOPERS.md"]


def _texts():
    for name in SCANNED:
        path = ROOT / name
        files = [path] if path.is_file() else sorted(
            p for p in path.rglob("*") if p.suffix in {".py", ".md", ".csv", ".toml"} and p.is_file())
        for file in files:
            yield file, file.read_text(encoding="utf-8", errors="replace")


def _defined_keys():
    return set(re.findall(r"^- \*\*\[([^\]]+)\]\*\*", BIBLIOGRAPHY.read_text(encoding="utf-8"), re.M))


def test_every_cited_key_has_an_entry():
    """Each `[AuthorYear]` key used in code, tests or docs is defined in docs/references.md."""
    defined = _defined_keys()
    assert len(defined) > 40
    missing = {}
    for file, text in _texts():
        for key in KEY.findall(text):
            if key not in defined:
                missing.setdefault(key, str(file.relative_to(ROOT)))
    assert not missing, f"keys cited but not in docs/references.md: {missing}"


def test_bibliography_entries_are_unique():
    text = BIBLIOGRAPHY.read_text(encoding="utf-8")
    keys = re.findall(r"^- \*\*\[([^\]]+)\]\*\*", text, re.M)
    assert len(keys) == len(set(keys))


def _markdown_names():
    return {path.name for path in ROOT.rglob("*.md") if ".venv" not in path.parts}


def test_every_markdown_file_named_is_in_the_repository():
    """A Markdown document that code, tests or docs name must ship with the repository: no
    pointer to notes that live outside it."""
    known = _markdown_names()
    # a document name is capitalised (README.md) or given with its folder (docs/references.md);
    # that keeps attribute access such as ``x.md`` out
    named = re.compile(r"(?:[\w.-]+/)+([\w-]+\.md)\b|\b([\w-]*[A-Z][\w-]*\.md)\b")
    missing = sorted({f"{file.relative_to(ROOT)}: {m.group(0)}" for file, text in _texts()
                      for m in named.finditer(text) if (m.group(1) or m.group(2)) not in known})
    assert not missing, missing[:10]


def test_no_pointer_to_a_folder_outside_the_repository():
    """No path climbs out of the checkout (``../``) into a sibling folder."""
    hits = [f"{file.relative_to(ROOT)}: {m.group(0)}" for file, text in _texts()
            for m in re.finditer(r"\.\./[A-Za-z]\w*/", text)]
    assert not hits, hits[:10]


def test_no_pointer_to_the_issue_tracker():
    """Code and docs stand on their own: no "issue N" references."""
    hits = [f"{file.relative_to(ROOT)}: {m.group(0)}" for file, text in _texts()
            if file.name != "test_bibliography.py" for m in re.finditer(r"\b[Ii]ssue \d", text)]
    assert not hits, hits[:10]
