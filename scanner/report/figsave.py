"""Figures to files: PNG, SVG (text kept as text, with hover titles) or PDF by the file name."""
from __future__ import annotations

import io
from dataclasses import dataclass, field
from pathlib import Path

import matplotlib
from matplotlib.figure import Figure

from xml.sax.saxutils import escape

from scanner.outputs import write_file


#: PNG compression level 1 saves time for slightly larger files (docs/performance.md)
FORMAT_OPTIONS = {"svg": {"metadata": {"Date": None}}, "pdf": {"metadata": {"CreationDate": None}},
                  "png": {"pil_kwargs": {"compress_level": 1}}}


@dataclass(frozen=True)
class Picture:
    """A figure and the hover titles of its elements by id (written into vector output)."""

    figure: Figure
    titles: dict[str, str] = field(default_factory=dict)


def save(picture: Picture | Figure, path: Path, dpi: int, metadata: dict | None = None) -> Path:
    """Write a figure as PNG, SVG or PDF (from the file name) and flush it to disk; SVG keeps its text as text.
    Without ``metadata`` (matplotlib's per-format keys) the file carries no time stamp, so it is reproducible."""
    fig = picture.figure if isinstance(picture, Picture) else picture
    fmt = path.suffix.lstrip(".").lower()
    options = dict(FORMAT_OPTIONS.get(fmt, {}))
    if metadata is not None:
        options["metadata"] = metadata
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.hashsalt": "nearfar", "svg.fonttype": "none"}):
        fig.savefig(buf, format=fmt, dpi=dpi, facecolor=fig.get_facecolor(), **options)
    data = buf.getvalue()
    if fmt == "svg" and isinstance(picture, Picture) and picture.titles:
        data = with_titles(data, picture.titles)
    return write_file(path, data)


def with_titles(svg: bytes, titles: dict[str, str]) -> bytes:
    """The SVG with ``<title>text</title>`` as first child of each ``<g id="...">`` named in ``titles``."""
    text = svg.decode("utf-8")
    for gid, title in titles.items():
        opening = f'<g id="{gid}">'
        text = text.replace(opening, f"{opening}<title>{escape(title)}</title>", 1)
    return text.encode("utf-8")
