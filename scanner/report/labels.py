"""Place rank labels near their markers without overlaps: a deterministic greedy search.

Labels are placed one by one in priority order. Each tries candidate centres on
rings around its anchor (nearest ring first) and takes the first whose box stays
inside the frame and clears every marker, every label already placed and the
fixed obstacles. On each ring, directions pointing away from the centre of the
neighbouring anchors come first (so a cluster's labels fan outwards and leader
lines seldom cross); a lone anchor prefers the diagonals. When no candidate is
free the one with the least overlap is taken and flagged. All units are the
caller's (points in the overlay images); the same input always gives the same layout.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: ring radii around an anchor, in multiples of the label height
RING_STEPS = (1.6, 2.4, 3.4, 4.6, 6.0, 7.6, 9.4, 11.5, 14.0, 17.0, 21.0)
#: a candidate leaving the frame counts as this much overlap (area units)
OUTSIDE_PENALTY = 1e12
#: anchors closer than this many label heights count as neighbours when choosing directions
NEIGHBOUR_STEPS = 6.0
#: candidate directions, in order of preference for a lone anchor (degrees)
DIRECTIONS_DEG = (45, 135, 315, 225, 90, 270, 0, 180, 22.5, 157.5, 337.5, 202.5, 67.5, 112.5, 292.5, 247.5)


@dataclass(frozen=True)
class LabelLayout:
    """Label centres (same units as the anchors) and whether each had to overlap something."""

    x: np.ndarray
    y: np.ndarray
    crowded: np.ndarray


def _overlap_area(cand: np.ndarray, boxes: np.ndarray) -> np.ndarray:
    """Total overlap area of each candidate box (K, 4) with the boxes (M, 4), boxes as x0, y0, x1, y1."""
    if len(boxes) == 0:
        return np.zeros(len(cand))
    w = np.minimum(cand[:, None, 2], boxes[None, :, 2]) - np.maximum(cand[:, None, 0], boxes[None, :, 0])
    h = np.minimum(cand[:, None, 3], boxes[None, :, 3]) - np.maximum(cand[:, None, 1], boxes[None, :, 1])
    return (np.clip(w, 0, None) * np.clip(h, 0, None)).sum(axis=1)


def _outward_directions(ax: np.ndarray, ay: np.ndarray, reach: np.ndarray) -> np.ndarray:
    """Per anchor: the angle (radians) from the mean of its neighbours to it, NaN for a lone or central anchor."""
    dx, dy = ax[:, None] - ax[None, :], ay[:, None] - ay[None, :]
    near = np.hypot(dx, dy) <= reach[:, None]
    count = near.sum(axis=1)
    ox, oy = (dx * near).sum(axis=1) / count, (dy * near).sum(axis=1) / count
    central = (count < 2) | (np.hypot(ox, oy) < 0.05 * reach)
    return np.where(central, np.nan, np.arctan2(oy, ox))


def _directions_towards(angle: float) -> np.ndarray:
    """Candidate directions (radians) ordered by closeness to ``angle``, or in the default order for NaN."""
    theta = np.radians(DIRECTIONS_DEG)
    if np.isnan(angle):
        return theta
    distance = np.abs((theta - angle + np.pi) % (2 * np.pi) - np.pi)
    return theta[np.argsort(distance, kind="stable")]


def place_labels(anchor_x, anchor_y, width, height, frame, marker_radius: float,
                 obstacles: np.ndarray | None = None, gap: float = 1.5) -> LabelLayout:
    """Centres for labels of size ``width`` x ``height`` near their anchors, in the given priority order.

    ``frame`` is (x0, y0, x1, y1); ``obstacles`` an (M, 4) array of boxes to keep clear.
    """
    ax, ay, w, h = (np.asarray(a, dtype=float) for a in (anchor_x, anchor_y, width, height))
    n = len(ax)
    fx0, fy0, fx1, fy1 = frame
    markers = np.column_stack([ax - marker_radius, ay - marker_radius, ax + marker_radius, ay + marker_radius])
    fixed = np.concatenate([markers, np.zeros((0, 4)) if obstacles is None else np.asarray(obstacles, float)])
    placed = np.zeros((n, 4))
    out_x, out_y, crowded = np.zeros(n), np.zeros(n), np.zeros(n, dtype=bool)
    steps = np.asarray(RING_STEPS)
    preferred = _outward_directions(ax, ay, NEIGHBOUR_STEPS * np.maximum(h, 1e-9))
    for i in range(n):
        theta = _directions_towards(preferred[i])
        radius = marker_radius + steps[:, None] * h[i]
        # push the box centre out so its near edge, not its centre, sits on the ring
        cx = ax[i] + (radius + 0.5 * w[i] * np.abs(np.cos(theta))) * np.cos(theta)
        cy = ay[i] + (radius + 0.5 * h[i] * np.abs(np.sin(theta))) * np.sin(theta)
        cx, cy = cx.ravel(), cy.ravel()
        cand = np.column_stack([cx - w[i] / 2 - gap, cy - h[i] / 2 - gap, cx + w[i] / 2 + gap, cy + h[i] / 2 + gap])
        reach = radius.max() + w[i] + h[i]
        boxes = np.concatenate([fixed, placed[:i]])
        near = ((boxes[:, 2] > ax[i] - reach) & (boxes[:, 0] < ax[i] + reach)
                & (boxes[:, 3] > ay[i] - reach) & (boxes[:, 1] < ay[i] + reach))
        overlap = _overlap_area(cand, boxes[near])
        outside = ((cand[:, 0] < fx0) | (cand[:, 1] < fy0) | (cand[:, 2] > fx1) | (cand[:, 3] > fy1))
        penalty = overlap + np.where(outside, OUTSIDE_PENALTY, 0.0)
        k = int(np.argmin(penalty))  # the first free candidate when there is one
        crowded[i] = penalty[k] > 0
        out_x[i], out_y[i] = cx[k], cy[k]
        placed[i] = [cx[k] - w[i] / 2, cy[k] - h[i] / 2, cx[k] + w[i] / 2, cy[k] + h[i] / 2]
    return LabelLayout(out_x, out_y, crowded)
