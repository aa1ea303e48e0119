"""Looking at an output folder: which run each file names, whether the folder holds one run only, and what a
run left beside it."""
from __future__ import annotations

import hashlib
import json
import os
import re
from pathlib import Path

from PIL import Image

_CSV_RUN = re.compile(r"# nearfar run ([0-9a-f]{16}), ")
_PAGE_RUN = re.compile(r"run ([0-9a-f]{16}), \d{4}-\d\d-\d\dT")
_SVG_RUN = re.compile(r"<dc:identifier>([0-9a-f]{16})</dc:identifier>")


def tree_digest(root: Path) -> dict[str, tuple[int, str]]:
    """Every file below ``root`` (hidden ones too): mode and SHA-256 of the content."""
    out = {}
    for folder, _, names in os.walk(root):
        for name in names:
            path = Path(folder) / name
            out[str(path.relative_to(root))] = (path.stat().st_mode, hashlib.sha256(path.read_bytes()).hexdigest())
    return out


def strict_json(text: str):
    """JSON as the standard has it: NaN and Infinity (which Python's reader accepts) are refused."""
    def refuse(word):
        raise ValueError(f"{word} in JSON")
    return json.loads(text, parse_constant=refuse)


def run_of(path: Path) -> str | None:
    """The run id a report file names, or None."""
    if path.name == "report.json":
        return strict_json(path.read_text(encoding="utf-8"))["run_id"]
    if path.suffix == ".csv":
        found = _CSV_RUN.match(path.read_text(encoding="utf-8"))
    elif path.suffix == ".html":
        found = _PAGE_RUN.search(path.read_text(encoding="utf-8").rpartition("<footer")[2])
    elif path.suffix == ".svg":
        found = _SVG_RUN.search(path.read_text(encoding="utf-8"))
    elif path.suffix == ".png":
        with Image.open(path) as image:
            return image.text.get("nearfar-run")
    else:
        return None
    return found.group(1) if found else None


def one_run(folder: Path) -> str:
    """The run id of a complete report folder, after checking every file names it and the data files are there;
    every image the page links is in the folder."""
    runs = {p.name: run_of(p) for p in folder.iterdir()}
    assert {"report.json", "hotspots.csv"} <= set(runs), runs
    assert len(set(runs.values())) == 1 and None not in runs.values(), runs
    if "report.html" in runs:
        linked = set(re.findall(r'(?:src|href)="([^"#:]+)"', (folder / "report.html").read_text(encoding="utf-8")))
        assert linked <= set(runs), linked - set(runs)
    return runs["report.json"]


def debris(parent: Path) -> list[str]:
    """Staging folders and temporary files a run left below ``parent``."""
    return sorted(str(Path(d, n).relative_to(parent)) for d, dirs, files in os.walk(parent)
                  for n in dirs + files if ".nearfar-" in n or n.endswith(".part") or n.startswith("nearfar-unpack-"))
