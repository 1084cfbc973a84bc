"""The batch report: valid self-contained HTML that reads like a lab summary, checked as text and in a real
headless browser at 1 280 and 1 920 px (sorting, filters, nothing clipped, figures at their aspect ratio)."""

from __future__ import annotations

import base64
import csv
import json
import re
import shutil
import subprocess
import time
import urllib.request
from html.parser import HTMLParser
from pathlib import Path

import pytest

from tauspec.cli.demo_archive import write_demo_archive
from tauspec.cli.main import main
from tauspec.output.report import PAGES_FOLDER, write_report

VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr",
        "path", "rect", "circle", "line", "polyline", "polygon", "use", "stop", "ellipse", "image"}


class _Checker(HTMLParser):
    """Checks that every element is closed in order, and collects rows, sections, links and visible text."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.rows = 0
        self.sections = 0
        self.urls: list[str] = []
        self.images = 0
        self.in_tbody = False
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for key in ("src", "href"):
            if key in a and a[key] and not (a[key].startswith("#") or a[key].startswith("data:")):
                self.urls.append(a[key])
        self.images += tag == "img"
        if tag == "tbody":
            self.in_tbody = True
        if tag == "tr" and self.in_tbody:
            self.rows += 1
        if tag == "section" and "sample" in (a.get("class") or ""):
            self.sections += 1
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if tag == "tbody":
            self.in_tbody = False
        if tag in VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes <{self.stack[-1] if self.stack else None}>")
            return
        self.stack.pop()

    def handle_data(self, data):
        if not self.stack or self.stack[-1] not in ("style", "script"):
            self.text.append(data)


def _check(path: Path) -> _Checker:
    checker = _Checker()
    checker.feed(path.read_text(encoding="utf-8"))
    checker.close()
    assert not checker.errors, checker.errors[:5]
    assert checker.stack == [], checker.stack
    return checker


@pytest.fixture(scope="module")
def demo_batch(tmp_path_factory):
    root = tmp_path_factory.mktemp("report")
    files = write_demo_archive(root / "archive")
    keep = ("binder-M40", "control-entangled-A", "batch-17-gelled", "batch-22-truncated")  # a quicker archive
    for f in files:
        if not f.stem.startswith(keep):
            f.unlink()
    files = [f for f in files if f.exists()]
    out = root / "out"
    code = main(["batch", str(root / "archive"), "--out", str(out), "--jobs", "1", "--quiet", "--plot", "--report"])
    assert code == 1  # the corrupted export fails, the rest succeed
    return files, out


def _copy(out: Path, tmp_path: Path) -> Path:
    copy = tmp_path / "batch"
    shutil.copytree(out, copy)
    (copy / "report.html").unlink()
    return copy


def _rows(folder: Path) -> list[dict]:
    with open(folder / "summary.csv", newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def _result(folder: Path, key: str) -> tuple[Path, dict]:
    path = folder / key / "result.json"
    return path, json.loads(path.read_text(encoding="utf-8"))


def test_report_is_valid_self_contained_html(demo_batch):
    files, out = demo_batch
    text = (out / "report.html").read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    checker = _check(out / "report.html")
    summary = (out / "summary.csv").read_text().strip().splitlines()[1:]
    assert checker.rows == len(files) == len(summary)
    ok = sum(",ok," in row for row in summary)
    assert checker.sections == ok == len(files) - 1
    assert checker.images == 4 * ok  # fit, spectrum, diagnosis, L-curve: the PNGs the workers drew
    assert checker.urls == []  # no external file, script or style
    assert not re.search(r"url\(\s*['\"]?(https?:)?//", text)
    assert "batch-22-truncated.csv" in text and "row has 2 values" in text  # the failure and its reason


def test_report_reads_like_a_lab_summary(demo_batch):
    _, out = demo_batch
    visible = " ".join(_check(out / "report.html").text)
    # evidence in words with rounded numbers, never a code name or a raw float
    assert "terminal slope of G′: 2" in visible and "expected 2 (≥ 1.7)" in visible
    for code in ("window_decades", "terminal_slope_storage", "critical_gel_power_law", "WeakResultWarning"):
        assert code not in visible, code
    long = [n for n in re.findall(r"\d+\.\d+", visible) if len(n.replace(".", "").lstrip("0")) > 4]
    assert not long, long  # at most four significant digits (3 as a rule; an interval may need a fourth)
    # rows labelled by sample and temperature; a legend for every symbol the table shows
    html = (out / "report.html").read_text(encoding="utf-8")
    table = html[html.index('<table id="summary"'):html.index("</table>")]
    assert "25 °C" in table
    shown = set(re.findall(r'<span class="sym">([^<]+)</span>', table))
    legend = set(re.findall(r"<dt>([^<]+)</dt>", html[html.index('<dl class="legend">'):]))
    assert shown and shown <= legend, shown - legend
    assert {"τ_R", "G0", "a", "n", "η0"} <= legend  # the Rouse binder's and the gel's symbols
    # the entangled control shows no Rouse numbers: its τ_R and G0 would mean nothing
    row = re.search(r'<tr class="ok"[^>]*data-verdict="entangled">.*?</tr>', table).group(0)
    assert "τ_R" not in row and "G0" not in row
    # failed files come last in the table as written
    statuses = re.findall(r'<tr class="(ok|failed)"', table)
    assert statuses == sorted(statuses, key=lambda s: s == "failed") and statuses[-1] == "failed"


def test_entangled_results_show_their_plateau_numbers(demo_batch, tmp_path):
    # The diagnosis of an entangled sample carries G_N⁰, τ_d, M_e and Z (JSON keys GN0, GN0_ci, tau_d, tau_d_ci,
    # Me, Z): the report shows them, with intervals and units, and explains each symbol.
    _, out = demo_batch
    folder = _copy(out, tmp_path)
    path, result = _result(folder, "controls/control-entangled-A.csv")
    result["diagnosis"].update(GN0=2.1e5, GN0_ci=[1.9e5, 2.3e5], GN0_method="spectrum integral", tau_d=7.9,
                               tau_d_ci=[7.1, 8.8], Me=1.52e4, Z=6.6)
    path.write_text(json.dumps(result), encoding="utf-8")
    html = write_report(folder).read_text(encoding="utf-8")
    table = html[html.index('<table id="summary"'):html.index("</table>")]
    row = re.search(r'<tr class="ok"[^>]*data-verdict="entangled">.*?</tr>', table).group(0)
    for text in ("G_N⁰", "2.1e5", "[1.9e5, 2.3e5]", "τ_d", "7.9", "[7.1, 8.8]", "M_e", "1.52e4 g/mol", "Z 6.6"):
        assert text in row, text
    legend = html[html.index('<dl class="legend">'):]
    for sym in ("G_N⁰", "τ_d", "M_e"):
        assert f"<dt>{sym}</dt>" in legend
    section = html[html.index('data-verdict="entangled" data-status="ok">'):]
    assert "G_N⁰ = 2.1e5 Pa, 95 % interval [1.9e5, 2.3e5] Pa" in section
    assert "τ_d = 7.9 s, 95 % interval [7.1, 8.8] s" in section


def test_rows_of_one_sample_at_several_temperatures_are_told_apart(demo_batch, tmp_path):
    _, out = demo_batch
    folder = _copy(out, tmp_path)
    src = folder / "series" / "binder-M40.csv"
    rows = _rows(folder)
    template = next(r for r in rows if r["sample"] == "binder-M40")
    index = json.loads((folder / "index.json").read_text(encoding="utf-8"))
    for T in (130, 150, 170):
        key = f"melt/melt-{T}.csv"
        shutil.copytree(src, folder / key)
        path, result = _result(folder, key)
        result["sample"], result["file"] = "melt", key
        result["spectrum"]["meta"] = {"sample": "melt", "temperature": f"{T} C"}
        path.write_text(json.dumps(result), encoding="utf-8")
        rows.append({**template, "file": key, "sample": "melt"})
        index["results"].append({**index["results"][0], "file": key, "folder": key})
    (folder / "index.json").write_text(json.dumps(index), encoding="utf-8")
    with open(folder / "summary.csv", "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    html = write_report(folder).read_text(encoding="utf-8")
    labels = re.findall(r'<td class="sample"[^>]*><a [^>]*><bdi>melt</bdi></a><span class="sub"><bdi>([^<]+)</bdi>',
                        html)
    assert sorted(labels) == ["130 °C", "150 °C", "170 °C"]


def test_large_archive_is_split_into_pages(demo_batch, tmp_path):
    _, out = demo_batch
    folder = _copy(out, tmp_path)
    path = write_report(folder, page_size=2)
    summary = _check(path)
    assert summary.images == 0 and summary.sections == 0  # the summary page stays small
    pages = sorted((folder / PAGES_FOLDER).glob("page-*.html"))
    assert [p.name for p in pages] == ["page-01.html", "page-02.html"]
    checked = [_check(p) for p in pages]
    assert [c.sections for c in checked] == [2, 1] and sum(c.images for c in checked) == 12
    links = re.findall(r'href="(report-pages/page-\d\d\.html#s\d+)"', path.read_text(encoding="utf-8"))
    assert len(links) == 3
    for link in links:  # every link of the table lands on its sample's section
        page, anchor = link.split("#")
        assert f'id="{anchor}"' in (folder / page).read_text(encoding="utf-8")
    assert path.stat().st_size < sum(p.stat().st_size for p in pages) / 10
    write_report(folder)  # small again: one file, and the pages of the longer report are gone
    assert not list((folder / PAGES_FOLDER).glob("page-*.html"))


def test_the_report_draws_nothing_unless_asked(demo_batch, tmp_path, capsys):
    _, out = demo_batch
    folder = _copy(out, tmp_path)
    for png in folder.rglob("*.png"):
        png.unlink()
    checker = _check(write_report(folder))
    assert checker.images == 0 and "no figures stored for this result" in " ".join(checker.text)
    assert main(["report", str(folder), "--plot", "--quiet"]) == 0
    assert capsys.readouterr().out == ""
    assert _check(folder / "report.html").images == 4 * 3
    assert not list(folder.rglob("*.png"))  # drawn for the page only, not written into the results


def test_report_command_on_an_existing_folder(demo_batch, tmp_path, capsys):
    _, out = demo_batch
    folder = _copy(out, tmp_path)
    assert main(["report", str(folder)]) == 0
    assert capsys.readouterr().out.strip().endswith("report.html")
    assert (folder / "report.html").stat().st_size > 10_000
    assert main(["report", str(folder), "--json", "--out", str(tmp_path / "elsewhere")]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d == {"report": str(tmp_path / "elsewhere" / "report.html"), "pages": []}


def test_report_refuses_a_folder_without_a_batch(tmp_path, capsys):
    assert main(["report", str(tmp_path)]) == 1
    assert "no batch summary here" in capsys.readouterr().err
    # a file or a missing folder is named as such (was 'x.csv/summary.csv: no batch summary here (Not a directory)')
    (tmp_path / "x.csv").write_text("omega,G',G''\n")
    assert main(["report", str(tmp_path / "x.csv")]) == 1
    assert capsys.readouterr().err.strip().endswith("x.csv: is a file, not a folder; give the --out folder of "
                                                    "'tauspec batch'")
    assert main(["report", str(tmp_path / "nowhere")]) == 1
    assert "nowhere: no such folder" in capsys.readouterr().err


# --------------------------------------------------------------------------- in a real browser


def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


class _Browser:
    """Headless Chromium driven through the DevTools protocol (websocket-client; no other library)."""

    def __init__(self, url: str, profile: Path, width: int):
        browser = _chromium()
        if browser is None:
            pytest.skip("no chromium on this machine (.ci/run installs Debian's chromium; it could not be installed)")
        self.websocket = pytest.importorskip("websocket", reason="websocket-client is part of the test extra")
        self.proc = subprocess.Popen(
            [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync", "--hide-scrollbars",
             f"--user-data-dir={profile}", "--remote-debugging-port=0", "--remote-allow-origins=*",
             f"--window-size={width},900", "about:blank"],
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        self.counter = iter(range(1, 100000))
        deadline = time.time() + 60
        port_file = profile / "DevToolsActivePort"
        while not port_file.exists() and time.time() < deadline:
            time.sleep(0.2)
        port = int(port_file.read_text().split()[0])
        pages = []
        while time.time() < deadline and not pages:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=10) as r:
                pages = [p for p in json.load(r) if p.get("type") == "page"]
            time.sleep(0.2)
        self.ws = self.websocket.create_connection(pages[0]["webSocketDebuggerUrl"], timeout=60)
        self.call("Emulation.setDeviceMetricsOverride", width=width, height=900, deviceScaleFactor=1, mobile=False)
        self.call("Page.enable")
        self.call("Page.navigate", url=url)
        while time.time() < deadline and not (self.evaluate("document.readyState") == "complete"
                                              and self.evaluate("document.querySelectorAll('#summary tbody tr')"
                                                                ".length")):
            time.sleep(0.1)

    def call(self, method, **params):
        i = next(self.counter)
        self.ws.send(json.dumps({"id": i, "method": method, "params": params}))
        while True:
            msg = json.loads(self.ws.recv())
            if msg.get("id") == i:
                return msg.get("result", {})

    def evaluate(self, expr, *, wait=False):
        out = self.call("Runtime.evaluate", expression=expr, returnByValue=True, awaitPromise=wait)
        assert "exceptionDetails" not in out, out
        return out["result"].get("value")

    def close(self):
        try:
            self.ws.close()
        finally:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()


@pytest.fixture(scope="module")
def wide_batch(demo_batch, tmp_path_factory):
    """The demo batch with a long unbroken file name and a long error: what cut the table's last column."""
    _, out = demo_batch
    folder = tmp_path_factory.mktemp("wide") / "batch"
    shutil.copytree(out, folder)
    rows = _rows(folder)
    long_name = "archive-2026/" + "lot_" * 14 + "final.csv"
    rows.append({**{k: "" for k in rows[0]}, "file": long_name, "status": "error",
                 "error": f"{long_name}:4: " + "row has 2 values but the header names 3 columns; " * 3})
    with open(folder / "summary.csv", "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    write_report(folder)
    return folder


ROWS = "Array.from(document.querySelectorAll('#summary tbody tr'))"


@pytest.mark.parametrize("width", [1280, 1920])
def test_browser_sorts_filters_and_clips_nothing(wide_batch, tmp_path, width):
    b = _Browser((wide_batch / "report.html").resolve().as_uri(), tmp_path / "profile", width)
    try:
        # nothing wider than the window: no column cut off, no sideways scrolling
        assert b.evaluate("window.innerWidth") == width
        assert b.evaluate("document.documentElement.scrollWidth") <= width
        wrap = "document.querySelector('.table-wrap')"
        assert b.evaluate(f"{wrap}.scrollWidth <= {wrap}.clientWidth")
        right = b.evaluate(f"{wrap}.getBoundingClientRect().right")
        cells = b.evaluate("Array.from(document.querySelectorAll('#summary th, #summary td'))"
                           ".map(c => [c.getBoundingClientRect().right, c.scrollWidth - c.clientWidth])")
        assert all(r <= right + 0.5 and over <= 1 for r, over in cells), max(cells)
        # the page's full screenshot is exactly the window's width (a clipped column would widen the layout)
        metrics = b.call("Page.getLayoutMetrics")
        assert metrics["cssContentSize"]["width"] <= width
        shot = b.call("Page.captureScreenshot", format="png", captureBeyondViewport=True,
                      clip={"x": 0, "y": 0, "width": metrics["cssContentSize"]["width"],
                            "height": min(metrics["cssContentSize"]["height"], 4000), "scale": 1})["data"]
        png = base64.b64decode(shot)
        assert png[:8] == b"\x89PNG\r\n\x1a\n" and int.from_bytes(png[16:20], "big") <= width
        (tmp_path / f"report-{width}.png").write_bytes(png)
        # every figure at its own aspect ratio (the images load lazily: load them all first)
        ratios = b.evaluate("const imgs = Array.from(document.querySelectorAll('.figs img'));"
                            "Promise.all(imgs.map(i => { i.loading = 'eager'; return i.decode(); })).then(() => "
                            "imgs.map(i => [i.naturalWidth / i.naturalHeight, i.clientWidth / i.clientHeight]))",
                            wait=True)
        assert ratios and all(abs(a / c - 1) < 0.02 for a, c in ratios), ratios

        names = f"{ROWS}.filter(r => r.dataset.status === 'ok').map(r => r.cells[0].getAttribute('data-sort'))"
        status = f"{ROWS}.map(r => r.dataset.status)"
        before = b.evaluate(names)
        b.evaluate("document.querySelector('#summary thead th').click(); 0")
        assert b.evaluate(names) == sorted(before)
        b.evaluate("document.querySelector('#summary thead th').click(); 0")
        assert b.evaluate(names) == sorted(before)[::-1]
        for _ in range(2):  # the time column (τ_R, τ_d) both ways: numbers in order, blanks and failures last
            b.evaluate("document.querySelectorAll('#summary thead th')[3].click(); 0")
            sts = b.evaluate(status)
            assert sts == sorted(sts, key=lambda s: s != "ok")  # failed rows last whatever the sort
            keys = b.evaluate(f"{ROWS}.filter(r => r.dataset.status === 'ok')"
                              ".map(r => r.cells[3].getAttribute('data-sort'))")
            numbers = [float(k) for k in keys if k]
            assert all(keys[: len(numbers)]) and numbers in (sorted(numbers), sorted(numbers)[::-1])
        # the status filter beside the verdict filter
        visible = f"{ROWS}.filter(r => r.style.display !== 'none').map(r => r.dataset.status)"
        b.evaluate("var s = document.getElementById('status-filter'); s.value = 'failed';"
                   "s.dispatchEvent(new Event('change')); 0")
        assert set(b.evaluate(visible)) == {"failed"} and len(b.evaluate(visible)) == 2
        assert b.evaluate("Array.from(document.querySelectorAll('section.sample'))"
                          ".every(s => s.style.display === 'none')")
        b.evaluate("var s = document.getElementById('status-filter'); s.value = '';"
                   "s.dispatchEvent(new Event('change')); var v = document.getElementById('verdict-filter');"
                   "v.value = 'rouse'; v.dispatchEvent(new Event('change')); 0")
        assert b.evaluate(f"{ROWS}.filter(r => r.style.display !== 'none').map(r => r.dataset.verdict)") == ["rouse"]
    finally:
        b.close()


def test_a_summary_cell_never_shows_an_interval_end_as_the_value():
    # the same rule as the text (test_an_interval_end_never_reads_as_the_value): "1e3 [995, 1e3]" before
    from tauspec.output.report_html import _cell

    cell = _cell("G0", 1000.2, (995.3, 1004.9))
    assert "</span>1000<span" in cell and "[995.3, 1005]" in cell
