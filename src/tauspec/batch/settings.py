"""The settings of a batch run: one options object per pipeline step, read from a TOML file and validated once."""

from __future__ import annotations

import dataclasses
import hashlib
import math
import os
import sys
from collections.abc import Mapping
from typing import Any

from .._version import __version__
from ..data.write import dumps_json
from ..errors import SettingsError

__all__ = ["InvertOptions", "ModesOptions", "DiagnoseOptions", "Settings", "settings_from_mapping", "load_settings"]


# --------------------------------------------------------------------------- settings


@dataclasses.dataclass(frozen=True, kw_only=True)
class InvertOptions:
    """Options of :func:`tauspec.spectrum.invert` used by the batch (TOML section ``[invert]``)."""

    strength: str | float = "auto"
    select: str = "lcurve"
    grid: int | None = None
    solvent: bool = True
    plateau: bool = False
    eta_s: float | None = None

    def kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`tauspec.spectrum.invert`."""
        return dataclasses.asdict(self)


@dataclasses.dataclass(frozen=True, kw_only=True)
class ModesOptions:
    """Options of :func:`tauspec.modes.fit_modes` (TOML section ``[modes]``); ``run = false`` skips the step.

    ``solvent``, ``plateau`` and ``eta_s`` are those of ``[invert]``: one physical choice for every step.
    """

    run: bool = True
    n_modes: int | None = None
    alpha: float = 0.01
    per_decade: float = 2.0

    def kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`tauspec.modes.fit_modes` (without ``run``)."""
        return {k: v for k, v in dataclasses.asdict(self).items() if k != "run"}


@dataclasses.dataclass(frozen=True, kw_only=True)
class DiagnoseOptions:
    """Options of :func:`tauspec.diagnosis.diagnose` (TOML section ``[diagnose]``); ``run = false`` skips it.

    ``solvent`` is that of ``[invert]``; the diagnosis uses the batch's spectrum.
    """

    run: bool = True
    intervals: bool = True
    use_spectrum: bool = True

    def kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`tauspec.diagnosis.diagnose` (without ``run``)."""
        return {k: v for k, v in dataclasses.asdict(self).items() if k != "run"}


#: TOML section -> options class.
_SECTIONS: dict[str, type] = {"invert": InvertOptions, "modes": ModesOptions, "diagnose": DiagnoseOptions}


@dataclasses.dataclass(frozen=True, kw_only=True)
class Settings:
    """Everything that decides a batch result, passed explicitly to every worker.

    ``plots`` only decides whether figures are drawn; it is not part of
    :meth:`digest` (a rerun with ``plots`` draws the missing figures).
    """

    invert: InvertOptions = dataclasses.field(default_factory=InvertOptions)
    modes: ModesOptions = dataclasses.field(default_factory=ModesOptions)
    diagnose: DiagnoseOptions = dataclasses.field(default_factory=DiagnoseOptions)
    plots: bool = False

    @property
    def steps(self) -> tuple[str, ...]:
        """The pipeline steps these settings run, in order."""
        return ("read", "invert") + tuple(name for name in ("modes", "diagnose") if getattr(self, name).run)

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form: one object per section, and the pipeline steps."""
        d: dict[str, Any] = {name: dataclasses.asdict(getattr(self, name)) for name in _SECTIONS}
        d["steps"] = list(self.steps)
        return d

    def digest(self) -> str:
        """Return the sha256 of the settings, the steps and the tauspec version (the resume key)."""
        text = dumps_json({"settings": self.to_dict(), "tauspec": __version__})
        return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _check_value(section: str, key: str, value: Any, source: str) -> Any:
    where = f"[{section}] {key}"
    number = isinstance(value, int | float) and not isinstance(value, bool)
    if key in ("solvent", "plateau", "intervals", "use_spectrum", "run"):
        if not isinstance(value, bool):
            raise SettingsError(f"{where} must be true or false, not {value!r}", source)
    elif key == "strength":
        if not (value == "auto" or (number and value > 0 and math.isfinite(value))):
            raise SettingsError(f"{where} must be \"auto\" or a positive number, not {value!r}", source)
        value = value if value == "auto" else float(value)
    elif key == "select":
        if value not in ("lcurve", "gcv"):
            raise SettingsError(f"{where} must be \"lcurve\" or \"gcv\", not {value!r}", source)
    elif key == "grid":
        if not (isinstance(value, int) and not isinstance(value, bool) and 10 <= value <= 2000):
            raise SettingsError(f"{where} must be a whole number of τ points from 10 to 2000, not {value!r}", source)
    elif key == "n_modes":
        if not (isinstance(value, int) and not isinstance(value, bool) and 0 <= value <= 50):
            raise SettingsError(f"{where} must be a whole number of modes from 0 to 50, not {value!r}", source)
    elif key == "alpha":
        if not (number and 0 < value < 1):
            raise SettingsError(f"{where} must be a significance level between 0 and 1, not {value!r}", source)
        value = float(value)
    elif key == "per_decade":
        if not (number and 0 < value <= 10):
            raise SettingsError(f"{where} must be a number of modes per decade in (0, 10], not {value!r}", source)
        value = float(value)
    elif key == "eta_s":
        if not (number and value >= 0 and math.isfinite(value)):
            raise SettingsError(f"{where} must be a nonnegative viscosity in Pa·s, not {value!r}", source)
        value = float(value)
    return value


def settings_from_mapping(mapping: Mapping[str, Any], *, source: str = "<settings>",
                          plots: bool = False) -> Settings:
    """Build :class:`Settings` from a mapping of sections (as read from TOML); unknown keys are refused.

    Raises
    ------
    SettingsError
        For an unknown section or key, or a value of the wrong kind.
    """
    sections: dict[str, Any] = {}
    for name, table in mapping.items():
        if name not in _SECTIONS:
            raise SettingsError(f"unknown section or key {name!r}; known sections: "
                                f"{', '.join(f'[{s}]' for s in _SECTIONS)}", source)
        if not isinstance(table, Mapping):
            raise SettingsError(f"{name!r} must be a section [{name}] of keys", source)
        cls = _SECTIONS[name]
        known = [f.name for f in dataclasses.fields(cls)]
        unknown = sorted(set(table) - set(known))
        if unknown:
            raise SettingsError(f"unknown key {unknown[0]!r} in [{name}]; known keys: {', '.join(known)}", source)
        sections[name] = cls(**{k: _check_value(name, k, v, source) for k, v in table.items()})
    return Settings(plots=plots, **sections)


def load_settings(path: str | os.PathLike[str] | None, *, plots: bool = False) -> Settings:
    """Read a TOML settings file (sections ``[invert]`` ...); ``None`` gives the defaults."""
    if path is None:
        return Settings(plots=plots)
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
