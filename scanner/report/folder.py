"""The output folder of one scan: every file the scan writes, written by one call and put in place whole."""
from __future__ import annotations

from pathlib import Path

from scanner.outputs import OutputFolder, write_file
from scanner.report.files import hotspots_csv, report_json
from scanner.report.images import write_images
from scanner.report.page import write_page

#: the data files, always written
JSON_FILE = "report.json"
CSV_FILE = "hotspots.csv"


def write_report_folder(result, board, out_dir: str | Path, images: bool = True) -> Path:
    """report.json and hotspots.csv; with ``images`` also the overlay images, plots and report.html.

    Every value is checked before anything is written; the files are written into a staging folder and
    replace ``out_dir`` whole (``scanner.outputs``), so the folder never mixes two runs' files. Every file
    names the run (``result.run_id``). Returns ``out_dir``."""
    report = report_json(result)
    table = hotspots_csv(result)
    with OutputFolder(out_dir) as folder:
        if images:
            write_images(result, board, folder.path)
        write_file(folder.path / CSV_FILE, table)
        write_file(folder.path / JSON_FILE, report)
        if images:
            write_page(result, folder.path, board)
        folder.commit()
    return Path(out_dir)
