"""The batch report: HTML a rheologist browses, assembled from what the batch stored.

:func:`write_report` reads a batch output folder (``summary.csv`` and each sample's ``result.json``, one at a
time) and writes ``report.html``: a summary table (sortable by a click on a column header, filtered by verdict
and by status, failed files last), a legend of every symbol in it, the failed files with their reasons, and one
section per sample with its statement, key numbers, figures and evidence.  The report draws nothing: the figures
are the PNG files the batch workers drew once (``tauspec batch --plot``); results without them say so, and
``draw=True`` (``tauspec report --plot``) draws the missing ones here instead.

A large archive keeps the summary page small: past :data:`PAGE_SIZE` samples the sections go to pages
``report-pages/page-NN.html`` beside it, which the table links to.  No network access, no external script
or style sheet: each page stands alone.
"""

from __future__ import annotations

import csv
import html
import os
import re
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path
from typing import Any

from ..data.write import atomic_write_text
from ..errors import TauspecError
from .report_html import CSS, FIGURE_ORDER, HEADERS, SCRIPT, legend_html, row_html, section_html, symbols_used, text
from .results import read_result_json, read_run_index, result_folder
from .text import BIDI_CONTROLS, show_bidi_controls, spreadsheet_value
from .words import LEFT_OUT, counted, error_words

__all__ = ["write_report", "REPORT_NAME", "PAGES_FOLDER", "PAGE_SIZE"]


REPORT_NAME = "report.html"
PAGES_FOLDER = "report-pages"
#: Samples per page: up to this many the report is one file (a few MB of figures); beyond, the sections go to
#: pages of this size, so that the summary page stays small.
PAGE_SIZE = 12

_NO_FIGURES = ("no figures stored for this result: run 'tauspec batch ... --plot' (drawn once, in the workers) "
               "or 'tauspec report --plot'")


def _read_summary(folder: Path) -> list[dict[str, str]]:
    if not folder.exists():
        raise TauspecError("no such folder; give the --out folder of 'tauspec batch'", str(folder))
    if not folder.is_dir():
        raise TauspecError("is a file, not a folder; give the --out folder of 'tauspec batch'", str(folder))
    path = folder / "summary.csv"
    try:
        with open(path, newline="", encoding="utf-8") as fh:
            return [{k: spreadsheet_value(v or "") for k, v in row.items()} for row in csv.DictReader(fh)]
    except OSError as exc:
        raise TauspecError(f"no batch summary here ({exc.strerror or exc}); run 'tauspec batch' first",
                           str(path)) from None


def _visible_bidi(doc: str) -> str:
    """The page with every bidirectional control of the user's text shown as ``<U+202E>``: none takes effect."""
    if not any(c in doc for c in BIDI_CONTROLS):
        return doc
    return "".join(html.escape(show_bidi_controls(c)) if c in BIDI_CONTROLS else c for c in doc)


def _load(path: Path) -> dict[str, Any]:
    try:
        return read_result_json(path)
    except TauspecError:
        return {}


_WARNING_PREFIX = re.compile(r"^[A-Za-z]+Warning: ")


def _clean_notes(result: dict[str, Any], file: str) -> dict[str, Any]:
    """The result with its notes in words: without the warning's class name and the file name they start with."""
    notes = []
    for n in result.get("notes") or []:
        n = _WARNING_PREFIX.sub("", str(n))
        for prefix in (f"{file}: ", f"{Path(file).name}: "):
            if n.startswith(prefix):
                n = n[len(prefix):]
        notes.append(n)
    return {**result, "notes": notes}


def _stored_figures(folder: Path) -> list[tuple[str, bytes]]:
    out = []
    for stem, _ in FIGURE_ORDER:
        path = folder / f"{stem}.png"
        if path.is_file():
            out.append((stem, path.read_bytes()))
    return out


def _drawn_figures(result: Mapping[str, Any]) -> list[tuple[str, bytes]]:
    """The figures of a stored result drawn here (``draw=True``), as PNG bytes: fit, spectrum, diagnosis, L-curve."""
    import dataclasses
    import types

    import numpy as np

    from .figures.spectrum import spectrum_figures
    from .figures.style import figure_bytes
    from .results import diagnosis_from_result, spectrum_from_result

    try:
        view = spectrum_from_result(result)
    except TauspecError:
        return []
    modes = result.get("modes") or {}
    stems = None
    if modes.get("g") is not None:
        stems = types.SimpleNamespace(g=np.asarray(modes["g"], dtype=float), tau=np.asarray(modes["tau"], dtype=float))
    figs = spectrum_figures(view, modes=stems)
    diag = diagnosis_from_result(result)
    if diag is not None:
        from .figures.diagnosis import plot_diagnosis

        diag = dataclasses.replace(diag, omega=view.omega, storage=view.storage, loss=view.loss, spectrum=view)
        figs["diagnosis"] = plot_diagnosis(diag)
    return [(stem, figure_bytes(figs[stem])) for stem, _ in FIGURE_ORDER if stem in figs]


def _samples(folder: Path, rows: list[dict[str, str]], draw: bool,
             tick: Callable[[], None]) -> Iterator[tuple[dict[str, str], dict[str, Any], str]]:
    """Yield (row, result, section) for each summary row, reading one result at a time ("" for failed files)."""
    # each file's result folder, as the run recorded it (a folder of failed files alone needs no index)
    index = read_run_index(folder) if any(r.get("status") == "ok" for r in rows) else {}
    for i, row in enumerate(rows):
        rf = result_folder(folder, index, row.get("file", ""))
        result = _clean_notes(_load(rf), row.get("file", "")) if rf is not None else {}
        section = ""
        if row.get("status") == "ok" and rf is not None:
            figures = _stored_figures(rf)
            if not figures and draw:
                figures = _drawn_figures(result)
            section = section_html(f"s{i}", row, result, figures, _NO_FIGURES)
        tick()
        yield row, result, section


def _page(title: str, body: str, *, script: bool) -> str:
    return _visible_bidi(f'<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">\n<title>{title}</title>\n'
            f"<style>{CSS}</style>\n</head>\n<body>\n{body}\n"
            + (f"<script>{SCRIPT}</script>\n" if script else "") + "</body>\n</html>\n")


def _controls(rows: list[dict[str, str]]) -> str:
    verdicts = sorted({r.get("verdict", "") for r in rows if r.get("verdict")})
    options = '<option value="">all verdicts</option>' + "".join(
        f'<option value="{html.escape(v)}">{html.escape(v)}</option>' for v in verdicts)
    return ('<div class="controls"><label>Verdict <select id="verdict-filter">' + options + "</select></label>"
            '<label>Status <select id="status-filter"><option value="">all files</option>'
            '<option value="ok">processed</option><option value="failed">failed</option>'
            '<option value="left-out">left out</option></select></label>'
            '<span class="muted">Click a column header to sort; failed files stay last.</span></div>')


def write_report(folder: str | os.PathLike[str], *, title: str | None = None, out: str | os.PathLike[str] | None = None,
                 draw: bool = False, progress: bool = False, page_size: int = PAGE_SIZE) -> Path:
    """Write ``report.html`` for a batch output folder and return its path.

    Parameters
    ----------
    folder : path-like
        The ``--out`` folder of ``tauspec batch`` (holding ``summary.csv``).
    title : str, optional
        Heading of the page; default names the folder.
    out : path-like, optional
        Folder to write the report into (default: ``folder``).
    draw : bool
        Draw the figures of results that have none stored (slow: a second or so per sample); otherwise such a
        result says how to get them.
    progress : bool
        Show a progress bar (tqdm) on stderr.
    page_size : int
        Samples per page before the sections move to pages of their own.

    Raises
    ------
    TauspecError
        When the folder holds no batch summary.
    """
    folder = Path(folder)
    target = Path(out) if out is not None else folder
    rows = sorted(_read_summary(folder), key=lambda r: r.get("status") != "ok")  # failed files last
    bar = None
    if progress and len(rows) > 1:
        import sys

        from tqdm import tqdm

        bar = tqdm(total=len(rows), unit="sample", desc="report", file=sys.stderr, leave=False)
    n_ok = sum(r.get("status") == "ok" for r in rows)
    paged = n_ok > page_size
    page_of: dict[str, int] = {}
    trs, sections, symbols = [], [], set()
    try:
        for i, (row, result, section) in enumerate(_samples(folder, rows, draw, bar.update if bar else lambda: None)):
            anchor = f"s{i}"
            if section:
                page_of[anchor] = len(sections) // page_size + 1 if paged else 0
                sections.append((anchor, row, section))
                symbols |= symbols_used(result.get("diagnosis") or {})
            href = (f"{PAGES_FOLDER}/page-{page_of[anchor]:02d}.html#{anchor}" if paged and section else
                    f"#{anchor}" if section else "")
            trs.append(row_html(row, result, href))
    finally:
        if bar is not None:
            bar.close()
    failed = [r for r in rows if r.get("status") not in ("ok", LEFT_OUT)]  # a left-out block is not a failure
    left_out = [r for r in rows if r.get("status") == LEFT_OUT]
    page_title = html.escape(title or f"tauspec report — {folder.resolve().name}")
    head = "".join(f'<th title="{html.escape(tip)}">{html.escape(label)}</th>' for label, tip in HEADERS)
    fail_html = ""
    for heading, listed in (("Files that failed", failed), ("Blocks left out (not frequency sweeps)", left_out)):
        if listed:
            fail_html += f"<h2>{heading}</h2><ul>" + "".join(
                f"<li><code>{text(r.get('file', ''))}</code>: "
                f"{text(error_words(r.get('error', ''), r.get('file', '')))}</li>" for r in listed) + "</ul>"
    n_pages = (len(sections) + page_size - 1) // page_size if paged else 0
    if paged:
        samples_html = ("<h2>Samples</h2><p>The " + str(len(sections)) + " samples are on " + str(n_pages)
                        + " pages of their own, so that this page stays small:</p><nav class=\"pages\">" + "".join(
                            f'<a href="{PAGES_FOLDER}/page-{k:02d}.html">page {k}</a>' for k in range(1, n_pages + 1))
                        + "</nav>")
    else:
        samples_html = "<h2>Samples</h2>" + "".join(sec for _, _, sec in sections)
    samples = counted(len(rows), "sample")
    also = f", {len(left_out)} left out" if left_out else ""
    body = (f"<header><h1>{page_title}</h1><p>{samples}: {n_ok} processed, {len(failed)} failed{also}.</p></header>"
            f"<main><h2>Summary</h2>{_controls(rows)}"
            f'<div class="table-wrap"><table id="summary"><thead><tr>{head}</tr></thead><tbody>{"".join(trs)}'
            f"</tbody></table></div>{legend_html(symbols)}"
            '<p class="caution">These are model-based inferences from a finite frequency window. Check them against '
            "independent measurements before they drive product or safety decisions.</p>"
            f"{fail_html}{samples_html}</main>")
    target.mkdir(parents=True, exist_ok=True)
    _write_pages(target, page_title, sections, page_size, n_pages)  # (none when not paged: old ones go)
    path = target / REPORT_NAME
    atomic_write_text(path, _page(page_title, body, script=True))
    return path


def _write_pages(target: Path, title: str, sections: list[tuple[str, dict[str, str], str]], page_size: int,
                 n_pages: int) -> None:
    """Write the sample pages (and remove pages of an earlier, longer report)."""
    pages = target / PAGES_FOLDER
    for k in range(1, n_pages + 1):
        chunk = sections[(k - 1) * page_size: k * page_size]
        nav = ('<nav class="pages"><a href="../' + REPORT_NAME + '">← summary</a>'
               + (f'<a href="page-{k - 1:02d}.html">← page {k - 1}</a>' if k > 1 else "")
               + (f'<a href="page-{k + 1:02d}.html">page {k + 1} →</a>' if k < n_pages else "") + "</nav>")
        body = (f"<header><h1>{title}</h1><p>Samples, page {k} of {n_pages}</p></header><main>{nav}"
                + "".join(sec for _, _, sec in chunk) + f"{nav}</main>")
        atomic_write_text(pages / f"page-{k:02d}.html", _page(f"{title} — page {k}", body, script=False))
    if pages.is_dir():
        for old in pages.glob("page-*.html"):
            m = re.fullmatch(r"page-(\d+)\.html", old.name)
            if m and int(m.group(1)) > n_pages:
                old.unlink()
        if n_pages == 0 and not any(pages.iterdir()):
            pages.rmdir()
