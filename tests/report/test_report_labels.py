"""Label placement: no overlaps when there is room, deterministic, clusters fan outwards."""
import numpy as np

from scanner.report.labels import place_labels


def boxes(layout, width, height):
    return np.column_stack([layout.x - width / 2, layout.y - height / 2, layout.x + width / 2, layout.y + height / 2])


def overlaps(a, b):
    return (a[0] < b[2]) and (b[0] < a[2]) and (a[1] < b[3]) and (b[1] < a[3])


def check_clear(layout, ax, ay, width, height, frame, radius):
    placed = boxes(layout, width, height)
    markers = np.column_stack([ax - radius, ay - radius, ax + radius, ay + radius])
    for i, box in enumerate(placed):
        assert frame[0] <= box[0] and box[2] <= frame[2] and frame[1] <= box[1] and box[3] <= frame[3]
        assert not any(overlaps(box, other) for other in placed[i + 1:])
        assert not any(overlaps(box, m) for m in markers)


def test_scattered_labels_are_clear_of_each_other_and_of_markers():
    rng = np.random.default_rng(7)
    ax, ay = rng.uniform(50, 750, 60), rng.uniform(50, 550, 60)
    width, height = rng.uniform(12, 40, 60), np.full(60, 11.0)
    layout = place_labels(ax, ay, width, height, (0, 0, 800, 600), 3.5)
    assert not layout.crowded.any()
    check_clear(layout, ax, ay, width, height, (0, 0, 800, 600), 3.5)


def test_coincident_anchors_get_separate_labels():
    ax, ay = np.full(12, 200.0), np.full(12, 150.0)
    width, height = np.full(12, 24.0), np.full(12, 11.0)
    layout = place_labels(ax, ay, width, height, (0, 0, 400, 300), 3.5)
    assert not layout.crowded.any()
    check_clear(layout, ax, ay, width, height, (0, 0, 400, 300), 3.5)


def test_same_input_same_layout():
    rng = np.random.default_rng(3)
    args = (rng.uniform(0, 300, 30), rng.uniform(0, 200, 30), np.full(30, 20.0), np.full(30, 10.0))
    first = place_labels(*args, (0, 0, 300, 200), 3.0)
    second = place_labels(*args, (0, 0, 300, 200), 3.0)
    assert np.array_equal(first.x, second.x) and np.array_equal(first.y, second.y)


def test_obstacles_are_avoided():
    obstacle = np.array([[0.0, 0.0, 120.0, 40.0]])
    layout = place_labels([30.0], [20.0], [20.0], [10.0], (0, 0, 300, 200), 3.0, obstacles=obstacle)
    box = boxes(layout, np.array([20.0]), np.array([10.0]))[0]
    assert not overlaps(box, obstacle[0])


def test_a_column_of_anchors_fans_out_at_both_ends():
    ay = np.arange(8) * 4.0 + 100.0
    ax = np.full(8, 200.0)
    layout = place_labels(ax, ay, np.full(8, 24.0), np.full(8, 11.0), (0, 0, 400, 300), 3.5)
    # the first label (highest priority) is at the bottom end and goes straight down, away from the column
    assert layout.y[0] < ay.min() and layout.x[0] == ax[0]
    # the top end's label stays on the upper side of the column
    assert layout.y[-1] > ay.mean()


def test_no_room_is_flagged_not_fatal():
    layout = place_labels(np.full(5, 10.0), np.full(5, 10.0), np.full(5, 30.0), np.full(5, 12.0), (0, 0, 20, 20), 3.0)
    assert layout.crowded.any()
    assert np.isfinite(layout.x).all() and np.isfinite(layout.y).all()
