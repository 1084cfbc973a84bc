"""A sweep file's bytes: only a regular file, and no more than a bound, both checked before reading.

A FIFO, a device or a socket is refused from ``stat()`` without being opened (reading a FIFO would wait for a
writer; a device such as ``/dev/zero`` never ends); the size comes from ``stat()`` too, so an oversized file is
never read.  The file is then opened without blocking and checked again on the open descriptor, in case it
was replaced between the two looks.
"""

from __future__ import annotations

import os
import stat

from ..errors import SweepError

__all__ = ["MAX_FILE_BYTES", "read_bytes"]

#: Files larger than this are refused before reading (a sweep is a few kB).
MAX_FILE_BYTES = 32 * 1024 * 1024

_KINDS = (
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


def _not_regular(mode: int, source: str) -> SweepError | None:
    """The refusal for anything but a regular file, or ``None``."""
    if stat.S_ISDIR(mode):
        return SweepError("is a folder, not a sweep file", source)
    if stat.S_ISREG(mode):
        return None
    kind = next((name for test, name in _KINDS if test(mode)), "not a regular file")
    return SweepError(f"is {kind}, not a regular file; tauspec reads sweeps only from files", source)


def _too_big(size: int, max_bytes: int, source: str) -> SweepError:
    return SweepError(f"file is {size / 2**20:.1f} MiB; a frequency sweep is a few kB "
                      f"(limit {max_bytes / 2**20:.1f} MiB)", source)


def read_bytes(path: str | os.PathLike[str], source: str, max_bytes: int = MAX_FILE_BYTES) -> bytes:
    """Return the bytes of a regular file of at most ``max_bytes`` bytes.

    Raises
    ------
    SweepError
        For a missing or unreadable file, a folder, a FIFO, device or socket, and a file over the bound, each
        before the file is read.
    """
    try:
        st = os.stat(path)
        refusal = _not_regular(st.st_mode, source)
        if refusal is None and st.st_size > max_bytes:
            refusal = _too_big(st.st_size, max_bytes, source)
        if refusal is not None:
            raise refusal
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
        with os.fdopen(fd, "rb") as fh:
            refusal = _not_regular(os.fstat(fh.fileno()).st_mode, source)
            if refusal is not None:
                raise refusal
            raw = fh.read(max_bytes + 1)
    except FileNotFoundError:
        raise SweepError("no such file", source) from None
    except PermissionError:
        raise SweepError("permission denied: the file cannot be read", source) from None
    except IsADirectoryError:
        raise SweepError("is a folder, not a sweep file", source) from None
    except OSError as exc:
        raise SweepError(f"cannot be read ({exc.strerror or exc})", source) from None
    if len(raw) > max_bytes:  # the file grew after stat()
        raise _too_big(len(raw), max_bytes, source)
    return raw
