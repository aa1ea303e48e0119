"""A whole batch: jobs for the boards, run on the cluster, summary written."""
from __future__ import annotations

import time
from datetime import datetime, timezone
from pathlib import Path

from scanner.batch.boards import BoardEntry
from scanner.batch.engine import connect, run_jobs
from scanner.batch.fingerprint import nearfar_version, rules_digest
from scanner.batch.progress import Progress
from scanner.batch.rows import BoardRow
from scanner.batch.summary import write_summary
from scanner.batch.task import BoardJob


def run_batch(entries: list[BoardEntry], rules, rules_path: Path | None, out_dir: Path, *,
              stackup_path: Path | None = None, scheduler: str | None = None, workers: int | None = None, images: bool = True, force: bool = False,
              progress_stream=None, live: bool = False) -> tuple[list[BoardRow], dict]:
    """Scan every board (or reuse its unchanged report), write the summary into ``out_dir``; ``rules`` already
    holds the stackup of ``stackup_path`` when one is given (both paths go into the boards' input hashes);
    returns the rows in finishing order and the run facts written with them."""
    out_dir = out_dir.resolve()
    out_dir.mkdir(parents=True, exist_ok=True)  # before the cluster: a folder that cannot be made stops the run now
    started_utc = datetime.now(timezone.utc).isoformat(timespec="seconds")
    began = time.perf_counter()
    digest = rules_digest(rules_path, stackup_path)
    jobs = [BoardJob(shown=e.shown, board=e.path, out_dir=out_dir, folder=e.folder, rules=rules,
                     rules_digest=digest, images=images, force=force) for e in entries]
    progress = Progress(len(jobs), progress_stream, live)
    progress.show(f"connecting to {scheduler}" if scheduler else "starting the local cluster")
    with connect(scheduler, workers) as cluster:
        progress.tick()
        try:
            rows = run_jobs(cluster, jobs, progress)
        finally:
            progress.close()
    run = {"nearfar": nearfar_version(), "rules": "defaults" if rules_path is None else str(rules_path),
           "stackup": None if stackup_path is None else str(stackup_path), "images": images, "cluster": cluster.description, "started_utc": started_utc,
           "seconds": round(time.perf_counter() - began, 2)}
    write_summary(rows, run, out_dir)
    return rows, run
