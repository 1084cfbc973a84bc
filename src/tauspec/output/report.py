"""The batch report: one self-contained HTML file a rheologist browses.

:func:`write_report` reads a batch output folder (``summary.csv`` and each
sample's ``result.json``, one at a time) and writes ``report.html``: a summary
table sortable by clicking a column header, a filter by verdict, one section
per sample with its figures (embedded: PNG as base64 where the batch wrote
them, otherwise SVG drawn here from the stored result) and its evidence list,
and the failed files with their reasons.  No network access, no external
script or style sheet.
"""

from __future__ import annotations

import base64
import csv
import html
import io
import math
import os
import re
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from ..data.write import atomic_write_text
from ..errors import TauspecError
from .results import read_result_json, spectrum_from_result

__all__ = ["write_report", "REPORT_NAME"]


REPORT_NAME = "report.html"

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0;color:#1d2327;background:#fafaf7}
header{background:#24394d;color:#f3f1ea;padding:1.1rem 2rem}
header h1{margin:0;font-size:1.35rem;font-weight:600;letter-spacing:.02em}
header p{margin:.3rem 0 0;font-size:.9rem;opacity:.85}
main{padding:1rem 2rem 3rem;max-width:1200px}
h2{font-size:1.1rem;border-bottom:2px solid #d6d2c4;padding-bottom:.2rem;margin-top:2rem}
table{border-collapse:collapse;font-size:.86rem;width:100%;background:#fff}
th,td{padding:.32rem .55rem;border-bottom:1px solid #e6e3da;text-align:left;vertical-align:top}
th{background:#efece3;cursor:pointer;user-select:none;white-space:nowrap}
th:hover{background:#e3dfd2}
th.asc::after{content:" \\25B2";font-size:.7em}th.desc::after{content:" \\25BC";font-size:.7em}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
tr.error td{color:#8a2d14}
.verdict{display:inline-block;padding:.05rem .45rem;border-radius:.7rem;font-size:.8rem;background:#e7e4d9}
.v-rouse{background:#d7ead3}.v-zimm{background:#d5e3f0}.v-entangled{background:#efe0c8}
.v-gel{background:#ead5e6}.v-inconclusive,.v-other{background:#e4e4e4}
.controls{margin:.6rem 0;font-size:.9rem}
section.sample{background:#fff;border:1px solid #e6e3da;border-radius:6px;padding:.4rem 1.2rem 1rem;margin:1.2rem 0}
section.sample h3{margin:.6rem 0 .3rem;font-size:1rem}
.figs{display:flex;flex-wrap:wrap;gap:.8rem}.figs img,.figs svg{max-width:360px;height:auto;border:1px solid #eee}
ul.evidence{font-size:.85rem;padding-left:1.1rem}ul.evidence li.fail{color:#8a2d14}
.muted{color:#6b6f72;font-size:.85rem}
.caution{font-size:.82rem;color:#5a4a2a;background:#f6efdc;padding:.5rem .8rem;border-radius:4px}
"""

# Sorting and filtering: a few lines of plain JavaScript, no library.
_JS = """
(function(){
  var table=document.getElementById('summary');
  var body=table.tBodies[0];
  function key(td){var v=td.getAttribute('data-sort');if(v===null)v=td.textContent.trim();
    var n=parseFloat(v);return (v!==''&&!isNaN(n)&&isFinite(v))?[0,n]:[v===''?2:1,v.toLowerCase()];}
  function cmp(a,b){if(a[0]!==b[0])return a[0]-b[0];return a[1]<b[1]?-1:a[1]>b[1]?1:0;}
  Array.prototype.forEach.call(table.tHead.rows[0].cells,function(th,i){
    th.addEventListener('click',function(){
      var asc=!th.classList.contains('asc');
      Array.prototype.forEach.call(table.tHead.rows[0].cells,function(h){h.classList.remove('asc','desc');});
      th.classList.add(asc?'asc':'desc');
      var rows=Array.prototype.slice.call(body.rows);
      rows.sort(function(r1,r2){var c=cmp(key(r1.cells[i]),key(r2.cells[i]));return asc?c:-c;});
      rows.forEach(function(r){body.appendChild(r);});
    });
  });
  var sel=document.getElementById('verdict-filter');
  sel.addEventListener('change',function(){
    Array.prototype.forEach.call(body.rows,function(r){
      r.style.display=(sel.value===''||r.getAttribute('data-verdict')===sel.value)?'':'none';});
    Array.prototype.forEach.call(document.querySelectorAll('section.sample'),function(s){
      s.style.display=(sel.value===''||s.getAttribute('data-verdict')===sel.value)?'':'none';});
  });
})();
"""

_COLUMNS = [
    ("sample", "sample", False),
    ("status", "status", False),
    ("verdict", "verdict", False),
    ("tau_R", "τ_R [s]", True),
    ("G0", "G0 [Pa]", True),
    ("alpha", "a", True),
    ("eta0", "η0 [Pa·s]", True),
    ("lambda", "λ", True),
    ("file", "file", False),
    ("error", "error / cautions", False),
]


def _fmt(v: Any, digits: int = 3) -> str:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return ""
    return f"{f:.{digits}g}" if math.isfinite(f) else ""


def _read_summary(folder: Path) -> list[dict[str, str]]:
    path = folder / "summary.csv"
    try:
        with open(path, newline="", encoding="utf-8") as fh:
            return list(csv.DictReader(fh))
    except OSError as exc:
        raise TauspecError(f"no batch summary here ({exc.strerror or exc}); run 'tauspec batch' first",
                           str(path)) from None


def _result_folder(folder: Path, file: str) -> Path | None:
    """The stored result folder of an input file: its path without the suffix, or with it (batch layout)."""
    for key in (os.path.splitext(file)[0], file):
        if key and (folder / key / "result.json").is_file():
            return folder / key
    return None


def _load(path: Path) -> dict[str, Any]:
    try:
        return read_result_json(path)
    except TauspecError:
        return {}


def _interval(d: Mapping[str, Any], key: str) -> str:
    ci = d.get(f"{key}_ci")
    if isinstance(ci, list | tuple) and len(ci) == 2 and all(_fmt(c) for c in ci):
        return f" [{_fmt(ci[0])}, {_fmt(ci[1])}]"
    return ""


def _row_html(row: Mapping[str, str], result: Mapping[str, Any], anchor: str) -> str:
    diag = result.get("diagnosis") or {}
    verdict = row.get("verdict", "") or ""
    cells = []
    for key, _, numeric in _COLUMNS:
        value = row.get(key, "") or ""
        if key == "sample":
            label = html.escape(value or Path(row.get("file", "")).stem)
            cells.append(f'<td><a href="#{anchor}">{label}</a></td>' if row.get("status") == "ok"
                         else f"<td>{label}</td>")
        elif key == "verdict":
            cells.append(f'<td><span class="verdict v-{html.escape(verdict)}">{html.escape(verdict)}</span></td>'
                         if verdict else "<td></td>")
        elif key == "tau_R" and value:
            cells.append(f'<td class="num" data-sort="{html.escape(value)}">{_fmt(value)}'
                         f'<span class="muted">{html.escape(_interval(diag, "tau_R"))}</span></td>')
        elif numeric:
            cells.append(f'<td class="num" data-sort="{html.escape(value)}">{_fmt(value)}</td>')
        elif key == "error":
            text = value or "; ".join(str(n) for n in (result.get("notes") or [])[:2])
            cells.append(f"<td>{html.escape(text)}</td>")
        else:
            cells.append(f"<td>{html.escape(value)}</td>")
    cls = ' class="error"' if row.get("status") != "ok" else ""
    return f'<tr{cls} data-verdict="{html.escape(verdict)}">' + "".join(cells) + "</tr>"


def _svg(fig: Any) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg")
    text = buf.getvalue()
    text = text[text.index("<svg"):]  # drop the XML prolog and doctype inside HTML
    text = re.sub(r"<metadata>.*?</metadata>", "", text, flags=re.S)  # creator links, dates
    return re.sub(r"<!--.*?-->", "", text, flags=re.S)


def _figures_html(folder: Path, result: Mapping[str, Any]) -> str:
    pngs = sorted(p for p in folder.glob("*.png"))
    if pngs:
        return "".join(
            f'<img alt="{html.escape(p.stem)}" src="data:image/png;base64,'
            f'{base64.b64encode(p.read_bytes()).decode("ascii")}">' for p in pngs)
    spec = result.get("spectrum")
    try:
        view = spectrum_from_result(result)
    except TauspecError:
        return '<p class="muted">no figures stored</p>'
    import matplotlib as mpl

    from .figures.spectrum import STYLE, fit_figure, new_axes, plot_spectrum

    parts = []
    with mpl.rc_context(STYLE):
        parts.append(_svg(fit_figure(view, height=3.4)))
        band = None
        if "H_lo" in spec and "H_hi" in spec:
            band = (np.asarray(spec["H_lo"], dtype=float), np.asarray(spec["H_hi"], dtype=float))
        fig, ax = new_axes()
        plot_spectrum(view, ax, band=band)
        parts.append(_svg(fig))
    return "".join(parts)


def _evidence_html(result: Mapping[str, Any]) -> str:
    diag = result.get("diagnosis") or {}
    items = []
    if diag.get("statement"):
        items.append(f"<p>{html.escape(str(diag['statement']))}</p>")
    ev = diag.get("evidence") or []
    if ev:
        lis = []
        for e in ev:
            if not isinstance(e, dict):
                continue
            ok = e.get("passed")
            mark = "✓" if ok is True else "✗" if ok is False else "–"
            cls = ' class="fail"' if ok is False else ""
            value = _fmt(e.get("value")) or str(e.get("value", ""))
            lis.append(f"<li{cls}>{mark} {html.escape(str(e.get('test', '')))}: {html.escape(value)}"
                       f" (expected {html.escape(str(e.get('expected', '')))})</li>")
        items.append('<ul class="evidence">' + "".join(lis) + "</ul>")
    spec = result.get("spectrum") or {}
    facts = []
    if spec:
        lo, hi = (spec.get("window") or [math.nan, math.nan])[:2]
        facts.append(f"supported window τ ∈ [{_fmt(lo)}, {_fmt(hi)}] s")
        facts.append(f"λ = {_fmt(spec.get('lambda'))} ({html.escape(str(spec.get('select', '')))})")
        facts.append(f"η_s = {_fmt(spec.get('eta_s'))} Pa·s (Newtonian high-frequency contribution: solvent + "
                     "modes faster than the window; the solvent itself: see the diagnosis)")
        facts.append(f"fit rms {_fmt(100 * float(spec.get('residual_rms', math.nan)), 2)} %")
    derived = result.get("derived") or {}
    if derived.get("eta0") is not None:
        facts.append(f"η0 = {_fmt(derived.get('eta0'))} Pa·s")
    if facts:
        items.append(f'<p class="muted">{"; ".join(facts)}</p>')
    notes = result.get("notes") or []
    if notes:
        items.append('<ul class="evidence">' + "".join(f"<li>{html.escape(str(n))}</li>" for n in notes) + "</ul>")
    return "".join(items)


def _sections(folder: Path, rows: list[dict[str, str]]) -> Iterator[tuple[str, str]]:
    """Yield (table row, section) for each summary row, reading one result at a time."""
    for i, row in enumerate(rows):
        rf = _result_folder(folder, row.get("file", ""))
        result = _load(rf) if rf is not None else {}
        anchor = f"s{i}"
        tr = _row_html(row, result, anchor)
        section = ""
        if row.get("status") == "ok" and rf is not None:
            verdict = html.escape(row.get("verdict", "") or "")
            title = html.escape(row.get("sample") or Path(row.get("file", "")).stem)
            section = (f'<section class="sample" id="{anchor}" data-verdict="{verdict}"><h3>{title} '
                       f'<span class="verdict v-{verdict}">{verdict}</span></h3>'
                       f'<p class="muted">{html.escape(row.get("file", ""))}</p>'
                       f'<div class="figs">{_figures_html(rf, result)}</div>{_evidence_html(result)}</section>')
        yield tr, section


def write_report(folder: str | os.PathLike[str], *, title: str | None = None) -> Path:
    """Write ``report.html`` for a batch output folder and return its path.

    Parameters
    ----------
    folder : path-like
        The ``--out`` folder of ``tauspec batch`` (holding ``summary.csv``).
    title : str, optional
        Heading of the page; default names the folder.

    Raises
    ------
    TauspecError
        When the folder holds no batch summary.
    """
    folder = Path(folder)
    rows = _read_summary(folder)
    verdicts = sorted({r.get("verdict", "") for r in rows if r.get("verdict")})
    n_ok = sum(r.get("status") == "ok" for r in rows)
    failed = [r for r in rows if r.get("status") != "ok"]
    trs, sections = [], []
    for tr, sec in _sections(folder, rows):
        trs.append(tr)
        if sec:
            sections.append(sec)
    head = "".join(f"<th>{html.escape(label)}</th>" for _, label, _ in _COLUMNS)
    options = '<option value="">all verdicts</option>' + "".join(
        f'<option value="{html.escape(v)}">{html.escape(v)}</option>' for v in verdicts)
    fail_html = ""
    if failed:
        fail_html = "<h2>Files that failed</h2><ul>" + "".join(
            f"<li><code>{html.escape(r.get('file', ''))}</code>: {html.escape(r.get('error', ''))}</li>"
            for r in failed) + "</ul>"
    page_title = html.escape(title or f"tauspec report — {folder.resolve().name}")
    doc = f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{page_title}</title>
<style>{_CSS}</style>
</head>
<body>
<header><h1>{page_title}</h1>
<p>{len(rows)} files: {n_ok} processed, {len(failed)} failed.</p></header>
<main>
<h2>Summary</h2>
<div class="controls"><label for="verdict-filter">Show </label><select id="verdict-filter">{options}</select>
<span class="muted"> Click a column header to sort.</span></div>
<table id="summary"><thead><tr>{head}</tr></thead><tbody>
{"".join(trs)}
</tbody></table>
<p class="caution">These are model-based inferences from a finite frequency window. Check them against
independent measurements before they drive product or safety decisions.</p>
{fail_html}
<h2>Samples</h2>
{"".join(sections)}
</main>
<script>{_JS}</script>
</body>
</html>
"""
    out = folder / REPORT_NAME
    atomic_write_text(out, doc)
    return out
