"""The ``tauspec`` command line: a thin layer over the library.

Each subcommand lives in its own module under :mod:`tauspec.cli` with two
functions, ``add_arguments(parser)`` and ``run(args) -> int``; this module
only dispatches and turns errors into one line on stderr.

Exit status: 0 success; 1 bad data (or, for several files, any file failed);
2 bad usage; 3 an internal error (a bug: please report it with ``--debug``).
"""

from __future__ import annotations

import argparse
import importlib
import logging
import re
import sys
import traceback
import warnings
from collections.abc import Sequence

from .._version import __version__
from ..errors import TauspecError, TauspecWarning

__all__ = ["main", "SUBCOMMANDS"]


#: name -> (module under tauspec.cli, one-line help)
SUBCOMMANDS: dict[str, tuple[str, str]] = {
    "invert": ("invert", "recover the continuous relaxation spectrum H(τ) from sweep files"),
    "batch": ("batch", "reprocess an archive of sweep files in parallel, resumably, into one summary table"),
    "demo": ("demo", "write an invented example archive and process it"),
    "diagnose": ("diagnose", "decide whether the bead-spring (Rouse) description holds, with the evidence"),
    "master": ("master", "superpose sweeps at several temperatures into a master curve (time–temperature shift)"),
    "report": ("report", "write the browsable HTML report of a batch output folder"),
    "compare": ("compare", "compare spectra between samples: time and modulus shifts, shape test, series scaling"),
    "predict": ("predict", "predict G(t), creep J(t) or steady-shear viscosity from a sweep's Maxwell modes"),
}


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # exit 2 with one line, as argparse does, but name the program
        flag = re.fullmatch(r"argument (--[\w-]+)(?:/-\w)?: expected one argument", message)
        if flag and _dashed_value(flag.group(1)):  # "--times -1,2": argparse took the value for a flag
            message += f" (a value that starts with '-' is written {flag.group(1)}=VALUE)"
        self.exit(2, f"{self.prog}: error: {message}\n")


#: The arguments being parsed (for the error message above).
_ARGV: list[str] = []


def _dashed_value(flag: str) -> bool:
    """Whether ``flag`` is followed on the command line by a word starting with '-' (its intended value)."""
    return any(a == flag and b.startswith("-") for a, b in zip(_ARGV, _ARGV[1:]))


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser with every subcommand registered."""
    parser = _Parser(prog="tauspec", description="Relaxation spectra from oscillatory shear frequency sweeps.")
    parser.add_argument("--version", action="version", version=f"tauspec {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks and debug logging")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (module, help_text) in SUBCOMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help="show tracebacks")
        importlib.import_module(f".{module}", __package__).add_arguments(p)
        p.set_defaults(_module=module)
    return parser


def _show_warning(message, category, filename, lineno, file=None, line=None):  # noqa: ARG001
    text = str(message)
    if issubclass(category, TauspecWarning):
        print(f"tauspec: warning: {text}", file=sys.stderr)
    else:
        logging.getLogger("tauspec").debug("%s: %s", category.__name__, text)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = build_parser()
    _ARGV[:] = list(sys.argv[1:] if argv is None else argv)
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help(sys.stderr)
        return 2
    debug = bool(getattr(args, "debug", False))
    logging.basicConfig(level=logging.DEBUG if debug else logging.WARNING, format="tauspec: %(message)s")
    module = importlib.import_module(f".{args._module}", __package__)
    with warnings.catch_warnings():
        warnings.showwarning = _show_warning
        warnings.simplefilter("default")
        try:
            return int(module.run(args))
        except TauspecError as exc:
            if debug:
                traceback.print_exc()
            print(f"tauspec: error: {exc.one_line()}", file=sys.stderr)
            return 1
        except KeyboardInterrupt:
            print("tauspec: interrupted", file=sys.stderr)
            return 130
        except BrokenPipeError:
            return 0
        except Exception as exc:  # a bug: one line unless --debug
            if debug:
                traceback.print_exc()
            print(f"tauspec: internal error: {type(exc).__name__}: {exc} (run with --debug for details)",
                  file=sys.stderr)
            return 3
