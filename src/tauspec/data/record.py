"""Records: the frozen, keyword-only dataclasses of results and options, and their JSON form both ways.

Every result and every options object of tauspec is declared with :func:`record`, which makes it a frozen,
keyword-only dataclass and gives it

* ``to_dict()`` — the JSON-ready form (numpy arrays as lists, tuples as lists, nested records as objects; a
  non-finite float stays a float and becomes ``null`` in :func:`~tauspec.data.write.dumps_json`);
* ``from_dict(d)`` — the inverse, guided by the field annotations (lists back to arrays and tuples, ``null``
  back to NaN, nested objects back to records), refusing a wrong ``schema``;
* equality by value: two records are equal when their JSON forms are (arrays by value, NaN equal to NaN);
* a short ``repr`` (scalars shown, arrays and long texts summarised), under 300 characters, and the same as a
  small HTML table for notebooks (``_repr_html_``).

The JSON keys are a public contract (add keys, never rename or drop one), so a field may carry another JSON key
(``field(key="lambda")`` for the attribute ``strength``), and a record whose contract form is not the plain list
of its fields adapts it in two small hooks, ``_json_out(self, d)`` and ``_json_in(cls, d)``.  A field marked
``transient`` (arrays kept for figures in the process that computed them, the spectrum a diagnosis used) is
neither written nor compared.  Options objects use :func:`option` fields, whose help text and command-line
flag build the ``argparse`` options (:mod:`tauspec.cli.options`) from the same declaration.
"""

from __future__ import annotations

import dataclasses
import math
import types
import typing
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path, PurePath
from typing import Any, TypeVar

import numpy as np

from ..errors import SettingsError, TauspecError

__all__ = [
    "record", "field", "option", "option_spec", "resolve_options", "insert_after", "to_jsonable", "is_record",
    "check_choice", "check_number", "check_bool",
]

T = TypeVar("T")

_KEY = "tauspec.key"
_TRANSIENT = "tauspec.transient"
_OPTION = "tauspec.option"


def field(*, key: str | None = None, transient: bool = False, **kwargs: Any) -> Any:
    """A record field: ``key`` is its JSON key (default: its name); ``transient`` keeps it out of JSON and equality.

    Other keyword arguments go to :func:`dataclasses.field` (``default``, ``default_factory``).
    """
    metadata = dict(kwargs.pop("metadata", {}) or {})
    metadata[_KEY] = key
    metadata[_TRANSIENT] = transient
    return dataclasses.field(metadata=metadata, **kwargs)


def option(default: Any = dataclasses.MISSING, *, help: str, flag: str | None = None, metavar: str | None = None,
           choices: Sequence[Any] | Callable[[], Sequence[Any]] | None = None, negate: str | None = None,
           negate_help: str | None = None, cli: bool = True, key: str | None = None, **kwargs: Any) -> Any:
    """A field of an options record, with what the command line needs to offer it.

    Parameters
    ----------
    default : any
        The default value.
    help : str
        One line for ``--help``.
    flag : str, optional
        The command-line flag (default ``--`` plus the name with dashes).
    metavar : str, optional
        The placeholder shown in ``--help``.
    choices : sequence or callable, optional
        The allowed values (a callable is asked when the parser is built: a registry of rules).
    negate : str, optional
        For a switch that is on by default: the flag that turns it off (``--no-solvent``).
    negate_help : str, optional
        One line for ``--help`` on the ``negate`` flag: what turning the switch off does (``help`` describes the
        switch itself, on).
    cli : bool
        False for options the command line does not offer.
    """
    meta = {_OPTION: {"help": help, "flag": flag, "metavar": metavar, "choices": choices, "negate": negate,
                      "negate_help": negate_help, "cli": cli}}
    if default is not dataclasses.MISSING:
        kwargs["default"] = default
    return field(key=key, metadata=meta, **kwargs)


def option_spec(f: dataclasses.Field) -> dict[str, Any] | None:
    """The command-line description of an :func:`option` field, or None for other fields."""
    return f.metadata.get(_OPTION)


def _json_fields(cls: type) -> list[dataclasses.Field]:
    return [f for f in dataclasses.fields(cls) if not f.metadata.get(_TRANSIENT)]


def _key(f: dataclasses.Field) -> str:
    return f.metadata.get(_KEY) or f.name


def is_record(obj: Any) -> bool:
    """True for a record class or instance."""
    return getattr(obj, "__tauspec_record__", False) is True


def to_jsonable(value: Any) -> Any:
    """The JSON-ready form of a value: records as dicts, arrays and tuples as lists, numpy scalars as Python ones."""
    if is_record(value):
        return value.to_dict()
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, PurePath):
        return str(value)
    if isinstance(value, Mapping):
        return {str(k): to_jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [to_jsonable(v) for v in value]
    return value


def _to_dict(self: Any) -> dict[str, Any]:
    d: dict[str, Any] = {}
    schema = getattr(type(self), "SCHEMA", None)
    if schema:
        d["schema"] = schema
    for f in _json_fields(type(self)):
        d[_key(f)] = to_jsonable(getattr(self, f.name))
    hook = getattr(self, "_json_out", None)
    return hook(d) if hook is not None else d


def _nan_for_none(v: Any) -> Any:
    if v is None:
        return math.nan
    if isinstance(v, list):
        return [_nan_for_none(x) for x in v]
    return v


def _array(v: Any) -> np.ndarray:
    if isinstance(v, np.ndarray):
        return v
    flat = list(np.asarray(v, dtype=object).ravel()) if v else []
    if flat and all(isinstance(x, bool) for x in flat):
        return np.asarray(v, dtype=bool)
    return np.asarray(_nan_for_none(v), dtype=float)


def _fits(value: Any, hint: Any) -> bool:
    """Whether a JSON value is of the kind a type stands for."""
    origin = typing.get_origin(hint) or hint
    if isinstance(value, bool):
        return hint is bool
    if isinstance(value, int | float):
        return hint in (int, float) and not (hint is int and isinstance(value, float))
    if isinstance(value, str):
        return hint is str
    if isinstance(value, list):
        return hint is np.ndarray or origin in (tuple, list, Sequence)
    if isinstance(value, Mapping):
        return is_record(hint) or origin in (Mapping, dict)
    return True


def _decode(value: Any, hint: Any, where: str) -> Any:
    origin = typing.get_origin(hint)
    args = typing.get_args(hint)
    if hint is Any or hint is None:
        return value
    if origin in (typing.Union, types.UnionType):
        if value is None and type(None) in args:
            return None
        for a in args:  # the first alternative of the value's JSON kind ("auto" or a number; a count or a grid)
            if a is not type(None) and _fits(value, a):
                return _decode(value, a, where)
        return value
    if hint is np.ndarray:
        return _array(value)
    if isinstance(hint, type) and is_record(hint):
        return None if value is None else hint.from_dict(value)
    if hint is float:  # (an int stays an int: JSON does not tell 6 from 6.0, and the record wrote 6)
        return math.nan if value is None else value if isinstance(value, int) else float(value)
    if hint is Path:
        return None if value is None else Path(value)
    if hint in (int, bool, str):
        return value if value is None else hint(value)
    if origin is tuple:
        if value is None:
            return None
        if len(args) == 2 and args[1] is Ellipsis:
            return tuple(_decode(v, args[0], where) for v in value)
        if args and len(args) != len(value):
            raise TauspecError(f"{where}: expected {len(args)} values, found {len(value)}")
        return tuple(_decode(v, a, where) for v, a in zip(value, args or [Any] * len(value)))
    if origin in (Mapping, dict, typing.Mapping):
        if value is None:
            return None
        vt = args[1] if len(args) == 2 else Any
        return {k: _decode(v, vt, where) for k, v in value.items()}
    if origin in (list, Sequence):
        return None if value is None else [_decode(v, args[0] if args else Any, where) for v in value]
    return value


def _same_major(found: Any, schema: str) -> bool:
    """``tauspec.spectrum/1.1`` reads ``tauspec.spectrum/1`` and ``/1.0``: minor versions only add or rename keys."""
    if not isinstance(found, str):
        return False
    name, _, version = schema.partition("/")
    f_name, _, f_version = found.partition("/")
    return f_name == name and f_version.split(".")[0] == version.split(".")[0]


def _from_dict(cls: type[T], d: Mapping[str, Any], source: str | None = None) -> T:
    name = cls.__name__
    if not isinstance(d, Mapping):
        raise TauspecError(f"not a {name} result (expected a JSON object)", source)
    schema = getattr(cls, "SCHEMA", None)
    if schema and not _same_major(d.get("schema", schema), schema):
        raise TauspecError(f"not a {name} result (schema {d.get('schema')!r}, expected {schema!r})", source)
    hook = getattr(cls, "_json_in", None)
    if hook is not None:
        d = hook(dict(d))
    hints = typing.get_type_hints(cls)
    kwargs = {}
    for f in _json_fields(cls):
        key = _key(f)
        if key not in d:
            if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
                raise TauspecError(f"{name} result has no {key!r}", source)
            continue
        try:
            kwargs[f.name] = _decode(d[key], hints.get(f.name, Any), f"{name}.{key}")
        except (TypeError, ValueError) as exc:
            raise TauspecError(f"{name} result: {key!r} is not of the expected kind ({exc})", source) from None
    return cls(**kwargs)


class _Same:
    """NaN placeholder so that NaN == NaN in record equality."""

    def __eq__(self, other: object) -> bool:
        return isinstance(other, _Same)

    __hash__ = None  # type: ignore[assignment]


def _comparable(v: Any) -> Any:
    if isinstance(v, float) and math.isnan(v):
        return _Same()
    if isinstance(v, dict):
        return {k: _comparable(x) for k, x in v.items()}
    if isinstance(v, list):
        return [_comparable(x) for x in v]
    return v


def _eq(self: Any, other: object) -> bool:
    if type(other) is not type(self):
        return NotImplemented
    return _comparable(self.to_dict()) == _comparable(other.to_dict())


def _short(v: Any) -> str:
    if isinstance(v, np.ndarray):
        return f"<{v.size} values>" if v.ndim == 1 else f"<array {'×'.join(map(str, v.shape))}>"
    if isinstance(v, float | np.floating):
        return f"{float(v):.4g}"
    if isinstance(v, str):
        return repr(v if len(v) <= 40 else v[:37] + "...")
    if is_record(v):
        return f"{type(v).__name__}(...)"
    if isinstance(v, tuple) and len(v) <= 3 and all(isinstance(x, float | int) for x in v):
        return "(" + ", ".join(_short(x) for x in v) + ")"
    if isinstance(v, Mapping | list | tuple):
        return f"<{len(v)} items>"
    return repr(v)


def _scalars(self: Any) -> list[tuple[str, str]]:
    """(name, short value) of the fields a repr shows: scalars, short tuples and nested records' names."""
    parts = []
    for f in dataclasses.fields(self):
        if not f.repr:
            continue
        v = getattr(self, f.name)
        if isinstance(v, Mapping | list | tuple | np.ndarray) and not (isinstance(v, tuple) and len(v) <= 3):
            continue  # collections are summarised by the scalars that describe them
        parts.append((f.name, _short(v)))
    return parts


def _repr(self: Any) -> str:
    text = f"{type(self).__name__}({', '.join(f'{k}={v}' for k, v in _scalars(self))})"
    return text if len(text) <= 290 else text[:286] + "...)"


def _repr_html(self: Any) -> str:
    """The repr as a small HTML table, for notebooks."""
    import html

    rows = "".join(f"<tr><th style='text-align:left'>{html.escape(k)}</th><td style='text-align:left'>"
                   f"{html.escape(v)}</td></tr>" for k, v in _scalars(self))
    return f"<table><caption style='text-align:left'><b>{html.escape(type(self).__name__)}</b></caption>{rows}</table>"


def record(cls: type[T] | None = None, *, schema: str | None = None) -> Any:
    """Declare a record: a frozen keyword-only dataclass with to_dict, from_dict, value equality and a short repr.

    ``schema`` is the version string written as the first JSON key (``"tauspec.spectrum/1"``).
    """

    def wrap(c: type[T]) -> type[T]:
        if schema is not None:
            c.SCHEMA = schema  # type: ignore[attr-defined]
        c = dataclasses.dataclass(frozen=True, kw_only=True, eq=False, repr=False)(c)
        c.__tauspec_record__ = True  # type: ignore[attr-defined]
        c.to_dict = _to_dict  # type: ignore[attr-defined]
        c.to_dict.__doc__ = "Return the JSON form (keys are a public contract: add, never rename)."
        c.from_dict = classmethod(_from_dict)  # type: ignore[attr-defined]
        c.__eq__ = _eq  # type: ignore[assignment]
        c.__hash__ = None  # type: ignore[assignment]
        c.__repr__ = _repr  # type: ignore[assignment]
        c._repr_html_ = _repr_html  # type: ignore[attr-defined]
        return c

    return wrap if cls is None else wrap(cls)


# --------------------------------------------------------------------------- validation of options, one message each


def check_choice(name: str, value: Any, choices: Sequence[Any]) -> None:
    """Refuse a value that is not one of ``choices``, naming the option and the allowed values."""
    if value not in choices:
        allowed = ", ".join(repr(c) for c in choices)
        raise SettingsError(f"{name} must be one of {allowed}, not {value!r}")


def check_bool(name: str, value: Any) -> None:
    """Refuse anything but ``True`` or ``False``."""
    if not isinstance(value, bool):
        raise SettingsError(f"{name} must be true or false, not {value!r}")


def check_number(name: str, value: Any, *, lo: float | None = None, hi: float | None = None, integer: bool = False,
                 lo_open: bool = False, hi_open: bool = False, what: str = "a number", say_range: bool = True) -> None:
    """Refuse a value that is not a finite number (an integer with ``integer``) within [lo, hi] (or open ends).

    The message names the option, what it must be and (unless ``say_range`` is false, when ``what`` says it)
    the range.
    """
    ok = isinstance(value, int | float | np.integer | np.floating) and not isinstance(value, bool)
    if ok and integer:
        ok = isinstance(value, int | np.integer)
    ok = ok and math.isfinite(float(value))
    if ok and lo is not None:
        ok = value > lo if lo_open else value >= lo
    if ok and hi is not None:
        ok = value < hi if hi_open else value <= hi
    if not ok:
        if not say_range:
            rng = ""
        elif lo is not None and hi is not None and not lo_open and not hi_open:
            rng = f"from {lo:g} to {hi:g}"
        else:
            lo_s = "" if lo is None else (f"above {lo:g}" if lo_open else f"at least {lo:g}")
            hi_s = "" if hi is None else (f"below {hi:g}" if hi_open else f"at most {hi:g}")
            rng = " and ".join(s for s in (lo_s, hi_s) if s)
        raise SettingsError(f"{name} must be {what}" + (f" {rng}" if rng else "") + f", not {value!r}")


def resolve_options(cls: type[T], options: T | None, changes: Mapping[str, Any], where: str) -> T:
    """The options a function runs with: ``options`` (or the defaults) with the keyword ``changes`` applied.

    Unknown names are refused with one line that lists the known ones; values are validated by the record.
    """
    if options is not None and not isinstance(options, cls):
        raise SettingsError(f"{where}: options must be a {cls.__name__}, not {type(options).__name__}")
    known = [f.name for f in dataclasses.fields(cls)]
    unknown = sorted(set(changes) - set(known))
    if unknown:
        raise SettingsError(f"{where} has no option {unknown[0]!r}; its options: {', '.join(known)}")
    base = options if options is not None else cls()
    return dataclasses.replace(base, **changes) if changes else base


def insert_after(d: Mapping[str, Any], key: str, new_key: str, value: Any) -> dict[str, Any]:
    """A copy of ``d`` with ``new_key: value`` placed right after ``key`` (a computed key of a contract form)."""
    out: dict[str, Any] = {}
    for k, v in d.items():
        out[k] = v
        if k == key:
            out[new_key] = value
    return out
