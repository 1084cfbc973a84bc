"""The batch report: valid, self-contained HTML; one row per file; a header click sorts (in a real browser)."""

from __future__ import annotations

import base64
import json
import os
import re
import shutil
import subprocess
import time
import urllib.request
from html.parser import HTMLParser

import pytest

from tauspec.cli.demo_archive import write_demo_archive
from tauspec.cli.main import main

VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr",
        "path", "rect", "circle", "line", "polyline", "polygon", "use", "stop", "ellipse", "image"}


class _Checker(HTMLParser):
    """Checks that every element is closed in order (a strictness the stdlib parser does not impose itself)."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.rows = 0
        self.sections = 0
        self.urls: list[str] = []
        self.in_tbody = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for key in ("src", "href"):
            if key in a and a[key] and not (a[key].startswith("#") or a[key].startswith("data:")):
                self.urls.append(a[key])
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
    code = main(["batch", str(root / "archive"), "--out", str(out), "--jobs", "1", "--quiet", "--plots", "--report"])
    assert code == 1  # the corrupted export fails, the rest succeed
    return files, out


def test_report_is_valid_self_contained_html(demo_batch):
    files, out = demo_batch
    text = (out / "report.html").read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    checker = _Checker()
    checker.feed(text)
    checker.close()
    assert not checker.errors, checker.errors[:5]
    assert checker.stack == [], checker.stack
    summary = (out / "summary.csv").read_text().strip().splitlines()[1:]
    assert checker.rows == len(files) == len(summary)
    ok = sum(",ok," in row for row in summary)
    assert checker.sections == ok == len(files) - 1
    assert checker.urls == []  # no external file, script or style
    assert not re.search(r"url\(\s*['\"]?(https?:)?//", text)
    assert "batch-22-truncated.csv" in text and "row has 2 values" in text  # the failure and its reason


def test_report_command_on_an_existing_folder(demo_batch, capsys):
    _, out = demo_batch
    (out / "report.html").unlink()
    assert main(["report", str(out)]) == 0
    assert capsys.readouterr().out.strip().endswith("report.html")
    assert (out / "report.html").stat().st_size > 10_000


def test_report_refuses_a_folder_without_a_batch(tmp_path, capsys):
    assert main(["report", str(tmp_path)]) == 1
    assert "no batch summary here" in capsys.readouterr().err


def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


def test_browser_sorts_table_on_header_click(demo_batch, tmp_path):
    browser = _chromium()
    if browser is None:
        pytest.skip("no chromium on this machine (.ci/run installs Debian's chromium; it could not be installed)")
    websocket = pytest.importorskip("websocket", reason="websocket-client is part of the test extra")
    _, out = demo_batch
    url = (out / "report.html").resolve().as_uri()
    profile = tmp_path / "profile"
    proc = subprocess.Popen(
        [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={profile}", "--remote-debugging-port=0", "--remote-allow-origins=*", url],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        port_file = profile / "DevToolsActivePort"
        deadline = time.time() + 60
        while not port_file.exists() and time.time() < deadline:
            time.sleep(0.2)
        port = int(port_file.read_text().split()[0])
        pages = []
        while time.time() < deadline:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=10) as r:
                pages = [p for p in json.load(r) if p.get("type") == "page" and p.get("url", "").startswith("file:")]
            if pages:
                break
            time.sleep(0.2)
        ws = websocket.create_connection(pages[0]["webSocketDebuggerUrl"], timeout=30)
        counter = iter(range(1, 1000))

        def call(method, **params):
            i = next(counter)
            ws.send(json.dumps({"id": i, "method": method, "params": params}))
            while True:
                msg = json.loads(ws.recv())
                if msg.get("id") == i:
                    return msg.get("result", {})

        def evaluate(expr):
            out = call("Runtime.evaluate", expression=expr, returnByValue=True)
            assert "exceptionDetails" not in out, out
            return out["result"].get("value")

        rows = "document.querySelectorAll('#summary tbody tr').length"
        while not (evaluate("document.readyState") == "complete" and evaluate(rows)) and time.time() < deadline:
            time.sleep(0.1)
        column = "Array.from(document.querySelectorAll('#summary tbody tr')).map(r => r.cells[0].textContent.trim())"
        before = evaluate(column)
        evaluate("document.querySelector('#summary thead th').click(); 0")
        ascending = evaluate(column)
        evaluate("document.querySelector('#summary thead th').click(); 0")
        descending = evaluate(column)
        assert ascending == sorted(before, key=str.lower)
        assert descending == ascending[::-1]
        # sorting a numeric column (τ_R) puts numbers in numeric order, blanks last
        evaluate("document.querySelectorAll('#summary thead th')[3].click(); 0")
        taus = evaluate("Array.from(document.querySelectorAll('#summary tbody tr'))"
                        ".map(r => r.cells[3].getAttribute('data-sort') || '')")
        numbers = [float(t) for t in taus if t]
        assert numbers == sorted(numbers) and all(t for t in taus[: len(numbers)])
        shot = call("Page.captureScreenshot", format="png")["data"]
        png = base64.b64decode(shot)
        assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 5000
        (tmp_path / "report.png").write_bytes(png)
        ws.close()
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
    assert os.path.getsize(tmp_path / "report.png") > 5000
