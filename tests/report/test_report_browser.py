"""report.html opened in headless Chromium (skipped when Chromium is not installed): every image loads."""
import json
import re
import shutil
import subprocess

import pytest

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

CHECK_SCRIPT = """<script>window.addEventListener('load', function () {
  var out = [];
  for (var i = 0; i < document.images.length; i++) {
    var im = document.images[i];
    out.push({src: im.getAttribute('src'), complete: im.complete, width: im.naturalWidth});
  }
  var pre = document.createElement('pre');
  pre.id = 'image-check';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});</script>"""


@pytest.mark.skipif(CHROMIUM is None, reason="chromium not installed")
def test_every_image_loads_in_a_browser(report_dir, tmp_path):
    page = (report_dir / "report.html").read_text(encoding="utf-8")
    check = report_dir / "report-check.html"  # beside the page, so relative image names resolve the same way
    check.write_text(page.replace("</body>", CHECK_SCRIPT + "</body>"), encoding="utf-8")
    try:
        run = subprocess.run(
            [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp_path / 'profile'}", "--dump-dom", check.as_uri()],
            capture_output=True, text=True, timeout=90)
    finally:
        check.unlink()
    found = re.search(r'<pre id="image-check">(.*?)</pre>', run.stdout, re.S)
    assert found, run.stderr[-2000:]
    images = json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))
    assert len(images) == page.count("<img ")
    assert images and all(im["complete"] and im["width"] > 0 for im in images), images
