"""The pieces of the batch report's HTML: style, script, the summary row and the section of one sample.

Everything a result or a file name contributes goes through :func:`text` (escaped, and isolated from the
surrounding text's direction); numbers are rounded for reading with their units (:mod:`tauspec.output.words`).
"""

from __future__ import annotations

import base64
import html
import math
from collections.abc import Iterable, Mapping, Sequence
from pathlib import PurePosixPath
from typing import Any

from .diagnosis_words import entanglement_lines
from .words import (
    LEFT_OUT,
    QUANTITIES,
    counted,
    error_words,
    evidence_line,
    gel_exponent,
    interval,
    key_numbers,
    number,
    plain_words,
    quantity,
    telling_digits,
    zero_shear_viscosity,
)
from .words import is_finite_number as _finite

__all__ = ["CSS", "SCRIPT", "text", "row_html", "section_html", "legend_html", "label_of",
           "HEADERS", "FIGURE_ORDER"]

CSS = """
*{box-sizing:border-box}
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0;color:#1d2327;background:#fafaf7}
header{background:#24394d;color:#f3f1ea;padding:1rem 2rem}
header h1{margin:0;font-size:1.3rem;font-weight:600;letter-spacing:.02em}
header p{margin:.3rem 0 0;font-size:.9rem;opacity:.85}
header a{color:#f3f1ea}
main{padding:1rem 2rem 3rem;max-width:1560px;margin:0 auto}
h2{font-size:1.1rem;border-bottom:2px solid #d6d2c4;padding-bottom:.2rem;margin-top:2rem}
.table-wrap{width:100%;overflow-x:auto}
table{border-collapse:collapse;font-size:.84rem;width:100%;background:#fff}
th,td{padding:.3rem .45rem;border-bottom:1px solid #e6e3da;text-align:left;vertical-align:top}
th{background:#efece3;cursor:pointer;user-select:none;white-space:nowrap;font-weight:600}
th:hover{background:#e3dfd2}
th.asc::after{content:" \\25B2";font-size:.7em}th.desc::after{content:" \\25BC";font-size:.7em}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
td.sample{min-width:10em;max-width:22em;overflow-wrap:anywhere}
td.notes{min-width:14em;overflow-wrap:anywhere}
.sub{display:block;font-size:.74rem;color:#6b6f72;font-weight:normal;overflow-wrap:anywhere}
.sym{color:#6b6f72;font-size:.78rem;margin-right:.2em}
tr.failed td{color:#8a2d14}
.badge{display:inline-block;padding:.05rem .45rem;border-radius:.7rem;font-size:.78rem;background:#e7e4d9;
white-space:nowrap}
.v-rouse{background:#d7ead3}.v-zimm{background:#d5e3f0}.v-entangled{background:#efe0c8}
.v-gel{background:#ead5e6}.v-inconclusive,.v-other{background:#e4e4e4}.s-failed{background:#f3d9cf}
.controls{margin:.6rem 0;font-size:.9rem;display:flex;flex-wrap:wrap;gap:.4rem 1.2rem;align-items:center}
dl.legend{display:grid;grid-template-columns:max-content 1fr;gap:.15rem .8rem;font-size:.82rem;margin:.8rem 0}
dl.legend dt{font-weight:600}dl.legend dd{margin:0;color:#3b4045}
section.sample{background:#fff;border:1px solid #e6e3da;border-radius:6px;padding:.4rem 1.2rem 1rem;margin:1.2rem 0}
section.sample h3{margin:.6rem 0 .3rem;font-size:1rem}
.figs{display:flex;flex-wrap:wrap;gap:.8rem;align-items:flex-start;margin:.6rem 0}
.figs img{max-width:100%;height:auto;border:1px solid #eee}
ul.numbers{list-style:none;padding:0;margin:.4rem 0;font-size:.9rem;columns:2 24em}ul.numbers li{break-inside:avoid}
ul.evidence{font-size:.84rem;list-style:none;padding-left:.4rem;margin:.3rem 0}
ul.evidence li.fail{color:#8a2d14}ul.evidence li.none{color:#6b6f72}
details summary{cursor:pointer;font-size:.88rem;margin-top:.4rem}
.muted{color:#6b6f72;font-size:.85rem}
.caution{font-size:.82rem;color:#5a4a2a;background:#f6efdc;padding:.5rem .8rem;border-radius:4px}
nav.pages{font-size:.9rem;margin:.6rem 0}nav.pages a{margin-right:.8rem}
"""

# Sorting and filtering: a few lines of plain JavaScript, no library.  Failed rows stay last whatever the sort;
# empty cells sort after numbers and text in either direction.
SCRIPT = """
(function(){
  var table=document.getElementById('summary');
  if(!table)return;
  var body=table.tBodies[0];
  function key(td){var v=td.getAttribute('data-sort');if(v===null)v=td.textContent.trim();
    var n=parseFloat(v);return (v!==''&&!isNaN(n)&&isFinite(v))?[0,n]:[v===''?2:1,v.toLowerCase()];}
  function failed(r){return r.getAttribute('data-status')!=='ok'?1:0;}
  Array.prototype.forEach.call(table.tHead.rows[0].cells,function(th,i){
    th.addEventListener('click',function(){
      var asc=!th.classList.contains('asc');
      Array.prototype.forEach.call(table.tHead.rows[0].cells,function(h){h.classList.remove('asc','desc');});
      th.classList.add(asc?'asc':'desc');
      var rows=Array.prototype.slice.call(body.rows);
      rows.sort(function(r1,r2){
        var f=failed(r1)-failed(r2);if(f!==0)return f;
        var a=key(r1.cells[i]),b=key(r2.cells[i]);
        if(a[0]!==b[0]&&(a[0]===2||b[0]===2))return a[0]-b[0];
        var c=a[0]!==b[0]?a[0]-b[0]:(a[1]<b[1]?-1:a[1]>b[1]?1:0);return asc?c:-c;});
      rows.forEach(function(r){body.appendChild(r);});
    });
  });
  var verdict=document.getElementById('verdict-filter'),status=document.getElementById('status-filter');
  function show(el){return (verdict.value===''||el.getAttribute('data-verdict')===verdict.value)&&
    (status.value===''||el.getAttribute('data-status')===status.value);}
  function filter(){
    Array.prototype.forEach.call(body.rows,function(r){r.style.display=show(r)?'':'none';});
    Array.prototype.forEach.call(document.querySelectorAll('section.sample'),function(s){
      s.style.display=show(s)?'':'none';});
  }
  verdict.addEventListener('change',filter);status.addEventListener('change',filter);
})();
"""

#: The columns of the summary table: (header, tooltip).
HEADERS = (
    ("sample", "sample name, temperature and file"),
    ("status", "ok, failed, or left out (a block that is not a frequency sweep), with the reason in the last column"),
    ("verdict", "the diagnosis: rouse, zimm, entangled, gel, other or inconclusive"),
    ("time [s]", "τ_R for bead-spring chains, τ_d for entangled samples (see the legend)"),
    ("modulus [Pa]", "G0 for bead-spring chains, G_N⁰ for entangled samples"),
    ("a, n or M_e", "mode exponent a (bead-spring), gel exponent n, or M_e and Z (entangled)"),
    ("η0 [Pa·s]", "zero-shear viscosity from the Maxwell modes"),
    ("rms [%]", "relative rms residual of the spectrum's fit"),
    ("notes", "the reason of a failure, or the cautions of a result"),
)

#: Figures of a result folder in the order shown, with their alternative text.
FIGURE_ORDER = (("fit", "data and fit of G′ and G″, with the residuals"),
                ("spectrum", "relaxation spectrum H(τ) with its supported window and the Maxwell modes"),
                ("diagnosis", "bead-spring diagnosis: chain fits, mode times and the Rouse slope of H(τ)"),
                ("lcurve", "L-curve of the regularization strength"))


def text(value: Any) -> str:
    """Text from a result or a file name, escaped for HTML and isolated from the surrounding direction."""
    return f"<bdi>{html.escape(str(value))}</bdi>" if value not in (None, "") else ""


def label_of(row: Mapping[str, str], result: Mapping[str, Any]) -> tuple[str, str]:
    """(sample name, "25 C · block 2") of a row: the name, and the temperature and block when known."""
    meta = ((result.get("spectrum") or {}).get("meta") or {}) if isinstance(result, Mapping) else {}
    name = row.get("sample") or result.get("sample") or PurePosixPath(row.get("file", "")).stem
    parts = []
    if meta.get("temperature"):
        parts.append(str(meta["temperature"]).replace(" C", " °C") if " C" in str(meta["temperature"])
                     else str(meta["temperature"]))
    block = result.get("block") or meta.get("block")
    if block not in (None, ""):
        parts.append(f"block {block}")
        name = str(name).removesuffix(f"#{block}")  # the block is said beside the name
    return str(name), " · ".join(parts)


def _cell(key: str | None, value: Any, ci: Any = None) -> str:
    """A numeric cell: the symbol, the rounded value and its interval below; sorted by the value."""
    if key is None or not _finite(value):
        return '<td class="num" data-sort=""></td>'
    sym = QUANTITIES[key][0] if key in QUANTITIES else key
    digits = telling_digits(value, ci, 3)
    iv = interval(ci, digits)
    return (f'<td class="num" data-sort="{float(value)!r}"><span class="sym">{html.escape(sym)}</span>'
            f'{number(value, digits)}' + (f'<span class="sub">{iv}</span>' if iv else "") + "</td>")


def _third_cell(diag: Mapping[str, Any]) -> str:
    verdict = diag.get("verdict")
    if verdict in ("rouse", "zimm"):
        return _cell("alpha", diag.get("alpha"), diag.get("alpha_ci"))
    if verdict == "gel":
        return _cell("n", gel_exponent(diag), diag.get("n_ci"))
    if verdict == "entangled" and _finite(diag.get("Me")):
        z = f'<span class="sub">Z {number(diag["Z"])}</span>' if _finite(diag.get("Z")) else ""
        return (f'<td class="num" data-sort="{float(diag["Me"])!r}"><span class="sym">M_e</span>'
                f'{number(diag["Me"])} g/mol{z}</td>')
    return '<td class="num" data-sort=""></td>'


def symbols_used(diag: Mapping[str, Any]) -> set[str]:
    """The symbols a row shows (for the legend)."""
    verdict = diag.get("verdict")
    used = {"eta0", "residual_rms"}
    if verdict in ("rouse", "zimm"):
        used |= {"tau_R", "G0", "alpha"}
    elif verdict == "entangled":
        used |= {k for k in ("GN0", "tau_d", "Me", "Z") if _finite(diag.get(k))}
    elif verdict == "gel":
        used |= {"n"} | ({"S"} if _finite(diag.get("S")) else set())
    return used


def row_html(row: Mapping[str, str], result: Mapping[str, Any], href: str) -> str:
    """One row of the summary table."""
    diag = result.get("diagnosis") or {}
    ok = row.get("status") == "ok"
    state = "ok" if ok else LEFT_OUT if row.get("status") == LEFT_OUT else "failed"
    verdict = row.get("verdict", "") or ""
    name, where = label_of(row, result)
    link = f'<a href="{html.escape(href)}">{text(name)}</a>' if ok and href else text(name)
    sub = "".join(f'<span class="sub">{text(s)}</span>' for s in (where, row.get("file", "")) if s)
    cells = [f'<td class="sample" data-sort="{html.escape(name.lower())}">{link}{sub}</td>',
             f'<td><span class="badge{" s-failed" if state == "failed" else ""}">{state}</span></td>',
             f'<td><span class="badge v-{html.escape(verdict)}">{text(verdict)}</span></td>' if verdict
             else "<td></td>"]
    if diag.get("verdict") in ("rouse", "zimm"):
        cells += [_cell("tau_R", diag.get("tau_R"), diag.get("tau_R_ci")), _cell("G0", diag.get("G0"),
                                                                                 diag.get("G0_ci"))]
    elif diag.get("verdict") == "entangled":
        cells += [_cell("tau_d", diag.get("tau_d"), diag.get("tau_d_ci")),
                  _cell("GN0", diag.get("GN0"), diag.get("GN0_ci"))]
    elif diag.get("verdict") == "gel" and _finite(diag.get("S")):
        cells += [_cell(None, None), _cell("S", diag.get("S"), diag.get("S_ci"))]
    else:
        cells += [_cell(None, None), _cell(None, None)]
    cells.append(_third_cell(diag))
    eta0, why = zero_shear_viscosity(result.get("derived") or {})
    cells.append(f'<td class="num" data-sort="{float(eta0)!r}">{number(eta0)}</td>' if _finite(eta0)
                 else f'<td class="num" data-sort="" title="{html.escape(why)}"></td>')
    rms = row.get("residual_rms")
    cells.append(f'<td class="num" data-sort="{html.escape(rms)}">{100 * float(rms):.1f}</td>' if _finite(rms)
                 else '<td class="num" data-sort=""></td>')
    if ok:
        notes = [plain_words(n) for n in (result.get("notes") or [])]
        note = (f"{len(notes)} caution{'s' if len(notes) > 1 else ''}: " + _short(notes[0])) if notes else ""
    else:
        note = error_words(row.get("error", ""), row.get("file", ""))
    cells.append(f'<td class="notes">{text(note)}</td>')
    kind = state.replace(" ", "-")  # ok, failed, left-out
    return (f'<tr class="{kind}" data-status="{kind}" '
            f'data-verdict="{html.escape(verdict)}">' + "".join(cells) + "</tr>")


def _short(s: str, n: int = 110) -> str:
    return s if len(s) <= n else s[: n - 1].rstrip() + "…"


def legend_html(symbols: Iterable[str]) -> str:
    """A definition list of every symbol the table shows."""
    order = ["tau_R", "G0", "alpha", "tau_d", "GN0", "Me", "Z", "n", "S", "eta0", "residual_rms"]
    used = [k for k in order if k in set(symbols)]
    if not used:
        return ""
    items = "".join(f"<dt>{html.escape(QUANTITIES[k][0])}</dt><dd>{html.escape(QUANTITIES[k][1])}"
                    + (f" [{html.escape(QUANTITIES[k][2])}]" if QUANTITIES[k][2] else "") + "</dd>" for k in used)
    return f'<dl class="legend">{items}<dt>[…]</dt><dd>95 % interval, below a value</dd></dl>'


def _png_size(data: bytes) -> tuple[int, int] | None:
    """(width, height) in pixels from a PNG's header (RFC 2083: the IHDR chunk follows the signature)."""
    if len(data) >= 24 and data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR":
        return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    return None


def figures_html(figures: Sequence[tuple[str, bytes]]) -> str:
    """The figures as embedded PNG images at their own aspect ratio (shown at 3/4 of their pixel size)."""
    alts = dict(FIGURE_ORDER)
    parts = []
    for stem, data in figures:
        size = _png_size(data)
        dims = f' width="{round(0.75 * size[0])}" height="{round(0.75 * size[1])}"' if size else ""
        parts.append(f'<img alt="{html.escape(alts.get(stem, stem))}"{dims} loading="lazy" decoding="async" '
                     f'src="data:image/png;base64,'
                     f'{base64.b64encode(data).decode("ascii")}">')
    return f'<div class="figs">{"".join(parts)}</div>' if parts else ""


def _evidence_html(diag: Mapping[str, Any]) -> str:
    ev = [e for e in (diag.get("evidence") or []) if isinstance(e, Mapping)]
    if not ev:
        return ""
    lines = [evidence_line(e) for e in ev]
    counts = (sum(p is True for _, p in lines), sum(p is False for _, p in lines), sum(p is None for _, p in lines))
    lis = "".join(f'<li class="{"pass" if p is True else "fail" if p is False else "none"}">'
                  f'{"✓" if p is True else "✗" if p is False else "–"} {html.escape(t)}</li>' for t, p in lines)
    return (f"<details open><summary>Evidence: {counts[0]} tests passed, {counts[1]} failed, {counts[2]} not made"
            f'</summary><ul class="evidence">{lis}</ul></details>')


def _facts(result: Mapping[str, Any]) -> list[str]:
    spec = result.get("spectrum") or {}
    facts = []
    if spec:
        lo, hi = (spec.get("window") or [math.nan, math.nan])[:2]
        facts.append(f"supported window τ = {number(lo)}–{number(hi)} s")
        rule = {"lcurve": "L-curve corner", "gcv": "GCV minimum", "fixed": "given"}.get(spec.get("select"),
                                                                                         spec.get("select"))
        facts.append(f"λ = {number(spec.get('lambda'))} ({rule})")
        facts.append(f"η_s = {number(spec.get('eta_s'))} Pa·s (Newtonian high-frequency contribution: solvent plus "
                     "modes faster than the window; the solvent itself: see the diagnosis)")
        if _finite(spec.get("residual_rms")):
            facts.append(f"rms residual {100 * float(spec['residual_rms']):.1f} %")
    modes = result.get("modes") or {}
    if modes.get("g") is not None:
        facts.append(counted(len(modes["g"]), "Maxwell mode"))
    return facts


def section_html(anchor: str, row: Mapping[str, str], result: Mapping[str, Any],
                 figures: Sequence[tuple[str, bytes]], figures_note: str = "") -> str:
    """The section of one processed sample: statement, key numbers, figures, evidence, cautions."""
    diag = result.get("diagnosis") or {}
    verdict = row.get("verdict", "") or ""
    name, where = label_of(row, result)
    parts = [f'<section class="sample" id="{anchor}" data-verdict="{html.escape(verdict)}" data-status="ok">',
             f"<h3>{text(name)} " + (f'<span class="muted">{text(where)}</span> ' if where else "")
             + (f'<span class="badge v-{html.escape(verdict)}">{text(verdict)}</span>' if verdict else "") + "</h3>",
             f'<p class="muted">{text(row.get("file", ""))}</p>']
    if diag.get("statement"):
        parts.append(f"<p>{text(plain_words(diag['statement']))}</p>")
    numbers = [quantity(k, v, ci) for k, v, ci in key_numbers(diag) if _finite(v)] + entanglement_lines(diag)
    eta0, why = zero_shear_viscosity(result.get("derived") or {})
    if _finite(eta0):
        numbers.append(quantity("eta0", eta0))
    elif why:
        numbers.append(why)
    if numbers:
        parts.append('<ul class="numbers">' + "".join(f"<li>{html.escape(n)}</li>" for n in numbers) + "</ul>")
    parts.append(figures_html(figures) or f'<p class="muted">{html.escape(figures_note)}</p>')
    parts.append(_evidence_html(diag))
    facts = _facts(result)
    if facts:
        parts.append(f'<p class="muted">{html.escape("; ".join(facts))}</p>')
    notes = list(dict.fromkeys(plain_words(n) for n in (result.get("notes") or []) + list(diag.get("notes") or [])))
    if notes:
        parts.append("<details><summary>Cautions and notes (" + str(len(notes)) + ')</summary><ul class="evidence">'
                     + "".join(f"<li>{text(n)}</li>" for n in notes) + "</ul></details>")
    parts.append("</section>")
    return "".join(parts)
