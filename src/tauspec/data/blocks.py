"""The layout of a sweep file: preamble, header row, units row, data rows — once, or as several blocks.

One pass over the lines, never holding more than the rows it keeps.  A line is

* blank, or a ``#`` comment (kept for the metadata);
* a header row: it names a frequency column and a modulus column; it starts a block;
* a units row: right after a header, no numbers, at least one unit tauspec knows;
* a rule: dashes or equals signs (``-----  ---``, ``===,===``) between a header (or its units row) and the
  first data row, as text tables underline their headings; skipped;
* a data row: the header's number of fields, at least one of them a number;
* text: before a header it is preamble (a title, ``Key: value`` metadata); after a block's data it ends the
  block and starts the next one's preamble (a title line such as ``Step 2  150 °C``).  More than
  :data:`MAX_TEXT_RUN` such lines in a row are not a sweep file: the scan stops there.

A header that only repeats the one above at a page break continues its table (:func:`_join_repeated_headers`).

Numbers with no header above them, numbers after a block's closing text without a header of their own, and a
row of numbers whose width differs from the header's are refused with their line, as are lines longer than
``max_line_chars`` and more than ``max_rows`` data rows (the number of lines is checked first, in one count over
the text, so an over-long file is refused before any line is parsed).
"""

from __future__ import annotations

import dataclasses
import io

from ..errors import SweepError
from ..rounding import counted
from .cells import parse_cell
from .columns import EXPECTED_HEADER, columns_of, is_header, split_unit, strip_brackets
from .dialect import header_splits, split_fields, trim, units_splits
from .plan import make_plan
from .units import unit_kind

__all__ = ["Block", "scan", "check_size", "sample_lines"]

#: Lines beyond ``max_rows`` a file may have for its headers, units rows, metadata, titles and blank lines.
EXTRA_LINES = 10_000
#: Most lines of text (not blank, not data) in a row: a preamble, a title, a trailer are a few to a few tens.
MAX_TEXT_RUN = 500


@dataclasses.dataclass
class Block:
    """One table of a file: its header (and units row), its data rows and the text lines before it."""

    header_line: int
    header_options: list[list[str]]
    preamble: list[tuple[int, str]]
    units_options: list[list[str]] = dataclasses.field(default_factory=list)
    rows: list[tuple[int, list[str]]] = dataclasses.field(default_factory=list)
    trailer: list[tuple[int, str]] = dataclasses.field(default_factory=list)

    @property
    def header(self) -> list[str]:
        """The header's column names (the first split that matched the data rows' width)."""
        return self.header_options[0]

    @property
    def units(self) -> list[str] | None:
        """The units row, one cell per column (the split that matched the data rows' width), or None."""
        return self.units_options[0] if self.units_options else None

    def widths(self) -> list[int]:
        """The numbers of fields a data row may have: a split of the header's, and of the units row's if any."""
        widths = [len(o) for o in self.header_options]
        if self.units_options:
            below = {len(o) for o in self.units_options}
            widths = [w for w in widths if w in below]
        return widths

    def accepts_width(self, n: int) -> bool:
        """Whether a row of ``n`` fields fits; fixes the header's (and units row's) split when there were several."""
        if n not in self.widths():
            return False
        self.header_options = [next(o for o in self.header_options if len(o) == n)]
        if self.units_options:
            self.units_options = [next(o for o in self.units_options if len(o) == n)]
        return True


def check_size(text: str, source: str, max_rows: int) -> None:
    """Refuse a text with more lines than ``max_rows`` data rows and :data:`EXTRA_LINES` others could fill."""
    lines = max(text.count("\n"), text.count("\r")) + 1
    if lines > max_rows + EXTRA_LINES:
        raise SweepError(f"has {lines:,} lines; tauspec reads at most {max_rows:,} data rows (a frequency sweep "
                         "has tens to hundreds)", source)


def _too_long(line: str, number: int, max_line_chars: int, source: str) -> None:
    if len(line) > max_line_chars:
        raise SweepError(f"line is {len(line):,} characters long; tauspec reads lines of at most "
                         f"{max_line_chars:,}", source, number)


def sample_lines(text: str, count: int, *, source: str, max_line_chars: int) -> list[str]:
    """The first ``count`` lines that are neither blank nor ``#`` comments (for the dialect detector)."""
    out = []
    for number, raw in enumerate(io.StringIO(text, newline=None), start=1):
        line = raw[:-1] if raw.endswith("\n") else raw
        _too_long(line, number, max_line_chars, source)
        if line.strip() and not line.lstrip().startswith("#"):
            out.append(line)
            if len(out) >= count:
                break
    return out


def _is_numeric(fields: list[str]) -> bool:
    """Every cell a number or a missing marker, at least one a number (stops at the first text cell)."""
    found = False
    for f in fields:
        kind = parse_cell(f, decimal_comma=True)
        if kind is None:
            return False
        found = found or isinstance(kind, float)
    return found


def _holds_numbers(line: str, delimiter: str) -> bool:
    """At least two cells of the line, and half of them, are numbers (a row of a table, as opposed to prose)."""
    cells = split_fields(line, delimiter, strict=False)
    numbers = sum(isinstance(parse_cell(c, decimal_comma=True), float) for c in cells)
    return numbers >= 2 and 2 * numbers >= len(cells)


#: Units of columns tauspec does not read (strain, torque) that may be the only units of a units row.
_OTHER_UNITS = frozenset({"%", "N·m", "mN·m", "µN·m", "μN·m", "N m", "mN m", "µN m", "μN m", "Nm", "mNm", "µNm",
                         "μNm"})


#: What a rule under a header is drawn with, besides blanks and the separator.
_RULE_MARKS = frozenset("-=_")


def _is_rule(stripped: str, delimiter: str) -> bool:
    """A line drawn with dashes, equals signs or underscores (and blanks or the separator) only, three at least."""
    marks = sum(ch in _RULE_MARKS for ch in stripped)
    return marks >= 3 and marks + sum(ch.isspace() or ch == delimiter for ch in stripped) == len(stripped)


def _is_units_row(fields: list[str]) -> bool:
    """No numbers, and at least one field a unit tauspec knows (``rad/s``, ``[kPa]``, ``°C``, ``%`` ...)."""
    if any(isinstance(parse_cell(f, decimal_comma=True), float) for f in fields):
        return False
    units = [u for u in map(strip_brackets, fields) if u]
    return any(u in _OTHER_UNITS or unit_kind(u) is not None for u in units)


def _diagnose(line: tuple[int, str] | None, delimiter: str, source: str) -> SweepError:
    """The reason ``line`` is not a header row (it stood where the header should be)."""
    if line is None:
        return SweepError(f"no header row naming the columns; expected e.g. {EXPECTED_HEADER}", source)
    number, text = line
    try:
        fields = header_splits(text, delimiter, source=source, number=number)[0]
    except SweepError as exc:  # a broken quote: the reason when the line would name the columns without it
        fields = header_splits(text, delimiter, source=source, number=number, strict=False)[0]
        if is_header(fields):
            return exc
    if all(split_unit(f)[1] is None and isinstance(parse_cell(f, decimal_comma=True), float) for f in fields):
        return SweepError(f"no header row naming the columns; expected e.g. {EXPECTED_HEADER}", source, number)
    try:
        make_plan(columns_of(fields), source, number)
    except SweepError as exc:
        return exc
    return SweepError(f"no header row naming the columns; expected e.g. {EXPECTED_HEADER}", source, number)


def _last_text(pending: list[tuple[int, str]]) -> tuple[int, str] | None:
    return next((item for item in reversed(pending) if not item[1].startswith("#")), None)


class _Scanner:
    """The state of one pass (see the module docstring)."""

    def __init__(self, delimiter: str, source: str, max_rows: int):
        self.delimiter, self.source, self.max_rows = delimiter, source, max_rows
        self.blocks: list[Block] = []
        self.pending: list[tuple[int, str]] = []
        self.closed_by: tuple[int, str] | None = None  # the text line that ended the current block's data
        self.expect_units = False
        self.n_rows = 0

    @property
    def current(self) -> Block | None:
        return self.blocks[-1] if self.blocks else None

    def line(self, number: int, line: str) -> None:
        stripped = line.strip()
        if not stripped:
            return
        if stripped.startswith("#"):
            self.pending.append((number, stripped))
            return
        block = self.current
        try:
            fields = split_fields(line, self.delimiter, source=self.source, number=number)
        except SweepError:
            if block is not None and self.closed_by is None:  # a broken quote among data rows
                raise
            self.pending.append((number, stripped))  # text around the tables may hold any quote
            return
        if not any(fields):  # separators only (',,' where a spreadsheet saved an empty row): a blank line
            return
        if block is not None and not block.rows and self.closed_by is None and _is_rule(stripped, self.delimiter):
            return
        if self.expect_units:
            self.expect_units = False
            if self._after_header(block, fields, number, stripped):
                return
        if block is not None and self.closed_by is None and self._data(block, fields, number):
            return
        options = [o for o in header_splits(line, self.delimiter, source=self.source, number=number) if is_header(o)]
        if options:
            if block is not None and not block.rows and not self.pending and block.units is None:
                raise SweepError(f"lines {block.header_line} and {number} are both header rows; keep one (a units "
                                 "row under the header may give the units)", self.source, number)
            self.blocks.append(Block(header_line=number, header_options=options, preamble=self.pending))
            self.pending, self.closed_by, self.expect_units = [], None, True
            return
        if _is_numeric(fields):
            self._refuse_numbers(block, fields, number)
        if block is not None and block.rows and self.closed_by is None:
            self.closed_by = (number, stripped)
        self.pending.append((number, stripped))
        if len(self.pending) > MAX_TEXT_RUN:
            self._refuse_text_run(number)

    def _refuse_text_run(self, number: int) -> None:
        if not self.blocks:  # no header in the first lines: say so, and why the first text line is not one
            first = next((item for item in self.pending if not item[1].startswith("#")), None)
            reason = _diagnose(first, self.delimiter, self.source).reason
            raise SweepError(f"no header row in the first {MAX_TEXT_RUN:,} lines of text (the first of them: "
                             f"{reason})", self.source, first[0] if first else None)
        raise SweepError(f"more than {MAX_TEXT_RUN:,} lines of text after line {self.pending[0][0]} without a table",
                         self.source, number)

    def _after_header(self, block: Block, fields: list[str], number: int, stripped: str) -> bool:
        """Take the line after a header as its units row (True), or leave it to the other rules (False)."""
        if _is_units_row(fields):
            options = units_splits(fields, stripped, self.delimiter)
            if self.delimiter == " ":
                # Blanks cannot hold an empty cell: the units row must name every column, or the units would
                # slide onto the wrong columns.  When the header and the units row split two ways each (a name
                # or a unit with a space), the first data row's width decides both.
                fitting = [o for o in options if len(o) in block.widths()]
            else:  # a units row ending early leaves the last columns without a unit below
                width = len(block.header)
                fitting = [o + [""] * (width - len(o)) for o in options if len(o) <= width]
            if not fitting:
                raise SweepError(f"the units row has {len(options[0])} fields but the header names "
                                 f"{len(block.header)} columns", self.source, number)
            block.units_options = fitting
            return True
        if _is_numeric(fields) or is_header(trim(fields)):
            return False
        raise SweepError(f"the line after the header is neither a units row nor data: {stripped[:60]!r}",
                         self.source, number)

    def _data(self, block: Block, fields: list[str], number: int) -> bool:
        """Keep the line as a data row of ``block`` when it fits the header and holds a number."""
        widths = block.widths()
        row = trim(fields, min(widths))
        if len(row) not in widths or not any(isinstance(parse_cell(c, decimal_comma=True), float) for c in row):
            return False
        block.accepts_width(len(row))
        self.n_rows += 1
        if self.n_rows > self.max_rows:
            raise SweepError(f"more than {self.max_rows:,} data rows; a frequency sweep has tens to hundreds",
                             self.source, number)
        block.rows.append((number, row))
        return True

    def _refuse_numbers(self, block: Block | None, fields: list[str], number: int) -> None:
        if block is None:
            raise _diagnose(_last_text(self.pending), self.delimiter, self.source)
        if self.closed_by is not None:
            at, text = self.closed_by
            raise SweepError(f"numbers after the text on line {at} ({text[:40]!r}) but no header row of their own",
                             self.source, number)
        raise SweepError(f"row has {counted(len(trim(fields)), 'value')} but the header names {len(block.header)} "
                         "columns",
                         self.source, number)


def scan(text: str, delimiter: str, *, source: str, max_rows: int, max_line_chars: int) -> list[Block]:
    """Split a file's text into blocks (see the module docstring).

    Raises
    ------
    SweepError
        For a file with no header row (the reason the line standing where the header should be is not one),
        a block without data rows, and the bounds above.
    """
    check_size(text, source, max_rows)
    scanner = _Scanner(delimiter, source, max_rows)
    for number, raw in enumerate(io.StringIO(text, newline=None), start=1):
        line = raw[:-1] if raw.endswith("\n") else raw
        _too_long(line, number, max_line_chars, source)
        scanner.line(number, line)
    blocks = scanner.blocks
    if not blocks:
        if not any(not text.startswith("#") for _, text in scanner.pending):
            raise SweepError("no data: the file is empty or holds only comments", source)
        texts = [item for item in scanner.pending if not item[1].startswith("#")]
        if not any(_holds_numbers(line, delimiter) for _, line in texts):  # prose: notes, a log, a README
            raise SweepError("holds no table of numbers (no line is a row of numbers): not a sweep export", source)
        raise _diagnose(texts[0], delimiter, source)
    for block in blocks:
        if not block.rows:
            raise SweepError("header but no data rows", source, block.header_line if len(blocks) > 1 else None)
    blocks = _join_repeated_headers(blocks, source)
    blocks[-1].trailer = scanner.pending
    return blocks


def _join_repeated_headers(blocks: list[Block], source: str) -> list[Block]:
    """Blocks whose header only repeats the one above (a page break of the export) joined to it.

    A block is a continuation when its header and units row are those of the block above, no line of text or
    comment stands between them (blank lines may), and its first frequency continues the one above in the same
    direction.  Two sweeps of one export under the same header (at two temperatures, say) start again from one
    end of the range, or stand under a title or metadata line of their own, and stay apart.
    """
    out = [blocks[0]]
    for block in blocks[1:]:
        above = out[-1]
        if (block.header == above.header and block.units == above.units and not block.preamble
                and _continues(above, block, source)):
            above.rows.extend(block.rows)
        else:
            out.append(block)
    return out


def _continues(above: Block, block: Block, source: str) -> bool:
    """The first frequency of ``block`` continues the last two of ``above`` in the same direction."""
    if len(above.rows) < 2:
        return False
    try:
        column = make_plan(columns_of(above.header, above.units), source, above.header_line).frequency.index
    except SweepError:
        return False
    values = [parse_cell(row[column], decimal_comma=True) if column < len(row) else None
              for _, row in (above.rows[-2], above.rows[-1], block.rows[0])]
    if not all(isinstance(v, float) for v in values):
        return False
    a, b, c = values
    return (a < b < c) or (a > b > c)
