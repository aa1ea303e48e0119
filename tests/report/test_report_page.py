"""report.html read with the standard library's HTML parser: complete, self-contained, escaped."""
import json
from dataclasses import replace
from html.parser import HTMLParser

from scanner.report.page import render_page
from scanner.scoring.results import CAUTION

VOID = {"img", "meta", "br", "input"}


class PageReader(HTMLParser):
    """Collects images, links, ids, table rows and text; records any tag that is closed out of order."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.errors = [], []
        self.images, self.links, self.ids, self.tags = [], [], set(), []
        self.scripts = []  # attributes of each script element
        self.first_rows = {}  # table class -> attributes of its first body row
        self.rows = {}  # table id or class -> body row count
        self.text = []
        self._table, self._in_body = None, False

    def handle_starttag(self, tag, attrs, closed=False):
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
            self.first_rows.setdefault(self._table, a)
        if tag == "script":
            self.scripts.append(a)
        if tag not in VOID and not closed:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs, closed=True)  # self-closing SVG elements

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
    # the map's script and its data are inline: nothing is loaded from anywhere
    assert len(page.scripts) == 2 and not any("src" in a for a in page.scripts)
    assert "link" not in page.tags and "iframe" not in page.tags and "@import" not in html
    assert "url(" not in html  # no style sheet fetches anything
    assert "fetch(" not in html and "XMLHttpRequest" not in html


def test_page_lists_every_finding_and_victim(report_dir):
    data = json.loads((report_dir / "report.json").read_text())
    page = read((report_dir / "report.html").read_text(encoding="utf-8"))
    assert page.rows["findings"] + page.rows.get("findings-pass", 0) == len(data["hotspots"])
    assert page.rows["findings"] == sum(1 for h in data["hotspots"] if h["status"] != "pass")
    text = " ".join("".join(page.text).split())
    assert CAUTION in text
    for victim in data["victims"]:
        assert victim["net"] in text
    for section in ("verdict", "fix-first", "board-map", "maps", "findings", "victims", "assumptions", "board",
                    "rules", "stackup"):
        assert section in page.ids
    if data["geometric"]:
        assert "geometric" in page.ids
    if any(h.get("exact") for h in data["hotspots"]):
        assert "exact line simulation" in text
    assert data["rules"]["source"] in text
    for layer in data["board"]["layers"]:
        assert layer["name"] in text


def test_sections_come_in_the_order_an_engineer_reads_them(report_dir):
    html = (report_dir / "report.html").read_text(encoding="utf-8")
    order = ['id="verdict"', 'id="fix-first"', 'id="board-map"', 'id="findings"', 'id="details"',
             'id="assumptions"']
    positions = [html.index(anchor) for anchor in order]
    assert positions == sorted(positions)


def test_fix_first_starts_with_the_victim_most_over_budget(report_dir, demo_scan):
    result, _ = demo_scan
    page = read((report_dir / "report.html").read_text(encoding="utf-8"))
    worst = max((v for v in result.victims if v.status == "fail"), key=lambda v: v.budget_used_pct)
    # the victim's worst run: the largest share among the runs' directions into it (a run holds both directions)
    worst_run = max((h for h in result.hotspots if any(d.victim == worst.net for d in h.directions)),
                    key=lambda h: max(d.budget_used_pct for d in h.directions if d.victim == worst.net))
    assert page.first_rows["fix-first"]["data-run"] == str(worst_run.run)
    assert page.rows["fix-first"] == sum(1 for v in result.victims if v.status == "fail") + \
        sum(1 for g in result.geometric if g.status == "fail")


def test_settings_are_described_in_words(report_dir):
    text = " ".join("".join(read((report_dir / "report.html").read_text(encoding="utf-8")).text).split())
    for raw in ("auto diff pairs", "search distance mm", "min coupled length mm", "True", "False", "list floor",
                "high-z-receiver", "impedance min length mm", "warn fraction"):
        assert raw not in text
    assert "count as neighbours where their edges come within" in text


def test_net_names_are_escaped(demo_scan, tmp_path):
    result, board = demo_scan
    nasty = 'CLK<b class="x">&amp;\'"'
    first = result.hotspots[0]
    worse = replace(first.directions[0], victim=nasty, aggressor="</script><script>alert(1)</script>")
    hotspots = [replace(first, directions=[worse] + first.directions[1:])]
    page_html = render_page(replace(result, hotspots=hotspots + result.hotspots[1:]), tmp_path, board)
    page = read(page_html)
    assert not page.errors
    assert len(page.scripts) == 2 and "b" not in page.tags
    text = "".join(page.text)
    assert nasty in text and "</script><script>alert(1)</script>" in text
    # inside the map's JSON the names are still data: no element can close the script early
    data = page_html[page_html.index('id="map-data">') + len('id="map-data">'):]
    data = data[:data.index("</script>")]
    assert "<" not in data and ">" not in data


def test_without_images_the_page_links_nothing_missing(demo_scan, tmp_path):
    result, _ = demo_scan
    page = read(render_page(result, tmp_path))
    assert page.images == []
    assert all(href.startswith("#") for href in page.links)
    assert page.rows["findings"] + page.rows.get("findings-pass", 0) == len(result.hotspots)
