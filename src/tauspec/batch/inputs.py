"""Finding the input files of a batch: folders searched for sweep files, files named directly, a manifest."""

from __future__ import annotations

import dataclasses
import os
from collections import Counter
from collections.abc import Iterator, Sequence
from pathlib import Path

from ..data.manifest import read_manifest
from ..errors import TauspecError

__all__ = ["SWEEP_SUFFIXES", "Input", "find_inputs"]


#: Suffixes (case-insensitive) of the files a folder is searched for.
SWEEP_SUFFIXES = (".csv", ".tsv", ".txt", ".dat")


# --------------------------------------------------------------------------- inputs


@dataclasses.dataclass(frozen=True)
class Input:
    """One input: where to read it, its name in the summary and its result folder under ``--out``.

    ``block`` is set for one block of a file holding several (``file`` and ``key`` then end in ``#<block>``).
    """

    path: Path
    file: str
    key: str
    block: int | None = None

    def blocks(self, count: int) -> list[Input]:
        """The input itself, or one input per block when the file holds ``count`` > 1 blocks."""
        if count <= 1:
            return [self]
        return [Input(self.path, f"{self.file}#{k}", f"{self.key}#{k}", k) for k in range(1, count + 1)]


def _walk(folder: Path, exclude: Path) -> Iterator[Path]:
    for root, dirs, files in os.walk(folder):
        r = Path(root)
        dirs[:] = sorted(d for d in dirs if not d.startswith(".") and (r / d) != exclude)
        for f in sorted(files):
            if not f.startswith(".") and os.path.splitext(f)[1].lower() in SWEEP_SUFFIXES:
                yield r / f


def find_inputs(paths: Sequence[str | os.PathLike[str]], out: str | os.PathLike[str],
                manifest: str | os.PathLike[str] | None = None) -> list[Input]:
    """Return the input files, sorted by their path relative to the common folder of ``paths`` (and the manifest).

    Folders are searched recursively for files ending in :data:`SWEEP_SUFFIXES`
    (hidden files and folders, and the output folder, are left out); files
    named explicitly or in the ``file`` column of ``manifest`` are taken
    whatever their suffix.  A file's result folder is its relative path
    without the suffix, or with it when two inputs would share a folder.
    """
    out_abs = Path(os.path.abspath(out))
    found: list[Path] = []
    bases: list[str] = []
    for p in paths:
        a = Path(os.path.abspath(p))
        if a.is_dir():
            bases.append(str(a))
            found.extend(_walk(a, out_abs))
        elif a.exists():
            bases.append(str(a.parent))
            found.append(a)
        else:
            raise TauspecError("no such file or folder", str(p))
    if manifest is not None:
        bases.append(os.path.abspath(Path(manifest).parent))  # its entries are named relative to its folder
        for entry in read_manifest(manifest):
            a = Path(os.path.abspath(entry.path))
            bases.append(str(a.parent))
            found.append(a)
    if not bases:
        raise TauspecError("no input given")
    root = os.path.commonpath(bases)
    by_file = {Path(os.path.relpath(f, root)).as_posix(): f for f in found}
    if not by_file:
        raise TauspecError(f"no sweep files ({' '.join(SWEEP_SUFFIXES)}) found", ", ".join(map(str, paths)))
    stems = Counter(os.path.splitext(f)[0] for f in by_file)
    inputs = []
    for file in sorted(by_file):
        stem = os.path.splitext(file)[0]
        inputs.append(Input(by_file[file], file, stem if stems[stem] == 1 else file))
    return inputs
