"""A self-contained HTML page that shows a folder of results with one-line explanations."""

from __future__ import annotations

import html
from pathlib import Path

from aculink.io.atomic import write_text_atomic

__all__ = ["write_index"]

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2rem auto; max-width: 68rem; color: #1d2a33;
       line-height: 1.45; padding: 0 1rem; }
h1 { font-size: 1.5rem; border-bottom: 3px solid #0072B2; padding-bottom: .3rem; }
h2 { font-size: 1.1rem; margin-top: 2rem; color: #0b4f78; }
p.why { margin: .2rem 0 .6rem; color: #3d4f5c; }
img { max-width: 100%; border: 1px solid #d6dde2; }
pre { background: #f3f6f8; padding: .8rem; overflow-x: auto; font-size: .82rem; }
.caution { background: #fff5e0; border-left: 4px solid #E69F00; padding: .6rem .9rem; }
.conclusion { background: #eaf4ec; border-left: 4px solid #009E73; padding: .6rem .9rem; }
a { color: #0072B2; }
"""


def write_index(folder, title: str, sections, *, conclusion: str = "", caution: str = "",
                overwrite: bool = True) -> Path:
    """Write ``folder/index.html`` showing each section's file.

    Parameters
    ----------
    folder : str or Path
        The results folder; every section's file must be inside it.
    title : str
        Page heading.
    sections : list of (heading, explanation, filename)
        PNG files are shown as pictures, text files inline, others as links.
    conclusion, caution : str
        Shown in boxes at the top.
    """
    folder = Path(folder)
    parts = [f"<!doctype html><html lang='en'><head><meta charset='utf-8'><title>{html.escape(title)}</title>",
             f"<style>{_STYLE}</style></head><body><h1>{html.escape(title)}</h1>"]
    if conclusion:
        parts.append(f"<p class='conclusion'>{html.escape(conclusion)}</p>")
    if caution:
        parts.append(f"<p class='caution'>{html.escape(caution)}</p>")
    for heading, why, name in sections:
        path = folder / name
        if not path.is_file():
            raise FileNotFoundError(path)
        ref = html.escape(name)
        parts.append(f"<h2>{html.escape(heading)}</h2><p class='why'>{html.escape(why)} "
                     f"(<a href='{ref}'>{ref}</a>)</p>")
        if path.suffix == ".png":
            parts.append(f"<img src='{ref}' alt='{html.escape(heading)}'>")
        elif path.suffix in (".txt",):
            parts.append(f"<pre>{html.escape(path.read_text(encoding='utf-8'))}</pre>")
    parts.append("</body></html>\n")
    return write_text_atomic(folder / "index.html", "\n".join(parts), overwrite=overwrite)
