"""The settings of a batch run: the options objects of the pipeline steps, read from a TOML file, validated once.

A settings file has one section per step, and each key is a field of that step's options record — the same
records the Python API and the command line build::

    [invert]            # InvertOptions: strength, select, grid, solvent, equilibrium_modulus, eta_s,
                        #   omega_min, omega_max
    [modes]             # run = false skips the step; ModesOptions: n_modes, significance, per_decade
    [diagnose]          # run = false skips the step; DiagnoseOptions: intervals, use_spectrum
    [batch]             # how the run treats each file: time_limit (seconds per file)

The physical switches of ``[invert]`` (``solvent``, ``equilibrium_modulus``, ``eta_s``) and its frequency range
(``omega_min``, ``omega_max``: points outside are left out, with a note) hold for every step.
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
import sys
from collections.abc import Mapping
from typing import Any

from .._version import __version__
from ..analysis.diagnosis.options import DiagnoseOptions
from ..data.record import check_bool, check_number, field, option, record
from ..data.write import dumps_json
from ..errors import SettingsError
from ..modes.options import ModesOptions
from ..spectrum.options import InvertOptions

__all__ = ["BatchSettings", "SECTIONS", "settings_from_mapping", "load_settings"]

#: TOML section -> (options record, the keys it offers there, whether it has a ``run`` switch).
SECTIONS: dict[str, tuple[type, tuple[str, ...], bool]] = {
    "invert": (InvertOptions, ("strength", "select", "grid", "solvent", "equilibrium_modulus", "eta_s", "omega_min",
                               "omega_max"), False),
    "modes": (ModesOptions, ("n_modes", "significance", "per_decade"), True),
    "diagnose": (DiagnoseOptions, ("intervals", "use_spectrum"), True),
}
#: Keys of the ``[batch]`` section: fields of :class:`BatchSettings` itself.
BATCH_KEYS = ("time_limit",)

#: The default per-file time limit (s): generous, a sweep takes seconds; the limit only stops a file that hangs.
TIME_LIMIT = 600.0


@record
class BatchSettings:
    """Everything that decides a batch result, passed explicitly to every worker.

    ``modes`` and ``diagnose`` carry the physical switches of ``invert`` (made so here, once);
    ``run_modes`` and ``run_diagnose`` say whether those steps run.  ``plots`` only decides whether figures
    are drawn (PNG, which the report shows, and the other ``figure_formats``); neither is part of :meth:`digest`
    (a rerun with ``plots`` draws the missing figures).  ``time_limit`` (s) stops a file that runs longer: it
    becomes an error row and the run goes on; it is not part of :meth:`digest` either (a file stopped by a
    shorter limit is tried again under a longer one).
    """

    invert: InvertOptions = field(default_factory=InvertOptions)
    modes: ModesOptions = field(default_factory=ModesOptions)
    diagnose: DiagnoseOptions = field(default_factory=DiagnoseOptions)
    run_modes: bool = True
    run_diagnose: bool = True
    plots: bool = field(default=False, transient=True)
    time_limit: float = option(TIME_LIMIT, transient=True, metavar="SECONDS",
                               help="stop a file that takes longer than this many seconds (an error row; default "
                                    f"{TIME_LIMIT:g})")
    figure_formats: tuple[str, ...] = field(default=("png",), transient=True)

    def __post_init__(self) -> None:
        from ..output.figures.style import check_formats

        for name in ("run_modes", "run_diagnose", "plots"):
            check_bool(name, getattr(self, name))
        check_number("time_limit", self.time_limit, lo=0, lo_open=True, what="a time in seconds")
        object.__setattr__(self, "time_limit", float(self.time_limit))
        object.__setattr__(self, "figure_formats", ("png",) + tuple(
            f for f in check_formats(self.figure_formats) if f != "png"))
        inv = self.invert
        span = {"omega_min": inv.omega_min, "omega_max": inv.omega_max}
        object.__setattr__(self, "modes", dataclasses.replace(
            self.modes, solvent=inv.solvent, equilibrium_modulus=inv.equilibrium_modulus, eta_s=inv.eta_s, **span))
        object.__setattr__(self, "diagnose", dataclasses.replace(self.diagnose, solvent=inv.solvent, **span))

    @property
    def steps(self) -> tuple[str, ...]:
        """The pipeline steps these settings run, in order."""
        return ("read", "invert") + (("modes",) if self.run_modes else ()) + (("diagnose",) if self.run_diagnose
                                                                             else ())

    def _json_out(self, d: dict[str, Any]) -> dict[str, Any]:
        """The TOML form: one object per section (its keys, and ``run``), then the pipeline steps."""
        out: dict[str, Any] = {}
        for section, (_, keys, has_run) in SECTIONS.items():
            table = {"run": getattr(self, f"run_{section}")} if has_run else {}
            table.update({k: d[section][k] for k in keys})
            out[section] = table
        out["steps"] = list(self.steps)
        return out

    @classmethod
    def _json_in(cls, d: dict[str, Any]) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for section, (_, keys, has_run) in SECTIONS.items():
            table = dict(d.get(section) or {})
            if has_run:
                out[f"run_{section}"] = table.pop("run", True)
            out[section] = {k: v for k, v in table.items() if k in keys}
        return out

    def digest(self) -> str:
        """Return the sha256 of the settings, the steps and the tauspec version (the resume key)."""
        text = dumps_json({"settings": self.to_dict(), "tauspec": __version__})
        return hashlib.sha256(text.encode("utf-8")).hexdigest()


def settings_from_mapping(mapping: Mapping[str, Any], *, source: str = "<settings>",
                          plots: bool = False) -> BatchSettings:
    """Build :class:`BatchSettings` from a mapping of sections (as read from TOML); unknown keys are refused.

    Raises
    ------
    SettingsError
        For an unknown section or key, or a value outside its range (one line naming ``[section] key``).
    """
    parts: dict[str, Any] = {}
    for name, table in mapping.items():
        if name not in SECTIONS and name != "batch":
            raise SettingsError(f"unknown section or key {name!r}; known sections: "
                                f"{', '.join(f'[{s}]' for s in [*SECTIONS, 'batch'])}", source)
        if not isinstance(table, Mapping):
            raise SettingsError(f"{name!r} must be a section [{name}] of keys", source)
        cls, keys, has_run = SECTIONS[name] if name != "batch" else (None, BATCH_KEYS, False)
        known = (("run",) if has_run else ()) + keys
        unknown = sorted(set(table) - set(known))
        if unknown:
            raise SettingsError(f"unknown key {unknown[0]!r} in [{name}]; known keys: {', '.join(known)}", source)
        values = dict(table)
        if cls is None:
            parts.update(values)
            continue
        try:
            if has_run:
                run = values.pop("run", True)
                check_bool("run", run)
                parts[f"run_{name}"] = run
            parts[name] = cls(**values)
        except SettingsError as exc:
            raise SettingsError(f"[{name}] {exc.reason}", source) from None
    try:
        return BatchSettings(plots=plots, **parts)
    except SettingsError as exc:
        raise SettingsError(f"[batch] {exc.reason}", source) from None


def load_settings(path: str | os.PathLike[str] | None, *, plots: bool = False) -> BatchSettings:
    """Read a TOML settings file (sections ``[invert]`` ...); ``None`` gives the defaults."""
    if path is None:
        return BatchSettings(plots=plots)
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover - Python 3.10
        import tomli as tomllib
    source = str(path)
    try:
        with open(path, "rb") as fh:
            mapping = tomllib.load(fh)
    except FileNotFoundError:
        raise SettingsError("no such settings file", source) from None
    except OSError as exc:
        raise SettingsError(f"settings file cannot be read ({exc.strerror or exc})", source) from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise SettingsError(f"not a valid TOML file ({exc})", source) from None
    return settings_from_mapping(mapping, source=source, plots=plots)
