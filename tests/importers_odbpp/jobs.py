"""Small ODB++ jobs written by the tests themselves (an invented three-layer board, metric).

Layers: ``top`` (signal), ``gnd`` (power/ground plane), ``bot`` (signal), a plated drill
layer, and dielectric rows between the copper. Nets: SIG_A (top trace with an arc and
a pad, via, bottom trace), SIG_B (top trace), GND (plane, via).
"""
from __future__ import annotations

import tarfile
from pathlib import Path

MATRIX_ROWS = [
    # (row, type, name)
    (1, "SIGNAL", "top"),
    (2, "DIELECTRIC", "core1"),
    (3, "POWER_GROUND", "gnd"),
    (4, "DIELECTRIC", "core2"),
    (5, "SIGNAL", "bot"),
    (6, "DRILL", "drill"),
]

TOP = """UNITS=MM
#
F 6
$0 r200
$1 rect1000x500
$2 r600
@0 .smd
L 10 10 30 10 0 P 0
L 10 12 30 12 0 P 0
A 30 10 35 15 30 15 0 P 0 N
P 9.5 10 1 P 0 0;0
P 35 20 2 P 0 0
L 35 15 35 20 0 P 0
"""

#: the 50 x 40 mm board as one surface island (the plane pour and the profile)
BOARD_SURFACE = "S P 0\nOB 0 0 I\nOS 0 40\nOS 50 40\nOS 50 0\nOS 0 0\nOE\nSE\n"

GND = "UNITS=MM\n#\nF 2\n$0 r900\n" + BOARD_SURFACE + "P 35 20 0 N 0 0\n"

BOT = """UNITS=MM
#
F 2
$0 r250
$1 r600
P 35 20 1 P 0 0
L 35 20 45 20 0 P 0
"""

DRILL = """UNITS=MM
F 1
$0 r300
@0 .drill
P 35 20 0 P 0 0;0=2
"""

EDA = """HDR test
UNITS=MM
LYR top gnd bot drill
NET SIG_A
SNT TRC
FID C 0 0
FID C 0 2
FID C 0 5
SNT TOP T 0 0
FID C 0 3
SNT VIA
FID C 0 4
FID C 2 0
FID H 3 0
SNT TRC
FID C 2 1
NET SIG_B
SNT TRC
FID C 0 1
NET GND
SNT PLN S E 0
FID C 1 0
"""

PROFILE = "UNITS=MM\n" + BOARD_SURFACE

ATTRLISTS = {
    "top": "thickness_mm=0.035\n",
    "core1": "thickness_mm=0.2\nepsilon_r=4.3\n",
    "gnd": ".copper_weight=1\n",
    "core2": "thickness_mm=1.2\nepsilon_r=4.5\n",
    "bot": "thickness_mm=0.035\n",
}


def matrix_text(rows=None, steps=("pcb",), block="LAYER", polarity=None) -> str:
    out = []
    for col, step in enumerate(steps, start=1):
        out += ["STEP {", f"   COL={col}", f"   NAME={step.upper()}", "}"]
    for row, kind, name in rows or MATRIX_ROWS:
        out += [f"{block} {{", f"   ROW={row}", "   CONTEXT=BOARD", f"   TYPE={kind}", f"   NAME={name.upper()}",
                f"   POLARITY={(polarity or {}).get(name, 'POSITIVE')}", "}"]
    return "\n".join(out) + "\n"


def job_files(**changes) -> dict[str, str]:
    """The test job as relative path -> text; keyword ``changes`` replace or (with None) drop files."""
    files = {
        "matrix/matrix": matrix_text(),
        "misc/info": "UNITS=MM\nJOB_NAME=testjob\n",
        "steps/pcb/profile": PROFILE,
        "steps/pcb/layers/top/features": TOP,
        "steps/pcb/layers/gnd/features": GND,
        "steps/pcb/layers/bot/features": BOT,
        "steps/pcb/layers/drill/features": DRILL,
        "steps/pcb/eda/data": EDA,
    }
    for name, text in ATTRLISTS.items():
        files[f"steps/pcb/layers/{name}/attrlist"] = text
    for key, value in changes.items():
        rel = key.replace("__", "/")
        if value is None:
            files.pop(rel, None)
        else:
            files[rel] = value
    return files


def write_job(folder: Path, files: dict[str, str] | None = None) -> Path:
    """Write a job under ``folder/testjob`` and return the job folder."""
    root = folder / "testjob"
    for rel, text in (files if files is not None else job_files()).items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    return root


def tar_job(job: Path, archive: Path) -> Path:
    with tarfile.open(archive, "w:gz") as tf:
        tf.add(job, arcname=job.name)
    return archive
