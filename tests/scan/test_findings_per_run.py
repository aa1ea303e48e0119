"""The demo board's findings: one entry per coupled run, victims first, consistent statuses, and every offered
fix re-scored with the model's own building blocks (coefficient tables and the batch peak formula)."""
from pathlib import Path

import numpy as np
import pytest

import scanner
from scanner.board.layerstack import board_environments
from scanner.board.roles import assign_roles, reference_nets
from scanner.coupling.stage import find_runs
from scanner.physics.crosstalk import receiver_gain
from scanner.report.text import render
from scanner.rules import load_rules
from scanner.scoring.peaks import run_peaks
from scanner.scoring.stage import score_runs

ROOT = Path(__file__).resolve().parents[2]
RULES = load_rules(ROOT / "fixtures/demo-rules.toml")


@pytest.fixture(scope="module")
def staged():
    board = scanner.load_board(ROOT / "fixtures/demo-board/x2")
    env = board_environments(board, RULES.stackup, RULES.planes, RULES.scan.skip_layers)
    roles = assign_roles(board.nets, RULES, reference_nets(board, env))
    coupled = find_runs(board, env, roles, RULES.scan)
    return board, coupled, score_runs(board, RULES, coupled.roles, env, coupled)


@pytest.fixture(scope="module")
def result():
    return scanner.scan(scanner.load_board(ROOT / "fixtures/demo-board/x2"), RULES)


def test_one_entry_per_coupled_run_holding_both_directions(result):
    runs = [h.run for h in result.hotspots]
    assert len(runs) == len(set(runs))
    ids = [h.id for h in result.hotspots]
    assert len(ids) == len(set(ids))
    for h in result.hotspots:
        pair = {h.directions[0].victim, h.directions[0].aggressor}
        assert all({d.victim, d.aggressor} == pair for d in h.directions)
        # ranked by the worse direction, which comes first and sets the entry's status
        assert [d.budget_used_pct for d in h.directions] == sorted((d.budget_used_pct for d in h.directions),
                                                                   reverse=True)
        assert h.budget_used_pct == h.directions[0].budget_used_pct and h.status == h.directions[0].status
    # the bus lines couple both ways: one entry, two directions
    bus = next(h for h in result.hotspots if {h.victim, h.aggressor} == {"DBUS_D0", "DBUS_D1"})
    assert {d.victim for d in bus.directions} == {"DBUS_D0", "DBUS_D1"}


def test_identity_is_the_net_pair_layer_and_place(result):
    h = result.hotspots[0]
    a, b = sorted((h.victim, h.aggressor))
    assert h.id == f"{a}|{b}|{h.layer}|{h.x_mm:.1f},{h.y_mm:.1f}"


def test_terminal_leads_with_the_victims(result):
    text = render(result)
    victims_at, runs_at = text.index("victims that warn or fail"), text.index("coupled runs, worst first")
    assert victims_at < runs_at
    listed = [v.net for v in result.victims if v.status != "pass"]
    block = text[victims_at:runs_at]
    positions = [block.index(f"  {v} (") for v in listed[:10]]
    assert positions == sorted(positions)  # worst victim first
    # a bus line failing from its two neighbours: its fix names both runs and says both must change
    d1 = next(v for v in result.victims if v.net == "DBUS_D1")
    assert d1.status == "fail" and d1.fix["each_needed"] and len(d1.fix["findings"]) >= 2
    assert "need changing" in d1.fix["note"]
    neighbours = {a["aggressor"] for a in d1.aggressors[:2]}
    assert neighbours == {"DBUS_D0", "DBUS_D2"}
    plan = {f for f in d1.fix["findings"]}
    assert all(a["finding"] in plan for a in d1.aggressors[:2])


def test_class_pair_budget_and_victim_total_agree(result):
    # SDIO_CMD takes clock edges under a 3 % class-pair budget (its own class allows 6 %): its finding warns,
    # so the victim cannot pass however small its total against the class budget
    v = next(v for v in result.victims if v.net == "SDIO_CMD")
    finding = next(h for h in result.hotspots if h.victim == "SDIO_CMD")
    assert finding.status == "warn" and v.status == "warn"
    assert v.total_used_pct < 80 <= v.budget_used_pct == finding.budget_used_pct
    for v in result.victims:
        worst = max(a["budget_used_pct"] for a in v.aggressors)
        assert v.budget_used_pct >= worst


def _peaks(coupled, run, direction, spacing_mm=None, length_factor=1.0):
    """NEXT and FEXT (mV) of one direction of a run, its pieces at a uniform spacing or scaled in length."""
    runs = coupled.runs
    rows = runs.pieces_of(run)
    p = runs.pieces
    spacing = p.spacing_mean_mm[rows] if spacing_mm is None else np.full(len(rows), spacing_mm)
    kb, kf, v = coupled.lookup.coefficients(p.layer[rows], 0.5 * (p.width_a_mm + p.width_b_mm)[rows], spacing)
    peaks = run_peaks(kb, kf, p.length_mm[rows] * 1e-3 * length_factor, v, np.array([0, len(rows)]),
                      direction.swing_v, direction.rise_time_ns * 1e-9 / 0.8, receiver_gain(direction.termination))
    return 1e3 * float(peaks.next_v[0]), 1e3 * float(peaks.fext_v[0])


@pytest.mark.parametrize("option", ["spacing_needed_mm", "max_length_mm"])
def test_every_offered_fix_passes_when_re_scored(staged, option):
    board, coupled, scored = staged
    warn = RULES.scan.warn_fraction
    by_id = {h.id: h for h in scored.hotspots}
    offered = [h for h in scored.hotspots if h.fix and h.fix[option] is not None]
    assert len(offered) >= 10
    changed = {}
    for h in offered:
        value = h.fix[option]
        if option == "spacing_needed_mm":
            assert value > h.min_spacing_mm  # never a gap the run already has
            kwargs = {"spacing_mm": value}
        else:
            assert value < h.coupled_length_mm
            kwargs = {"length_factor": value / h.coupled_length_mm}
        for d in h.directions:
            n_mv, f_mv = _peaks(coupled, h.run, d, **kwargs)
            changed[(h.id, d.victim)] = (n_mv, f_mv)
            # the finding itself passes: under the pass limit of its own (class or class-pair) budgets
            assert max(abs(n_mv) / d.next_budget_mv, abs(f_mv) / d.fext_budget_mv) < warn
    # and every victim with a plan passes with all of its plan's changes applied together
    planned = [v for v in scored.victims if v.fix and all(by_id[f].fix and by_id[f].fix[option] is not None
                                                          for f in v.fix["findings"])]
    assert planned and (option == "spacing_needed_mm" or any(len(v.fix["findings"]) > 1 for v in planned))
    for v in planned:
        next_sum = fext_sum = 0.0
        for a in v.aggressors:
            n_mv, f_mv = changed.get((a["finding"], v.net), (a["next_mv"], a["fext_mv"]))
            next_sum, fext_sum = next_sum + abs(n_mv), fext_sum + abs(f_mv)
        # worst-case basis of the demo rules: peak magnitudes added (docs/physics.md §3)
        assert max(next_sum / v.next_budget_mv, fext_sum / v.fext_budget_mv) < warn, v.net


def test_no_layer_move_that_the_model_says_makes_things_worse(result):
    # moving the demo's microstrip runs to the stripline layer does not bring them within budget: not offered
    assert not any(h.fix and h.fix["alternative_layer"] for h in result.hotspots if h.status == "fail")
