"""Reading frequency-sweep files: :func:`read_sweep`, :func:`read_sweeps` and their text forms.

The steps, each in its own module: the file's bytes, bounded (:mod:`.source`); the text (:mod:`.encodings`);
the separator (:mod:`.dialect`); the layout of preamble, header, units row and data rows, once or as several
blocks (:mod:`.blocks`); each header's columns and units (:mod:`.columns`, :mod:`.plan`); the values in SI
(:mod:`.table`); temperature steps (:mod:`.temperature`); the checked :class:`~tauspec.data.sweep.Sweep`
(:mod:`.build`).  Every problem is one :class:`~tauspec.errors.SweepError` naming the file, the line and the
reason; nothing is guessed where a guess could change a number.  docs/reader.md lists what is accepted.
"""

from __future__ import annotations

import os
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import DroppedPointsWarning, SettingsError, SweepError
from .blocks import Block, check_size, sample_lines, scan
from .build import build_sweep, line_ranges
from .columns import columns_of, is_header
from .dialect import CANDIDATES, SAMPLE_LINES, detect_delimiter, header_splits
from .encodings import decode
from .meta import parse_preamble, temperature_in_title
from .plan import Plan, make_plan
from .record import check_number, option, record, resolve_options
from .source import MAX_FILE_BYTES, read_bytes
from .sweep import Sweep
from .table import read_table
from .temperature import DEFAULT_TOLERANCE, describe, group_temperatures

__all__ = ["ReadOptions", "read_sweep", "read_sweeps", "parse_sweep_text", "parse_sweeps_text", "count_blocks",
           "file_layout", "NotAFrequencySweep", "MAX_FILE_BYTES", "MAX_ROWS", "MAX_LINE_CHARS"]

#: More data rows than this are refused (a frequency sweep has tens to hundreds).
MAX_ROWS = 100_000
#: Lines (not blank, not ``#`` comments) searched for the header row when choosing the separator.
HEADER_SEARCH_LINES = 500
#: Longer lines (header, metadata or data) are refused (a header of twenty verbose columns is ~600 characters).
MAX_LINE_CHARS = 4096


@record
class ReadOptions:
    """Options of the reader.

    Attributes
    ----------
    temperature_tolerance : float
        Points of a temperature column within this many kelvin form one sweep (default 1 K).
    max_bytes, max_rows, max_line_chars : int
        Bounds checked before the work they limit: file size, data rows, characters in one line.
    """

    temperature_tolerance: float = option(DEFAULT_TOLERANCE, cli=False,
                                          help="points of a temperature column within this many K are one sweep")
    max_bytes: int = option(MAX_FILE_BYTES, cli=False, help="larger files are refused before reading")
    max_rows: int = option(MAX_ROWS, cli=False, help="more data rows are refused")
    max_line_chars: int = option(MAX_LINE_CHARS, cli=False, help="longer lines are refused")

    def __post_init__(self) -> None:
        check_number("temperature_tolerance", self.temperature_tolerance, lo=0, lo_open=True,
                     what="a positive number of kelvin", say_range=False)
        for name in ("max_bytes", "max_rows", "max_line_chars"):
            check_number(name, getattr(self, name), lo=1, integer=True, what="a positive whole number",
                         say_range=False)


def _options(options: ReadOptions | None, fields: dict[str, Any]) -> ReadOptions:
    return resolve_options(ReadOptions, options, fields, "the reader")


def read_sweep(path: str | os.PathLike[str], *, options: ReadOptions | None = None, **fields: Any) -> Sweep:
    """Read a frequency sweep from a text file.

    Parameters
    ----------
    path : path-like
        A table whose header row names the columns (see :func:`parse_sweeps_text`).
    options : ReadOptions, optional
        Reader options; or give its fields as keywords (``max_bytes=...``, ``temperature_tolerance=...``).

    Returns
    -------
    Sweep
        SI arrays sorted by ω, with the file's metadata.

    Raises
    ------
    SweepError
        For anything that is not one usable sweep, with the file and line; also for a file holding several
        sweeps (blocks or temperature steps), which :func:`read_sweeps` reads.

    Warns
    -----
    DroppedPointsWarning
        When points with a missing value or a non-positive modulus are dropped.
    EncodingGuessWarning
        When the file is not UTF-8 and was read as cp1252 or Latin-1.
    """
    opts = _options(options, fields)
    return _one(read_sweeps(path, options=opts), str(path))


def read_sweeps(path: str | os.PathLike[str], *, options: ReadOptions | None = None, **fields: Any) -> list[Sweep]:
    """Read every sweep a file holds: one per block, and per temperature step within a block.

    See :func:`read_sweep` for the parameters and :func:`parse_sweeps_text` for the layouts and names.
    """
    opts = _options(options, fields)
    source = str(path)
    text = decode(read_bytes(path, source, opts.max_bytes), source)
    return parse_sweeps_text(text, source=source, default_name=Path(path).stem, options=opts)


def parse_sweep_text(text: str, *, source: str = "<text>", default_name: str = "sample",
                     options: ReadOptions | None = None, **fields: Any) -> Sweep:
    """Parse the text of a file holding one sweep; see :func:`read_sweep` and :func:`parse_sweeps_text`."""
    return _one(parse_sweeps_text(text, source=source, default_name=default_name, options=options, **fields), source)


class NotAFrequencySweep(SweepError):
    """A block whose frequency is the same at every point: an amplitude, time or temperature sweep.

    Beside frequency sweeps in the same file it is left out with a warning (:func:`parse_sweeps_text`); asked
    for by itself (``block=k``, the batch) or alone in its file, it is raised.
    """


def _one(sweeps: list[Sweep], source: str) -> Sweep:
    if len(sweeps) == 1:
        return sweeps[0]
    blocks = {s.meta.get("block") for s in sweeps} - {None}
    if len(blocks) > 1:
        raise SweepError(f"holds {len(sweeps)} sweeps in {len(blocks)} blocks ({', '.join(s.name for s in sweeps)}); "
                         "read them with tauspec.read_sweeps, superpose them with 'tauspec master' or process each "
                         "block as a sample with 'tauspec batch'", source)
    temps = ", ".join(s.meta["temperature"] for s in sweeps)
    raise SweepError(f"holds sweeps at {len(sweeps)} temperatures ({temps}); read them with tauspec.read_sweeps or "
                     "superpose them with 'tauspec master'", source)


def _names_columns(line: str, delimiter: str) -> bool:
    """Whether ``line`` split at ``delimiter`` is a header row (a malformed quote: it is not)."""
    try:
        return any(is_header(o) for o in header_splits(line, delimiter))
    except SweepError:
        return False


def _delimiter(text: str, source: str, opts: ReadOptions) -> str:
    """The separator that splits a line into a header row; the detector decides when several or none do.

    The header is looked for in the first :data:`HEADER_SEARCH_LINES` lines (a long preamble) with every
    candidate.  When exactly one candidate gives a header it is the answer whatever the detector says (the
    detector's choice only orders the candidates), so the detector runs only when several or none do; it sees
    the first :data:`~tauspec.data.dialect.SAMPLE_LINES` lines.
    """
    lines = sample_lines(text, HEADER_SEARCH_LINES, source=source, max_line_chars=opts.max_line_chars)
    naming = [d for d in CANDIDATES if any((d == " " or d in line) and _names_columns(line, d) for line in lines)]
    if len(naming) == 1:  # the only separator that gives a header: the detector's choice could not change it
        return naming[0]
    detected = detect_delimiter(lines[:SAMPLE_LINES])
    if naming:
        return detected if detected in naming else naming[0]
    if detected:
        return detected
    first = lines[0] if lines else ""
    return next((d for d in CANDIDATES[:-1] if d in first), " ")


def parse_sweeps_text(text: str, *, source: str = "<text>", default_name: str = "sample",
                      options: ReadOptions | None = None, block: int | None = None, separator: str | None = None,
                      **fields: Any) -> list[Sweep]:
    """Parse the text of a sweep file into its sweeps.

    The header row names a frequency column and either G' and G'' or |G*| and the phase angle δ; units follow
    the names in ``(...)``, ``[...]``, as ``in kPa``, or in a units row under the header.  Lines above the
    header are metadata (``Key: value``, ``Key;value``, ``# key: value``) or a title.  Several blocks, each
    with its own header, give one sweep each, named ``<name>#<k>``; a temperature column with several steps
    gives one sweep per step, named ``<name>@<T>``.  Other columns are listed in ``meta["ignored_columns"]``.

    ``block=k`` returns only the sweeps of the k-th block (1-based), so that a problem in another block's
    values does not stop it (the batch processes each block as its own sample).  ``separator``, one of
    :data:`~tauspec.data.dialect.CANDIDATES` as :func:`file_layout` found it, skips finding it again.
    """
    opts = _options(options, fields)
    delimiter, blocks = _layout(text, source, opts, separator)
    plans = _plans(blocks, source)
    if block is not None and not 1 <= block <= len(blocks):
        raise SweepError(f"has {len(blocks)} block(s), not a block {block}", source)
    shared = {k: v for k, v in parse_preamble(blocks[0].preamble, delimiter)[0].items() if k != "temperature"}
    out: list[Sweep] = []
    skipped: list[NotAFrequencySweep] = []
    for k, (part, plan) in enumerate(zip(blocks, plans), start=1):
        if block is None or block == k:
            meta, name = _block_meta(blocks, k, shared, delimiter, default_name)
            try:
                out += _block_sweeps(part, plan, delimiter, meta, name, source, opts)
            except NotAFrequencySweep as exc:
                if block is not None or len(blocks) == 1:
                    raise
                skipped.append(exc)
    if skipped and not out:
        raise skipped[0]
    for exc in skipped:  # the frequency sweeps of an export that also holds, e.g., an amplitude sweep
        warnings.warn(f"{source}: left out {exc.reason}", DroppedPointsWarning, stacklevel=3)
    return out


def count_blocks(text: str, *, source: str = "<text>", options: ReadOptions | None = None, **fields: Any) -> int:
    """How many blocks (tables with their own header) the text holds, from its layout alone (no values read).

    Raises
    ------
    SweepError
        When the text has no usable layout (see :func:`parse_sweeps_text`).
    """
    return file_layout(text, source=source, options=options, **fields)[1]


def file_layout(text: str, *, source: str = "<text>", options: ReadOptions | None = None,
                **fields: Any) -> tuple[str, int]:
    """The text's separator and its number of blocks, from its layout alone (no values read).

    Give the separator back to :func:`parse_sweeps_text` when the same text is parsed later.

    Raises
    ------
    SweepError
        When the text has no usable layout (see :func:`parse_sweeps_text`).
    """
    delimiter, blocks = _layout(text, source, _options(options, fields))
    return delimiter, len(blocks)


def _layout(text: str, source: str, opts: ReadOptions, separator: str | None = None) -> tuple[str, list[Block]]:
    check_size(text, source, opts.max_rows)
    if separator is None:
        delimiter = _delimiter(text, source, opts)
    elif separator in CANDIDATES:
        delimiter = separator
    else:
        raise SettingsError(f"separator must be one of {', '.join(map(repr, CANDIDATES))}, not {separator!r}")
    return delimiter, scan(text, delimiter, source=source, max_rows=opts.max_rows, max_line_chars=opts.max_line_chars)


def _block_meta(blocks: list[Block], k: int, shared: dict[str, str], delimiter: str,
                default_name: str) -> tuple[dict[str, str], str]:
    """The metadata and name of the k-th block (1-based)."""
    block = blocks[k - 1]
    own, title = parse_preamble(block.preamble, delimiter)
    meta = own if k == 1 else {**shared, **own}  # a temperature above the first block is that block's only
    if block is blocks[-1]:
        meta.update(parse_preamble([x for x in block.trailer if x[1].startswith("#")], delimiter)[0])
    name = meta.get("sample") or default_name
    if len(blocks) > 1:
        meta.update(block=str(k), blocks=str(len(blocks)))
        if title:
            meta["block_title"] = title
        name = f"{name}#{k}"
    if "temperature" not in meta and title and temperature_in_title(title):
        meta["temperature"] = temperature_in_title(title)
    return meta, name


def _plans(blocks: list[Block], source: str) -> list[Plan]:
    """Each block's plan; a block whose header leaves out a unit an earlier block gave is refused."""
    plans: list[Plan] = []
    given: dict[str, tuple[str, float | None, int]] = {}
    for k, block in enumerate(blocks, start=1):
        plan = make_plan(columns_of(block.header, block.units), source, block.header_line)
        for col, factor in ((plan.frequency, plan.frequency_factor), (plan.first, plan.first_factor),
                            (plan.second, plan.second_factor)):
            if col.unit is not None:
                given.setdefault(col.role or "", (col.unit, factor, k))
            elif col.role in given and given[col.role][1] != factor:  # the default is not what the other said
                unit, _, j = given[col.role]
                raise SweepError(f"block {k} names {col.label} without a unit where block {j} gives {unit}; "
                                 "write the units in every block's header", source, block.header_line)
        plans.append(plan)
    return plans


def _block_sweeps(block: Block, plan: Plan, delimiter: str, meta: dict[str, str], name: str, source: str,
                  opts: ReadOptions) -> list[Sweep]:
    table = read_table(block, plan, delimiter=delimiter, source=source)
    if table.omega.size > 1 and np.all(table.omega == table.omega[0]):
        where = f"block {meta['block']} (lines {block.header_line}-{int(table.lines[-1])}): " if "block" in meta else ""
        raise NotAFrequencySweep(f"{where}the frequency is {table.omega[0]:.6g} rad/s at every point: an amplitude, "
                                  "time or temperature sweep, not a frequency sweep", source, int(table.lines[0]))
    meta = {**meta, **table.notes}
    if table.temperature is None:
        return [build_sweep(table.omega, table.storage, table.loss, table.lines, missing_lines=table.missing_lines,
                            meta=meta, source=source, name=name)]
    unit = (plan.temperature.unit or "C").strip()
    groups = group_temperatures(table.temperature, opts.temperature_tolerance, unit=unit, source=source)
    missing = table.missing_lines
    if len(groups) > 1 and missing:  # the rows left out belong to no step: one warning for the block
        warnings.warn(f"{source}: dropped {len(missing)} point(s): a missing value at lines {line_ranges(missing)}",
                      DroppedPointsWarning, stacklevel=4)
        missing = ()
    out = []
    for idx in groups:
        sub = {**meta, **describe(table.temperature[idx], unit)}
        sub_name = name if len(groups) == 1 else f"{name}@{float(table.temperature[idx].mean()):.4g}{unit}"
        out.append(build_sweep(table.omega[idx], table.storage[idx], table.loss[idx], table.lines[idx],
                               missing_lines=missing, meta=sub, source=source, name=sub_name))
    return out
