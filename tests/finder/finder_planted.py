"""Synthetic trace geometry for the finder and runs tests (plain numpy, no files)."""
from __future__ import annotations

import numpy as np

from scanner.board.model import TraceSegments


def segments(rows) -> TraceSegments:
    """TraceSegments from rows of (x0, y0, x1, y1, width_mm, net)."""
    a = np.asarray(rows, dtype=float).reshape(-1, 6)
    return TraceSegments(a[:, 0], a[:, 1], a[:, 2], a[:, 3], a[:, 4], a[:, 5].astype(int))


def arc_rows(radius, theta0, theta1, width, net, chord_tol=0.002, centre=(0.0, 0.0)):
    """An arc flattened to chords whose sagitta is at most ``chord_tol`` (as the importer does)."""
    step = 2.0 * np.arccos(1.0 - chord_tol / radius)
    n = max(1, int(np.ceil(abs(theta1 - theta0) / step)))
    t = np.linspace(theta0, theta1, n + 1)
    x, y = centre[0] + radius * np.cos(t), centre[1] + radius * np.sin(t)
    return [(x[k], y[k], x[k + 1], y[k + 1], width, net) for k in range(n)]


def transform(rows, angle_rad, dx, dy):
    """Rotate rows about the origin by ``angle_rad`` and translate them by (dx, dy)."""
    c, s = np.cos(angle_rad), np.sin(angle_rad)
    out = []
    for x0, y0, x1, y1, w, net in rows:
        out.append((c * x0 - s * y0 + dx, s * x0 + c * y0 + dy, c * x1 - s * y1 + dx, s * x1 + c * y1 + dy, w, net))
    return out
