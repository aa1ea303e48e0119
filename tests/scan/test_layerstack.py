"""Signal-layer environments from a stackup, and the default stackup."""
import dataclasses

import pytest

from scanner.board.model import Board, CopperLayer, CopperShapes, Holes, TraceSegments
from scanner.errors import InputError
from scanner.board.layerstack import (LayerReference, board_environments, default_stackup, effective_stackup,
                                      layer_environments)
from tests.scan.synthetic import stackup_of


def _board(kinds):
    layers = [CopperLayer(f"L{i + 1}", i, "inner", k, "test", None, TraceSegments.empty(), CopperShapes.empty())
              for i, k in enumerate(kinds)]
    return Board("t", "t", "test", layers, [], Holes.empty())


def _six_layer():
    return stackup_of(("mask", 0.02, 3.8), 0.035, (0.2, 4.2), 0.035, (0.3, 4.5), 0.018, (0.25, 4.3), 0.035,
                      (0.3, 4.5), 0.035, (0.2, 4.2), 0.035, ("mask", 0.02, 3.8))


def test_six_layer_environments():
    board = _board(["signal", "plane", "signal", "plane", "plane", "signal"])
    envs = layer_environments(board, _six_layer(), {1, 3, 4})
    top, inner, bottom = envs[0], envs[2], envs[5]
    assert top.structure == "microstrip" and top.toward_plane == ((0.2, 4.2),) and top.soldermask == (0.02, 3.8)
    # offset stripline: 0.25 mm to L4 is nearer than 0.3 mm to L2, so L4 is its reference side
    assert inner.structure == "stripline"
    # its own copper (0.018 mm, embedded in the laminate) counts in the plane-to-plane distance
    assert inner.toward_plane == ((0.25, 4.3),) and inner.away == ((0.018, 4.5), (0.3, 4.5))
    assert bottom.structure == "microstrip" and bottom.height_mm == pytest.approx(0.2)
    assert set(envs) == {0, 2, 5}


def test_signal_copper_between_trace_and_plane_counts_as_dielectric():
    board = _board(["signal", "signal", "plane", "signal", "signal", "plane"])
    envs = layer_environments(board, _six_layer(), {2, 5})
    # L1 looks down past L2 (signal) to the plane L3: 0.2 + 0.035 (copper as laminate) + 0.3
    assert envs[0].height_mm == pytest.approx(0.535)
    assert envs[0].toward_plane[1] == (0.035, 4.2)


@pytest.mark.parametrize("count,total_mm", [(2, 1.6), (4, 1.6), (6, 1.6), (8, 1.6), (12, 1.6), (14, 2.0)])
def test_default_stackup_is_a_symmetric_build_with_thin_outer_prepregs(count, total_mm):
    s = default_stackup(count)
    assert s.source == "default" and len(s.copper()) == count
    assert s.total_thickness_mm == pytest.approx(total_mm)
    layers = [(l.kind, round(l.thickness_mm, 9), l.epsilon_r) for l in s.layers]
    assert layers == layers[::-1]  # symmetric about the middle
    dielectrics = [l for l in s.layers if l.kind == "dielectric"]
    assert all(l.thickness_mm > 0.05 for l in dielectrics)
    if count >= 4:
        outer, inner = dielectrics[0], dielectrics[1:-1]
        # thin prepregs next to the outer layers, cores inside (typical build: common practice)
        assert outer.name.startswith("prepreg") and all(outer.thickness_mm <= l.thickness_mm for l in inner)
        assert [l.name.split()[0] for l in inner][::2] == ["core"] * ((len(inner) + 1) // 2)


def test_default_stackup_is_stated_with_its_values():
    board = _board(["signal"] * 4)
    used, warnings = effective_stackup(board, None)
    assert used.source == "default" and "NO STACKUP" in warnings[0]
    for value in ("1.6 mm", "prepreg 0.200 mm", "core of 1.054 mm", "er 4.4", "35 µm", "--stackup"):
        assert value in warnings[0]


def test_copper_count_mismatch_is_an_input_error_with_both_counts():
    stack = dataclasses.replace(_six_layer(), path="build.csv")
    with pytest.raises(InputError) as exc:
        effective_stackup(_board(["signal"] * 4), stack)
    assert exc.value.path == "build.csv"
    assert "6 copper layers" in exc.value.message and "board has 4 copper layers" in exc.value.message


def test_a_board_without_planes_is_referenced_to_its_far_side():
    stack = stackup_of(("mask", 0.02, 3.8), 0.035, (1.53, 4.5), 0.035, ("mask", 0.02, 3.8))
    envs = layer_environments(_board(["signal", "signal"]), stack, set())
    for index, far in ((0, 1), (1, 0)):
        env = envs[index]
        assert env.structure == "microstrip" and env.reference == LayerReference("far side", (far,))
        assert env.toward_plane == ((1.53, 4.5),) and env.soldermask == (0.02, 3.8)


def test_an_inner_layer_keeps_the_far_surface_mask_as_a_flat_layer():
    # L2 of four signal layers: referenced to L4 (1.235 mm away), L1's side reaches the surface through laminate
    stack = stackup_of(("mask", 0.02, 3.8), 0.035, (0.2, 4.2), 0.035, (1.0, 4.5), 0.035, (0.2, 4.2), 0.035)
    env = layer_environments(_board(["signal"] * 4), stack, set())[1]
    assert env.reference.layers == (3,) and env.soldermask is None
    assert env.away == ((0.2, 4.2), (0.035, 4.2), (0.02, 3.8))


def test_one_copper_layer_has_nothing_to_reference_to():
    assert layer_environments(_board(["signal"]), stackup_of(0.035, (1.5, 4.5)), set()) == {}


def test_skipped_layers_are_listed_with_their_reason():
    board = _board(["signal", "plane", "signal", "plane", "plane", "signal"])
    board.stackup = _six_layer()
    env = board_environments(board, None, skip_layers=("L3",))
    assert set(env.signal) == {0, 5} and "skip_layers" in env.skipped[2]
