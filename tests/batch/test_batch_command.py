"""`nearfar batch` end to end on one local Dask cluster of two worker processes: the three demo variants
and a broken board, the summary files, the index page, re-runs that skip unchanged boards, and exit status."""
import csv
import json
import shutil
from html.parser import HTMLParser
from pathlib import Path

import pytest

import scanner
from scanner.batch import engine
from scanner.batch.task import ENTRY_FILE
from scanner.cli import main
from scanner.report.files import report_json
from scanner.report.names import is_report_file
from scanner.rules import load_rules

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures/demo-board"
RULES = ROOT / "fixtures/demo-rules.toml"
COLUMNS = ["board", "verdict", "coverage", "victims_fail", "worst_victim", "worst_budget_used", "seconds",
           "reason", "report", "reused"]


def run(args, capsys):
    with pytest.raises(SystemExit) as e:
        main(args)
    out, err = capsys.readouterr()
    return e.value.code, out, err


@pytest.fixture(scope="module")
def scheduler():
    """One local cluster of two worker processes for the whole module (made by the command's own code)."""
    with engine.connect(None, 2) as cluster:
        assert cluster.workers == 2
        yield cluster.client.scheduler.address


@pytest.fixture(scope="module")
def boards(tmp_path_factory):
    """A list file naming the three demo variants (relative to the list) and a board whose copper is cut short."""
    root = tmp_path_factory.mktemp("boards")
    for variant in ("x2", "x1", "odbpp"):
        shutil.copytree(DEMO / variant, root / variant)
    broken = root / "cut-short"
    broken.mkdir()
    gerber = (DEMO / "x2/ml6-logger-c1.gbr").read_text()
    (broken / "ml6-logger-c1.gbr").write_text(gerber[: len(gerber) // 2])
    listing = root / "boards.txt"
    listing.write_text("# demo variants, then one broken board\nx2\nx1\n\nodbpp\ncut-short\n")
    return root, listing


@pytest.fixture(scope="module")
def first(scheduler, boards, tmp_path_factory):
    out = tmp_path_factory.mktemp("batch") / "out"
    _, listing = boards
    return out, _batch(scheduler, [f"@{listing}"], out)


def _batch(scheduler, board_args, out, *extra, rules=RULES, images=False):
    with pytest.raises(SystemExit) as e:
        main(["batch", *board_args, "--rules", str(rules), "--out", str(out), "--scheduler", scheduler,
              *([] if images else ["--no-images"]), *extra])
    return e.value.code


def _summary(out: Path) -> dict:
    return json.loads((out / "batch.json").read_text())


def _by_name(summary: dict) -> dict:
    return {Path(r["board"]).name: r for r in summary["boards"]}


def test_every_board_has_a_row_and_the_broken_one_its_reason(first, boards):
    out, code = first
    assert code == 1  # the demo board has planted violations (fixtures/README.md)
    summary = _summary(out)
    rows = _by_name(summary)
    assert set(rows) == {"x2", "x1", "odbpp", "cut-short"}
    assert summary["counts"] == {"fail": 3, "error": 0, "refused": 1, "incomplete": 0, "pass": 0}
    broken = rows["cut-short"]
    assert broken["verdict"] == "refused" and broken["report"] is None
    assert "ml6-logger-c1.gbr" in broken["reason"] and "\n" not in broken["reason"]
    assert not [p for p in out.iterdir() if p.name.startswith("cut-short")]  # no report folder for it
    for name in ("x2", "x1", "odbpp"):
        row = rows[name]
        assert row["verdict"] == "fail" and row["reused"] is False and row["coverage"] == 1.0
        report = json.loads((out / row["report"]).read_text())
        worst = max(report["victims"], key=lambda v: v["budget_used_pct"])
        assert row["worst_victim"] == worst["net"]
        assert row["worst_budget_used"] == pytest.approx(worst["budget_used_pct"] / 100, abs=1e-4)
        assert row["victims_fail"] == sum(v["status"] == "fail" for v in report["victims"])
        assert (out / row["report"]).parent.joinpath("hotspots.csv").is_file()
    assert [r["verdict"] for r in summary["boards"]] == ["fail"] * 3 + ["refused"]  # worst first
    used = [r["worst_budget_used"] for r in summary["boards"][:3]]
    assert used == sorted(used, reverse=True)


def test_a_board_in_a_batch_reports_what_scan_reports(first, boards):
    """Each worker goes through the scan command's own code: report.json is the one an in-process scan of
    the same path and rules gives, apart from the run's own id and time."""
    out, _ = first
    root, _ = boards
    row = _by_name(_summary(out))["odbpp"]
    path = (root / "odbpp").resolve()
    result = scanner.scan(scanner.load_board(path), load_rules(str(RULES)))
    in_batch, in_process = json.loads((out / row["report"]).read_text()), json.loads(report_json(result))
    for report in (in_batch, in_process):
        del report["run_id"], report["created"]
    assert in_batch == in_process


def test_csv_has_the_json_rows(first):
    """Read back with Python's csv module (an RFC 4180 reader)."""
    out, _ = first
    with (out / "batch.csv").open(newline="") as fh:
        table = list(csv.reader(fh))
    assert table[0] == COLUMNS
    boards = _summary(out)["boards"]
    assert [r[0] for r in table[1:]] == [b["board"] for b in boards]
    assert [r[1] for r in table[1:]] == [b["verdict"] for b in boards]
    assert table[-1][2] == "" and table[-1][7] == boards[-1]["reason"]


class _Page(HTMLParser):
    def __init__(self):
        super().__init__()
        self.links, self.tags = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.links += [v for k, v in attrs if k in ("href", "src")]


def test_index_links_every_scanned_board_and_nothing_outside(first):
    """Parsed with the standard library's HTML parser: every link resolves inside the batch folder."""
    out, _ = first
    page = _Page()
    page.feed((out / "index.html").read_text(encoding="utf-8"))
    assert "script" not in page.tags and "link" not in page.tags
    reports = [b["report"] for b in _summary(out)["boards"] if b["report"]]
    assert set(reports) <= set(page.links) and len(reports) == 3
    for href in page.links:
        assert "://" not in href and (out / href).is_file()
    text = (out / "index.html").read_text(encoding="utf-8")
    assert "Caution." in text and text.index("x1") < text.index("cut-short")


def test_rerun_skips_unchanged_boards_and_redoes_changed_ones(first, scheduler, boards, tmp_path):
    out, _ = first
    root, listing = boards
    before = {name: (out / row["report"]).stat().st_mtime_ns for name, row in _by_name(_summary(out)).items()
              if row["report"]}
    code = _batch(scheduler, [f"@{listing}"], out)
    rows = _by_name(_summary(out))
    assert code == 1
    assert all(rows[n]["reused"] for n in ("x2", "x1", "odbpp")) and not rows["cut-short"]["reused"]
    assert {n: (out / rows[n]["report"]).stat().st_mtime_ns for n in before} == before

    # a changed file makes its board scan again; the others stay as they were
    changed = root / "x2" / "notes.txt"
    changed.write_text("revision B\n")
    try:
        _batch(scheduler, [f"@{listing}"], out)
    finally:
        changed.unlink()
    rows = _by_name(_summary(out))
    assert not rows["x2"]["reused"] and rows["x1"]["reused"] and rows["odbpp"]["reused"]

    _batch(scheduler, [f"@{listing}"], out, "--force")
    assert not any(r["reused"] for r in _summary(out)["boards"])


def test_changed_rules_redo_every_board(scheduler, boards, tmp_path):
    root, _ = boards
    out = tmp_path / "out"
    code = _batch(scheduler, [str(root / "odbpp")], out)
    assert code == 1
    lenient = tmp_path / "lenient.toml"
    lenient.write_text('[[class]]\nname = "all"\nnets = ["*"]\nnext_budget_pct = 95\nfext_budget_pct = 95\n')
    assert _batch(scheduler, [str(root / "odbpp")], out, rules=lenient) == 0  # every board within budget
    (row,) = _summary(out)["boards"]
    assert row["verdict"] == "pass" and not row["reused"] and row["reason"] == ""


def test_with_images_each_folder_holds_what_scan_writes(scheduler, boards, tmp_path):
    """The files of a `nearfar scan --out` folder, the page among them, and the index links the page."""
    root, _ = boards
    out = tmp_path / "out"
    assert _batch(scheduler, [str(root / "x2")], out, images=True) == 1
    (row,) = _summary(out)["boards"]
    folder = out / Path(row["report"]).parent
    assert row["report"].endswith("/report.html") and (out / row["report"]).is_file()
    names = {p.name for p in folder.iterdir()} - {ENTRY_FILE}
    assert {"report.json", "hotspots.csv", "report.html", "overlay-all.png", "overlay-all.svg", "hotspot-1.png",
            "wave-1.png"} <= names
    assert all(is_report_file(n) for n in names), names  # the report folder's own names (scanner.report.names)
    page = _Page()
    page.feed((out / "index.html").read_text(encoding="utf-8"))
    assert row["report"] in page.links


def test_same_base_name_gets_two_folders(scheduler, boards, tmp_path):
    root, _ = boards
    for rev in ("rev-a", "rev-b"):
        shutil.copytree(root / "odbpp", tmp_path / rev / "board")
    out = tmp_path / "out"
    _batch(scheduler, [str(tmp_path / "rev-a/board"), str(tmp_path / "rev-b/board")], out)
    reports = [r["report"] for r in _summary(out)["boards"]]
    assert len({Path(r).parent for r in reports}) == 2 and all(Path(r).parent.name.startswith("board-") for r in reports)
    assert all((out / Path(r).parent / ENTRY_FILE).is_file() for r in reports)


def test_local_cluster_by_default(tmp_path, capsys):
    """Without --scheduler the command starts its own cluster; a batch of only refused boards exits 3."""
    code, out, err = run(["batch", str(tmp_path / "missing"), "--out", str(tmp_path / "out"), "--workers", "1"],
                         capsys)
    assert code == 3
    assert "local cluster of 1 worker process" in out and "refused" in out and "caution:" in out
    assert err == ""  # quiet when standard error is not a terminal
    assert _summary(tmp_path / "out")["boards"][0]["reason"].endswith("board folder or archive not found")


@pytest.mark.parametrize("args, needle", [
    (["batch", "@no-such-list.txt"], "no-such-list.txt"),
    (["batch", "x", "--rules", "missing-rules.toml"], "missing-rules.toml"),
    (["batch", "x", "--scheduler", "tcp://127.0.0.1:1", "--workers", "2"], "--workers"),
])
def test_bad_command_input_is_one_line_and_exit_2(args, needle, capsys, tmp_path):
    code, _, err = run(args + ["--out", str(tmp_path / "out")], capsys)
    assert code == 2
    assert needle in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()


def test_unreachable_scheduler_is_bad_input(monkeypatch, capsys, tmp_path):
    monkeypatch.setattr(engine, "CONNECT_TIMEOUT_S", 1)
    code, _, err = run(["batch", "x", "--scheduler", "tcp://127.0.0.1:9", "--out", str(tmp_path / "out")], capsys)
    assert code == 2 and "tcp://127.0.0.1:9" in err and len(err.strip().splitlines()) == 1
