"""Finding and reading the input files of a batch: folders searched for sweep files, files named directly, a manifest.

Inputs are inputs: the output folder (compared after resolving links), folders tauspec wrote results into, the
run's manifest and settings files are never read as sweeps; only regular files are read (a FIFO, a device or a
socket is refused before it is opened for reading), and the size cap of the reader applies before reading.
Folders are walked with an explicit stack (no recursion limit); a link to a folder is followed unless it leads
into a loop or to a folder already searched, and every link or special file left out is reported as a note.
"""

from __future__ import annotations

import dataclasses
import os
import re
import stat
import warnings
from collections.abc import Iterator, Sequence
from pathlib import Path

from ..data.encodings import decode
from ..data.manifest import read_manifest
from ..data.read import file_layout
from ..data.source import MAX_FILE_BYTES, read_bytes
from ..errors import SweepError, TauspecError
from .layout import RUN_FILES, relative_names, result_key

__all__ = ["SWEEP_SUFFIXES", "Input", "Found", "discover", "find_inputs", "read_input", "block_inputs"]


#: Suffixes (case-insensitive) of the files a folder is searched for.
SWEEP_SUFFIXES = (".csv", ".tsv", ".txt", ".dat")

# The first bytes of a JSON file tauspec wrote (its schema comes first).
_OURS = re.compile(rb'^\s*\{\s*"schema"\s*:\s*"tauspec\.')
_MARKERS = ("index.json", "run.json", "result.json", "diagnosis.json")
_KINDS = ((stat.S_ISFIFO, "a FIFO (named pipe)"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket"), (stat.S_ISDIR, "a folder"))


@dataclasses.dataclass(frozen=True)
class Input:
    """One input: where to read it, its name in the summary, its result folder under ``--out``.

    ``refusal`` is the reason it will not be read, when that is known from its place alone.  ``block`` is set
    for one block of a file holding several: ``file`` then ends in ``#<block>`` and the result folder is
    ``<key>/#<block>`` (a name no input can produce, see :mod:`tauspec.batch.layout`).  ``separator`` is the
    file's separator once the client has laid the file out, so that the worker does not find it again.
    """

    path: Path
    file: str
    key: str
    refusal: str | None = None
    block: int | None = None
    separator: str | None = None

    def blocks(self, count: int) -> list[Input]:
        """The input itself, or one input per block when the file holds ``count`` > 1 blocks."""
        if count <= 1:
            return [self]
        return [dataclasses.replace(self, file=f"{self.file}#{k}", key=f"{self.key}/#{k}", block=k)
                for k in range(1, count + 1)]


@dataclasses.dataclass(frozen=True)
class Found:
    """The inputs of a run, sorted by name, and one note for each thing left out of the folder walk."""

    inputs: list[Input]
    notes: list[str]


def _kind(mode: int) -> str:
    return next((name for test, name in _KINDS if test(mode)), "not a regular file")


def _real(p: str | os.PathLike[str]) -> str:
    return os.path.realpath(p)


def _inside(p: str, folder: str) -> bool:
    return p == folder or p.startswith(folder.rstrip(os.sep) + os.sep)


def _written_by_tauspec(folder: Path, names: set[str] | None = None) -> bool:
    """True for a folder holding results tauspec wrote (a batch output folder or an ``--out`` folder).

    ``names``, the folder's entries when they are known, spares looking for files that are not there.
    """
    if names is not None and not names & {RUN_FILES[4], *_MARKERS}:
        return False
    if os.path.lexists(folder / RUN_FILES[4]):  # the lock file of a batch run
        return True
    return any(_OURS.match(_head(folder / name)) for name in _MARKERS)


def _head(path: Path, size: int = 256) -> bytes:
    """The first bytes of a regular file (empty for anything else: nothing but a regular file is opened)."""
    try:
        if not stat.S_ISREG(os.stat(path).st_mode):
            return b""
        fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK)
        with os.fdopen(fd, "rb") as fh:
            return fh.read(size) if stat.S_ISREG(os.fstat(fd).st_mode) else b""
    except OSError:
        return b""


class _Walk:
    """The folder walk of one run: what it leaves out, and the notes saying so."""

    def __init__(self, out: Path, excluded: set[str]) -> None:
        self.out = _real(out)
        self.excluded = excluded
        self.notes: list[str] = []
        self.seen: set[tuple[int, int]] = set()

    def _folder_reason(self, real: str, st: os.stat_result, link: bool, top: str) -> str | None:
        if _inside(real, self.out):
            return "the output folder of this run"
        if link and _inside(top, real):
            return "a link to a folder that holds the archive (a loop)"
        if (st.st_dev, st.st_ino) in self.seen:
            return "a link to a folder already searched"
        return None

    def _entries(self, folder: Path) -> list[os.DirEntry[str]] | None:
        try:
            with os.scandir(folder) as it:
                entries = sorted(it, key=lambda e: e.name)
        except OSError as exc:
            self.notes.append(f"{folder}: skipped, the folder cannot be read ({exc.strerror or exc})")
            return None
        if _written_by_tauspec(folder, {e.name for e in entries}):
            self.notes.append(f"{folder}: skipped, a folder of results written by tauspec (results are not inputs)")
            return None
        return entries

    def walk(self, top: Path) -> Iterator[Path]:
        """Sweep files under ``top``, depth first in name order; an explicit stack, so any depth works.

        Real paths are carried down the walk (a folder that is not a link is its parent's real path and its
        name), so a deep tree costs one ``realpath`` per link, not one per folder.
        """
        top_real = _real(top)
        st = top.stat()
        self.seen.add((st.st_dev, st.st_ino))
        stack = [(top, top_real)]
        while stack:
            folder, real = stack.pop()
            entries = self._entries(folder) if folder != top else self._entries_top(folder)
            subfolders = []
            for e in entries or ():
                if e.name.startswith("."):
                    continue
                path = Path(e.path)
                sweep = os.path.splitext(e.name)[1].lower() in SWEEP_SUFFIXES
                link = e.is_symlink()
                try:
                    st = os.stat(path)
                except OSError as exc:
                    if link or sweep:
                        self.notes.append(f"{path}: skipped, a link that leads nowhere ({exc.strerror or exc})")
                    continue
                if stat.S_ISDIR(st.st_mode):
                    sub = _real(path) if link else os.path.join(real, e.name)
                    reason = self._folder_reason(sub, st, link, top_real)
                    if reason is None:
                        self.seen.add((st.st_dev, st.st_ino))
                        subfolders.append((path, sub))
                    elif link or reason != "a link to a folder already searched":
                        self.notes.append(f"{path}: skipped, {reason}")
                elif sweep and (_real(path) if link else os.path.join(real, e.name)) in self.excluded:
                    self.notes.append(f"{path}: skipped, the manifest or settings file of this run")
                elif sweep and not stat.S_ISREG(st.st_mode):
                    self.notes.append(f"{path}: skipped, {_kind(st.st_mode)}, not a sweep file")
                elif sweep:
                    yield path
            stack.extend(reversed(subfolders))

    def _entries_top(self, folder: Path) -> list[os.DirEntry[str]] | None:
        try:
            with os.scandir(folder) as it:
                return sorted(it, key=lambda e: e.name)
        except OSError as exc:
            raise TauspecError(f"the folder cannot be read ({exc.strerror or exc})", str(folder)) from None


def discover(paths: Sequence[str | os.PathLike[str]], out: str | os.PathLike[str],
             manifest: str | os.PathLike[str] | None = None,
             exclude: Sequence[str | os.PathLike[str]] = ()) -> Found:
    """Return the inputs, sorted by their path relative to the common folder of ``paths`` (and the manifest).

    Folders are searched for files ending in :data:`SWEEP_SUFFIXES` (hidden files and folders left out);
    files named explicitly or in the ``file`` column of ``manifest`` are taken whatever their suffix.  The
    output folder, folders of tauspec results, ``manifest`` and the files in ``exclude`` (the settings file)
    are never inputs.  A file's result folder follows :mod:`tauspec.batch.layout`.

    Raises
    ------
    TauspecError
        For a path that does not exist, a folder inside the output folder or holding tauspec results, and when
        nothing is found.
    """
    out_real = _real(out)
    excluded = {_real(p) for p in [*exclude, *([manifest] if manifest is not None else [])]}
    walk = _Walk(Path(out), excluded)
    found: list[tuple[Path, str | None]] = []
    bases: list[str] = []
    for p in paths:
        a = Path(os.path.abspath(p))
        if a.is_dir():
            if _inside(_real(a), out_real) or _written_by_tauspec(a):
                raise TauspecError("holds results written by tauspec (it is or lies inside the output folder); "
                                   "results are not inputs: name the archive instead", str(p))
            bases.append(str(a))
            found.extend((f, None) for f in walk.walk(a))
        elif os.path.lexists(a):
            bases.append(str(a.parent))
            found.append((a, _explicit_refusal(a, out_real)))
        else:
            raise TauspecError("no such file or folder", str(p))
    if manifest is not None:
        bases.append(os.path.abspath(Path(manifest).parent))  # its entries are named relative to its folder
        for entry in read_manifest(manifest):
            a = Path(os.path.abspath(entry.path))
            bases.append(str(a.parent))
            found.append((a, _explicit_refusal(a, out_real)))
    if not bases:
        raise TauspecError("no input given")
    if not found:
        raise TauspecError(f"no sweep files ({' '.join(SWEEP_SUFFIXES)}) found", ", ".join(map(str, paths)))
    root = os.path.commonpath(bases)
    by_file: dict[str, tuple[Path, str | None]] = {}
    for name, (f, refusal) in zip(relative_names([f for f, _ in found], root), found):
        base, k = name, 1
        while name in by_file and by_file[name][0] != f:  # two files whose names print alike (escapes)
            k += 1
            name = f"{base} ({k})"
        by_file[name] = (f, refusal)
    inputs = [Input(by_file[n][0], n, result_key(n), by_file[n][1]) for n in sorted(by_file)]
    return Found(inputs, walk.notes)


def _explicit_refusal(path: Path, out_real: Path) -> str | None:
    if _inside(_real(path), out_real):
        return "lies inside the output folder of this run: results are not inputs"
    return None


def find_inputs(paths: Sequence[str | os.PathLike[str]], out: str | os.PathLike[str],
                manifest: str | os.PathLike[str] | None = None) -> list[Input]:
    """The inputs of :func:`discover`, without the notes."""
    return discover(paths, out, manifest).inputs


# --------------------------------------------------------------------------- reading


def read_input(inp: Input, max_bytes: int = MAX_FILE_BYTES) -> tuple[bytes | None, str | None, str | None,
                                                                     tuple[str, ...]]:
    """Return (bytes, text, error, notes) for one input; the client reads every file itself, with the reader's caps.

    Only a regular file is opened, and one over ``max_bytes`` is refused before it is read
    (:func:`tauspec.data.source.read_bytes`).  ``notes`` are the reader's warnings (an encoding guessed),
    recorded in the file's results by the worker.
    """
    if inp.refusal is not None:
        return None, None, f"{inp.file}: {inp.refusal}", ()
    try:
        raw = read_bytes(inp.path, inp.file, max_bytes)
    except SweepError as exc:
        return None, None, exc.one_line(), ()
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            text = decode(raw, inp.file)
    except SweepError as exc:
        return raw, None, exc.one_line(), ()
    return raw, text, None, tuple(f"{w.category.__name__}: {w.message}" for w in caught)


def block_inputs(inp: Input, text: str | None) -> list[Input]:
    """One input per block of a file holding several, each with the file's separator.

    A file the reader cannot lay out stays one input (its error comes when the worker reads it).
    """
    if text is None:
        return [inp]
    try:
        separator, count = file_layout(text, source=inp.file)
    except SweepError:
        return [inp]
    return dataclasses.replace(inp, separator=separator).blocks(count)
