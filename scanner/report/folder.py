"""The output folder of one scan: every file the scan writes, written by one call."""
from __future__ import annotations

from pathlib import Path

from scanner.report.files import write_tables
from scanner.report.images import write_images
from scanner.report.page import write_page


def write_report_folder(result, board, out_dir: Path, images: bool = True) -> None:
    """report.json and hotspots.csv; with ``images`` also the overlay images, plots and report.html."""
    if images:
        write_images(result, board, out_dir)
    write_tables(result, out_dir)
    if images:
        write_page(result, out_dir)
