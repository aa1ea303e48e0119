"""report.html in headless Chromium: every image loads, the board map and the first fix-first row are there,
and clicking that row selects its run on the map. Screenshots of the page are left in the report folder.

Chromium is a system package (Debian: ``chromium``). ``.ci/run`` installs it when missing and sets
``NEARFAR_REQUIRE_BROWSER=1``, so in CI these tests run and fail without it; elsewhere they skip without it.
"""
import json
import os
import re
import shutil
import subprocess

import pytest

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync", "--hide-scrollbars"]

# Runs after the page's own script: clicks the first what-to-fix-first row and records what the map then shows.
CHECK_SCRIPT = """<script>window.addEventListener('load', function () {
  var images = [];
  for (var i = 0; i < document.images.length; i++) {
    var im = document.images[i];
    images.push({src: im.getAttribute('src'), complete: im.complete, width: im.naturalWidth});
  }
  var map = document.getElementById('board-map');
  var svg = map && map.querySelector('svg');
  var row = document.querySelector('#fix-first ~ div table.fix-first tbody tr');
  var run = row && row.getAttribute('data-run');
  if (row) { row.click(); }
  var mark = svg && svg.querySelector('.mark.sel');
  var out = {images: images, svg: !!svg, copper: svg ? svg.querySelectorAll('.cu-trace').length : 0,
             marks: svg ? svg.querySelectorAll('.mark').length : 0, row_run: run,
             selected: map && map.getAttribute('data-selected'), mark_run: mark && mark.getAttribute('data-run'),
             row_picked: !!(row && row.classList.contains('picked')),
             info: (document.getElementById('map-info') || {}).textContent || '',
             view: svg && svg.getAttribute('viewBox')};
  var pre = document.createElement('pre');
  pre.id = 'page-check';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});</script>"""


def need_chromium():
    if CHROMIUM is None:
        if os.environ.get("NEARFAR_REQUIRE_BROWSER") == "1":
            pytest.fail("chromium is not installed; .ci/run installs Debian's chromium package")
        pytest.skip("chromium not installed (install Debian's chromium package to run the page tests)")


def chromium(tmp_path, *args, timeout=120):
    return subprocess.run([CHROMIUM, *FLAGS, f"--user-data-dir={tmp_path / 'profile'}", *args],
                          capture_output=True, text=True, timeout=timeout)


@pytest.fixture(scope="module")
def page_state(report_dir, tmp_path_factory):
    """The state the check script records (the page loaded from disk beside its images)."""
    need_chromium()
    page = (report_dir / "report.html").read_text(encoding="utf-8")
    check = report_dir / "report-check.html"  # beside the page, so relative image names resolve the same way
    check.write_text(page.replace("</body>", CHECK_SCRIPT + "</body>"), encoding="utf-8")
    try:
        run = chromium(tmp_path_factory.mktemp("chromium"), "--virtual-time-budget=5000",
                       "--window-size=1280,1600", "--dump-dom", check.as_uri())
    finally:
        check.unlink()
    found = re.search(r'<pre id="page-check">(.*?)</pre>', run.stdout, re.S)
    assert found, run.stderr[-2000:]
    return json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&").replace("&lt;", "<")
                      .replace("&gt;", ">"))


def test_every_image_loads(page_state, report_dir):
    images = page_state["images"]
    assert len(images) == (report_dir / "report.html").read_text(encoding="utf-8").count("<img ")
    assert images and all(im["complete"] and im["width"] > 0 for im in images), images


def test_board_map_shows_copper_and_markers(page_state):
    assert page_state["svg"] and page_state["copper"] > 0 and page_state["marks"] > 0


def test_clicking_the_first_fix_row_selects_its_run(page_state, report_dir):
    data = json.loads((report_dir / "report.json").read_text())
    assert any(v["status"] == "fail" for v in data["victims"])  # the demo board has something to fix
    assert page_state["row_run"] is not None
    assert page_state["selected"] == page_state["row_run"] == page_state["mark_run"]
    assert page_state["row_picked"]
    assert "Fix:" in page_state["info"] and "% of budget" in page_state["info"]


@pytest.mark.parametrize("width", [1280, 800])
def test_screenshot_for_a_reviewer(report_dir, tmp_path, width):
    """The page at both widths, written into the report folder for a reviewer to look at."""
    need_chromium()
    shot = report_dir / f"screenshot-{width}.png"
    chromium(tmp_path, "--virtual-time-budget=3000", f"--window-size={width},2400", f"--screenshot={shot}",
             (report_dir / "report.html").as_uri())
    assert shot.is_file() and shot.stat().st_size > 10_000
