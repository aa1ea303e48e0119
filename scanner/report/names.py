"""File names of the images in a report folder (one place, so images and page agree)."""
from __future__ import annotations

import re

COMPOSITE_STEM = "overlay-all"


def _slug(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or "layer"


def layer_stems(layer_names: list[str]) -> dict[str, str]:
    """``overlay-<layer>`` stem per layer name, safe as a file name and unique (a suffix where slugs collide)."""
    stems: dict[str, str] = {}
    taken = {COMPOSITE_STEM}
    for name in layer_names:
        stem = f"overlay-{_slug(name)}"
        n = 2
        while stem in taken:
            stem = f"overlay-{_slug(name)}-{n}"
            n += 1
        taken.add(stem)
        stems[name] = stem
    return stems


BUDGET_FILE = "budget-used.png"
STACKUP_FILE = "stackup.png"


def crop_file(rank: int) -> str:
    return f"hotspot-{rank}.png"


def wave_file(rank: int) -> str:
    return f"wave-{rank}.png"


def section_file(rank: int) -> str:
    return f"section-{rank}.png"


def whatif_file(rank: int) -> str:
    return f"whatif-{rank}.png"


#: names of the files a report folder holds (and the temporary files of earlier versions of nearfar)
_REPORT_FILE = re.compile(r"report\.json|report\.html|hotspots\.csv|overlay-[A-Za-z0-9._-]+\.(?:png|svg)"
                          r"|(?:hotspot|wave|section|whatif)-\d+\.png|budget-used\.png|stackup\.png|\..+\.part")


def is_report_file(name: str) -> bool:
    return _REPORT_FILE.fullmatch(name) is not None
