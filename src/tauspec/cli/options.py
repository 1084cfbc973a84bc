"""Command-line options built from the options records: one declaration for the API, the CLI and TOML.

Every field declared with :func:`~tauspec.data.record.option` carries its help text, flag and choices; this
module turns a record class into ``argparse`` arguments and the parsed arguments back into the record, which
validates them (once, in its ``__post_init__``).  Choices given as a callable (the registry of strength rules)
are asked when the parser is built, so a rule added to the registry appears on the command line by itself.
"""

from __future__ import annotations

import argparse
import dataclasses
import re
import types
import typing
from collections.abc import Iterable
from typing import Any, TypeVar

from ..data.record import option_spec
from ..errors import SettingsError

__all__ = ["add_options", "options_from_args"]

T = TypeVar("T")


def _flag(f: dataclasses.Field, spec: dict[str, Any]) -> str:
    return spec.get("flag") or "--" + f.name.replace("_", "-")


def _scalar_types(hint: Any) -> list[Any]:
    if typing.get_origin(hint) in (typing.Union, types.UnionType):
        return [a for a in typing.get_args(hint) if a is not type(None)]
    return [hint]


def _word_or_number(text: str) -> str | float:
    """``auto`` (or another word) stays text; anything else is read as a number (the record checks the range)."""
    try:
        return float(text)
    except ValueError:
        return text


def _converter(hint: Any) -> Any:
    kinds = _scalar_types(hint)
    if str in kinds and float in kinds:
        return _word_or_number
    for k in (int, float):
        if k in kinds:
            return k
    return str


def _cli_fields(cls: type, only: Iterable[str] | None, exclude: Iterable[str]) -> list[tuple[Any, dict]]:
    names = None if only is None else set(only)
    out = []
    for f in dataclasses.fields(cls):
        spec = option_spec(f)
        if spec is None or not spec["cli"] or f.name in set(exclude) or (names is not None and f.name not in names):
            continue
        out.append((f, spec))
    return out


def add_options(parser: Any, cls: type, *, only: Iterable[str] | None = None, exclude: Iterable[str] = ()) -> None:
    """Add one argument per command-line field of the options record ``cls`` to ``parser`` (or a group).

    A switch that is off by default becomes ``--name``; one that is on by default becomes its ``negate`` flag
    (``--no-solvent``).  The parsed value lands in ``args.<field name>``; a field the user did not give stays
    at the record's own default.
    """
    hints = typing.get_type_hints(cls)
    for f, spec in _cli_fields(cls, only, exclude):
        hint = hints.get(f.name, Any)
        if hint is bool:
            if f.default is True:
                parser.add_argument(spec.get("negate") or "--no-" + f.name.replace("_", "-"), dest=f.name,
                                    action="store_false", default=argparse.SUPPRESS,
                                    help=spec.get("negate_help") or spec["help"])
            else:
                parser.add_argument(_flag(f, spec), dest=f.name, action="store_true", default=argparse.SUPPRESS,
                                    help=spec["help"])
            continue
        choices = spec.get("choices")
        if callable(choices):
            choices = choices()
        parser.add_argument(_flag(f, spec), dest=f.name, type=_converter(hint), default=argparse.SUPPRESS,
                            choices=list(choices) if choices is not None else None, metavar=spec.get("metavar"),
                            help=spec["help"])


def options_from_args(args: argparse.Namespace, cls: type[T], *, only: Iterable[str] | None = None,
                      exclude: Iterable[str] = (), **fixed: Any) -> T:
    """The options record from parsed arguments (fields not given keep their defaults); ``fixed`` adds others.

    A value the record refuses is one line that names the flag, e.g. ``--strength must be 'auto' or a
    positive number, not 'x'``.
    """
    values = dict(fixed)
    flags = {}
    for f, spec in _cli_fields(cls, only, exclude):
        flags[f.name] = _flag(f, spec)
        if hasattr(args, f.name):
            values[f.name] = getattr(args, f.name)
    try:
        return cls(**values)
    except SettingsError as exc:
        reason = exc.reason
        for name, flag in flags.items():
            if reason.startswith(f"{name} "):
                reason = flag + reason[len(name):]
            elif "_" in name:  # a field named inside the reason ("... below omega_max"); plain words are left
                reason = re.sub(rf"\b{re.escape(name)}\b", flag, reason)
        raise SettingsError(reason) from None
