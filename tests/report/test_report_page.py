"""report.html read with the standard library's HTML parser: complete, self-contained, escaped."""
import json
from dataclasses import replace
from html.parser import HTMLParser

from scanner.report.page import render_page
from scanner.scoring.results import CAUTION

VOID = {"img", "meta", "br"}


class PageReader(HTMLParser):
    """Collects images, links, ids, table rows and text; records any tag that is closed out of order."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.errors = [], []
        self.images, self.links, self.ids, self.tags = [], [], set(), []
        self.rows = {}  # table id or class -> body row count
        self.text = []
        self._table, self._in_body = None, False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "img":
            self.images.append(a.get("src"))
        if tag == "a":
            self.links.append(a.get("href"))
        if tag == "table":
            self._table = a.get("class") or f"table-{len(self.rows)}"
            self.rows[self._table] = 0
        if tag == "tbody":
            self._in_body = True
        if tag == "tr" and self._in_body:
            self.rows[self._table] += 1
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs)

    def handle_endtag(self, tag):
        if tag == "tbody":
            self._in_body = False
        if not self.stack or self.stack.pop() != tag:
            self.errors.append(tag)

    def handle_data(self, data):
        self.text.append(data)


def read(html: str) -> PageReader:
    reader = PageReader()
    reader.feed(html)
    reader.close()
    return reader


def test_page_is_complete_and_self_contained(report_dir):
    html = (report_dir / "report.html").read_text(encoding="utf-8")
    page = read(html)
    assert not page.errors and not page.stack  # well-formed: every element closed in order
    assert page.images and all((report_dir / src).is_file() for src in page.images)
    for href in page.links:
        if href.startswith("#"):
            assert href[1:] in page.ids
        else:
            assert (report_dir / href).is_file(), href
    assert not any(ref.startswith(("http:", "https:", "//", "file:")) for ref in page.images + page.links)
    assert "script" not in page.tags and "link" not in page.tags and "iframe" not in page.tags
    assert "url(" not in html  # no style sheet fetches anything


def test_page_lists_every_finding_and_victim(report_dir):
    data = json.loads((report_dir / "report.json").read_text())
    page = read((report_dir / "report.html").read_text(encoding="utf-8"))
    assert page.rows["findings"] == len(data["hotspots"])
    text = " ".join("".join(page.text).split())
    assert CAUTION in text
    for victim in data["victims"]:
        assert victim["net"] in text
    for section in ("board", "rules", "maps", "findings", "victims", "assumptions"):
        assert section in page.ids
    if data["geometric"]:
        assert "geometric" in page.ids
    if any(h.get("exact") for h in data["hotspots"]):
        assert "exact line simulation" in text
    assert data["rules"]["source"] in text
    for layer in data["board"]["layers"]:
        assert layer["name"] in text


def test_net_names_are_escaped(demo_scan, tmp_path):
    result, _ = demo_scan
    nasty = 'CLK<b class="x">&amp;\'"'
    first = result.hotspots[0]
    worse = replace(first.directions[0], victim=nasty, aggressor="<script>alert(1)</script>")
    hotspots = [replace(first, directions=[worse] + first.directions[1:])]
    page_html = render_page(replace(result, hotspots=hotspots + result.hotspots[1:]), tmp_path)
    page = read(page_html)
    assert not page.errors
    assert "script" not in page.tags and "b" not in page.tags
    text = "".join(page.text)
    assert nasty in text and "<script>alert(1)</script>" in text


def test_without_images_the_page_links_nothing_missing(demo_scan, tmp_path):
    result, _ = demo_scan
    page = read(render_page(result, tmp_path))
    assert page.images == []
    assert all(href.startswith("#") for href in page.links)
    assert page.rows["findings"] == len(result.hotspots)
