"""Where each input's results go: one folder per input, named by its full relative path, checked before any work.

The rule (docs/batch.md, "Output layout"):

1. An input's result folder is its path relative to the common folder of the inputs, **suffix included**:
   ``series/a.csv`` → ``DIR/series/a.csv/``.  ``a.csv``, ``a.dat`` and ``a.csv.csv`` get three folders.
2. A path component that is a name tauspec writes (``summary.csv``, ``run.json``, ``spectrum.csv`` ...,
   compared case-insensitively and without the dots and spaces that end it, as Windows compares), the folder
   of a block (``#2``: the blocks of a file of several are ``a.txt/#1/``, ``a.txt/#2/`` ...) or a device name
   Windows reserves (``con.csv``, ``NUL.dat``, ``com1.txt``),
   or such a name behind leading underscores, gets one more leading underscore: ``summary.csv`` →
   ``_summary.csv``, ``_summary.csv`` → ``__summary.csv``, ``con.csv`` → ``_con.csv``.  The mapping is
   one-to-one, and no input can name a file of the run, of another input's result folder, or a block's folder.
3. Two inputs whose folders differ only in case (or in Unicode normalization) would share one folder on macOS
   and Windows, and so would two that differ only in dots or spaces at the end of a name (``a.csv`` and
   ``a.csv.``: Windows drops them): both are refused, one line each, never overwritten.
4. On the disk, a folder path that runs through a file or a link is refused for that input (tauspec did not
   write it); the run goes on with the others.
"""

from __future__ import annotations

import os
import re
import stat
import unicodedata
from collections import defaultdict
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path

__all__ = ["RUN_FILES", "RESULT_NAMES", "RESERVED", "result_key", "same_folder_refusals", "disk_refusal",
           "plan_refusals", "relative_names", "make_folders"]

#: Files a batch run writes at the top of its output folder (the report, the index and the lock among them).
RUN_FILES = ("summary.csv", "run.json", "index.json", "report.html", ".tauspec.lock", ".tauspec.lock.json")
#: Files the batch and ``invert/diagnose/predict --out`` write into a result folder.
RESULT_NAMES = ("result.json", "spectrum.csv", "fit.csv", "modes.csv", "fit.png", "spectrum.png", "lcurve.png",
                "diagnosis.png", "diagnosis.json", "diagnosis.txt", "relaxation.csv", "relaxation.png",
                "creep.csv", "creep.png", "viscosity.csv", "viscosity.png")


def _fold(text: str) -> str:
    """The form in which a case-insensitive file system compares names (approximately: NFC, then casefold)."""
    return unicodedata.normalize("NFC", text).casefold()


def _windows_form(key: str) -> str:
    """The folder a key names on Windows: case folded, and each name without its trailing dots and spaces.

    Windows removes them from every name it is given (Microsoft, "Naming Files, Paths, and Namespaces").
    """
    return "/".join(part.rstrip(" .") for part in _fold(key).split("/"))


#: Names no input may produce, in folded form.
RESERVED = frozenset(_fold(n) for n in RUN_FILES + RESULT_NAMES)


_BLOCK = re.compile(r"#\d+")
#: The device names Windows reserves in every folder, with any extension (``nul.csv`` is the device NUL):
#: a result folder of that name could not be made on Windows or on a share it serves (Microsoft, "Naming
#: Files, Paths, and Namespaces").
_DEVICE = re.compile(r"(con|prn|aux|nul|com[0-9¹²³]|lpt[0-9¹²³])(\..*)?", re.IGNORECASE)


def _component(name: str) -> str:
    base = _windows_form(name.lstrip("_"))  # the name as Windows reads it
    reserved = base in RESERVED or _BLOCK.fullmatch(base) or _DEVICE.fullmatch(base)
    return "_" + name if reserved else name


def result_key(file: str) -> str:
    """The result folder of an input, relative to the output folder (rules 1 and 2 above).

    Examples
    --------
    >>> result_key("series/a.csv"), result_key("summary.csv"), result_key("x.csv/fit.csv")
    ('series/a.csv', '_summary.csv', 'x.csv/_fit.csv')
    """
    return "/".join(_component(part) for part in file.split("/"))


_BLOCK_SUFFIX = re.compile(r"#(?=\d+$)")


def relative_names(paths: Sequence[Path], root: str) -> list[str]:
    r"""Each path relative to ``root`` with ``/`` separators, as the one line a terminal can show (see printable).

    A name ending in ``#<digits>`` has that ``#`` written ``\x23``: ``a.txt#2`` names block 2 of ``a.txt`` in the
    summary, and a file of that name must not be taken for it.
    """
    from ..output.text import printable

    return [_BLOCK_SUFFIX.sub(r"\\x23", printable(Path(os.path.relpath(p, root)).as_posix())) for p in paths]


def same_folder_refusals(keys: Mapping[str, str], what: str = "result folder",
                         remedy: str = "rename one of them") -> dict[str, str]:
    """Refusals (file → reason) of inputs whose result folders coincide, here or on a case-insensitive disk.

    On macOS and Windows names differing only in case are one file, and on Windows also names differing only
    in the dots and spaces that end them.  None of the inputs of such a group is processed, so none overwrites
    another's results.
    """
    groups: dict[str, list[str]] = defaultdict(list)
    for file, key in keys.items():
        groups[_windows_form(key)].append(file)
    refused = {}
    for members in groups.values():
        if len(members) < 2:
            continue
        for file in members:
            others = [o for o in members if o != file]
            if all(keys[o] == keys[file] for o in others):
                where = ""
            elif all(_fold(keys[o]) == _fold(keys[file]) for o in others):
                where = " on a file system that ignores case (macOS, Windows)"
            else:
                where = " on Windows, which ignores case and the dots and spaces that end a name"
            refused[file] = (f"its {what} {keys[file]!r} would be the same as that of "
                             f"{', '.join(repr(o) for o in others)}{where}: none of them is processed; {remedy}")
    return refused


def _limits(out: Path) -> tuple[int, int]:
    try:
        return os.pathconf(out, "PC_PATH_MAX"), os.pathconf(out, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):
        return 4096, 255


def disk_refusal(out: Path, key: str, limits: tuple[int, int] | None = None) -> str | None:
    """Why the result folder ``out/key`` cannot be used on this disk (rule 4), or None when it can."""
    path_max, name_max = limits or _limits(out)
    if any(len(os.fsencode(part)) > name_max for part in key.split("/")):
        return f"a folder name of its result folder {key!r} is longer than {name_max} bytes"
    if len(os.fsencode(str(out / key))) + 40 > path_max:  # room for the files and their temporary names
        return f"the path of its result folder is too long for this file system (limit {path_max} bytes)"
    p = out
    for part in key.split("/"):
        p = p / part
        try:
            mode = os.lstat(p).st_mode
        except FileNotFoundError:
            return None
        except OSError as exc:
            return f"its result folder {str(p)!r} cannot be checked ({exc.strerror or exc})"
        if stat.S_ISLNK(mode):
            return (f"{str(p)!r} is a link: results are written only into real folders; "
                    "remove the link or choose another --out")
        if not stat.S_ISDIR(mode):
            return (f"{str(p)!r} is in the way of its result folder: a file tauspec did not write; "
                    "move it or choose another --out")
    return None


def make_folders(path: Path) -> None:
    """Create ``path`` and its missing parents, one at a time (no recursion, so any depth works)."""
    missing: list[Path] = []
    p = path
    while not p.is_dir():
        missing.append(p)
        if p.parent == p:
            break
        p = p.parent
    for folder in reversed(missing):
        try:
            folder.mkdir()
        except FileExistsError:
            if not folder.is_dir():
                raise


def plan_refusals(out: Path, keys: Mapping[str, str], already: Iterable[str] = ()) -> dict[str, str]:
    """Every refusal of a layout (file → reason): shared folders first, then what is in the way on the disk."""
    refused = same_folder_refusals(keys)
    limits = _limits(out) if out.is_dir() else (4096, 255)
    skip = set(already)
    for file, key in keys.items():
        if file in refused or file in skip:
            continue
        reason = disk_refusal(out, key, limits)
        if reason is not None:
            refused[file] = reason
    return refused
