"""The batch's progress on a terminal: one line rewritten in place, plus a line for each board not scanned."""
from __future__ import annotations

import time

from scanner.batch.rows import VERDICTS, BoardRow

_CLEAR_LINE = "\r\x1b[K"


class Progress:
    """Counts boards waiting, running and done; draws them on ``stream`` only when ``live``."""

    def __init__(self, total: int, stream, live: bool):
        self.total = total
        self.stream = stream
        self.live = live
        self.began = time.perf_counter()
        self.running: set[str] = set()
        self.finished_folders: set[str] = set()
        self.verdicts = dict.fromkeys(VERDICTS, 0)

    def show(self, text: str) -> None:
        """A passing message (starting the cluster) until the counts replace it."""
        if self.live:
            self.stream.write(f"{_CLEAR_LINE}[{time.perf_counter() - self.began:6.1f} s] {text}")
            self.stream.flush()

    def started(self, folder: str) -> None:
        if folder not in self.finished_folders:
            self.running.add(folder)
        self.tick()

    def finished(self, folder: str, row: BoardRow) -> None:
        self.finished_folders.add(folder)
        self.running.discard(folder)
        self.verdicts[row.verdict] += 1
        if self.live and row.verdict in ("refused", "error"):
            self.stream.write(f"{_CLEAR_LINE}{row.verdict}: {row.board}: {row.reason}\n")
        self.tick()

    def tick(self) -> None:
        if self.live:
            self.stream.write(_CLEAR_LINE + self.line())
            self.stream.flush()

    def line(self) -> str:
        done = sum(self.verdicts.values())
        tally = ", ".join(f"{n} {v}" for v, n in self.verdicts.items() if n)
        waiting = self.total - done - len(self.running)
        return (f"[{time.perf_counter() - self.began:6.1f} s] {done}/{self.total} boards done"
                + (f" ({tally})" if tally else "") + f"; {len(self.running)} running, {waiting} waiting")

    def close(self) -> None:
        if self.live:
            self.stream.write(_CLEAR_LINE)
            self.stream.flush()
