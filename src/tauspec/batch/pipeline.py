"""The pipeline step sent to the workers: one sweep file's text in, its JSON result and tables out."""

from __future__ import annotations

import os
import time
import warnings
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from ..data.read import NotAFrequencySweep, parse_sweep_text, parse_sweeps_text
from ..data.sweep import Sweep
from ..data.write import dumps_json
from ..errors import DroppedPointsWarning, SweepError, TauspecError
from ..spectrum.threads import one_thread
from .settings import BatchSettings
from .store import LEFT_OUT, _header, _sha256

__all__ = ["process"]


# --------------------------------------------------------------------------- the pipeline step


#: (result entries, {file name: CSV text}) of one pipeline step.
_StepOutput = tuple[dict[str, Any], dict[str, str]]


def _invert_step(sweep: Sweep, settings: BatchSettings, state: dict[str, Any]) -> _StepOutput:
    from ..output.tables import spectrum_tables
    from ..spectrum.invert import invert

    spectrum = invert(sweep, settings.invert)
    state["spectrum"] = spectrum
    return {"spectrum": spectrum.to_dict()}, spectrum_tables(spectrum)


def _modes_step(sweep: Sweep, settings: BatchSettings, state: dict[str, Any]) -> _StepOutput:
    from ..modes.fit import fit_modes
    from ..output.results import modes_entries
    from ..output.tables import modes_csv_text

    modes = fit_modes(sweep, state["spectrum"], settings.modes)
    state["modes"] = modes
    return modes_entries(modes, state["spectrum"]), {"modes.csv": modes_csv_text(modes)}


def _diagnose_step(sweep: Sweep, settings: BatchSettings, state: dict[str, Any]) -> _StepOutput:
    from ..analysis.diagnosis.diagnose import diagnose

    d = diagnose(sweep, settings.diagnose, spectrum=state["spectrum"])
    state["diagnosis"] = d
    return {"diagnosis": d.to_dict()}, {}


#: (name, step) in order; each step takes the sweep, the settings and the state of earlier steps and returns
#: (result entries, {file name: CSV text}).
_PIPELINE: tuple[tuple[str, Callable[..., tuple[dict[str, Any], dict[str, str]]]], ...] = (
    ("invert", _invert_step),
    ("modes", _modes_step),
    ("diagnose", _diagnose_step),
)


def _figures(state: Mapping[str, Any], formats: tuple[str, ...]) -> dict[str, bytes]:
    """The figures of one result, drawn here in the worker once: {file name: bytes}.

    ``fit``, ``spectrum`` (with the Maxwell modes as stems), ``lcurve`` and, with a diagnosis, ``diagnosis``,
    each in every format (PNG first: at a fixed pixel size, the one the report shows).
    """
    from ..output.figures.spectrum import spectrum_figures
    from ..output.figures.style import figure_bytes

    figures = spectrum_figures(state["spectrum"], modes=state.get("modes"))
    if "diagnosis" in state:
        from ..output.figures.diagnosis import plot_diagnosis

        figures["diagnosis"] = plot_diagnosis(state["diagnosis"])
    return {f"{stem}.{fmt}": figure_bytes(fig, fmt) for stem, fig in figures.items() for fmt in formats}


def _read(text: str, source: str, block: int | None, separator: str | None) -> Sweep:
    """The sweep of a file's text, or of one block of it (``source`` ends in ``#<block>``)."""
    if block is None:
        return parse_sweep_text(text, source=source, default_name=os.path.splitext(os.path.basename(source))[0],
                                separator=separator)
    file = source.removesuffix(f"#{block}")
    sweeps = parse_sweeps_text(text, source=file, default_name=os.path.splitext(os.path.basename(file))[0],
                               block=block, separator=separator)
    if len(sweeps) > 1:
        temps = ", ".join(s.meta["temperature"] for s in sweeps)
        raise SweepError(f"block {block} holds sweeps at {len(sweeps)} temperatures ({temps}); give each its own "
                         "block, or superpose them with 'tauspec master'", file)
    return sweeps[0]


def process(sweep_or_text: Sweep | str, settings: BatchSettings, *, source: str | None = None,
            input_sha256: str | None = None, block: int | None = None, separator: str | None = None,
            notes: Sequence[str] = ()) -> dict[str, Any]:
    """Run the pipeline on one sweep: read, invert (then modes and diagnosis as they become available).

    The one function sent to the workers: top level, picklable, no global
    state.  BLAS (numpy's and scipy's OpenBLAS alike) is limited to one thread
    while it runs.  Errors in the data do not raise: they come back as
    ``status="error"`` with the one-line reason, or ``status="left out"`` for a block of a file that is an
    amplitude, time or temperature sweep beside the file's frequency sweeps (as the reader leaves it out).

    Parameters
    ----------
    sweep_or_text : Sweep or str
        A sweep, or the text of a sweep file (see :func:`tauspec.data.read.parse_sweep_text`).
    settings : BatchSettings
    source : str, optional
        The name of the file, used in messages and results.
    input_sha256 : str, optional
        The sha256 of the file's bytes, recorded in the result (the resume key).
    block : int, optional
        Process only this block (1-based) of a file holding several; ``source`` then ends in ``#<block>``.
    separator : str, optional
        The file's separator when the caller has found it already (:func:`tauspec.data.read.file_layout`).
    notes : sequence of str
        Notes from reading the file (an encoding guessed), put first in the result's notes.

    Returns
    -------
    dict
        ``result`` (JSON-ready; identical for identical input and settings),
        ``files`` (name → text or bytes to write into the result folder, ``result.json``
        among them, serialized here so that the workers do that work) and ``seconds``
        (time per step; kept out of ``result``).
    """
    if isinstance(sweep_or_text, Sweep):
        source = source or sweep_or_text.source or sweep_or_text.name
    source = source or "<text>"
    result = _header(source, input_sha256, settings)
    files: dict[str, str | bytes] = {}
    seconds: dict[str, float] = {}
    caught: list[warnings.WarningMessage] = []
    t = time.perf_counter()
    try:
        with one_thread(), warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            sweep = (sweep_or_text if isinstance(sweep_or_text, Sweep)
                     else _read(sweep_or_text, source, block, separator))
            result["sample"] = sweep.name
            sweep, dropped = sweep.restrict(settings.invert.omega_min, settings.invert.omega_max)
            if dropped:
                warnings.warn(f"{source}: {dropped}", DroppedPointsWarning, stacklevel=1)
            seconds["read"] = time.perf_counter() - t
            state: dict[str, Any] = {}
            for name, step in _PIPELINE:
                if name not in settings.steps:
                    continue
                t = time.perf_counter()
                entries, tables = step(sweep, settings, state)
                result.update(entries)
                files.update(tables)
                seconds[name] = time.perf_counter() - t
            if settings.plots:
                t = time.perf_counter()
                files.update(_figures(state, settings.figure_formats))
                seconds["plots"] = time.perf_counter() - t
    except TauspecError as exc:
        if exc.source is None:
            exc = type(exc)(exc.reason, source, exc.line)
        # a block of an export beside its frequency sweeps that is an amplitude or time sweep is not a failure
        status = LEFT_OUT if isinstance(exc, NotAFrequencySweep) and block is not None else "error"
        result.update(status=status, error=exc.one_line())
    except Exception as exc:  # a bug: recorded for this file, retried on the next run
        result.update(status="error", error=f"{source}: internal error: {type(exc).__name__}: {exc}", retry=True)
    result["notes"] = list(dict.fromkeys([*notes, *(f"{w.category.__name__}: {w.message}" for w in caught)]))
    t = time.perf_counter()
    result["tables"] = {name: _sha256(text.encode("utf-8")) for name, text in sorted(files.items())
                        if name.endswith(".csv")}
    files["result.json"] = dumps_json(result) + "\n"
    seconds["json"] = time.perf_counter() - t
    return {"result": result, "files": files, "seconds": seconds}
